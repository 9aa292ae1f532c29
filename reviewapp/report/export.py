"""Write the report page (PDF, PNG), the measurements (CSV) and the final fiducials (WFDB).

The PDF is drawn by Qt's own QPdfWriter at 2540 dpi, so one millimetre is exactly 100 device
units, on a landscape page with zero margins; the PNG is the same drawing on a QImage whose
dots-per-metre make its physical size right.
"""

from __future__ import annotations

import csv
import os
import sys
from pathlib import Path
from typing import TextIO

from reviewapp import CLINICAL_CAUTION, __version__
from reviewapp.core.errors import ReviewError
from reviewapp.core.measure import limit_text
from reviewapp.core.measure import reason_text as rt
from reviewapp.core.measure.types import ValueReason
from reviewapp.report.content import ReportContent, printed_words
from reviewapp.report.layout import PageLayout, page_layout

PDF_DPI = 2540  # 1 mm = 100 device units exactly
MM_PER_INCH = 25.4
# Image file suffix -> Qt image format (the format follows the name the user gave).
IMAGE_FORMATS = {".png": "PNG", ".jpg": "JPEG", ".jpeg": "JPEG"}
JPEG_QUALITY = 95  # high: the 1 mm grid and thin traces suffer from stronger compression
STDOUT = "-"


def check_output_path(path: Path | str, what: str, suffixes: tuple[str, ...] = ()) -> Path:
    """Refuse, in one clear line naming the file, a target that cannot be written: a folder,
    a missing or read-only folder, or a name whose suffix is not one of ``suffixes``."""
    path = Path(path)
    if path.is_dir():
        example = f"report{suffixes[0] if suffixes else ''}"
        raise ReviewError(
            f"is a folder; give a file name for the {what}, e.g. {path / example}", path
        )
    if suffixes and path.suffix.lower() not in suffixes:
        raise ReviewError(
            f"cannot write the {what} under this name: use a file name ending in "
            + " or ".join(suffixes),
            path,
        )
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise ReviewError(f"cannot write the {what}: folder {parent} does not exist", path)
    if not os.access(parent, os.W_OK) or (path.exists() and not os.access(path, os.W_OK)):
        raise ReviewError(f"cannot write the {what}: no permission to write there", path)
    return path


def _ensure_gui() -> None:
    """Fonts need a Qt application; headless exports run on the offscreen platform.

    A QApplication (not a bare QGuiApplication), so that widgets created later in the same
    process (the window, tests) still work.
    """
    from PySide6.QtWidgets import QApplication

    if QApplication.instance() is None:
        os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
        _ensure_gui.app = QApplication([])  # type: ignore[attr-defined]


def write_pdf(path: Path, content: ReportContent, layout: PageLayout | None = None) -> PageLayout:
    """The landscape ECG page at true scale, then the interpretation page (statements with
    their criteria and sources); returns the layout used."""
    from PySide6.QtCore import QMarginsF
    from PySide6.QtGui import QPageLayout, QPageSize, QPainter, QPdfWriter

    from reviewapp.report.interpretation_block import paint_interpretation_page
    from reviewapp.report.page import paint_page

    path = check_output_path(path, "PDF", (".pdf",))
    _ensure_gui()
    lo = layout or page_layout()
    size_id = QPageSize.PageSizeId.A4 if lo.paper == "a4" else QPageSize.PageSizeId.Letter
    writer = QPdfWriter(str(path))
    writer.setResolution(PDF_DPI)
    writer.setTitle(f"ECG reading report {content.record.name}")
    writer.setCreator(f"reviewapp {__version__}")
    ok = writer.setPageLayout(
        QPageLayout(
            QPageSize(size_id),
            QPageLayout.Orientation.Landscape,
            QMarginsF(0, 0, 0, 0),
            QPageLayout.Unit.Millimeter,
        )
    )
    if not ok:
        raise ReviewError("cannot set the PDF page layout", path)
    painter = QPainter()
    if not painter.begin(writer):
        raise ReviewError("cannot write the PDF (folder missing or not writable?)", path)
    try:
        paint_page(painter, PDF_DPI / MM_PER_INCH, lo, content)
        writer.newPage()
        paint_interpretation_page(painter, PDF_DPI / MM_PER_INCH, lo, content)
    finally:
        painter.end()
    if not path.is_file() or path.stat().st_size == 0:
        raise ReviewError("the PDF was not written", path)
    return lo


def render_image(content: ReportContent, layout: PageLayout | None = None, dpi: float = 300.0):  # type: ignore[no-untyped-def]
    """The page as a QImage at ``dpi`` with its physical size recorded (dots per metre)."""
    return render_page(content, layout, dpi)[0]


def render_page(content: ReportContent, layout: PageLayout | None = None, dpi: float = 300.0):  # type: ignore[no-untyped-def]
    """(QImage of the page, ``page.PageDrawing`` of what was drawn where)."""
    from PySide6.QtGui import QColor, QImage, QPainter

    from reviewapp.report.page import paint_page

    _ensure_gui()
    lo = layout or page_layout()
    px_per_mm = dpi / MM_PER_INCH
    img = QImage(
        round(lo.width_mm * px_per_mm), round(lo.height_mm * px_per_mm), QImage.Format.Format_RGB32
    )
    dpm = round(dpi / 0.0254)
    img.setDotsPerMeterX(dpm)
    img.setDotsPerMeterY(dpm)
    img.fill(QColor(255, 255, 255))
    painter = QPainter(img)
    try:
        drawing = paint_page(painter, px_per_mm, lo, content)
    finally:
        painter.end()
    return img, drawing


def write_image(
    path: Path, content: ReportContent, layout: PageLayout | None = None, dpi: float = 300.0
) -> PageLayout:
    """The page as PNG (lossless, preferred) or JPEG, chosen by the file name's suffix."""
    path = check_output_path(path, "page image", tuple(IMAGE_FORMATS))
    fmt = IMAGE_FORMATS[path.suffix.lower()]
    lo = layout or page_layout()
    img = render_image(content, lo, dpi)
    if not img.save(str(path), fmt, JPEG_QUALITY if fmt == "JPEG" else -1):
        raise ReviewError(f"cannot write the {fmt} image", path)
    return lo


write_png = write_image  # the page as PNG (or JPEG for a .jpg name)


CSV_HEADER = (
    "record",
    "quantity",
    "label",
    "value",
    "unit",
    "normal_low",
    "normal_high",
    "normal_range",
    "flag",
    "range_source",
    "marks",
    "reading_status",
    "reviewer",
    "engine_version",
    "reason_kind",
    "reason",
)
# Several reasons of one value in one cell (the texts themselves hold ";" and ",").
REASON_SEPARATOR = " | "


def write_measurements_csv(path: Path | str, content: ReportContent) -> None:
    """Every global value (the quantities of ``reviewapp measure``'s CSV: RR, HR, intervals,
    the four QTc formulas, JT, JTc and the QRS-adjusted QT, axes, voltages) with normal range,
    flag and reasons, one row each; then one row for every other value with a reason (a lead's
    values not measured, criteria not applied), its value cell empty; then the clinical
    caution. Values and limits are written as the page prints them (whole ms, bpm and
    degrees, mV to 0.01), so each flag agrees with the number beside it. A value with a reason
    (not measured, not comparable with its range, a criterion not applied, less reliable) has
    its kinds in ``reason_kind`` and the full texts with their sources in ``reason``; a value
    not comparable, or whose criterion is not applied, has no flag. ``path`` "-" writes to
    standard output."""
    if str(path) == STDOUT:
        _write_csv_rows(sys.stdout, content)
        sys.stdout.flush()
        return
    path = check_output_path(path, "CSV")
    try:
        with open(path, "w", newline="", encoding="utf-8") as fh:
            _write_csv_rows(fh, content)
    except OSError as err:
        raise ReviewError(f"cannot write the CSV: {err.strerror or err}", path) from err


def _number(value: float | None, unit: str) -> str:
    """A value or limit as the page prints it (so the flag beside it agrees)."""
    return "" if value is None else limit_text.number_text(value, unit, signed=False)


def _reason_cells(reasons: tuple[ValueReason, ...]) -> list[str]:
    kinds = REASON_SEPARATOR.join(dict.fromkeys(r.kind for r in reasons))
    return [kinds, REASON_SEPARATOR.join(dict.fromkeys(r.text for r in reasons))]


def _write_csv_rows(fh: TextIO, content: ReportContent) -> None:
    w = csv.writer(fh, lineterminator="\n")
    w.writerow(CSV_HEADER)
    marks = "reviewer-corrected" if content.n_corrected else "automatic"
    tail = [marks, content.status, content.reviewer or "", content.engine_version]
    for r in content.rows:
        w.writerow(
            [
                content.record.name,
                r.quantity,
                r.label,
                _number(r.value, r.unit),
                r.unit,
                _number(r.low, r.unit),
                _number(r.high, r.unit),
                r.range_text,
                r.flag,
                r.range_source,
                *tail,
                *_reason_cells(r.reasons),
            ]
        )
    # Values without a row of their own (a lead's values, the ST and Q criteria): their reason.
    with_rows = {r.quantity for r in content.rows}
    others: dict[str, list[ValueReason]] = {}
    for reason in content.reasons:
        if reason.quantity not in with_rows:
            others.setdefault(reason.quantity, []).append(reason)
    for quantity, reasons in others.items():
        label = rt.describe_quantities([quantity])
        blank = [""] * 7  # value, unit, limits, range, flag, range source
        w.writerow(
            [content.record.name, quantity, label, *blank, *tail, *_reason_cells(tuple(reasons))]
        )
    w.writerow([])
    if content.printed:
        # Which reading the values are (the final one, or one reader's own), its flags, notes.
        w.writerow([f"# {printed_words(content)}"])
    w.writerow([f"# {CLINICAL_CAUTION}"])


ANNOTATION_EXTENSION = "rvw"


def write_wfdb_annotations(content: ReportContent, extension: str = ANNOTATION_EXTENSION) -> Path:
    """Write the final (reviewer-corrected where corrected) global beat boundaries as a WFDB
    annotation file ``<record>.<extension>`` beside the record; returns its path.

    Uses the readers' writer (LUDB convention: ``(`` onset, wave peak symbol, ``)`` offset).
    """
    from reviewapp.core.io.writers import write_wfdb_annotations as io_write

    rec = content.record
    if rec.source_path is None:
        raise ReviewError(f"record {rec.name} has no file to write annotations beside")
    src = Path(rec.source_path)
    return io_write(
        src.parent, src.stem, rec.fs_hz, content.final_beat_marks, extension, content.beats
    )


__all__ = [
    "ANNOTATION_EXTENSION",
    "IMAGE_FORMATS",
    "check_output_path",
    "render_image",
    "render_page",
    "write_image",
    "write_measurements_csv",
    "write_pdf",
    "write_png",
    "write_wfdb_annotations",
]
