"""Draw the report page with QPainter on any paint device, at true physical scale.

All geometry comes from ``layout.PageLayout`` in millimetres; ``px_per_mm`` converts to the
device (100 for a PDF at 2540 dpi, 11.811 for a 300 dpi image), so 1 mm on the page is 1 mm
on paper. Text is drawn in points with the painter's scaling removed, so type sizes are
physical too. Every text is elided to the width of its block and recorded in the returned
``PageDrawing``, so tests can check that nothing leaves its block.

Fiducial marks on the strips are glyphs, not colour alone: each wave has its own lane (P, QRS,
T, labelled at the left), an onset is a stroke with a foot pointing into the wave, an end a
stroke with the foot pointing back; a reviewer-corrected mark is a thick stroke with a filled
dot on top, the automatic position it replaced a dotted stroke. The key is printed in the
footer.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from datetime import UTC, datetime

import numpy as np
from PySide6.QtCore import QLineF, QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QFont, QFontMetricsF, QPainter, QPen, QPolygonF

from reviewapp import CLINICAL_CAUTION
from reviewapp.core.measure import limit_text
from reviewapp.core.measure import reason_text as rt
from reviewapp.report.content import (
    MarkPair,
    MeasurementRow,
    ReportContent,
    reader_words,
    study_facts,
)
from reviewapp.report.layout import (
    CAL_PULSE_S,
    FIDUCIAL_LANES,
    LAYOUT_3X4,
    MAJOR_MM,
    MINOR_MM,
    RHYTHM_LEAD,
    STANDARD_12,
    STANDARD_GAINS_MM_PER_MV,
    STANDARD_SPEEDS_MM_PER_S,
    PageLayout,
    Rect,
)

FONT_FAMILY = "DejaVu Sans"
GRID_MINOR = QColor(244, 200, 200)
GRID_MAJOR = QColor(222, 120, 120)
TEXT = QColor(0, 0, 0)
TRACE_INK = QColor(0, 0, 0)  # ECG traces and calibration pulses
REP_OTHER_LEADS = QColor(150, 150, 150)  # the other leads superimposed in the beat panel
MARK_AUTO = QColor(90, 90, 90)
MARK_REVIEWED = QColor(0, 70, 190)
FLAG = QColor(170, 0, 0)
STATUS_COLOURS = {
    "adjudicated": QColor(0, 110, 40),
    "signed_off": QColor(0, 110, 40),
    "in_progress": QColor(150, 90, 0),
    "unread": QColor(170, 0, 0),
}
SHORT_LABELS = {
    "p_on": "Pon",
    "p_off": "Pend",
    "qrs_on": "QRSon",
    "qrs_off": "QRSend",
    "t_off": "Tend",
}
LANE_OF = {"p_on": "P", "p_off": "P", "qrs_on": "QRS", "qrs_off": "QRS", "t_off": "T"}
# Short labels for the page table (the CSV keeps the measurement module's labels).
PAGE_LABELS = {
    "hr_bpm": "Heart rate",
    "ventricular_rate_bpm": "Vent. rate",
    "rr_ms": "RR",
    "p_ms": "P duration",
    "pr_ms": "PR",
    "qrs_ms": "QRS",
    "qt_ms": "QT",
    "qtc_bazett_ms": "QTc Bazett",
    "qtc_fridericia_ms": "QTc Fridericia",
    "qtc_framingham_ms": "QTc Framingham",
    "qtc_hodges_ms": "QTc Hodges",
    "p_axis_deg": "P axis",
    "qrs_axis_deg": "QRS axis",
    "t_axis_deg": "T axis",
}
TABLE_GROUPS = (
    ("hr_bpm", "rr_ms", "p_ms", "pr_ms", "qrs_ms"),
    ("qt_ms", "qtc_bazett_ms", "qtc_fridericia_ms", "qtc_framingham_ms", "qtc_hodges_ms"),
    ("ventricular_rate_bpm", "p_axis_deg", "qrs_axis_deg", "t_axis_deg"),
)
# Beside a QTc that is not comparable with its limits: JT, JTc and the QRS-adjusted QT, on
# one line at the top of the third group (next to the QTc rows).
WIDE_QRS_LINE = ("jt_ms", "jtc_bazett_ms", "qt_bogossian_ms")
WIDE_QRS_SHORT = {"jt_ms": "JT", "jtc_bazett_ms": "JTc", "qt_bogossian_ms": "QT adj."}
SUPERSCRIPT_DIGITS = "⁰¹²³⁴⁵⁶⁷⁸⁹"
MM_PER_PT = 25.4 / 72.0


@dataclass
class PageDrawing:
    """What was drawn where (mm): text boxes, and the gain the beat panel used."""

    texts: list[tuple[str, Rect]] = field(default_factory=list)
    beat_gain_mm_per_mv: float | None = None


class _Canvas:
    """QPainter in millimetres, with text drawn in physical points."""

    def __init__(self, painter: QPainter, px_per_mm: float) -> None:
        self.p = painter
        self.s = px_per_mm
        self.drawing = PageDrawing()
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        painter.setRenderHint(QPainter.RenderHint.TextAntialiasing, True)

    def pen(
        self, colour: QColor, width_mm: float, style: Qt.PenStyle = Qt.PenStyle.SolidLine
    ) -> None:
        pen = QPen(colour)
        pen.setWidthF(width_mm * self.s)
        pen.setStyle(style)
        pen.setCapStyle(Qt.PenCapStyle.FlatCap)
        pen.setJoinStyle(Qt.PenJoinStyle.RoundJoin)
        self.p.setPen(pen)
        self.p.setBrush(Qt.BrushStyle.NoBrush)

    def clip(self, r: Rect) -> None:
        s = self.s
        self.p.setClipRect(QRectF(r.x * s, r.y * s, r.w * s, r.h * s))

    def line(self, x1: float, y1: float, x2: float, y2: float) -> None:
        s = self.s
        self.p.drawLine(QLineF(x1 * s, y1 * s, x2 * s, y2 * s))

    def lines(self, segs: list[QLineF]) -> None:
        self.p.drawLines(segs)

    def polyline(self, x_mm: np.ndarray, y_mm: np.ndarray) -> None:
        """Draw a trace, broken wherever it is NaN."""
        s = self.s
        ok = np.isfinite(y_mm)
        if not ok.any():
            return
        edges = np.flatnonzero(np.diff(ok.astype(np.int8)))
        bounds = np.concatenate(([0], edges + 1, [len(ok)]))
        for a, b in itertools.pairwise(bounds):
            if not ok[a] or b - a < 2:
                continue
            xs = (x_mm[a:b] * s).tolist()
            ys = (y_mm[a:b] * s).tolist()
            self.p.drawPolyline(QPolygonF([QPointF(x, y) for x, y in zip(xs, ys, strict=True)]))

    def rect(self, r: Rect, fill: QColor | None = None) -> None:
        s = self.s
        self.p.setBrush(QBrush(fill) if fill is not None else Qt.BrushStyle.NoBrush)
        self.p.drawRect(QRectF(r.x * s, r.y * s, r.w * s, r.h * s))
        self.p.setBrush(Qt.BrushStyle.NoBrush)

    def dot(self, x: float, y: float, r_mm: float, colour: QColor) -> None:
        s = self.s
        self.p.setPen(Qt.PenStyle.NoPen)
        self.p.setBrush(QBrush(colour))
        self.p.drawEllipse(QPointF(x * s, y * s), r_mm * s, r_mm * s)
        self.p.setBrush(Qt.BrushStyle.NoBrush)

    def font(self, size_pt: float, bold: bool = False) -> QFont:
        f = QFont(FONT_FAMILY)
        f.setPointSizeF(size_pt)
        f.setBold(bold)
        return f

    def text_width_mm(self, text: str, size_pt: float, bold: bool = False) -> float:
        fm = QFontMetricsF(self.font(size_pt, bold), self.p.device())
        return fm.horizontalAdvance(text) / self.s

    def fit(self, text: str, width_mm: float, size_pt: float, bold: bool = False) -> str:
        """``text``, cut and ended with an ellipsis when wider than ``width_mm``."""
        if self.text_width_mm(text, size_pt, bold) <= width_mm:
            return text
        while text and self.text_width_mm(text + "...", size_pt, bold) > width_mm:
            text = text[:-1]
        return text.rstrip() + "..."

    def text(
        self,
        x: float,
        y: float,
        text: str,
        size_pt: float = 7.0,
        *,
        bold: bool = False,
        colour: QColor = TEXT,
        align: str = "left",
        backdrop: bool = False,
        max_w: float | None = None,
    ) -> float:
        """Draw ``text`` with its baseline at y (mm), elided to ``max_w``; returns its width."""
        if max_w is not None:
            text = self.fit(text, max_w, size_pt, bold)
        w = self.text_width_mm(text, size_pt, bold)
        if align == "right":
            x -= w
        elif align == "center":
            x -= w / 2
        fm = QFontMetricsF(self.font(size_pt, bold), self.p.device())
        asc, desc = fm.ascent() / self.s, fm.descent() / self.s
        # Recorded box: cap height above the baseline, descenders below (what ink can cover).
        cap = fm.capHeight() / self.s
        self.drawing.texts.append((text, Rect(x, y - cap, w, cap + desc * 0.8)))
        if backdrop:
            self.p.setPen(Qt.PenStyle.NoPen)
            self.rect(
                Rect(x - 0.4, y - asc * 0.85, w + 0.8, asc * 0.85 + desc),
                QColor(255, 255, 255, 225),
            )
        self.p.setFont(self.font(size_pt, bold))
        self.p.setPen(QPen(colour))
        self.p.drawText(QPointF(x * self.s, y * self.s), text)
        return w


def paint_page(
    painter: QPainter,
    px_per_mm: float,
    layout: PageLayout,
    content: ReportContent,
    *,
    generated_at: datetime | None = None,
) -> PageDrawing:
    """Paint the whole page; the device origin must be the sheet's top-left corner."""
    c = _Canvas(painter, px_per_mm)
    _draw_grid(c, layout.grid)
    strips = page_strips(layout, content)
    _draw_calibration(c, layout, sorted({s.row for s in strips}))
    _draw_leads(c, layout, content, strips)
    _draw_header(c, layout, content)
    from reviewapp.report.interpretation_block import draw_statement_line

    draw_statement_line(c, layout.statements, content)
    _draw_beat_panel(c, layout, content)
    _draw_footer(c, layout, content, generated_at or datetime.now(UTC), strips)
    return c.drawing


def _draw_grid(c: _Canvas, g: Rect) -> None:
    s = c.s
    nx = int(g.w / MINOR_MM + 1e-6)
    ny = int(g.h / MINOR_MM + 1e-6)
    major_every = round(MAJOR_MM / MINOR_MM)
    for major in (False, True):
        segs: list[QLineF] = []
        for i in range(nx + 1):
            if (i % major_every == 0) == major:
                x = (g.x + i * MINOR_MM) * s
                segs.append(QLineF(x, g.y * s, x, g.bottom * s))
        for j in range(ny + 1):
            if (j % major_every == 0) == major:
                y = (g.y + j * MINOR_MM) * s
                segs.append(QLineF(g.x * s, y, g.right * s, y))
        c.pen(GRID_MAJOR if major else GRID_MINOR, 0.16 if major else 0.07)
        c.lines(segs)


def is_standard_12(content: ReportContent) -> bool:
    """Enough standard leads for the 3 x 4 layout; otherwise each lead gets a full strip."""
    return sum(n in content.record.lead_names for n in STANDARD_12) >= 8


@dataclass(frozen=True)
class Strip:
    """One trace segment: lead column ``col`` on ``row`` from ``t0_s`` to ``t1_s``, drawn at
    x = trace origin + (t - ``origin_s``) * speed. ``marks``: draw the mark lanes under it."""

    col: int | None
    name: str
    row: int
    t0_s: float
    t1_s: float
    origin_s: float
    marks: bool = False
    label_suffix: str = ""


def page_strips(lo: PageLayout, content: ReportContent) -> list[Strip]:
    """What goes on each row: 3 x 4 + rhythm for a 12-lead; otherwise each lead full width,
    repeated in consecutive time bands to use the page (2 leads: 0-10 s then 10-20 s)."""
    rec = content.record
    duration = rec.duration_s
    out: list[Strip] = []
    if is_standard_12(content):
        col_s = lo.column_s
        for r, row_leads in enumerate(LAYOUT_3X4):
            for k, name in enumerate(row_leads):
                col = _lead_col(content, name)
                out.append(Strip(col, name, r, k * col_s, (k + 1) * col_s, 0.0))
        rhythm = _lead_col(content, RHYTHM_LEAD)
        name = RHYTHM_LEAD
        if rhythm is None:
            rhythm, name = 0, rec.lead_names[0]
        out.append(Strip(rhythm, name, 3, 0.0, lo.shown_s, 0.0, True, "  rhythm"))
        return out
    n = min(4, rec.n_leads)
    bands = 4 // n
    for b in range(bands):
        t0 = b * lo.shown_s
        if b > 0 and t0 >= duration:
            break
        for i in range(n):
            suffix = f"  {t0:.0f}-{t0 + lo.shown_s:.0f} s" if bands > 1 else ""
            out.append(
                Strip(i, rec.lead_names[i], b * n + i, t0, t0 + lo.shown_s, t0, i == n - 1, suffix)
            )
    return out


def _draw_calibration(c: _Canvas, lo: PageLayout, rows: list[int]) -> None:
    pulse_w = CAL_PULSE_S * lo.speed_mm_per_s
    mv = lo.cal_pulse_mv
    h = mv * lo.gain_mm_per_mv
    x0 = lo.grid.x + 1.0
    x1 = lo.grid.x + (lo.cal_width_mm - pulse_w) / 2.0
    x2 = x1 + pulse_w
    x3 = lo.trace_x0_mm - 1.0
    c.p.save()
    c.clip(lo.grid)
    c.pen(TRACE_INK, 0.25)
    for base in (lo.row_baselines_mm[r] for r in rows):
        xs = np.array([x0, x1, x1, x2, x2, x3])
        ys = np.array([base, base, base - h, base - h, base, base])
        c.polyline(xs, ys)
    c.p.restore()
    if mv != 1.0:  # a non-standard pulse must say so
        for base in (lo.row_baselines_mm[r] for r in rows):
            c.text(x0, base + 3.0, f"{mv:g} mV", 4.5, backdrop=True, max_w=lo.cal_width_mm - 1)


def _lead_col(content: ReportContent, name: str) -> int | None:
    try:
        return content.record.lead_index(name)
    except KeyError:
        return None


def _trace(c: _Canvas, lo: PageLayout, content: ReportContent, s: Strip) -> None:
    assert s.col is not None
    fs = content.fs_hz
    a = max(0, round(s.t0_s * fs))
    b = min(content.signal_mv.shape[0], round(s.t1_s * fs) + 1)
    if b - a < 2:
        return
    t = np.arange(a, b) / fs
    c.polyline(lo.x_of(t, s.origin_s), lo.y_of(content.signal_mv[a:b, s.col], s.row))


def _draw_leads(c: _Canvas, lo: PageLayout, content: ReportContent, strips: list[Strip]) -> None:
    """Traces clipped to the grid (neighbouring rows may overlap, as on paper), then the mark
    lanes, then the labels on a white backdrop so no trace is ever drawn over text."""
    duration = content.record.duration_s
    c.p.save()
    c.clip(lo.grid)
    for s in strips:
        if s.col is not None and s.t0_s < duration:
            c.pen(TRACE_INK, 0.22)
            _trace(c, lo, content, s)
        if s.origin_s == 0.0 and s.t0_s > 0.0 and not s.marks:
            x = lo.x_of(s.t0_s)  # lead change marker between 3 x 4 columns
            base = lo.row_baselines_mm[s.row]
            c.pen(TRACE_INK, 0.25)
            c.line(x, base - 3.0, x, base + 3.0)
    c.p.restore()
    for s in strips:
        if s.marks:
            _draw_beat_marks(c, lo, content, s)
    for s in strips:
        x = lo.x_of(s.t0_s, s.origin_s) + 1.0
        y = lo.row_baselines_mm[s.row] - 12.0
        col_w = (s.t1_s - s.t0_s) * lo.speed_mm_per_s - 2.0
        if s.col is not None and s.t0_s < duration:
            derived = " (derived)" if content.record.leads[s.col].derived else ""
            label = s.name + derived + s.label_suffix
            c.text(x, y, label, 7.5, bold=True, backdrop=True, max_w=col_w)
        else:
            text = f"{s.name}: not recorded" if s.col is None else f"{s.name}: record ended"
            c.text(x, y, text, 7.0, colour=MARK_AUTO, backdrop=True, max_w=col_w)


def _draw_beat_marks(c: _Canvas, lo: PageLayout, content: ReportContent, s: Strip) -> None:
    """Each beat's global boundaries as glyphs in the P / QRS / T lanes under a strip."""
    fs = content.fs_hz
    lanes = lo.lanes(s.row)
    t_hi = min(s.t1_s, content.record.duration_s)
    for row in content.beat_marks:
        for m in row:
            lane = lanes[LANE_OF[m.fiducial]]
            _mark_glyph(c, lo, m, fs, lane, s.t0_s, t_hi, s.origin_s)
    for name, lane in lanes.items():
        c.text(
            lo.trace_x0_mm - 0.8,
            lane.bottom - 0.55,
            name,
            4.5,
            bold=True,
            colour=MARK_AUTO,
            align="right",
            backdrop=True,
        )


def _glyph(c: _Canvas, x: float, lane: Rect, onset: bool) -> None:
    """A stroke with a foot at the bottom pointing into the wave (onset) or back (end)."""
    top, bot = lane.y + 0.3, lane.bottom - 0.3
    foot = 0.7 if onset else -0.7
    c.line(x, top, x, bot)
    c.line(x, bot, x + foot, bot)


def _mark_glyph(
    c: _Canvas,
    lo: PageLayout,
    m: MarkPair,
    fs: float,
    lane: Rect,
    t_lo: float,
    t_hi: float,
    origin: float,
) -> None:
    def x_of(i: int | None) -> float | None:
        if i is None or not (t_lo <= i / fs <= t_hi):
            return None
        return lo.x_of(i / fs, origin)

    onset = m.fiducial.endswith("_on")
    if m.corrected:
        xa = x_of(m.auto)
        if xa is not None:
            c.pen(MARK_AUTO, 0.12, Qt.PenStyle.DotLine)
            c.line(xa, lane.y + 0.3, xa, lane.bottom - 0.3)
        xf = x_of(m.final)
        if xf is not None:
            c.pen(MARK_REVIEWED, 0.3)
            _glyph(c, xf, lane, onset)
            c.dot(xf, lane.y + 0.35, 0.35, MARK_REVIEWED)
    else:
        xf = x_of(m.final)
        if xf is not None:
            c.pen(MARK_AUTO, 0.15)
            _glyph(c, xf, lane, onset)


def _fmt(v: float | None, unit: str) -> str:
    """The value cell: the number, with the unit's symbol attached where it has one ("+60°");
    other units go in their own column."""
    if v is None:
        return "--"
    if limit_text.unit_symbol(unit) != limit_text.unit_key(unit):
        return limit_text.value_text(v, unit)
    return limit_text.number_text(v, unit)


def _facts(content: ReportContent) -> list[tuple[str, bool]]:
    """(text, emphasised) pieces of the subject line, most important first."""
    rec = content.record
    subj = rec.subject
    study = study_facts(subj.comments)
    pieces: list[tuple[str, bool]] = [
        (f"Subject {subj.subject_id}" if subj.subject_id else "Subject ID not stated", False),
        (f"{subj.age_years:.0f} y" if subj.age_years is not None else "age not stated", False),
        (subj.sex or "sex not stated", False),
    ]
    if "timepoint" in study:
        pieces.append((f"time point: {study['timepoint']}", True))
    if "visit" in study:
        pieces.append((f"visit: {study['visit']}", True))
    if "study" in study:
        pieces.append((f"study {study['study']}", False))
    if subj.acquired_at:
        pieces.append((f"acquired {subj.acquired_at:%Y-%m-%d %H:%M}", False))
    return pieces


def _source_text(content: ReportContent) -> str:
    rec = content.record
    src = rec.source_path.name if rec.source_path else rec.name
    return f"{rec.source_format or 'record'} {src}: {rec.n_leads} leads, {rec.fs_hz:g} Hz"


def _draw_header(c: _Canvas, lo: PageLayout, content: ReportContent) -> None:
    rec = content.record
    t = lo.title
    c.text(t.x, t.y + 4.0, f"ECG reading report  ·  {rec.name}", 11.0, bold=True, max_w=t.w)

    # Subject line: drop the least important pieces rather than run into the beat panel.
    f = lo.facts
    sep = "  ·  "
    pieces = _facts(content)
    size = 7.5
    while len(pieces) > 3:
        total = sum(c.text_width_mm(p, size, bold=b) for p, b in pieces)
        if total + c.text_width_mm(sep, size) * (len(pieces) - 1) <= f.w:
            break
        pieces.pop()
    x = f.x
    for k, (piece, bold) in enumerate(pieces):
        text = piece if k == 0 else sep + piece
        x += c.text(x, f.y + 3.2, text, size, bold=bold, max_w=f.right - x)
        if x >= f.right - 0.5:
            break

    st = lo.status
    y = st.y + 3.3
    status_text = {
        "adjudicated": "ADJUDICATED",
        "signed_off": "SIGNED OFF",
        "in_progress": "IN PROGRESS (not signed off)",
        "unread": "UNREAD: automated marks only, not verified by a reader",
    }.get(content.status, content.status)
    who = ""
    if content.printed.startswith("final reading"):
        status_text += " (final reading)"
    if content.reviewer:
        who = f"  ·  {reader_words(content)}"
    if content.status in ("signed_off", "adjudicated") and content.signed_off_at:
        who += f"  ·  signed {_utc_text(content.signed_off_at)}"
    if content.final_flags:
        who += "  ·  ⚠ " + ", ".join(content.final_flags)
    w = c.text(st.x, y, "Reading: ", 8.0, bold=True)
    w += c.text(
        st.x + w,
        y,
        status_text,
        8.0,
        bold=True,
        colour=STATUS_COLOURS.get(content.status, TEXT),
        max_w=st.w - w,
    )
    corrected = content.n_corrected
    marks_text = (
        f"  ·  values use {corrected} corrected mark(s)"
        if corrected
        else "  ·  values below from automatic marks"
    )
    if st.w - w > 5.0:
        c.text(st.x + w, y, who + marks_text, 7.5, max_w=st.w - w)
    _draw_table(c, lo.table, content)


def _utc_text(iso: str) -> str:
    """``2026-12-02T00:59:01.98Z`` -> ``2026-12-02 00:59 UTC`` (unparseable text kept as is)."""
    try:
        t = datetime.fromisoformat(iso.replace("Z", "+00:00"))
    except ValueError:
        return iso
    return f"{t.astimezone(UTC):%Y-%m-%d %H:%M} UTC"


def _superscript(numbers: list[int]) -> str:
    """Statement numbers as raised digits: [1, 3] -> "¹˒³"."""
    return "˒".join("".join(SUPERSCRIPT_DIGITS[int(d)] for d in str(n)) for n in numbers)


def _draw_table(c: _Canvas, box: Rect, content: ReportContent) -> None:
    """Global values in three column groups (rate and conduction / QT and the four QTc
    formulas / axes), name, value, unit, normal range, flag; a value with a reason says it
    where its range and flag would be ("no P wave marked", "not comparable: QRS >= 120 ms")
    and carries the number of its statement. Under the groups, the statements (each reason
    once, brief, with its source) and then the other flags (per-lead values, voltages)."""
    by_q = {r.quantity: r for r in content.rows}
    statements = [rt.brief(st.text) for st in content.reason_statements]
    numbers: dict[str, list[int]] = {}
    for k, st in enumerate(content.reason_statements, start=1):
        for q in st.quantities:
            numbers.setdefault(q, []).append(k)
    qtc_not_comparable = any(
        r.kind == "not_comparable" for q in TABLE_GROUPS[1] if q in by_q for r in by_q[q].reasons
    )
    groups = [list(g) for g in TABLE_GROUPS]
    if qtc_not_comparable and all(q in by_q for q in WIDE_QRS_LINE):
        groups[2].insert(0, "wide_qrs_line")
    group_w = (box.w + 3.0) / 3.0
    n_rows = max(len(g) for g in groups)
    flags = "Other flags: " + "; ".join(content.other_findings) if content.other_findings else ""
    paragraph = "   ".join(f"{_superscript([k])} {t}" for k, t in enumerate(statements, 1))
    head_h, row_h, size, flags_beside = _notes_plan(c, box, group_w, groups, paragraph, flags)
    # label, value (right edge), unit, range, flag: room for the longest range, "> 390 and
    # < 450 ms" (about 23 mm at 6.2 pt), so no range is ever cut short.
    cols = (0.0, 29.5, 30.3, 36.0, 59.8)
    x0, y0 = box.x, box.y
    for gi, group in enumerate(groups):
        gx = x0 + gi * group_w
        right = gx + group_w - 3.0
        c.text(gx + cols[0], y0 + head_h - 0.8, "Measure", 6.5, colour=MARK_AUTO)
        c.text(gx + cols[1], y0 + head_h - 0.8, "Value", 6.5, colour=MARK_AUTO, align="right")
        c.text(gx + cols[3], y0 + head_h - 0.8, "Normal", 6.5, colour=MARK_AUTO)
        c.text(gx + cols[4], y0 + head_h - 0.8, "Flag", 6.5, colour=MARK_AUTO)
        c.pen(MARK_AUTO, 0.1)
        c.line(gx, y0 + head_h, right, y0 + head_h)
        for i, q in enumerate(group):
            y = y0 + head_h + (i + 1) * row_h
            if q == "wide_qrs_line":
                _draw_wide_qrs_line(c, gx, y, right, [by_q[k] for k in WIDE_QRS_LINE], numbers)
                continue
            row = by_q.get(q)
            if row is not None:
                _draw_row(c, gx, y, right, cols, row, numbers.get(q, []))
    table_bottom = y0 + head_h + n_rows * row_h
    # The statements, then (unless they fit under the axes) the other flags, across the
    # whole width under the groups; the statements are never cut, the flags only when even
    # the smallest type leaves no room (with "...").
    line_h = _line_mm(size)
    y = table_bottom + 0.5 + 0.8 * line_h
    start = 0.0  # where the other flags begin on the statements' last line (0: a line of their own)
    if paragraph:
        plines = _wrap(c, paragraph, box.w, size, max_lines=99)
        for line in plines:
            c.text(x0, y, line, size, max_w=box.w)
            y += line_h
        start = _run_on_mm(c, plines[-1], box.w, size)
    if flags and flags_beside:
        gx = x0 + 2 * group_w
        yy = y0 + head_h + (len(groups[2]) + 1) * row_h
        bottom = (table_bottom if paragraph else box.bottom) - 0.5
        lines = max(1, int((bottom - yy) / FLAG_LINE_MM) + 1)
        for line in _wrap(c, flags, box.right - gx, 6.0, max_lines=lines):
            c.text(gx, yy, line, 6.0, colour=FLAG, max_w=box.right - gx)
            yy += FLAG_LINE_MM
    elif flags:
        lines = max(1, int((box.bottom - y + 0.8 * line_h) / line_h))
        if start:
            y -= line_h
            lines += 1
        wrapped = _wrap(c, flags, box.w, size, max_lines=lines, first_mm=box.w - start)
        for k, line in enumerate(wrapped):
            x = x0 + (start if k == 0 else 0.0)
            c.text(x, y, line, size, colour=FLAG, max_w=box.right - x)
            y += line_h


FLAG_LINE_MM = 2.7  # the other flags under the axes, at 6 pt
NOTE_SIZES_PT = (6.0, 5.75, 5.5, 5.25, 5.0)
# Group header and row heights (mm), tallest first: rows give way to the notes under them.
ROW_PLANS_MM = ((3.4, 3.4), (3.1, 3.1), (2.9, 3.0), (2.8, 2.9))


def _line_mm(size_pt: float) -> float:
    """Line spacing of a note at ``size_pt``: 1.2 x the type size, in mm (independent of the
    device's resolution)."""
    return 1.2 * size_pt * MM_PER_PT


def _notes_plan(
    c: _Canvas,
    box: Rect,
    group_w: float,
    groups: list[list[str]],
    paragraph: str,
    flags: str,
) -> tuple[float, float, float, bool]:
    """(header height, row height, type size of the notes, other flags under the axes): the
    tallest rows and largest type at which the statements and the other flags fit the block.
    The other flags go under the axes of the third group when they fit there whole."""
    n_rows = max(len(g) for g in groups)
    flags_w = box.right - (box.x + 2 * group_w)
    plan = (*ROW_PLANS_MM[-1], NOTE_SIZES_PT[-1], False)
    for head_h, row_h in ROW_PLANS_MM:
        table_bottom = box.y + head_h + n_rows * row_h
        band_h = box.bottom - table_bottom - 0.5
        first = box.y + head_h + (len(groups[2]) + 1) * row_h
        bottom = (table_bottom if paragraph else box.bottom) - 0.5
        beside = bool(flags) and (
            len(_wrap(c, flags, flags_w, 6.0, max_lines=99))
            <= int((bottom - first) / FLAG_LINE_MM) + 1
        )
        pars = [t for t in (paragraph, "" if beside else flags) if t]
        if not pars:
            return head_h, row_h, NOTE_SIZES_PT[0], beside
        for size in NOTE_SIZES_PT:
            n = _notes_lines(c, paragraph, "" if beside else flags, box.w, size)
            if n * _line_mm(size) <= band_h:
                return head_h, row_h, size, beside
    return plan


# The other flags run on after the statements' last line when at least this much of it is
# free (mm), so a short statement does not cost the flags a whole line.
RUN_ON_MIN_MM = 30.0


def _run_on_mm(c: _Canvas, last_line: str, width_mm: float, size_pt: float) -> float:
    """Where text may continue on ``last_line`` (mm from its start), 0 when too little is left."""
    used = c.text_width_mm(last_line + "   ", size_pt)
    return used if width_mm - used >= RUN_ON_MIN_MM else 0.0


def _notes_lines(c: _Canvas, paragraph: str, flags: str, width_mm: float, size_pt: float) -> int:
    """Lines the statements and then the other flags take, the flags run on after the
    statements' last line where it has room (as drawn in ``_table``)."""
    plines = _wrap(c, paragraph, width_mm, size_pt, max_lines=99) if paragraph else []
    if not flags:
        return len(plines)
    start = _run_on_mm(c, plines[-1], width_mm, size_pt) if plines else 0.0
    flines = _wrap(c, flags, width_mm, size_pt, max_lines=99, first_mm=width_mm - start)
    return len(plines) + len(flines) - (1 if start else 0)


def _size_to_fit(c: _Canvas, text: str, width_mm: float, sizes: tuple[float, ...]) -> float:
    """The first of ``sizes`` (largest first) at which ``text`` fits ``width_mm`` on one
    line; the smallest when none does (the text is then elided to its box)."""
    return next((z for z in sizes if c.text_width_mm(text, z) <= width_mm), sizes[-1])


def _draw_row(
    c: _Canvas,
    gx: float,
    y: float,
    right: float,
    cols: tuple[float, ...],
    row: MeasurementRow,
    numbers: list[int],
) -> None:
    """One global value: label with the numbers of its statements, value, unit, then its
    range and flag, or its reason in their place."""
    flagged = bool(row.flag)
    colour = FLAG if flagged else TEXT
    value = _fmt(row.value, row.unit)
    label_w = c.text(
        gx + cols[0], y, PAGE_LABELS.get(row.quantity, row.label), 7.5, max_w=cols[1] - 6.8
    )
    value_w = c.text(gx + cols[1], y, value, 8.0, bold=True, colour=colour, align="right")
    unit_end = gx + cols[1] + 0.2
    if limit_text.unit_symbol(row.unit) == limit_text.unit_key(row.unit):
        unit_end = gx + cols[2] + c.text(gx + cols[2], y, row.unit, 6.5)
    if numbers:  # like a footnote mark: after the name, else (a long name) after the unit
        marks = _superscript(numbers)
        room = cols[1] - value_w - label_w - 1.0
        if c.text_width_mm(marks, 5.5) <= room:
            size = _size_to_fit(c, marks, room, (6.5, 6.0, 5.5))
            c.text(gx + label_w + 0.3, y - 0.3, marks, size)
        else:
            room = gx + cols[3] - unit_end - 0.6
            size = _size_to_fit(c, marks, room, (6.0, 5.5, 5.0, 4.5))
            c.text(unit_end + 0.2, y - 0.3, marks, size)
    if row.judged and row.value is not None:
        c.text(
            gx + cols[3], y, row.range_text, 6.2, colour=MARK_AUTO, max_w=cols[4] - cols[3] - 0.3
        )
        if flagged:
            c.text(
                gx + cols[4], y, row.flag, 7.0, bold=True, colour=FLAG, max_w=right - gx - cols[4]
            )
        return
    # Not measured, not comparable, or its criterion not applied: the reason in a few words
    # where the range and the flag would be (a range not applied is not printed).
    note = row.reason_cell or "not measured"
    width = right - gx - cols[3]
    size = _size_to_fit(c, note, width, (6.2, 5.9, 5.6, 5.3, 5.0))
    c.text(
        gx + cols[3],
        y,
        note,
        size,
        colour=TEXT if row.value is not None else MARK_AUTO,
        max_w=width,
    )


def _draw_wide_qrs_line(
    c: _Canvas,
    gx: float,
    y: float,
    right: float,
    rows: list[MeasurementRow],
    numbers: dict[str, list[int]],
) -> None:
    """JT, JTc and the QRS-adjusted QT on one line: "JT 330 · JTc 348 · QT adj. 401 ms"."""
    x = gx
    for k, row in enumerate(rows):
        name = ("" if k == 0 else "  ·  ") + WIDE_QRS_SHORT[row.quantity] + " "
        x += c.text(x, y, name, 7.5, max_w=right - x)
        value = _fmt(row.value, row.unit) + (" ms" if k == len(rows) - 1 else "")
        x += c.text(x, y, value, 8.0, bold=True, max_w=right - x)
        marks = numbers.get(row.quantity, [])
        if marks and x < right - 2.0:
            x += c.text(x + 0.2, y - 0.2, _superscript(marks), 6.0, max_w=right - x) + 0.2


def _wrap(
    c: _Canvas,
    text: str,
    width_mm: float,
    size_pt: float,
    max_lines: int,
    first_mm: float | None = None,
) -> list[str]:
    """Greedy word wrap (the first line ``first_mm`` wide when given); the last line ends in
    an ellipsis when text remains."""
    words = text.split(" ")
    lines: list[str] = []
    cur = ""
    while words and len(lines) < max_lines:
        trial = (cur + " " + words[0]).strip()
        room = first_mm if first_mm is not None and not lines else width_mm
        if c.text_width_mm(trial, size_pt) <= room or not cur:
            cur = trial
            words.pop(0)
        else:
            lines.append(cur)
            cur = ""
    if cur and len(lines) < max_lines:
        lines.append(cur)
    if words and lines:
        last = first_mm if first_mm is not None and len(lines) == 1 else width_mm
        lines[-1] = c.fit(lines[-1] + " " + " ".join(words), last, size_pt)
    return lines


def beat_panel_gain(span_mv: float, height_mm: float, page_gain_mm_per_mv: float) -> float:
    """The largest standard gain, not above the page's, at which a beat spanning ``span_mv``
    (top to bottom, all leads superimposed) fits ``height_mm``; the smallest standard gain
    when none does (the beat is then clipped to its panel).

    >>> beat_panel_gain(2.0, 26.0, 20.0)
    10.0
    >>> beat_panel_gain(1.0, 26.0, 10.0)
    10.0
    """
    for g in sorted(STANDARD_GAINS_MM_PER_MV, reverse=True):
        if g <= page_gain_mm_per_mv and span_mv * g <= height_mm:
            return float(g)
    return float(min((*STANDARD_GAINS_MM_PER_MV, page_gain_mm_per_mv)))


def _draw_beat_panel(c: _Canvas, lo: PageLayout, content: ReportContent) -> None:
    """Representative beat, all usable leads superimposed, at true scale, with global marks."""
    panel = lo.beat_panel
    area = lo.beat_trace
    _draw_grid(c, area)
    title = lo.beat_title
    rhythm = _lead_col(content, RHYTHM_LEAD)
    lead_txt = f" ({RHYTHM_LEAD} black, others grey)" if rhythm is not None else ", all leads"
    c.text(
        title.x + 0.5,
        title.y + 2.0,
        f"Representative beat{lead_txt}",
        5.5,
        max_w=title.w - 1.0,
    )
    wave = content.rep_waveform_mv
    if wave is None or content.rep_r_index is None:
        c.text(
            area.x + area.w / 2,
            area.y + area.h / 2,
            "no representative beat",
            7.0,
            colour=MARK_AUTO,
            align="center",
            backdrop=True,
        )
        return
    fs = content.fs_hz
    # Place the window so that its marked span (P onset .. T end) is centred in the panel,
    # fast enough that boundaries a few ms apart stay apart.
    known = [m.final for m in content.rep_marks if m.final is not None]
    lo_i = min(known) if known else 0
    hi_i = max(known) if known else wave.shape[0] - 1
    mid_s = (lo_i + hi_i) / 2 / fs
    # Twice the page speed when the span fits, else the fastest standard speed that fits.
    span_s = (hi_i - lo_i) / fs
    slower = sorted((v for v in STANDARD_SPEEDS_MM_PER_S if v < lo.speed_mm_per_s), reverse=True)
    candidates = [2 * lo.speed_mm_per_s, lo.speed_mm_per_s, *slower]
    speed = next((v for v in candidates if span_s * v <= panel.w - 4.0), candidates[-1])

    def x_of(i: np.ndarray | int) -> np.ndarray:
        return panel.x + panel.w / 2 + (np.asarray(i) / fs - mid_s) * speed

    usable = [i for i, lead in enumerate(content.record.leads) if not (lead.flat or lead.missing)]
    # Baseline: each lead's level at QRS onset, so the superimposed leads share an isoelectric line.
    qrs_on = next((m.final for m in content.rep_marks if m.fiducial == "qrs_on"), None)
    ref_i = qrs_on if qrs_on is not None else max(0, content.rep_r_index - round(0.06 * fs))
    ref_i = min(max(0, ref_i), wave.shape[0] - 1)
    idx = np.arange(wave.shape[0])
    xs = x_of(idx)
    seen = (xs >= area.x) & (xs <= area.right)
    rel = wave[:, usable] - wave[ref_i, usable] if usable else np.zeros((len(idx), 1))
    vis = rel[seen] if seen.any() else rel
    finite = vis[np.isfinite(vis)]
    top_mv = float(max(finite.max(), 0.0)) if finite.size else 1.0
    bot_mv = float(min(finite.min(), 0.0)) if finite.size else -0.5
    margin = 1.0  # mm kept free above and below the beat
    gain = beat_panel_gain(top_mv - bot_mv, area.h - 2 * margin, lo.gain_mm_per_mv)
    c.drawing.beat_gain_mm_per_mv = gain
    # Centre the beat's extent vertically in the trace area.
    base = area.y + (area.h - (top_mv - bot_mv) * gain) / 2 + top_mv * gain
    reduced = gain < lo.gain_mm_per_mv
    scale = f"{speed:g} mm/s, {gain:g} mm/mV" + (
        f" (reduced from {lo.gain_mm_per_mv:g} to fit the box)" if reduced else ""
    )
    c.text(
        title.x + 0.5,
        title.y + 4.4,
        scale,
        5.0,
        bold=reduced,
        colour=FLAG if reduced else TEXT,
        max_w=title.w - 1.0,
    )
    c.p.save()
    c.clip(area)
    for i in usable:
        if i == rhythm:
            continue
        c.pen(REP_OTHER_LEADS, 0.12)
        c.polyline(xs, base - (wave[:, i] - wave[ref_i, i]) * gain)
    if rhythm is not None:
        c.pen(TRACE_INK, 0.22)
        c.polyline(xs, base - (wave[:, rhythm] - wave[ref_i, rhythm]) * gain)
    top, bot = area.y + 0.3, area.bottom - 0.3
    for m in content.rep_marks:
        if m.corrected and m.auto is not None:
            c.pen(MARK_AUTO, 0.12, Qt.PenStyle.DotLine)
            xa = float(x_of(m.auto))
            c.line(xa, top, xa, bot)
        if m.final is None:
            continue
        xf = float(x_of(m.final))
        colour = MARK_REVIEWED if m.corrected else MARK_AUTO
        c.pen(
            colour,
            0.3 if m.corrected else 0.12,
            Qt.PenStyle.SolidLine if m.corrected else Qt.PenStyle.DashLine,
        )
        c.line(xf, top, xf, bot)
    c.p.restore()
    labels = lo.beat_labels
    for k, m in enumerate(content.rep_marks):
        if m.final is None:
            continue
        xf = float(x_of(m.final))
        if not (labels.x + 1.0 <= xf <= labels.right - 1.0):
            continue
        text = SHORT_LABELS[m.fiducial] + ("*" if m.corrected else "")
        w = c.text_width_mm(text, 4.5, m.corrected)
        xl = min(max(xf, labels.x + w / 2 + 0.2), labels.right - w / 2 - 0.2)
        c.text(
            xl,
            labels.y + 1.9 + (k % 3) * 1.7,
            text,
            4.5,
            colour=MARK_REVIEWED if m.corrected else MARK_AUTO,
            align="center",
            bold=m.corrected,
        )


def _draw_footer(
    c: _Canvas,
    lo: PageLayout,
    content: ReportContent,
    when: datetime,
    strips: list[Strip],
) -> None:
    duration = content.record.duration_s
    shown = sum(max(0.0, min(s.t1_s, duration) - s.t0_s) for s in strips if s.marks or s.row == 3)
    shown = min(shown, duration) if shown else min(lo.shown_s, duration)
    fs_ = lo.footer_scale
    scale = (
        f"{lo.speed_mm_per_s:g} mm/s  ·  {lo.gain_mm_per_mv:g} mm/mV  ·  "
        f"calibration {lo.cal_pulse_mv:g} mV  ·  grid 1 mm / 5 mm  ·  "
        f"{shown:.1f} s of {duration:.1f} s shown  ·  filtered as measured  ·  "
        + _source_text(content)
    )
    c.text(fs_.x, fs_.y + 3.0, scale, 6.5, max_w=fs_.w)
    m = lo.footer_meta
    c.text(
        m.right,
        m.y + 3.0,
        f"engine {content.engine_version}  ·  printed {when:%Y-%m-%d %H:%M} UTC",
        6.0,
        align="right",
        colour=MARK_AUTO,
        max_w=m.w,
    )
    _draw_key(c, lo.footer_key, strips, content)
    shown_cols = {s.col for s in strips}
    omitted = [n for i, n in enumerate(content.record.lead_names) if i not in shown_cols]
    notes = list(content.notes)
    if omitted and not is_standard_12(content):
        notes.insert(0, "not on this page: " + ", ".join(omitted))
    if notes:
        n = lo.footer_notes
        c.text(
            n.right,
            n.y + 2.9,
            "; ".join(notes),
            6.0,
            align="right",
            colour=MARK_AUTO,
            max_w=n.w,
        )
    cau = lo.footer_caution
    size = 7.0
    while size > 5.0 and c.text_width_mm(CLINICAL_CAUTION, size, True) > cau.w:
        size -= 0.25
    c.text(cau.x, cau.y + 2.9, CLINICAL_CAUTION, size, bold=True, max_w=cau.w)


def _draw_key(c: _Canvas, box: Rect, strips: list[Strip], content: ReportContent) -> None:
    """Key to the mark glyphs, drawn with the glyphs themselves."""
    size = 6.0
    y = box.y + 2.9
    lane = Rect(0.0, box.y + 0.5, 0.0, 2.8)
    where = next((s.name for s in strips if s.marks), "")
    x = box.x
    x += c.text(x, y, f"Marks under the {where} strip, lanes {'/'.join(FIDUCIAL_LANES)}: ", size)
    items = (("onset", True, False), ("end", False, False))
    for label, onset, _ in items:
        c.pen(MARK_AUTO, 0.15)
        _glyph(c, x + 0.6, lane, onset)
        x += 2.2
        x += c.text(x, y, label + "   ", size)
    c.pen(MARK_AUTO, 0.15)
    c.line(x + 0.5, lane.y + 0.3, x + 0.5, lane.y + lane.h - 0.3)
    x += 1.6
    x += c.text(x, y, "thin: automatic   ", size)
    c.pen(MARK_REVIEWED, 0.3)
    c.line(x + 0.5, lane.y + 0.3, x + 0.5, lane.y + lane.h - 0.3)
    c.dot(x + 0.5, lane.y + 0.35, 0.35, MARK_REVIEWED)
    x += 1.6
    x += c.text(x, y, "thick with dot: reviewer-corrected   ", size, colour=MARK_REVIEWED)
    c.pen(MARK_AUTO, 0.12, Qt.PenStyle.DotLine)
    c.line(x + 0.5, lane.y + 0.3, x + 0.5, lane.y + lane.h - 0.3)
    x += 1.6
    x += c.text(x, y, "dotted: automatic position replaced   ", size, max_w=box.right - x)
    tail = "beat panel: * = corrected"
    if c.text_width_mm(tail, size) <= box.right - x:
        c.text(x, y, tail, size)
