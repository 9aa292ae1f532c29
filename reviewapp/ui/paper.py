"""Paper scale (true millimetres on the glass) and the calibrated grid item.

The one conversion everything else relies on (DESIGN.md, "Scale on the glass"):
x px = seconds x speed (mm/s) x px_per_mm; y px = mV x gain (mm/mV) x px_per_mm.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

SPEEDS_MM_PER_S: tuple[float, ...] = (12.5, 25.0, 50.0, 100.0)
GAINS_MM_PER_MV: tuple[float, ...] = (2.5, 5.0, 10.0, 20.0, 40.0)
# ISO/IEC 7810 ID-1 card (bank card) width: a ruler most readers carry.
ID1_CARD_WIDTH_MM = 85.60
# Qt's reference logical DPI; used only where the screen reports no physical size.
FALLBACK_PX_PER_MM = 96.0 / 25.4


@dataclass(frozen=True)
class PaperScale:
    """How signal units become millimetres and pixels at true size.

    >>> s = PaperScale(px_per_mm=4.0, speed_mm_per_s=25.0, gain_mm_per_mv=10.0)
    >>> s.x_px(1.0), s.y_px(1.0)
    (100.0, 40.0)
    """

    px_per_mm: float
    speed_mm_per_s: float = 25.0
    gain_mm_per_mv: float = 10.0

    def __post_init__(self) -> None:
        for name in ("px_per_mm", "speed_mm_per_s", "gain_mm_per_mv"):
            v = getattr(self, name)
            if not (math.isfinite(v) and v > 0):
                raise ValueError(f"{name} must be a positive number, got {v!r}")

    def x_mm(self, seconds: float) -> float:
        return seconds * self.speed_mm_per_s

    def y_mm(self, mv: float) -> float:
        return mv * self.gain_mm_per_mv

    def x_px(self, seconds: float) -> float:
        return seconds * self.speed_mm_per_s * self.px_per_mm

    def y_px(self, mv: float) -> float:
        return mv * self.gain_mm_per_mv * self.px_per_mm

    def seconds_from_mm(self, mm: float) -> float:
        return mm / self.speed_mm_per_s

    def mv_from_mm(self, mm: float) -> float:
        return mm / self.gain_mm_per_mv

    def with_speed(self, speed_mm_per_s: float) -> PaperScale:
        return replace(self, speed_mm_per_s=float(speed_mm_per_s))

    def with_gain(self, gain_mm_per_mv: float) -> PaperScale:
        return replace(self, gain_mm_per_mv=float(gain_mm_per_mv))

    def with_px_per_mm(self, px_per_mm: float) -> PaperScale:
        return replace(self, px_per_mm=float(px_per_mm))

    @property
    def label(self) -> str:
        return f"{_num(self.speed_mm_per_s)} mm/s   {_num(self.gain_mm_per_mv)} mm/mV"


def _num(v: float) -> str:
    return f"{v:g}"


def screen_key(screen: QtGui.QScreen | None) -> str:
    """A QSettings key naming one physical screen (name + size, so a swapped monitor differs)."""
    if screen is None:
        return "calibration/default"
    g = screen.geometry()
    name = (screen.name() or "screen").replace("/", "_").replace("\\", "_")
    return f"calibration/{name}_{g.width()}x{g.height()}"


def physical_px_per_mm(screen: QtGui.QScreen | None) -> float:
    """Logical pixels per millimetre from the size the screen reports (EDID), else 96 dpi."""
    if screen is None:
        return FALLBACK_PX_PER_MM
    size_mm = screen.physicalSize()
    geo = screen.geometry()
    if size_mm.width() >= 50 and geo.width() > 0:
        v = geo.width() / size_mm.width()
        # Reported sizes outside 2..40 px/mm (50..1000 dpi) are firmware nonsense.
        if 2.0 <= v <= 40.0:
            return float(v)
    dpi = screen.physicalDotsPerInch()
    if 50 <= dpi <= 1000:
        return float(dpi / 25.4)
    return FALLBACK_PX_PER_MM


def screen_px_per_mm(
    screen: QtGui.QScreen | None, settings: QtCore.QSettings | None = None
) -> float:
    """The user's calibration for this screen when one is stored, else the physical estimate."""
    settings = settings or QtCore.QSettings()
    stored = settings.value(f"{screen_key(screen)}/px_per_mm")
    try:
        v = float(stored) if stored is not None else 0.0
    except (TypeError, ValueError):
        v = 0.0
    return v if 1.0 <= v <= 60.0 else physical_px_per_mm(screen)


def store_px_per_mm(
    screen: QtGui.QScreen | None, px_per_mm: float, settings: QtCore.QSettings | None = None
) -> None:
    settings = settings or QtCore.QSettings()
    settings.setValue(f"{screen_key(screen)}/px_per_mm", float(px_per_mm))
    settings.sync()


def clear_px_per_mm(screen: QtGui.QScreen | None, settings: QtCore.QSettings | None = None) -> None:
    settings = settings or QtCore.QSettings()
    settings.remove(f"{screen_key(screen)}/px_per_mm")


class PaperGrid(pg.GraphicsObject):
    """Minor and major grid lines over a rectangle, in the item's own coordinates.

    ``minor_dx``/``minor_dy`` are one millimetre of paper in those coordinates (1.0 on the mm
    canvas; 1/speed s and 1/gain mV on a plot in seconds and millivolts); every
    ``major_every``-th line is a major (5 mm) line. Minor lines are dropped when they would be
    closer than ``min_minor_px`` on the glass, so a zoomed-out page does not turn into a grey wash.
    """

    def __init__(
        self,
        rect: QtCore.QRectF,
        minor_dx: float = 1.0,
        minor_dy: float = 1.0,
        *,
        major_every: int = 5,
        minor_colour: str = "#e4e8ec",
        major_colour: str = "#bcc6cf",
        min_minor_px: float = 3.0,
    ) -> None:
        super().__init__()
        self._rect = QtCore.QRectF(rect)
        self.minor_dx = float(minor_dx)
        self.minor_dy = float(minor_dy)
        self.major_every = int(major_every)
        self.min_minor_px = min_minor_px
        self.set_colours(minor_colour, major_colour)
        self.setZValue(-100)
        self.setFlag(QtWidgets.QGraphicsItem.GraphicsItemFlag.ItemUsesExtendedStyleOption, True)

    def set_colours(self, minor: str, major: str, paper: str | None = None) -> None:
        self._fill = QtGui.QBrush(QtGui.QColor(paper)) if paper else None
        self._minor_pen = pg.mkPen(minor, width=1.0, cosmetic=True)
        self._major_pen = pg.mkPen(major, width=1.0, cosmetic=True)
        self.update()

    def set_geometry(self, rect: QtCore.QRectF, minor_dx: float, minor_dy: float) -> None:
        self.prepareGeometryChange()
        self._rect = QtCore.QRectF(rect)
        self.minor_dx, self.minor_dy = float(minor_dx), float(minor_dy)
        self.update()

    def rect(self) -> QtCore.QRectF:
        return QtCore.QRectF(self._rect)

    def boundingRect(self) -> QtCore.QRectF:
        return self._rect.normalized()

    def line_positions(self, axis: str, lo: float, hi: float) -> tuple[list[float], list[float]]:
        """(minor, major) line positions along ``axis`` ('x' or 'y') within [lo, hi]."""
        r = self._rect.normalized()
        step = self.minor_dx if axis == "x" else self.minor_dy
        origin = r.left() if axis == "x" else r.top()
        end = r.right() if axis == "x" else r.bottom()
        lo, hi = max(lo, origin), min(hi, end)
        k0 = math.ceil((lo - origin) / step - 1e-9)
        k1 = math.floor((hi - origin) / step + 1e-9)
        minor: list[float] = []
        major: list[float] = []
        for k in range(k0, k1 + 1):
            (major if k % self.major_every == 0 else minor).append(origin + k * step)
        return minor, major

    def paint(self, painter: QtGui.QPainter, option, widget=None) -> None:
        r = self._rect.normalized()
        area = option.exposedRect.intersected(r) if option is not None else r
        if area.isEmpty():
            area = r
        t = painter.transform()
        px_x = abs(t.m11()) * self.minor_dx
        px_y = abs(t.m22()) * self.minor_dy
        painter.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing, False)
        if self._fill is not None:
            painter.fillRect(area, self._fill)
        xs_minor, xs_major = self.line_positions("x", area.left(), area.right())
        ys_minor, ys_major = self.line_positions("y", area.top(), area.bottom())
        y0, y1, x0, x1 = area.top(), area.bottom(), area.left(), area.right()
        if px_x >= self.min_minor_px and px_y >= self.min_minor_px:
            painter.setPen(self._minor_pen)
            painter.drawLines([QtCore.QLineF(x, y0, x, y1) for x in xs_minor])
            painter.drawLines([QtCore.QLineF(x0, y, x1, y) for y in ys_minor])
        painter.setPen(self._major_pen)
        painter.drawLines([QtCore.QLineF(x, y0, x, y1) for x in xs_major])
        painter.drawLines([QtCore.QLineF(x0, y, x1, y) for y in ys_major])
