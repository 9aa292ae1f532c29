"""The interpretation on the report: a statement line on the page and an interpretation page.

Page 1 (``draw_statement_line``): the interpretation in two lines at the right of the title
row (``PageLayout.statements``): the reader's statements when the printed reading has any,
else the automatic ones, named as such, with "criteria on page 2".

Page 2 (``paint_interpretation_page``): the same sheet size; the record and reading, the
reader's statements (each with where it came from), every automatic statement with the
criteria it used, the measured values that met them, its qualifiers and the published
source, the statements not made and why, and the clinical caution. Printed after the ECG page
in the PDF and on the printer; text never leaves its column (elided with the count of what
did not fit).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime

from PySide6.QtGui import QColor, QPainter

from reviewapp import CLINICAL_CAUTION
from reviewapp.core.interpret import CATEGORY_NAMES
from reviewapp.report.content import STATUS_WORDS, ReportContent, printed_words, reader_words
from reviewapp.report.layout import PageLayout, Rect
from reviewapp.report.page import (
    FLAG,
    MARK_AUTO,
    TEXT,
    PageDrawing,
    _Canvas,
    _utc_text,
    _wrap,
)

ORIGINS = {
    "automatic": "automatic statement, kept",
    "catalogue": "from the catalogue",
    "free_text": "own words",
    "reader": "adopted from {who}",
}
LINE_PT = 6.2
LINE_MM = 2.45


def statement_texts(content: ReportContent) -> tuple[str, list[str]]:
    """(heading, statement lines): the reader's statements, else the automatic ones."""
    if content.reader_statements:
        who = content.reviewer or "reader"
        return f"Interpretation ({who})", [x.text for x in content.reader_statements]
    return "Automatic interpretation (not a reader's)", [x.line for x in content.statements]


def draw_statement_line(c: _Canvas, box: Rect, content: ReportContent) -> None:
    """Page 1: the interpretation in two lines inside ``box`` (criteria on page 2)."""
    head, lines = statement_texts(content)
    warn = [x.line for x in content.statements if x.category == "lead_check"]
    text = f"{head}: " + ("; ".join(lines) if lines else "no statement")
    if warn and not content.reader_statements:
        text = "⚠ " + text
    text += ". Criteria and sources: page 2."
    rows = _wrap(c, text, box.w, LINE_PT, max_lines=2)
    y = box.y + 2.0
    for row in rows:
        c.text(box.x, y, row, LINE_PT, max_w=box.w)
        y += LINE_MM


@dataclass
class _Flow:
    """Lines flowing down one column, stopping at its bottom."""

    c: _Canvas
    box: Rect
    y: float
    dropped: int = 0

    def line(self, text: str, size: float, *, bold: bool = False, indent: float = 0.0,
             colour: QColor | None = None) -> bool:  # fmt: skip
        w = self.box.w - indent
        rows = _wrap(self.c, text, w, size, max_lines=6)
        step = size * 0.3528 * 1.3  # pt to mm, with leading
        for row in rows:
            if self.y + step > self.box.bottom:
                self.dropped += 1
                return False
            self.y += step
            ink = TEXT if colour is None else colour
            self.c.text(self.box.x + indent, self.y, row, size, bold=bold, colour=ink, max_w=w)
        return True

    def gap(self, mm: float) -> None:
        self.y += mm


def paint_interpretation_page(
    painter: QPainter,
    px_per_mm: float,
    layout: PageLayout,
    content: ReportContent,
    *,
    generated_at: datetime | None = None,
) -> PageDrawing:
    """Page 2 of the report (module docstring); the same sheet and margins as page 1."""
    c = _Canvas(painter, px_per_mm)
    when = generated_at or datetime.now(UTC)
    left, right = layout.header.x, layout.header.right
    top = layout.header.y
    rec = content.record
    c.text(left, top + 4.0, f"ECG reading report  ·  {rec.name}  ·  interpretation", 11.0,
           bold=True, max_w=right - left)  # fmt: skip
    subj = rec.subject
    who = ", ".join(
        x
        for x in (
            f"subject {subj.subject_id}" if subj.subject_id else "subject ID not stated",
            f"{subj.age_years:.0f} y" if subj.age_years is not None else "age not stated",
            subj.sex or "sex not stated",
        )
    )
    status = STATUS_WORDS.get(content.status, content.status)
    if content.status == "unread":
        status = "unread: automated statements only, not verified by a reader"
    reader = reader_words(content)
    reading = f"reading {status}" + (f" by {reader}" if reader else "")
    if content.status in ("signed_off", "adjudicated") and content.signed_off_at:
        reading += f" at {_utc_text(content.signed_off_at)}"
    c.text(left, top + 8.6, f"{who}  ·  {reading}", 7.5, max_w=right - left)
    # Which reading this is (the final one, or one reader's own), its flags and notes.
    y = top + 11.0
    for row in _wrap(c, printed_words(content), right - left, 7.0, max_lines=3):
        y += 3.0
        c.text(left, y, row, 7.0, max_w=right - left)
    foot_y = layout.footer.bottom
    body = Rect(left, y + 1.2, right - left, foot_y - 12.0 - (y + 1.2))
    col_gap = 6.0
    reader_w = 0.36 * body.w if content.reader_statements else 0.0
    auto = Rect(body.x + (reader_w + col_gap if reader_w else 0.0), body.y,
                body.w - (reader_w + col_gap if reader_w else 0.0), body.h)  # fmt: skip
    if reader_w:
        _reader_column(c, Rect(body.x, body.y, reader_w, body.h), content)
    _automatic_column(c, auto, content)
    size = 7.0
    while size > 5.0 and c.text_width_mm(CLINICAL_CAUTION, size, True) > right - left:
        size -= 0.25
    c.text(left, foot_y - 4.5, CLINICAL_CAUTION, size, bold=True, max_w=right - left)
    c.text(
        right,
        foot_y - 0.8,
        f"engine {content.engine_version}  ·  printed {when:%Y-%m-%d %H:%M} UTC  ·  page 2 of 2",
        6.0,
        align="right",
        colour=MARK_AUTO,
        max_w=right - left,
    )
    return c.drawing


def _reader_column(c: _Canvas, box: Rect, content: ReportContent) -> None:
    f = _Flow(c, box, box.y)
    f.line(f"Reader's interpretation ({content.reviewer or 'reader'})", 9.0, bold=True)
    f.gap(1.0)
    for k, x in enumerate(content.reader_statements, 1):
        origin = ORIGINS.get(x.origin, x.origin).format(who=x.from_reader or "another reader")
        f.line(f"{k}. {x.text}", 8.0, bold=True)
        f.line(origin, 6.5, indent=4.0, colour=MARK_AUTO)
        f.gap(0.6)
    if f.dropped:
        f.line(f"... {f.dropped} more line(s) not shown", 6.5, colour=FLAG)


def _automatic_column(c: _Canvas, box: Rect, content: ReportContent) -> None:
    f = _Flow(c, box, box.y)
    f.line(
        "Automatic statements: criteria, measured values, sources (engine "
        f"{content.engine_version}; to be verified by the reader)",
        9.0,
        bold=True,
    )
    f.gap(1.0)
    if not content.statements:
        f.line("No automatic statement.", 7.5)
    last = None
    for x in content.statements:
        if x.category != last:
            f.gap(0.8)
            f.line(CATEGORY_NAMES.get(x.category, x.category), 7.0, bold=True, colour=MARK_AUTO)
            last = x.category
        warn = "⚠ " if x.category == "lead_check" else ""
        f.line(warn + x.line, 8.5, bold=True, colour=FLAG if warn else None)
        f.line(f"Criteria: {x.criteria}", 7.0, indent=4.0)
        if x.values:
            f.line(f"Measured: {x.values_text}", 7.0, indent=4.0)
        for q in x.qualifiers:
            f.line(f"Note: {q}", 7.0, indent=4.0)
        f.line(f"Source: {x.source}", 6.5, indent=4.0, colour=MARK_AUTO)
    if content.statement_reasons:
        f.gap(1.5)
        f.line("Not stated", 7.0, bold=True, colour=MARK_AUTO)
        for r in content.statement_reasons:
            f.line(r.text, 6.3, indent=4.0)
    if f.dropped:
        f.y = min(f.y, box.bottom - 3.0)
        f.line(
            f"... {f.dropped} more line(s) did not fit: see reviewapp measure PATH for all",
            6.5,
            colour=FLAG,
        )
