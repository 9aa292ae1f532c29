"""Draw the report page with QPainter on any paint device, at true physical scale.

All geometry comes from ``layout.PageLayout`` in millimetres; ``px_per_mm`` converts to the
device (100 for a PDF at 2540 dpi, 11.811 for a 300 dpi image), so 1 mm on the page is 1 mm
on paper. Text is drawn in points with the painter's scaling removed, so type sizes are
physical too.
"""

from __future__ import annotations

import itertools
from datetime import UTC, datetime

import numpy as np
from PySide6.QtCore import QLineF, QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QFont, QFontMetricsF, QPainter, QPen, QPolygonF

from reviewapp import CLINICAL_CAUTION
from reviewapp.report.content import MarkPair, ReportContent
from reviewapp.report.layout import (
    CAL_PULSE_MV,
    CAL_PULSE_S,
    LAYOUT_3X4,
    MAJOR_MM,
    MINOR_MM,
    RHYTHM_LEAD,
    STANDARD_12,
    TRACE_WIDTH_MM,
    PageLayout,
    Rect,
)

FONT_FAMILY = "DejaVu Sans"
GRID_MINOR = QColor(244, 200, 200)
GRID_MAJOR = QColor(222, 120, 120)
TRACE = QColor(0, 0, 0)
MARK_AUTO = QColor(90, 90, 90)
MARK_REVIEWED = QColor(0, 70, 190)
FLAG = QColor(170, 0, 0)
STATUS_COLOURS = {
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


class _Canvas:
    """QPainter in millimetres, with text drawn in physical points."""

    def __init__(self, painter: QPainter, px_per_mm: float) -> None:
        self.p = painter
        self.s = px_per_mm
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
        # Split into runs of finite samples.
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

    def font(self, size_pt: float, bold: bool = False) -> QFont:
        f = QFont(FONT_FAMILY)
        f.setPointSizeF(size_pt)
        f.setBold(bold)
        return f

    def text_width_mm(self, text: str, size_pt: float, bold: bool = False) -> float:
        fm = QFontMetricsF(self.font(size_pt, bold), self.p.device())
        return fm.horizontalAdvance(text) / self.s

    def text(
        self,
        x: float,
        y: float,
        text: str,
        size_pt: float = 7.0,
        *,
        bold: bool = False,
        colour: QColor = TRACE,
        align: str = "left",
        backdrop: bool = False,
    ) -> float:
        """Draw ``text`` with its baseline at y (mm); returns its width in mm."""
        w = self.text_width_mm(text, size_pt, bold)
        if align == "right":
            x -= w
        elif align == "center":
            x -= w / 2
        if backdrop:
            h = size_pt * 0.3528  # 1 pt = 25.4/72 mm
            self.p.setPen(Qt.PenStyle.NoPen)
            self.rect(Rect(x - 0.4, y - h * 0.85, w + 0.8, h * 1.1), QColor(255, 255, 255, 215))
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
) -> None:
    """Paint the whole page; the device origin must be the sheet's top-left corner."""
    c = _Canvas(painter, px_per_mm)
    _draw_grid(c, layout.grid)
    _draw_calibration(c, layout, _used_rows(content))
    _draw_leads(c, layout, content)
    _draw_header(c, layout, content)
    _draw_beat_panel(c, layout, content)
    _draw_footer(c, layout, content, generated_at or datetime.now(UTC))


def _draw_grid(c: _Canvas, g: Rect) -> None:
    s = c.s
    nx = round(g.w / MINOR_MM)
    ny = round(g.h / MINOR_MM)
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


def _used_rows(content: ReportContent) -> tuple[int, ...]:
    if is_standard_12(content):
        return (0, 1, 2, 3)
    return tuple(range(min(4, content.record.n_leads)))


def _draw_calibration(c: _Canvas, lo: PageLayout, rows: tuple[int, ...]) -> None:
    pulse_w = CAL_PULSE_S * lo.speed_mm_per_s
    h = CAL_PULSE_MV * lo.gain_mm_per_mv
    x0 = lo.grid.x + 1.0
    x1 = lo.grid.x + (lo.cal_width_mm - pulse_w) / 2.0
    x2 = x1 + pulse_w
    x3 = lo.trace_x0_mm - 1.0
    c.pen(TRACE, 0.25)
    for base in (lo.row_baselines_mm[r] for r in rows):
        xs = np.array([x0, x1, x1, x2, x2, x3])
        ys = np.array([base, base, base - h, base - h, base, base])
        c.polyline(xs, ys)


def _lead_col(content: ReportContent, name: str) -> int | None:
    try:
        return content.record.lead_index(name)
    except KeyError:
        return None


def _trace(
    c: _Canvas, lo: PageLayout, content: ReportContent, col: int, row: int, t0: float, t1: float
) -> None:
    fs = content.fs_hz
    a = max(0, round(t0 * fs))
    b = min(content.signal_mv.shape[0], round(t1 * fs) + 1)
    if b - a < 2:
        return
    t = np.arange(a, b) / fs
    c.polyline(lo.x_of(t), lo.y_of(content.signal_mv[a:b, col], row))


def _draw_leads(c: _Canvas, lo: PageLayout, content: ReportContent) -> None:
    g = lo.grid
    s = c.s
    c.p.save()
    c.p.setClipRect(QRectF(g.x * s, g.y * s, g.w * s, g.h * s))
    col_s = lo.column_s
    col_w = TRACE_WIDTH_MM / 4.0
    duration = content.record.duration_s
    if not is_standard_12(content):
        # Not a standard 12-lead (e.g. two Holter-style leads): each lead, full width.
        for r in _used_rows(content):
            lead = content.record.leads[r]
            c.pen(TRACE, 0.22)
            _trace(c, lo, content, r, r, 0.0, min(lo.shown_s, duration))
            label = lead.name + (" (derived)" if lead.derived else "")
            c.text(
                lo.trace_x0_mm + 1.0,
                lo.row_baselines_mm[r] - 12.0,
                label,
                7.5,
                bold=True,
                backdrop=True,
            )
        _draw_beat_marks(c, lo, content, row=0)
        c.p.restore()
        return
    for r, row_leads in enumerate(LAYOUT_3X4):
        base = lo.row_baselines_mm[r]
        for k, name in enumerate(row_leads):
            x_seg = lo.trace_x0_mm + k * col_w
            col = _lead_col(content, name)
            t0, t1 = k * col_s, (k + 1) * col_s
            if col is not None and t0 < duration:
                c.pen(TRACE, 0.22)
                _trace(c, lo, content, col, r, t0, min(t1, duration))
                label = name + (" (derived)" if content.record.leads[col].derived else "")
                c.text(x_seg + 1.0, base - 12.0, label, 7.5, bold=True, backdrop=True)
            else:
                c.text(
                    x_seg + 1.0,
                    base - 12.0,
                    f"{name}: not recorded" if col is None else f"{name}: record ended",
                    7.0,
                    colour=MARK_AUTO,
                    backdrop=True,
                )
            if k > 0:  # lead change marker
                c.pen(TRACE, 0.25)
                c.line(x_seg, base - 3.0, x_seg, base + 3.0)
    # Rhythm strip: the whole shown span of one lead.
    rhythm = _lead_col(content, RHYTHM_LEAD)
    rhythm_name = RHYTHM_LEAD
    if rhythm is None:
        rhythm, rhythm_name = 0, content.record.lead_names[0]
    base = lo.row_baselines_mm[3]
    c.pen(TRACE, 0.22)
    _trace(c, lo, content, rhythm, 3, 0.0, min(lo.shown_s, duration))
    c.text(
        lo.trace_x0_mm + 1.0, base - 12.0, f"{rhythm_name}  rhythm", 7.5, bold=True, backdrop=True
    )
    _draw_beat_marks(c, lo, content, row=3)
    c.p.restore()


def _draw_beat_marks(c: _Canvas, lo: PageLayout, content: ReportContent, row: int) -> None:
    """Each beat's global boundaries as ticks under a full-width strip (reviewed in blue)."""
    fs = content.fs_hz
    base = lo.row_baselines_mm[row]
    y_top, y_bot = base + 9.0, base + 12.5
    c.text(lo.grid.x + 0.8, y_bot - 0.6, "marks", 5.0, colour=MARK_AUTO, backdrop=True)
    for row in content.beat_marks:
        for m in row:
            _tick(c, lo, m, fs, y_top, y_bot)


def _tick(c: _Canvas, lo: PageLayout, m: MarkPair, fs: float, y_top: float, y_bot: float) -> None:
    limit = lo.shown_s
    if m.corrected:
        if m.auto is not None and m.auto / fs <= limit:
            c.pen(MARK_AUTO, 0.12, Qt.PenStyle.DotLine)
            x = lo.x_of(m.auto / fs)
            c.line(x, y_top, x, y_bot)
        if m.final is not None and m.final / fs <= limit:
            c.pen(MARK_REVIEWED, 0.35)
            x = lo.x_of(m.final / fs)
            c.line(x, y_top - 1.0, x, y_bot + 1.0)
    elif m.final is not None and m.final / fs <= limit:
        c.pen(MARK_AUTO, 0.15)
        x = lo.x_of(m.final / fs)
        c.line(x, y_top, x, y_bot)


def _fmt(v: float | None, unit: str) -> str:
    if v is None:
        return "--"
    return f"{v:.0f}"


def _draw_header(c: _Canvas, lo: PageLayout, content: ReportContent) -> None:
    h = lo.header
    rec = content.record
    subj = rec.subject
    x = h.x
    y = h.y + 4.0
    w = c.text(x, y, f"ECG reading report  ·  {rec.name}", 11.0, bold=True)
    facts = [
        f"subject {subj.subject_id}" if subj.subject_id else "subject ID not stated",
        f"{subj.age_years:.0f} y" if subj.age_years is not None else "age not stated",
        subj.sex or "sex not stated",
        f"acquired {subj.acquired_at:%Y-%m-%d %H:%M}" if subj.acquired_at else None,
        f"{rec.source_format or 'record'} {rec.source_path.name if rec.source_path else ''}",
        f"{rec.n_leads} leads, {rec.fs_hz:g} Hz, {rec.duration_s:.1f} s",
    ]
    c.text(x + w + 4.0, y, "  ·  ".join(f for f in facts if f), 7.5)
    y += 4.6
    status_text = {
        "signed_off": "SIGNED OFF",
        "in_progress": "IN PROGRESS (not signed off)",
        "unread": "UNREAD: automated marks only, not verified by a reader",
    }.get(content.status, content.status)
    who = ""
    if content.reviewer:
        who = f"  ·  reviewer {content.reviewer}"
    if content.status == "signed_off" and content.signed_off_at:
        who += f"  ·  signed {_utc_text(content.signed_off_at)}"
    w = c.text(x, y, "Reading: ", 8.0, bold=True)
    w += c.text(
        x + w, y, status_text, 8.0, bold=True, colour=STATUS_COLOURS.get(content.status, TRACE)
    )
    corrected = content.n_corrected
    marks_text = (
        f"  ·  {corrected} mark(s) corrected by the reviewer; values below use them"
        if corrected
        else "  ·  values below from automatic marks"
    )
    c.text(x + w, y, who + marks_text, 7.5)
    _draw_table(c, x, y + 1.2, content)


def _utc_text(iso: str) -> str:
    """``2026-12-02T00:59:01.98Z`` -> ``2026-12-02 00:59 UTC`` (unparseable text kept as is)."""
    try:
        t = datetime.fromisoformat(iso.replace("Z", "+00:00"))
    except ValueError:
        return iso
    return f"{t.astimezone(UTC):%Y-%m-%d %H:%M} UTC"


def _draw_table(c: _Canvas, x0: float, y0: float, content: ReportContent) -> None:
    """Global values in three column groups: name, value, unit, normal range, flag."""
    row_h = 3.5
    group_w = 68.0
    cols = (0.0, 32.0, 33.5, 42.0, 58.0)  # label, value (right edge), unit, range, flag
    rows = content.rows
    per_group = (len(rows) + 2) // 3
    for gi in range(3):
        gx = x0 + gi * group_w
        c.text(gx + cols[0], y0 + 2.6, "Measure", 6.5, colour=MARK_AUTO)
        c.text(gx + cols[1], y0 + 2.6, "Value", 6.5, colour=MARK_AUTO, align="right")
        c.text(gx + cols[3], y0 + 2.6, "Normal", 6.5, colour=MARK_AUTO)
        c.text(gx + cols[4], y0 + 2.6, "Flag", 6.5, colour=MARK_AUTO)
        c.pen(MARK_AUTO, 0.1)
        c.line(gx, y0 + 3.4, gx + group_w - 3.0, y0 + 3.4)
        for i, row in enumerate(rows[gi * per_group : (gi + 1) * per_group]):
            y = y0 + 3.4 + (i + 1) * row_h
            flagged = bool(row.flag)
            colour = FLAG if flagged else TRACE
            c.text(gx + cols[0], y, row.label, 7.5)
            c.text(
                gx + cols[1],
                y,
                _fmt(row.value, row.unit),
                8.0,
                bold=True,
                colour=colour,
                align="right",
            )
            c.text(gx + cols[2], y, row.unit, 6.5)
            c.text(gx + cols[3], y, row.range_text, 6.5, colour=MARK_AUTO)
            if flagged:
                c.text(
                    gx + cols[4],
                    y,
                    row.flag.replace("above", ">").replace("below", "<"),
                    7.0,
                    bold=True,
                    colour=FLAG,
                )
    if content.other_findings:
        y = y0 + 3.4 + (per_group + 1) * row_h
        text = "Other flags: " + "; ".join(content.other_findings)
        for line in _wrap(c, text, 3 * group_w - 3.0, 6.5, max_lines=2):
            c.text(x0, y, line, 6.5, colour=FLAG)
            y += 2.9


def _wrap(c: _Canvas, text: str, width_mm: float, size_pt: float, max_lines: int) -> list[str]:
    """Greedy word wrap; the last line ends in an ellipsis when text remains."""
    words = text.split(" ")
    lines: list[str] = []
    cur = ""
    while words and len(lines) < max_lines:
        trial = (cur + " " + words[0]).strip()
        if c.text_width_mm(trial, size_pt) <= width_mm or not cur:
            cur = trial
            words.pop(0)
        else:
            lines.append(cur)
            cur = ""
    if cur and len(lines) < max_lines:
        lines.append(cur)
    if words and lines:
        lines[-1] = _ellipsis(c, lines[-1] + " " + " ".join(words), width_mm, size_pt)
    return lines


def _ellipsis(c: _Canvas, text: str, width_mm: float, size_pt: float) -> str:
    if c.text_width_mm(text, size_pt) <= width_mm:
        return text
    while text and c.text_width_mm(text + " ...", size_pt) > width_mm:
        text = text[:-1]
    return text + " ..."


def _draw_beat_panel(c: _Canvas, lo: PageLayout, content: ReportContent) -> None:
    """Representative beat, all usable leads superimposed, at true scale, with global marks."""
    panel = lo.beat_panel
    _draw_grid(c, panel)
    c.text(panel.x + 0.8, panel.y + 2.4, "Representative beat, all leads", 5.5, backdrop=True)
    wave = content.rep_waveform_mv
    if wave is None or content.rep_r_index is None:
        c.text(
            panel.x + panel.w / 2,
            panel.y + panel.h / 2,
            "no representative beat",
            7.0,
            colour=MARK_AUTO,
            align="center",
        )
        return
    fs = content.fs_hz
    s = c.s
    gain = lo.gain_mm_per_mv
    # Place the window so that its marked span (P onset .. T end) is centred in the panel,
    # at twice the page speed when that span fits (boundaries a few ms apart stay apart).
    known = [m.final for m in content.rep_marks if m.final is not None]
    lo_i = min(known) if known else 0
    hi_i = max(known) if known else wave.shape[0] - 1
    mid_s = (lo_i + hi_i) / 2 / fs
    speed = 2 * lo.speed_mm_per_s
    if (hi_i - lo_i) / fs * speed > panel.w - 4.0:
        speed = lo.speed_mm_per_s
    c.text(panel.x + 0.8, panel.y + 4.6, f"{speed:g} mm/s, {gain:g} mm/mV", 4.5, backdrop=True)
    x_of = lambda i: panel.x + panel.w / 2 + (np.asarray(i) / fs - mid_s) * speed  # noqa: E731
    base = panel.y + panel.h * 0.62
    c.p.save()
    c.p.setClipRect(QRectF(panel.x * s, panel.y * s, panel.w * s, panel.h * s))
    idx = np.arange(wave.shape[0])
    xs = x_of(idx)
    rhythm = _lead_col(content, RHYTHM_LEAD)
    usable = [i for i, lead in enumerate(content.record.leads) if not (lead.flat or lead.missing)]
    # Baseline: each lead's level at QRS onset, so the superimposed leads share an isoelectric line.
    qrs_on = next((m.final for m in content.rep_marks if m.fiducial == "qrs_on"), None)
    ref_i = qrs_on if qrs_on is not None else max(0, content.rep_r_index - round(0.06 * fs))
    for i in usable:
        if i == rhythm:
            continue
        c.pen(QColor(150, 150, 150), 0.12)
        y = base - (wave[:, i] - wave[ref_i, i]) * gain
        c.polyline(xs, y)
    if rhythm is not None:
        c.pen(TRACE, 0.22)
        c.polyline(xs, base - (wave[:, rhythm] - wave[ref_i, rhythm]) * gain)
    top, bot = panel.y + 5.5, panel.bottom - 6.0
    for k, m in enumerate(content.rep_marks):
        label_y = bot + 1.9 + (k % 3) * 1.7
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
        c.text(
            xf,
            label_y,
            SHORT_LABELS[m.fiducial],
            4.5,
            colour=colour,
            align="center",
            bold=m.corrected,
            backdrop=True,
        )
    c.p.restore()


def _draw_footer(c: _Canvas, lo: PageLayout, content: ReportContent, when: datetime) -> None:
    f = lo.footer
    y = f.y + 3.0
    shown = min(lo.shown_s, content.record.duration_s)
    scale = (
        f"{lo.speed_mm_per_s:g} mm/s  ·  {lo.gain_mm_per_mv:g} mm/mV  ·  grid 1 mm / 5 mm  ·  "
        f"{shown:.1f} s of {content.record.duration_s:.1f} s shown, filtered as measured  ·  "
    )
    w = c.text(f.x, y, scale, 6.5)
    w += c.text(f.x + w, y, "Marks: ", 6.5)
    c.pen(MARK_AUTO, 0.15)
    c.line(f.x + w + 0.5, y - 2.2, f.x + w + 0.5, y + 0.3)
    w += 1.5
    w += c.text(f.x + w, y, "automatic   ", 6.5)
    c.pen(MARK_REVIEWED, 0.35)
    c.line(f.x + w + 0.5, y - 2.4, f.x + w + 0.5, y + 0.5)
    w += 1.5
    w += c.text(f.x + w, y, "reviewer-corrected ", 6.5, colour=MARK_REVIEWED)
    c.pen(MARK_AUTO, 0.12, Qt.PenStyle.DotLine)
    c.line(f.x + w + 0.5, y - 2.2, f.x + w + 0.5, y + 0.3)
    w += 1.5
    w += c.text(f.x + w, y, "automatic position it replaced", 6.5)
    c.text(
        f.right,
        y,
        f"engine {content.engine_version}  ·  printed {when:%Y-%m-%d %H:%M} UTC",
        6.0,
        align="right",
        colour=MARK_AUTO,
    )
    c.text(f.x, y + 3.6, CLINICAL_CAUTION, 7.0, bold=True)
    if content.notes:
        c.text(
            f.right,
            y + 3.6,
            _ellipsis(c, "; ".join(content.notes), 60.0, 6.0),
            6.0,
            align="right",
            colour=MARK_AUTO,
        )
