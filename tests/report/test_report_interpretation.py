"""The report carries the interpretation: two lines beside the title on the ECG page (inside
their own block), and an interpretation page with each statement's criteria, measured values
and published source. Record: LUDB 108 (Kalyakulina AI et al., IEEE Access 2020), complete
right bundle branch block (Surawicz B et al., Circulation 2009). PDF pages and text are read
back from the file (ISO 32000-1: each page object has /Type /Page)."""

from __future__ import annotations

import re
from pathlib import Path

from reviewapp.core.engine import analyse
from reviewapp.core.io import open_record
from reviewapp.core.marks.model import ReaderStatement
from reviewapp.report.content import build_report_content
from reviewapp.report.export import render_page, write_pdf
from reviewapp.report.layout import page_layout
from tests.report.test_report_page import _squash, pdf_text


def _content(shared_data: Path, **kw):
    return build_report_content(analyse(open_record(shared_data / "ludb" / "108.hea")), **kw)


def test_page_one_names_the_statements_inside_their_block(shared_data):
    content = _content(shared_data)
    assert "conduction.rbbb" in [x.code for x in content.statements]
    lo = page_layout()
    _img, drawing = render_page(content, lo, dpi=100)
    lines = [(t, r) for t, r in drawing.texts if lo.statements.contains(r, tol=0.3)]
    joined = " ".join(t for t, _ in lines)
    assert joined.startswith("Automatic interpretation (not a reader's):")
    assert "complete right bundle branch block" in joined
    assert lo.overlaps() == []


def test_pdf_has_an_interpretation_page_with_criteria_and_sources(shared_data, tmp_path):
    mine = (
        ReaderStatement("a", "conduction.rbbb", "complete right bundle branch block", "automatic"),
        ReaderStatement("b", "other.free_text", "Compare with an earlier tracing", "free_text"),
    )
    content = _content(shared_data, status="signed_off", reviewer="reader1", reader_statements=mine)
    out = tmp_path / "r.pdf"
    write_pdf(out, content)
    data = out.read_bytes()
    assert len(re.findall(rb"/Type\s*/Page\b", data)) == 2
    text = _squash(pdf_text(data))
    assert "Interpretation(reader1):completerightbundlebranchblock" in text  # page 1 line
    assert "Reader'sinterpretation(reader1)" in text
    assert "Criteria:QRS>=120ms" in text and "SurawiczBetal." in text
    assert "Measured:QRSduration" in text
    assert "page2of2" in text
