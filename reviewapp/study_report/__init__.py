"""The QT study report: ``report.pdf`` and one ``qt_rr_<subject>.png`` per subject.

Drawn with Qt's own QPdfWriter and QPainter through the ECG report's millimetre canvas
(``reviewapp.report``), so no plotting library is needed and the PDF is vector at physical
size. The numbers come from ``reviewapp.core.study`` (no Qt there); this package only draws.
Every page and every picture carries the clinical caution and names its sources.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from reviewapp.core.errors import ReviewError
from reviewapp.core.marks.final import DEFAULT_STUDY_TOLERANCES_MS, TOLERANCE_SOURCE
from reviewapp.core.study.analysis import StudyAnalysis, SubjectCloud
from reviewapp.core.study.qt_rr import QtRrFit

PNG_W_MM, PNG_H_MM = 170.0, 128.0
PNG_DPI = 200.0


def png_name(subject: str) -> str:
    """``qt_rr_<subject>.png`` with anything but letters, digits, '-' and '_' replaced.

    >>> png_name("S-101"), png_name("a/b c")
    ('qt_rr_S-101.png', 'qt_rr_a_b_c.png')
    """
    return "qt_rr_" + re.sub(r"[^A-Za-z0-9_-]", "_", subject) + ".png"


def tolerance_text(tolerances_ms: Mapping[str, float] | None) -> str:
    tol = dict(DEFAULT_STUDY_TOLERANCES_MS if tolerances_ms is None else tolerances_ms)
    parts = ", ".join(f"{k.removesuffix('_ms').upper()} {v:g} ms" for k, v in tol.items())
    return f"two signed readers more than {parts} apart ({TOLERANCE_SOURCE})"


def write_study_report(
    out: Path,
    analysis: StudyAnalysis,
    *,
    title: str,
    tolerances_ms: Mapping[str, float] | None = None,
    generated_at: datetime | None = None,
) -> list[str]:
    """Write ``report.pdf`` and the per-subject PNGs into ``out``; returns the file names."""
    from reviewapp.report.export import _ensure_gui

    _ensure_gui()
    when = generated_at or datetime.now(UTC)
    names = [write_report_pdf(out / "report.pdf", analysis, title, tolerances_ms, when).name]
    for cloud in analysis.clouds:
        name = png_name(cloud.subject)
        if name in names:  # two subject ids that differ only in characters replaced
            name = name.removesuffix(".png") + f"_{len(names)}.png"
        write_qt_rr_png(out / name, cloud, analysis.population_fit, title, when)
        names.append(name)
    return names


def write_report_pdf(
    path: Path,
    analysis: StudyAnalysis,
    title: str,
    tolerances_ms: Mapping[str, float] | None = None,
    generated_at: datetime | None = None,
) -> Path:
    """The report as an A4 portrait PDF (vector, drawn at physical size)."""
    from PySide6.QtCore import QMarginsF
    from PySide6.QtGui import QPageLayout, QPageSize, QPainter, QPdfWriter

    from reviewapp import __version__
    from reviewapp.report.export import MM_PER_INCH, PDF_DPI, _ensure_gui
    from reviewapp.study_report.chart import MmCanvas
    from reviewapp.study_report.pages import paint_page, study_pages

    _ensure_gui()
    when = generated_at or datetime.now(UTC)
    pages = study_pages(analysis, tolerance_text(tolerances_ms))
    writer = QPdfWriter(str(path))
    writer.setResolution(PDF_DPI)
    writer.setTitle(title)
    writer.setCreator(f"reviewapp {__version__}")
    writer.setPageLayout(
        QPageLayout(
            QPageSize(QPageSize.PageSizeId.A4),
            QPageLayout.Orientation.Portrait,
            QMarginsF(0, 0, 0, 0),
            QPageLayout.Unit.Millimeter,
        )
    )
    painter = QPainter()
    if not painter.begin(writer):
        raise ReviewError("cannot write the report PDF (folder missing or not writable?)", path)
    try:
        for i in range(len(pages)):
            if i:
                writer.newPage()
            paint_page(MmCanvas(painter, PDF_DPI / MM_PER_INCH), pages, i, title, when)
    finally:
        painter.end()
    if not path.is_file() or path.stat().st_size == 0:
        raise ReviewError("the report PDF was not written", path)
    return path


def blank_image(width_mm: float, height_mm: float, dpi: float) -> Any:
    """A white QImage of that physical size (its dots per metre recorded)."""
    from PySide6.QtGui import QColor, QImage

    from reviewapp.report.export import MM_PER_INCH

    s = dpi / MM_PER_INCH
    img = QImage(round(width_mm * s), round(height_mm * s), QImage.Format.Format_RGB32)
    dpm = round(dpi / 0.0254)
    img.setDotsPerMeterX(dpm)
    img.setDotsPerMeterY(dpm)
    img.fill(QColor(255, 255, 255))
    return img


def render_pages(
    analysis: StudyAnalysis,
    title: str,
    tolerances_ms: Mapping[str, float] | None = None,
    dpi: float = 100.0,
    generated_at: datetime | None = None,
) -> list[tuple[Any, Any]]:
    """Each report page as (QImage, what was drawn where), with the same drawing as the PDF:
    for previews and for checking the pages' text."""
    from PySide6.QtGui import QPainter

    from reviewapp.report.export import MM_PER_INCH, _ensure_gui
    from reviewapp.study_report.chart import MmCanvas
    from reviewapp.study_report.pages import PAGE_H_MM, PAGE_W_MM, paint_page, study_pages

    _ensure_gui()
    when = generated_at or datetime.now(UTC)
    pages = study_pages(analysis, tolerance_text(tolerances_ms))
    s = dpi / MM_PER_INCH
    out = []
    for i in range(len(pages)):
        img = blank_image(PAGE_W_MM, PAGE_H_MM, dpi)
        painter = QPainter(img)
        try:
            c = MmCanvas(painter, s)
            paint_page(c, pages, i, title, when)
        finally:
            painter.end()
        out.append((img, c.drawing))
    return out


def render_qt_rr(
    cloud: SubjectCloud,
    population: QtRrFit | None,
    title: str,
    generated_at: datetime | None = None,
) -> tuple[Any, Any]:
    """One subject's QT/RR picture with the caution and sources: (QImage, what was drawn)."""
    from PySide6.QtGui import QPainter

    from reviewapp import CLINICAL_CAUTION, __version__
    from reviewapp.report.export import MM_PER_INCH, _ensure_gui
    from reviewapp.report.layout import Rect
    from reviewapp.study_report.chart import GREY, VERMILLION, MmCanvas
    from reviewapp.study_report.figures import draw_qt_rr
    from reviewapp.study_report.pages import paragraph

    _ensure_gui()
    when = generated_at or datetime.now(UTC)
    s = PNG_DPI / MM_PER_INCH
    img = blank_image(PNG_W_MM, PNG_H_MM, PNG_DPI)
    painter = QPainter(img)
    try:
        c = MmCanvas(painter, s)
        c.text(6.0, 6.0, title, 7.0, colour=GREY, max_w=PNG_W_MM - 12.0)
        draw_qt_rr(
            c,
            Rect(6.0, 8.0, PNG_W_MM - 12.0, PNG_H_MM - 30.0),
            cloud,
            population,
            legend_right=True,
        )
        y = PNG_H_MM - 17.5
        y = paragraph(
            c,
            6.0,
            y,
            PNG_W_MM - 12.0,
            "Clinical caution: " + CLINICAL_CAUTION,
            6.5,
            3.0,
            3,
            bold=True,
            colour=VERMILLION,
        )
        paragraph(
            c,
            6.0,
            y + 0.3,
            PNG_W_MM - 12.0,
            "Sources: QT/RR fit by least squares on logarithms (Malik et al., Heart 2002); "
            "colours after Okabe & Ito, Color Universal Design 2008. "
            f"reviewapp {__version__}, {when:%Y-%m-%d %H:%M} UTC.",
            6.0,
            2.8,
            2,
            colour=GREY,
        )
    finally:
        painter.end()
    return img, c.drawing


def write_qt_rr_png(
    path: Path,
    cloud: SubjectCloud,
    population: QtRrFit | None,
    title: str,
    generated_at: datetime | None = None,
) -> Path:
    """One subject's QT/RR picture (``render_qt_rr``) as a PNG."""
    img, _ = render_qt_rr(cloud, population, title, generated_at)
    if not img.save(str(path), "PNG"):
        raise ReviewError("cannot write the QT/RR picture", path)
    return path
