"""Draggable fiducial marks on the paper canvas.

A mark keeps its sample index; the canvas tells it where that sample is on the paper. A
reader's corrected mark differs from an automatic one by line style (dashed) and a glyph
(filled diamond at the top), not by colour alone.
"""

from __future__ import annotations

from collections.abc import Callable

import pyqtgraph as pg
from PySide6 import QtCore, QtGui

from reviewapp.core.fiducials import FIDUCIAL_LABELS
from reviewapp.core.workflow import MarkTarget
from reviewapp.ui.theme import Theme, mark_colour

GRAB_PX = 5.0  # half-width of the grab zone around a mark line, in screen pixels
HALO_PX = 9.0  # width of a selected mark's halo, in screen pixels
HALO_ALPHA = 0.30
TICK_MM = 2.0  # automatic marks: firm ticks this long at the top and bottom of each row
SHORT_LABELS = {
    "p_on": "P on",
    "p_off": "P end",
    "qrs_on": "QRS on",
    "qrs_off": "QRS end",
    "t_off": "T end",
}


class FiducialMark(pg.GraphicsObject):
    """One boundary (P onset ... T end) of one beat, drawn across the rows that show it.

    Signals: ``pressed(mark)`` when the reader takes it (it becomes the selection the arrow
    keys move), ``dragging(mark, sample)`` while the reader drags, ``dropped(mark, sample)``
    on release (only when it moved), ``reset_requested(mark)`` on double-click. A selected
    mark is drawn firm with a halo, so the reader sees what the keys will move.
    """

    pressed = QtCore.Signal(object)
    dragging = QtCore.Signal(object, int)
    dropped = QtCore.Signal(object, int)
    reset_requested = QtCore.Signal(object)

    def __init__(
        self,
        fiducial: str,
        sample: int,
        beat_index: int | None,
        *,
        corrected: bool,
        theme: Theme,
        x_of_sample: Callable[[float], float],
        sample_of_x: Callable[[float], int],
        bands: list[tuple[float, float]],
        fs_hz: float,
    ) -> None:
        super().__init__()
        self.fiducial = fiducial
        self.sample = int(sample)
        self.beat_index = beat_index
        self.target: MarkTarget | None = None  # the mark it shows (set by the paper)
        self.corrected = corrected
        self._x_of_sample = x_of_sample
        self._sample_of_x = sample_of_x
        self._bands = list(bands)
        self._fs = fs_hz
        self._start_sample: int | None = None
        self._hover = False
        self.selected = False
        self._hw: float | None = None
        self._br: QtCore.QRectF | None = None
        self.set_theme(theme)
        self.setZValue(30)
        self.setAcceptHoverEvents(True)
        self.setCursor(QtCore.Qt.CursorShape.SizeHorCursor)
        self._update_tooltip()

    # --- appearance ------------------------------------------------------------------------
    def set_theme(self, theme: Theme) -> None:
        base = QtGui.QColor(
            theme.mark_corrected if self.corrected else mark_colour(theme, self.fiducial)
        )
        self._colour = base
        faint = QtGui.QColor(base)
        # Automatic marks recede (a faint hairline with firm ticks at the row edges) so the
        # waveform under them stays readable; corrected marks are a firm dashed line.
        faint.setAlphaF(0.9 if self.corrected else 0.22)
        style = QtCore.Qt.PenStyle.DashLine if self.corrected else QtCore.Qt.PenStyle.SolidLine
        self._pen = pg.mkPen(
            faint, width=1.5 if self.corrected else 1.0, style=style, cosmetic=True
        )
        self._tick_pen = pg.mkPen(base, width=1.6, cosmetic=True)
        self._hover_pen = pg.mkPen(base, width=2.0, style=style, cosmetic=True)
        halo = QtGui.QColor(theme.highlight)
        halo.setAlphaF(HALO_ALPHA)
        self._halo_pen = pg.mkPen(halo, width=HALO_PX, cosmetic=True)
        self.update()

    def set_selected(self, on: bool) -> None:
        if on != self.selected:
            self.selected = on
            self.update()

    def set_corrected(self, corrected: bool, theme: Theme) -> None:
        self.corrected = corrected
        self.set_theme(theme)
        self._update_tooltip()

    def _update_tooltip(self) -> None:
        state = "corrected by the reader" if self.corrected else "automatic"
        where = "" if self.beat_index is None else f" of the beat at {self.sample / self._fs:.3f} s"
        self.setToolTip(
            f"{FIDUCIAL_LABELS[self.fiducial]}{where} ({state}). Drag to correct; "
            "click, then the arrow keys move it one sample; double-click resets to automatic."
        )

    # --- geometry ----------------------------------------------------------------------------
    @property
    def time_s(self) -> float:
        """Where the mark is, in seconds from the record's start."""
        return self.sample / self._fs

    @property
    def line_x(self) -> float:
        return self._x_of_sample(self.sample)

    def set_sample(self, sample: int) -> None:
        self.prepareGeometryChange()
        self.sample = int(sample)
        self._br = None
        self.update()

    def _halfwidth(self) -> float:
        # Cached: the scene asks for the bounding rect far more often than the view changes.
        if self._hw is None:
            pw = self.pixelWidth()
            if not pw:
                return GRAB_PX * 0.25
            self._hw = GRAB_PX * pw
        return self._hw

    def viewTransformChanged(self) -> None:
        self.prepareGeometryChange()
        self._hw = None
        self._br = None

    def boundingRect(self) -> QtCore.QRectF:
        if self._br is None:
            if not self._bands:
                return QtCore.QRectF()
            hw = self._halfwidth() * 2.0
            top = min(b[0] for b in self._bands)
            bottom = max(b[1] for b in self._bands)
            self._br = QtCore.QRectF(self.line_x - hw, top - hw, 2 * hw, bottom - top + 2 * hw)
        return QtCore.QRectF(self._br)

    def shape(self) -> QtGui.QPainterPath:
        path = QtGui.QPainterPath()
        hw = self._halfwidth()
        for top, bottom in self._bands:
            path.addRect(QtCore.QRectF(self.line_x - hw, top, 2 * hw, bottom - top))
        return path

    def paint(self, painter: QtGui.QPainter, option, widget=None) -> None:
        painter.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing, True)
        x = self.line_x
        if self.selected:
            painter.setPen(self._halo_pen)
            for top, bottom in self._bands:
                painter.drawLine(QtCore.QPointF(x, top), QtCore.QPointF(x, bottom))
        painter.setPen(self._hover_pen if self._hover or self.selected else self._pen)
        for top, bottom in self._bands:
            painter.drawLine(QtCore.QPointF(x, top), QtCore.QPointF(x, bottom))
        if not self.corrected and not self._hover:
            painter.setPen(self._tick_pen)
            tick = TICK_MM
            for top, bottom in self._bands:
                painter.drawLine(QtCore.QPointF(x, top), QtCore.QPointF(x, top + tick))
                painter.drawLine(QtCore.QPointF(x, bottom - tick), QtCore.QPointF(x, bottom))
        if self.corrected and self._bands:
            # Glyph in screen pixels so it reads the same at any zoom.
            top = self._bands[0][0]
            pt = painter.transform().map(QtCore.QPointF(x, top))
            painter.save()
            painter.resetTransform()
            painter.setPen(pg.mkPen(self._colour, width=1.0))
            painter.setBrush(QtGui.QBrush(self._colour))
            r = 4.0
            diamond = QtGui.QPolygonF(
                [
                    QtCore.QPointF(pt.x(), pt.y() - r),
                    QtCore.QPointF(pt.x() + r, pt.y()),
                    QtCore.QPointF(pt.x(), pt.y() + r),
                    QtCore.QPointF(pt.x() - r, pt.y()),
                ]
            )
            painter.drawPolygon(diamond)
            painter.restore()

    # --- interaction ---------------------------------------------------------------------
    def hoverEnterEvent(self, ev) -> None:
        self._hover = True
        self.update()

    def hoverLeaveEvent(self, ev) -> None:
        self._hover = False
        self.update()

    def _closer_mark_exists(self, ev) -> bool:
        """Marks a few pixels apart have overlapping grab zones: the nearest one takes the mouse."""
        scene = self.scene()
        if scene is None:
            return False
        mine = abs(ev.pos().x() - self.line_x)
        for item in scene.items(ev.scenePos()):
            if item is not self and isinstance(item, FiducialMark):
                other = abs(item.mapFromScene(ev.scenePos()).x() - item.line_x)
                if other < mine:
                    return True
        return False

    def mousePressEvent(self, ev) -> None:
        if ev.button() != QtCore.Qt.MouseButton.LeftButton or self._closer_mark_exists(ev):
            ev.ignore()
            return
        self._start_sample = self.sample
        ev.accept()
        self.pressed.emit(self)

    def mouseMoveEvent(self, ev) -> None:
        if self._start_sample is None:
            ev.ignore()
            return
        s = self._sample_of_x(ev.pos().x())
        if s != self.sample:
            self.set_sample(s)
            self.dragging.emit(self, s)
        ev.accept()

    def mouseReleaseEvent(self, ev) -> None:
        if self._start_sample is None:
            ev.ignore()
            return
        start, self._start_sample = self._start_sample, None
        if self.sample != start:
            self.dropped.emit(self, self.sample)
        ev.accept()

    def mouseDoubleClickEvent(self, ev) -> None:
        if self._closer_mark_exists(ev):
            ev.ignore()
            return
        self.reset_requested.emit(self)
        ev.accept()
