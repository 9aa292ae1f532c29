"""One limit, one text: every output a reader sees writes each limit row the same way.

For every published limit (``tests/measure/expected_limits.py``, written by hand with its
source) and a value one printed step outside each of its bounds, the normal range, the flag
and the finding sentence are read back from: the summary dock (global table, per-lead table
and findings list), the report page (the drawn texts), the report CSV, the ``measure`` table
and the ``measure`` JSON. They must be identical, and the range must be the published one as
written in the expected table.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import re
import sys
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from reviewapp.core.engine import analyse
from reviewapp.core.measure import (
    GlobalIntervals,
    LeadMeasurements,
    Measurements,
    evaluate_findings,
)
from reviewapp.core.measure.findings import LABELS
from reviewapp.core.measure.output import reading_to_dict, table_text
from reviewapp.core.record import SubjectFacts, record_from_array
from reviewapp.core.synth.generator import generate
from reviewapp.core.synth.params import SynthParams
from reviewapp.report.content import measurement_rows
from reviewapp.report.export import _write_csv_rows, render_page
from reviewapp.ui.summary import GLOBAL_ROWS, LEAD_COLUMNS, SummaryPanel

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "measure"))
from expected_limits import EXPECTED, STEP, Expected, entry_id, measurements_for


def _printed(value: float, unit: str) -> str:
    """The value as a 12-lead printout gives it, written here independently of the app."""
    if unit == "mV":
        return f"{value:.2f} mV"
    if unit == "deg":
        return f"{value:+.0f}°" if round(value) else "0°"
    return f"{value:.0f} {unit}"


def _cases() -> list[tuple[Expected, float, str]]:
    out = []
    for e in EXPECTED:
        if e.high is not None:
            out.append((e, round(e.high + STEP[e.unit], 2), "above"))
        if e.low is not None:
            out.append((e, round(e.low - STEP[e.unit], 2), "below"))
    return out


CASES = _cases()
IDS = [f"{entry_id(e)}-{d}" for e, _, d in CASES]


@dataclasses.dataclass
class Case:
    e: Expected
    value: float
    direction: str
    reading: SimpleNamespace
    findings: tuple

    @property
    def flag(self) -> str:
        return {"above": "high", "below": "low"}[self.direction]

    @property
    def sentence_start(self) -> str:
        """What the finding sentence must begin with, for each lead (or the global value)."""
        return f"{_printed(self.value, self.e.unit)}, {self.direction} normal (normal "


def _case(e: Expected, value: float, direction: str) -> Case:
    m = measurements_for(e, value)
    findings = evaluate_findings(m, e.subject)
    marked = SimpleNamespace(beats=(), beat_marks=(), beat_lead_marks=(), representative=None)
    reading = SimpleNamespace(marked=marked, measurements=m, findings=findings)
    return Case(e, value, direction, reading, findings)


def _own_findings(c: Case) -> list:
    return [f for f in c.findings if f.quantity == c.e.quantity]


@pytest.fixture(scope="module")
def page_content():
    """A real report content (invented synthetic record) whose rows each case replaces."""
    from reviewapp.report.content import build_report_content

    return build_report_content(analyse(generate(SynthParams(hr_bpm=60, seed=3)).record))


def _json_and_table(c: Case) -> tuple[dict, str]:
    rec = record_from_array(
        np.zeros((2000, 2), dtype=np.float32), 500.0, ["I", "II"], subject=c.e.subject
    )
    analysis = SimpleNamespace(record=rec, notes=(), engine_version="test")
    d = reading_to_dict(analysis, c.reading, path="x")
    return d, table_text(d, per_lead=True)


@pytest.mark.parametrize(("e", "value", "direction"), CASES, ids=IDS)
def test_range_flag_and_sentence_agree_in_every_output(
    e: Expected, value: float, direction: str, qtbot, page_content
) -> None:
    c = _case(e, value, direction)
    own = _own_findings(c)
    assert own, "one step outside the limit must be flagged"
    texts = [f.text for f in own]
    for f in own:
        # The sentence states value, side and the published range (no "at 120 ms").
        assert c.sentence_start + e.range_text in f.text, f.text
    is_global = not e.leads

    # --- measure JSON and table ---------------------------------------------------------
    d, table = _json_and_table(c)
    assert [f["text"] for f in d["findings"] if f["quantity"] == e.quantity] == texts
    for t in texts:
        assert f"  - {t}" in table.splitlines()
    table_row = [ln for ln in table.splitlines() if ln.startswith(LABELS[e.quantity] + " ")]
    if is_global:
        (line,) = table_row
        assert _printed(value, e.unit) in line and e.range_text in line
        assert line.rstrip().endswith(c.flag)

    # --- summary dock: global table, findings list, per-lead table ------------------------
    panel = SummaryPanel()
    qtbot.addWidget(panel)
    panel.show_reading(c.reading, e.subject, set())
    assert [t for t in panel.finding_texts()] == [
        f"{'▲' if direction == 'above' else '▼'} {t}" for t in texts
    ]
    keys = [k for k, *_ in GLOBAL_ROWS]
    if e.quantity in keys:
        row = keys.index(e.quantity)
        assert panel.value_text(e.quantity) == _printed(value, e.unit)
        assert panel.table.item(row, 2).text() == e.range_text
        glyph = "▲" if direction == "above" else "▼"
        assert panel.table.item(row, 3).text() == f"{glyph} {c.flag}"
        assert f": {e.range_text}. Source: " in panel.table.item(row, 1).toolTip()
    if e.quantity == "st_j_mv":
        panel.per_lead_button.click()
        col = 1 + [k for k, _ in LEAD_COLUMNS].index("st_j_mv")
        for r in range(len(e.leads)):
            item = panel.leads_table.item(r, col)
            assert item.text().startswith(f"{value:+.2f}")
            tip = item.toolTip()
            assert f"Normal limits: {e.range_text}. Source: " in tip
            assert texts[r] in tip  # the finding's own sentence, not a second wording

    # --- report: rows, CSV, drawn page --------------------------------------------------
    rows, others = measurement_rows(c.reading, e.subject)
    by_q = {r.quantity: r for r in rows}
    if e.quantity in by_q:
        r = by_q[e.quantity]
        assert (r.range_text, r.flag) == (e.range_text, c.flag)
        content = dataclasses.replace(page_content, rows=rows, other_findings=others)
        buf = io.StringIO()
        _write_csv_rows(buf, content)
        rows_csv = csv.DictReader(buf.getvalue().splitlines())
        (csv_row,) = [x for x in rows_csv if x["quantity"] == e.quantity]
        assert (csv_row["normal_range"], csv_row["flag"]) == (e.range_text, c.flag)
        assert csv_row["value"] == _printed(value, e.unit).split(" ")[0].rstrip("°").lstrip("+")
    else:  # per-lead values and the voltages: their sentences in "Other flags"
        assert list(others) == texts
    content = dataclasses.replace(page_content, rows=rows, other_findings=others)
    _, drawing = render_page(content, dpi=50)  # text layout only: low resolution is enough
    drawn = [t for t, _ in drawing.texts]
    if e.quantity in by_q and _on_page_table(e.quantity):
        assert e.range_text in drawn and c.flag in drawn
    if e.quantity not in by_q:
        shown = _other_flags(drawing.texts)
        full = "; ".join(texts)
        # The page shows the same sentences, whole.
        assert shown == full, (shown, full)


def _on_page_table(quantity: str) -> bool:
    from reviewapp.report.page import TABLE_GROUPS

    return any(quantity in g for g in TABLE_GROUPS)


def _other_flags(texts: list) -> str:
    """The "Other flags" block of the page: its first line and the lines wrapped under it
    (inside the measurement block, which ends before the grid and the footer)."""
    from reviewapp.report.layout import page_layout

    table = page_layout().table
    start = next(i for i, (t, _) in enumerate(texts) if t.startswith("Other flags: "))
    x0 = texts[start][1].x
    lines = [
        t for t, box in texts[start:] if abs(box.x - x0) < 1e-6 and table.contains(box, tol=0.05)
    ]
    text = " ".join(lines).removeprefix("Other flags: ")
    return re.sub(r"\.\.\.$", "", text).strip()


def test_p_duration_at_its_limit_reads_one_way_on_screen_page_and_pdf(
    qtbot, page_content, tmp_path: Path
) -> None:
    # The reported case: P duration 120 ms (common practice, no source: normal < 120 ms) is
    # flagged; every output must say "< 120 ms" and never "<= 120" or "at 120 ms".
    from reviewapp.report.export import write_pdf
    from tests.report.test_report_page import _squash, pdf_text

    (e,) = [x for x in EXPECTED if x.quantity == "p_ms"]
    c = _case(e, 120.0, "above")
    (f,) = _own_findings(c)
    assert f.text == "P duration 120 ms, above normal (normal < 120 ms)"
    panel = SummaryPanel()
    qtbot.addWidget(panel)
    panel.show_reading(c.reading, e.subject, set())
    row = [k for k, *_ in GLOBAL_ROWS].index("p_ms")
    cells = [panel.table.item(row, k).text() for k in (1, 2, 3)]
    assert cells == ["120 ms", "< 120 ms", "▲ high"]
    rows, others = measurement_rows(c.reading, e.subject)
    out = tmp_path / "p.pdf"
    write_pdf(out, dataclasses.replace(page_content, rows=rows, other_findings=others))
    text = _squash(pdf_text(out.read_bytes()))
    assert "Pduration120ms<120mshigh" in text
    assert "<=120" not in text


@pytest.mark.parametrize(
    ("leads", "flagged"), [(("V5",), ()), (("V5", "V6"), ("V5", "V6")), (("V4", "V6"), ())]
)
def test_per_lead_cells_are_flagged_by_the_findings_alone(qtbot, leads, flagged) -> None:
    # ST at J 0.12 mV backed by 0.11 mV at J+60 in V5 (and V6, or V4 and V6), a man of 50:
    # past the limit of < 0.10 mV outside V2-V3. The 4th UDMI (Thygesen et al., Circulation
    # 2018) asks for two contiguous leads: V5-V6 are neighbours, V4-V6 are not (common
    # practice, no source). The
    # grid marks exactly the cells the findings list names (no rule of its own), and every
    # cell says its value in mV to 0.01 with its range: never "0 above the limit 0.1".
    (e,) = [x for x in EXPECTED if x.quantity == "st_j_mv" and x.leads == ("II", "III")]
    base = _case(e, 0.12, "above").reading
    subject = SubjectFacts(sex="male", age_years=50)
    ms = Measurements(
        GlobalIntervals(qrs_ms=90.0),
        leads=tuple(LeadMeasurements(n, st_j_mv=0.12, st_j60_mv=0.11) for n in leads),
    )
    findings = evaluate_findings(ms, subject)
    assert {f.lead for f in findings if f.quantity == "st_j_mv"} == set(flagged)
    reading = SimpleNamespace(marked=base.marked, measurements=ms, findings=findings)
    panel = SummaryPanel()
    qtbot.addWidget(panel)
    panel.show_reading(reading, subject, set())
    panel.per_lead_button.click()
    col = 1 + [k for k, _ in LEAD_COLUMNS].index("st_j_mv")
    listed = panel.finding_texts()
    for r, lead in enumerate(leads):
        item = panel.leads_table.item(r, col)
        tip = item.toolTip()
        assert f"{lead} ST J: +0.12 mV" in tip and "Normal limits: > -0.05 and < 0.10 mV" in tip
        if lead in flagged:
            (f,) = [f for f in findings if f.lead == lead]
            assert item.text() == "+0.12 ▲" and f.text in tip
            assert any(f.text in t for t in listed)  # the same finding as the list's
        else:
            assert item.text() == "+0.12"
    if not flagged:
        assert listed == ["No value outside its limits."]
