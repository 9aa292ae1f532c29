"""Caliper pairs: time (ms and rate) and amplitude (mV and mm at the current gain).

A caliper stores sample indices (time pair) or millivolts (amplitude pair); the paper geometry
only says where to draw them, so a readout never depends on zoom, speed or gain. Drag either leg
or the bar between them; the window nudges the selected part with the arrow keys.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, Protocol

import pyqtgraph as pg
from PySide6 import QtCore, QtGui

from reviewapp.ui.theme import Theme

Part = Literal["a", "b", "bar"]
GRAB_PX = 6.0
MV_NUDGE = 0.01  # amplitude legs move in 10 uV steps with the arrow keys
AMP_LEG_HALF_MM = 4.0


class CaliperGeometry(Protocol):
    @property
    def fs_hz(self) -> float: ...

    def x_of_sample(self, sample: float) -> float: ...
    def sample_of_x(self, x_mm: float) -> int: ...
    def y_of_mv(self, row: int, mv: float, lead: str | None = None) -> float: ...
    def mv_of_y(self, row: int, y_mm: float, lead: str | None = None) -> float: ...
    def row_band(self, row: int) -> tuple[float, float]: ...


@dataclass(frozen=True)
class CaliperReadout:
    kind: str
    interval_ms: float | None = None
    rate_bpm: float | None = None
    amplitude_mv: float | None = None
    amplitude_mm: float | None = None

    def text(self) -> str:
        if self.kind == "time":
            rate = f"  ·  {self.rate_bpm:.0f} bpm" if self.rate_bpm else ""
            return f"{self.interval_ms:.0f} ms{rate}"
        return f"{self.amplitude_mv:.2f} mV  ·  {self.amplitude_mm:.1f} mm"


def time_readout(a: int, b: int, fs_hz: float) -> CaliperReadout:
    """Interval between two samples in ms and the rate it implies (60000 / ms).

    >>> time_readout(100, 900, 1000.0).text()
    '800 ms  ·  75 bpm'
    """
    ms = abs(b - a) / fs_hz * 1000.0
    return CaliperReadout("time", interval_ms=ms, rate_bpm=(60000.0 / ms) if ms > 0 else None)


def amplitude_readout(a_mv: float, b_mv: float, gain_mm_per_mv: float) -> CaliperReadout:
    mv = abs(b_mv - a_mv)
    return CaliperReadout("amplitude", amplitude_mv=mv, amplitude_mm=mv * gain_mm_per_mv)


@dataclass(frozen=True)
class CaliperState:
    """Where a caliper's legs are and what it is called: what one undo step restores."""

    a: int
    b: int
    at: int
    a_mv: float
    b_mv: float
    name: str


class CaliperPair(pg.GraphicsObject):
    """One pair of caliper legs on one row of the paper.

    kind "time": legs at record samples ``a`` and ``b``. kind "amplitude": legs at ``a_mv`` and
    ``b_mv`` on that row, placed at record sample ``at``.
    """

    changed = QtCore.Signal(object)
    # A mouse drag of a leg or the bar ended (the release): one undo step in the window.
    drag_finished = QtCore.Signal(object)
    selected_changed = QtCore.Signal(object)
    rename_requested = QtCore.Signal(object)

    def __init__(
        self,
        kind: Literal["time", "amplitude"],
        row: int,
        lead: str,
        geom: CaliperGeometry,
        gain_mm_per_mv: float,
        theme: Theme,
        *,
        a: int = 0,
        b: int = 0,
        at: int = 0,
        a_mv: float = 0.0,
        b_mv: float = 1.0,
        name: str = "",
    ) -> None:
        super().__init__()
        self.kind = kind
        self.row = row
        self.lead = lead
        self.geom = geom
        self.gain = gain_mm_per_mv
        self.a, self.b, self.at = int(a), int(b), int(at)
        self.a_mv, self.b_mv = float(a_mv), float(b_mv)
        self.name = name
        self.store_id: str | None = None  # id of this caliper in the marks sidecar, if saved
        self.march = False
        # The state last put on the window's undo stack (None: not added there yet).
        self.committed: CaliperState | None = None
        # Drawn with Shift + drag: added to the undo stack when the drawing drag ends.
        self.drawing = False
        self.selected = False
        self.part: Part = "bar"
        self._drag: tuple[Part, float, int, int, int, float, float] | None = None
        self._pix_cache: tuple[float, float] | None = None
        self.setZValue(40)
        self.set_theme(theme)
        self.setCursor(QtCore.Qt.CursorShape.SizeHorCursor)

    # --- state -------------------------------------------------------------------------
    def readout(self) -> CaliperReadout:
        if self.kind == "time":
            return time_readout(self.a, self.b, self.geom.fs_hz)
        return amplitude_readout(self.a_mv, self.b_mv, self.gain)

    def label_text(self) -> str:
        t = self.readout().text()
        return f"{self.name}  {t}" if self.name else t

    def state(self) -> CaliperState:
        return CaliperState(self.a, self.b, self.at, self.a_mv, self.b_mv, self.name)

    def apply_state(self, st: CaliperState) -> None:
        """Put the legs and label where ``st`` says (undo / redo)."""
        self.name = st.name
        self.set_levels(a_mv=st.a_mv, b_mv=st.b_mv)
        self.set_legs(a=st.a, b=st.b, at=st.at)

    @property
    def dragging(self) -> bool:
        return self._drag is not None

    def set_geometry(self, geom: CaliperGeometry, gain_mm_per_mv: float) -> None:
        self.prepareGeometryChange()
        self.geom, self.gain = geom, gain_mm_per_mv
        self.update()

    def set_theme(self, theme: Theme) -> None:
        self._pen = pg.mkPen(theme.caliper, width=1.4, cosmetic=True)
        self._sel_pen = pg.mkPen(theme.caliper_selected, width=2.0, cosmetic=True)
        self._march_pen = pg.mkPen(
            theme.caliper, width=1.0, style=QtCore.Qt.PenStyle.DotLine, cosmetic=True
        )
        self._text = QtGui.QColor(theme.text)
        self._label_bg = QtGui.QColor(theme.paper)
        self._label_bg.setAlphaF(0.85)
        self.update()

    def set_selected(self, on: bool) -> None:
        if on != self.selected:
            self.selected = on
            self.update()
            self.selected_changed.emit(self)

    def set_legs(self, a: int | None = None, b: int | None = None, at: int | None = None) -> None:
        self.prepareGeometryChange()
        if a is not None:
            self.a = int(a)
        if b is not None:
            self.b = int(b)
        if at is not None:
            self.at = int(at)
        self.update()
        self.changed.emit(self)

    def set_levels(self, a_mv: float | None = None, b_mv: float | None = None) -> None:
        self.prepareGeometryChange()
        if a_mv is not None:
            self.a_mv = float(a_mv)
        if b_mv is not None:
            self.b_mv = float(b_mv)
        self.update()
        self.changed.emit(self)

    def nudge(self, dx_samples: int = 0, dy_steps: int = 0) -> None:
        """Arrow keys: move the selected part by one sample (or one 10 uV step vertically)."""
        if self.kind == "time":
            if self.part == "a":
                self.set_legs(a=self.a + dx_samples)
            elif self.part == "b":
                self.set_legs(b=self.b + dx_samples)
            else:
                self.set_legs(a=self.a + dx_samples, b=self.b + dx_samples)
        else:
            if dx_samples:
                self.set_legs(at=self.at + dx_samples)
            if dy_steps:
                d = dy_steps * MV_NUDGE
                if self.part == "a":
                    self.set_levels(a_mv=self.a_mv + d)
                elif self.part == "b":
                    self.set_levels(b_mv=self.b_mv + d)
                else:
                    self.set_levels(a_mv=self.a_mv + d, b_mv=self.b_mv + d)

    def march_positions(self, last_sample: int) -> list[int]:
        """Leg positions repeating the interval along the strip (march-out), past leg b."""
        step = self.b - self.a
        if self.kind != "time" or step == 0:
            return []
        lo, hi = sorted((self.a, self.b))
        step = abs(step)
        out: list[int] = []
        s = hi + step
        while s <= last_sample and len(out) < 200:
            out.append(s)
            s += step
        s = lo - step
        while s >= 0 and len(out) < 400:
            out.append(s)
            s -= step
        return out

    # --- drawing -------------------------------------------------------------------------
    def _bar_y(self) -> float:
        top, bottom = self.geom.row_band(self.row)
        return top + 0.18 * (bottom - top)

    def _pix(self) -> tuple[float, float]:
        if self._pix_cache is None:
            pw, ph = self.pixelWidth(), self.pixelHeight()
            if not pw or not ph:
                return (0.25, 0.25)
            self._pix_cache = (pw, ph)
        return self._pix_cache

    def viewTransformChanged(self) -> None:
        self.prepareGeometryChange()
        self._pix_cache = None

    def _segments(self) -> tuple[list[QtCore.QLineF], QtCore.QLineF]:
        g = self.geom
        top, bottom = g.row_band(self.row)
        if self.kind == "time":
            xa, xb = g.x_of_sample(self.a), g.x_of_sample(self.b)
            legs = [QtCore.QLineF(xa, top, xa, bottom), QtCore.QLineF(xb, top, xb, bottom)]
            y = self._bar_y()
            return legs, QtCore.QLineF(xa, y, xb, y)
        x = g.x_of_sample(self.at)
        ya = g.y_of_mv(self.row, self.a_mv, self.lead)
        yb = g.y_of_mv(self.row, self.b_mv, self.lead)
        h = AMP_LEG_HALF_MM
        legs = [QtCore.QLineF(x - h, ya, x + h, ya), QtCore.QLineF(x - h, yb, x + h, yb)]
        return legs, QtCore.QLineF(x, ya, x, yb)

    def _label_anchor(self) -> QtCore.QPointF:
        _legs, bar = self._segments()
        if self.kind == "time":
            return QtCore.QPointF(min(bar.x1(), bar.x2()), bar.y1())
        # Above the higher leg (e.g. over an R peak), not across the bar's middle, where the
        # label would hide the very deflection being measured.
        top = bar.y1() if self.a_mv >= self.b_mv else bar.y2()
        return QtCore.QPointF(bar.x1() + AMP_LEG_HALF_MM, top)

    def boundingRect(self) -> QtCore.QRectF:
        legs, bar = self._segments()
        r = QtCore.QRectF()
        for ln in [*legs, bar]:
            r = r.united(QtCore.QRectF(ln.p1(), ln.p2()).normalized())
        pw, ph = self._pix()
        a = self._label_anchor()
        # Label is drawn in screen pixels: about 260 x 40 px beside the anchor.
        r = r.united(QtCore.QRectF(a.x() - 4 * pw, a.y() - 40 * ph, 260 * pw, 60 * ph))
        return r.adjusted(-GRAB_PX * pw, -GRAB_PX * ph, GRAB_PX * pw, GRAB_PX * ph)

    def shape(self) -> QtGui.QPainterPath:
        legs, bar = self._segments()
        pw, ph = self._pix()
        path = QtGui.QPainterPath()
        for ln in [*legs, bar]:
            r = QtCore.QRectF(ln.p1(), ln.p2()).normalized()
            path.addRect(r.adjusted(-GRAB_PX * pw, -GRAB_PX * ph, GRAB_PX * pw, GRAB_PX * ph))
        return path

    def paint(self, painter: QtGui.QPainter, option, widget=None) -> None:
        painter.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing, True)
        legs, bar = self._segments()
        painter.setPen(self._sel_pen if self.selected else self._pen)
        painter.drawLines([*legs, bar])
        if self.march and self.kind == "time":
            top, bottom = self.geom.row_band(self.row)
            painter.setPen(self._march_pen)
            xs = [self.geom.x_of_sample(s) for s in self.march_positions(self._last_sample())]
            painter.drawLines([QtCore.QLineF(x, top, x, bottom) for x in xs])
        # Label in screen pixels, on a soft backing so grid lines do not cut through digits.
        a = painter.transform().map(self._label_anchor())
        painter.save()
        painter.resetTransform()
        f = QtGui.QFont()
        f.setPointSizeF(10.0)
        f.setBold(self.selected)
        painter.setFont(f)
        text = self.label_text()
        fm = QtGui.QFontMetricsF(f)
        w, h = fm.horizontalAdvance(text) + 8, fm.height() + 2
        box = QtCore.QRectF(a.x(), a.y() - h - 3, w, h)
        dev = painter.device()
        if dev is not None and box.right() > dev.width() / max(1.0, dev.devicePixelRatioF()) - 4:
            box.moveRight(a.x() - 6)  # near the right edge: label on the left of the caliper
        painter.setPen(QtCore.Qt.PenStyle.NoPen)
        painter.setBrush(self._label_bg)
        painter.drawRoundedRect(box, 3, 3)
        painter.setPen(self._text)
        painter.drawText(box, QtCore.Qt.AlignmentFlag.AlignCenter, text)
        painter.restore()

    def _last_sample(self) -> int:
        # The strip's last sample: march-out stops at the page's right edge.
        pr = getattr(self.geom, "page_start", 0) + getattr(self.geom, "page_samples", 10**6)
        return int(pr)

    # --- mouse -------------------------------------------------------------------------
    def _hit_part(self, pos: QtCore.QPointF) -> Part:
        legs, _bar = self._segments()
        pw, ph = self._pix()

        def dist_px(ln: QtCore.QLineF) -> float:
            r = QtCore.QRectF(ln.p1(), ln.p2()).normalized()
            dx = max(r.left() - pos.x(), 0.0, pos.x() - r.right()) / pw
            dy = max(r.top() - pos.y(), 0.0, pos.y() - r.bottom()) / ph
            return (dx * dx + dy * dy) ** 0.5

        da, db = dist_px(legs[0]), dist_px(legs[1])
        if min(da, db) <= GRAB_PX:
            return "a" if da <= db else "b"
        return "bar"

    def mousePressEvent(self, ev) -> None:
        if ev.button() != QtCore.Qt.MouseButton.LeftButton:
            ev.ignore()
            return
        self.part = self._hit_part(ev.pos())
        self._drag = (self.part, ev.pos().x(), self.a, self.b, self.at, self.a_mv, self.b_mv)
        self.set_selected(True)
        self.selected_changed.emit(self)
        ev.accept()

    def mouseMoveEvent(self, ev) -> None:
        if self._drag is None:
            ev.ignore()
            return
        part, x0, a0, b0, at0, _amv0, _bmv0 = self._drag
        g = self.geom
        pos = ev.pos()
        if self.kind == "time":
            s = g.sample_of_x(pos.x())
            if part == "a":
                self.set_legs(a=s)
            elif part == "b":
                self.set_legs(b=s)
            else:
                d = s - g.sample_of_x(x0)
                self.set_legs(a=a0 + d, b=b0 + d)
        else:
            mv = g.mv_of_y(self.row, pos.y(), self.lead)
            if part == "a":
                self.set_levels(a_mv=mv)
            elif part == "b":
                self.set_levels(b_mv=mv)
            else:
                d = g.sample_of_x(pos.x()) - g.sample_of_x(x0)
                self.set_legs(at=at0 + d)
        ev.accept()

    def start_drag_from_press(self, x_mm: float, sample: int) -> None:
        """Begin dragging leg b from ``sample`` (a new caliper drawn with Shift + drag)."""
        self.set_legs(a=sample, b=sample)
        self.part = "b"
        self._drag = ("b", x_mm, sample, sample, self.at, self.a_mv, self.b_mv)
        self.grabMouse()

    def mouseReleaseEvent(self, ev) -> None:
        was_dragging = self._drag is not None
        self._drag = None
        scene = self.scene()
        if scene is not None and scene.mouseGrabberItem() is self:
            self.ungrabMouse()
        ev.accept()
        if was_dragging:
            self.drag_finished.emit(self)

    def mouseDoubleClickEvent(self, ev) -> None:
        self.rename_requested.emit(self)
        ev.accept()
