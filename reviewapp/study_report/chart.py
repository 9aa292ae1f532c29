"""Small charts drawn with QPainter in millimetres: axes, markers, curves, error bars, legend.

The study report draws on a PDF page (vector, at physical size) and on PNG images with the
same code, through the report's millimetre canvas (``reviewapp.report.page``). Markers differ
in shape as well as colour, so a figure reads in grey print and for colour-blind readers
(colours: Okabe and Ito's palette, "Color Universal Design", 2008).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QPen, QPolygonF

from reviewapp.report.layout import Rect
from reviewapp.report.page import _Canvas as MmCanvas  # the report's mm canvas, shared

BLUE = QColor(0, 114, 178)
VERMILLION = QColor(213, 94, 0)
SKY = QColor(86, 180, 233)
ORANGE = QColor(230, 159, 0)
GREEN = QColor(0, 158, 115)
PURPLE = QColor(204, 121, 167)
GREY = QColor(120, 120, 120)
LIGHT_GREY = QColor(225, 225, 225)
INK = QColor(0, 0, 0)
SERIES_COLOURS = (BLUE, VERMILLION, GREEN, PURPLE, ORANGE, SKY, GREY)
SHAPES = ("circle", "triangle", "square", "diamond", "down", "circle_open", "square_open")


def nice_step(span: float, target: int) -> float:
    """A 1-2-5 step giving about ``target`` intervals over ``span``."""
    if not span > 0:
        return 1.0
    raw = span / max(1, target)
    mag = 10 ** math.floor(math.log10(raw))
    for m in (1.0, 2.0, 2.5, 5.0, 10.0):
        if raw <= m * mag:
            return m * mag
    return 10.0 * mag


def nice_range(lo: float, hi: float, target: int = 6) -> tuple[float, float, float]:
    """(low, high, step): ``[lo, hi]`` widened outwards to whole steps."""
    if not (math.isfinite(lo) and math.isfinite(hi)):
        lo, hi = 0.0, 1.0
    if hi - lo < 1e-9:
        lo, hi = lo - 1.0, hi + 1.0
    step = nice_step(hi - lo, target)
    return math.floor(lo / step) * step, math.ceil(hi / step) * step, step


def ticks(lo: float, hi: float, step: float) -> list[float]:
    n = round((hi - lo) / step)
    return [lo + i * step for i in range(n + 1)]


@dataclass(frozen=True)
class Axes:
    """Data ranges mapped onto a plotting box (mm); y grows upwards on paper."""

    box: Rect
    x0: float
    x1: float
    y0: float
    y1: float

    def x(self, v: float) -> float:
        return self.box.x + (v - self.x0) / (self.x1 - self.x0) * self.box.w

    def y(self, v: float) -> float:
        return self.box.bottom - (v - self.y0) / (self.y1 - self.y0) * self.box.h


def _fmt_tick(v: float, step: float) -> str:
    if step >= 1:
        return f"{v:.0f}".replace("-", "\u2212")
    digits = max(0, -math.floor(math.log10(step) + 1e-9))
    return f"{v:.{digits}f}".replace("-", "\u2212")


def draw_axes(
    c: MmCanvas,
    ax: Axes,
    *,
    xlabel: str,
    ylabel: str,
    xstep: float | None = None,
    ystep: float | None = None,
    xcategories: Sequence[str] = (),
    ycategories: Sequence[str] = (),
    size_pt: float = 7.0,
) -> None:
    """Grid, frame, ticks and labels. With ``xcategories`` (``ycategories``) that axis is
    categorical: one tick per category at 0, 1, 2..."""
    b = ax.box
    c.pen(LIGHT_GREY, 0.15)
    if ystep:
        for v in ticks(ax.y0, ax.y1, ystep):
            c.line(b.x, ax.y(v), b.right, ax.y(v))
    if xstep and not xcategories:
        for v in ticks(ax.x0, ax.x1, xstep):
            c.line(ax.x(v), b.y, ax.x(v), b.bottom)
    c.pen(INK, 0.25)
    c.rect(b)
    if ystep:
        for v in ticks(ax.y0, ax.y1, ystep):
            c.line(b.x - 1.0, ax.y(v), b.x, ax.y(v))
            c.text(b.x - 1.5, ax.y(v) + 1.0, _fmt_tick(v, ystep), size_pt, align="right")
    for i, label in enumerate(ycategories):
        c.pen(INK, 0.25)
        c.line(b.x - 1.0, ax.y(i), b.x, ax.y(i))
        c.text(b.x - 1.5, ax.y(i) + 1.0, label, size_pt, align="right")
    if xcategories:
        for i, label in enumerate(xcategories):
            c.pen(INK, 0.25)
            c.line(ax.x(i), b.bottom, ax.x(i), b.bottom + 1.0)
            width = b.w / max(1, len(xcategories))
            c.text(ax.x(i), b.bottom + 4.0, label, size_pt, align="center", max_w=width)
    elif xstep:
        for v in ticks(ax.x0, ax.x1, xstep):
            c.pen(INK, 0.25)
            c.line(ax.x(v), b.bottom, ax.x(v), b.bottom + 1.0)
            c.text(ax.x(v), b.bottom + 4.0, _fmt_tick(v, xstep), size_pt, align="center")
    c.text(b.x + b.w / 2, b.bottom + 8.5, xlabel, size_pt + 0.5, align="center", max_w=b.w)
    if ylabel:
        _vertical_text(c, b.x - 11.0, b.y + b.h / 2, ylabel, size_pt + 0.5)


def _vertical_text(c: MmCanvas, x: float, y: float, text: str, size_pt: float) -> None:
    p = c.p
    p.save()
    p.translate(x * c.s, y * c.s)
    p.rotate(-90.0)
    p.translate(-x * c.s, -y * c.s)
    c.text(x, y, text, size_pt, align="center")
    p.restore()


def marker(
    c: MmCanvas,
    x: float,
    y: float,
    shape: str,
    size_mm: float,
    colour: QColor,
    *,
    edge: QColor | None = None,
) -> None:
    """One marker centred at (x, y) mm; shapes in ``SHAPES`` ("_open" ones unfilled)."""
    s = c.s
    r = size_mm / 2 * s
    cx, cy = x * s, y * s
    open_ = shape.endswith("_open")
    pen = QPen(edge if edge is not None else colour)
    pen.setWidthF(max(0.12, size_mm * 0.12) * s)
    c.p.setPen(pen)
    c.p.setBrush(Qt.BrushStyle.NoBrush if open_ else QBrush(colour))
    base = shape.removesuffix("_open")
    if base == "circle":
        c.p.drawEllipse(QPointF(cx, cy), r, r)
    elif base == "square":
        k = r * 0.85
        c.p.drawRect(QRectF(cx - k, cy - k, 2 * k, 2 * k))
    else:
        pts = {
            "triangle": ((0, -1.15), (1.0, 0.65), (-1.0, 0.65)),
            "down": ((0, 1.15), (1.0, -0.65), (-1.0, -0.65)),
            "diamond": ((0, -1.2), (1.0, 0), (0, 1.2), (-1.0, 0)),
        }[base]
        c.p.drawPolygon(QPolygonF([QPointF(cx + dx * r, cy + dy * r) for dx, dy in pts]))
    c.p.setBrush(Qt.BrushStyle.NoBrush)


def markers(
    c: MmCanvas,
    ax: Axes,
    xs: np.ndarray,
    ys: np.ndarray,
    shape: str,
    size_mm: float,
    colour: QColor,
    *,
    edge: QColor | None = None,
) -> None:
    c.clip(ax.box)
    for x, y in zip(np.asarray(xs, float), np.asarray(ys, float), strict=True):
        if math.isfinite(x) and math.isfinite(y):
            marker(c, ax.x(x), ax.y(y), shape, size_mm, colour, edge=edge)
    c.p.setClipping(False)


def curve(
    c: MmCanvas,
    ax: Axes,
    xs: np.ndarray,
    ys: np.ndarray,
    colour: QColor,
    width_mm: float,
    style: Qt.PenStyle = Qt.PenStyle.SolidLine,
) -> None:
    c.clip(ax.box)
    c.pen(colour, width_mm, style)
    x_mm = np.array([ax.x(v) for v in np.asarray(xs, float)])
    y_mm = np.array([ax.y(v) for v in np.asarray(ys, float)])
    c.polyline(x_mm, y_mm)
    c.p.setClipping(False)


def error_bar(
    c: MmCanvas, ax: Axes, x: float, lo: float, hi: float, colour: QColor, cap_mm: float = 1.6
) -> None:
    c.pen(colour, 0.35)
    xm = ax.x(x)
    c.line(xm, ax.y(lo), xm, ax.y(hi))
    c.line(xm - cap_mm / 2, ax.y(lo), xm + cap_mm / 2, ax.y(lo))
    c.line(xm - cap_mm / 2, ax.y(hi), xm + cap_mm / 2, ax.y(hi))


def hline(
    c: MmCanvas,
    ax: Axes,
    y: float,
    colour: QColor,
    width_mm: float = 0.25,
    style: Qt.PenStyle = Qt.PenStyle.SolidLine,
    label: str = "",
    size_pt: float = 6.0,
) -> None:
    if not ax.y0 <= y <= ax.y1:
        return
    c.pen(colour, width_mm, style)
    c.line(ax.box.x, ax.y(y), ax.box.right, ax.y(y))
    if label:
        c.text(
            ax.box.right - 1.0,
            ax.y(y) - 0.8,
            label,
            size_pt,
            colour=colour,
            align="right",
            backdrop=True,
        )


LegendItem = tuple[str, Callable[[MmCanvas, float, float], None]]


def legend_width(c: MmCanvas, items: Sequence[LegendItem], size_pt: float = 6.5) -> float:
    return 8.0 + max((c.text_width_mm(t, size_pt) for t, _ in items), default=0.0) + 2.0


def legend(
    c: MmCanvas,
    x: float,
    y: float,
    items: Sequence[LegendItem],
    size_pt: float = 6.5,
    line_h: float = 3.6,
) -> Rect:
    """A boxed legend with its top-left corner at (x, y); each item draws its own key at the
    given centre. Returns the box."""
    w = legend_width(c, items, size_pt)
    h = line_h * len(items) + 1.6
    box = Rect(x, y, w, h)
    c.p.setPen(QPen(GREY))
    c.pen(GREY, 0.15)
    c.rect(box, QColor(255, 255, 255, 235))
    for i, (text, key) in enumerate(items):
        yc = y + 0.8 + line_h * (i + 0.5)
        key(c, x + 4.0, yc)
        c.text(x + 8.0, yc + 1.0, text, size_pt)
    return box


def legend_row(
    c: MmCanvas,
    x: float,
    y: float,
    items: Sequence[LegendItem],
    size_pt: float = 6.5,
    max_w: float = 180.0,
) -> float:
    """Legend items side by side from (x, y = item centre line), wrapping at ``max_w``;
    returns the y below it."""
    cx, cy = x, y
    for text, key in items:
        w = 8.0 + c.text_width_mm(text, size_pt) + 4.0
        if cx + w > x + max_w and cx > x:
            cx, cy = x, cy + 3.8
        key(c, cx + 3.5, cy)
        c.text(cx + 7.5, cy + 1.0, text, size_pt)
        cx += w
    return cy + 4.0


def marker_key(shape: str, size_mm: float, colour: QColor, edge: QColor | None = None):  # type: ignore[no-untyped-def]
    return lambda c, x, y: marker(c, x, y, shape, size_mm, colour, edge=edge)


def line_key(colour: QColor, width_mm: float, style: Qt.PenStyle = Qt.PenStyle.SolidLine):  # type: ignore[no-untyped-def]
    def draw(c: MmCanvas, x: float, y: float) -> None:
        c.pen(colour, width_mm, style)
        c.line(x - 3.0, y, x + 3.0, y)

    return draw
