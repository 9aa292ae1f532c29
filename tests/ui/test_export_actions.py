"""File > Export and Print produce the same true-scale page as `reviewapp export`."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest
from PySide6.QtWidgets import QMainWindow

from reviewapp.core.engine import analyse
from reviewapp.core.io import open_record
from reviewapp.core.workflow import MarkTarget, ReadingWorkflow
from reviewapp.ui.export_actions import ExportActions

# ISO 216 A4 is 297 x 210 mm; PDF user space is 1/72 inch (ISO 32000-1, 8.3.2.3), so the
# landscape MediaBox is 841.89 x 595.28 pt.
A4_LANDSCAPE_PT = (297 / 25.4 * 72, 210 / 25.4 * 72)


@pytest.fixture
def record_copy(tmp_path: Path, sample_records_dir: Path) -> Path:
    for f in sample_records_dir.glob("s001_predose.*"):
        shutil.copy(f, tmp_path / f.name)
    return tmp_path / "s001_predose.hea"


def _media_box(pdf: Path) -> tuple[float, float]:
    m = re.search(rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)\s*\]", pdf.read_bytes())
    assert m, "no MediaBox in the PDF"
    return float(m.group(1)), float(m.group(2))


def test_menu_exports_and_print_write_true_scale_pages(qtbot, record_copy: Path, tmp_path) -> None:
    analysis = analyse(open_record(record_copy))
    rep = analysis.representative
    workflow = ReadingWorkflow(analysis)  # no marks file: the correction stays in memory
    t_end = MarkTarget("representative", "t_off")
    assert workflow.move_mark(t_end, rep.marks.t_off + 10).done
    (ov,) = workflow.engine_overrides
    win = QMainWindow()
    qtbot.addWidget(win)
    errors: list[str] = []
    actions = ExportActions(win, lambda: workflow, errors.append)

    pdf = actions.export_pdf(tmp_path / "page.pdf")
    w, h = _media_box(pdf)
    assert w == pytest.approx(A4_LANDSCAPE_PT[0], rel=0.01)
    assert h == pytest.approx(A4_LANDSCAPE_PT[1], rel=0.01)

    csv_path = actions.export_csv(tmp_path / "m.csv")
    text = csv_path.read_text()
    qt_ms = analysis.reading([ov]).measurements.intervals.qt_ms
    assert str(round(qt_ms)) in text  # the corrected QT, not the automatic one

    from PySide6.QtPrintSupport import QPrinter

    printer = QPrinter(QPrinter.PrinterMode.HighResolution)
    printer.setOutputFormat(QPrinter.OutputFormat.PdfFormat)
    printer.setOutputFileName(str(tmp_path / "printed.pdf"))
    assert actions.print_report(printer)
    w, h = _media_box(tmp_path / "printed.pdf")
    assert (w, h) == pytest.approx(A4_LANDSCAPE_PT, rel=0.01)
    assert errors == []


def test_export_without_a_record_says_so(qtbot) -> None:
    win = QMainWindow()
    qtbot.addWidget(win)
    errors: list[str] = []
    actions = ExportActions(win, lambda: None, errors.append)
    assert actions.export_pdf(Path("/nonexistent/x.pdf")) is None
    assert errors == ["Open a record first."]
