"""Write the report page (PDF, PNG), the measurements (CSV) and the final fiducials (WFDB).

The PDF is drawn by Qt's own QPdfWriter at 2540 dpi, so one millimetre is exactly 100 device
units, on a landscape page with zero margins; the PNG is the same drawing on a QImage whose
dots-per-metre make its physical size right.
"""

from __future__ import annotations

import csv
import os
from pathlib import Path

from reviewapp import CLINICAL_CAUTION, __version__
from reviewapp.core.errors import ReviewError
from reviewapp.report.content import ReportContent
from reviewapp.report.layout import PageLayout, page_layout

PDF_DPI = 2540  # 1 mm = 100 device units exactly
MM_PER_INCH = 25.4


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
    """One landscape page at true scale; returns the layout used."""
    from PySide6.QtCore import QMarginsF
    from PySide6.QtGui import QPageLayout, QPageSize, QPainter, QPdfWriter

    from reviewapp.report.page import paint_page

    _ensure_gui()
    lo = layout or page_layout()
    path = Path(path)
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
    finally:
        painter.end()
    if not path.is_file() or path.stat().st_size == 0:
        raise ReviewError("the PDF was not written", path)
    return lo


def render_image(content: ReportContent, layout: PageLayout | None = None, dpi: float = 300.0):  # type: ignore[no-untyped-def]
    """The page as a QImage at ``dpi`` with its physical size recorded (dots per metre)."""
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
        paint_page(painter, px_per_mm, lo, content)
    finally:
        painter.end()
    return img


def write_png(
    path: Path, content: ReportContent, layout: PageLayout | None = None, dpi: float = 300.0
) -> PageLayout:
    lo = layout or page_layout()
    img = render_image(content, lo, dpi)
    if not img.save(str(path), "PNG"):
        raise ReviewError("cannot write the PNG (folder missing or not writable?)", path)
    return lo


def write_measurements_csv(path: Path, content: ReportContent) -> None:
    """Global values with normal range and flag, then the reading's context, one row each."""
    path = Path(path)
    try:
        with open(path, "w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh)
            w.writerow(
                [
                    "record",
                    "quantity",
                    "label",
                    "value",
                    "unit",
                    "normal_low",
                    "normal_high",
                    "flag",
                    "range_source",
                    "marks",
                    "reading_status",
                    "reviewer",
                    "engine_version",
                ]
            )
            marks = "reviewer-corrected" if content.n_corrected else "automatic"
            for r in content.rows:
                w.writerow(
                    [
                        content.record.name,
                        r.quantity,
                        r.label,
                        "" if r.value is None else f"{r.value:.1f}",
                        r.unit,
                        "" if r.low is None else f"{r.low:g}",
                        "" if r.high is None else f"{r.high:g}",
                        r.flag,
                        r.range_source,
                        marks,
                        content.status,
                        content.reviewer or "",
                        content.engine_version,
                    ]
                )
            w.writerow([])
            w.writerow([f"# {CLINICAL_CAUTION}"])
    except OSError as err:
        raise ReviewError(f"cannot write the CSV: {err.strerror or err}", path) from err


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
    "render_image",
    "write_measurements_csv",
    "write_pdf",
    "write_png",
    "write_wfdb_annotations",
]
