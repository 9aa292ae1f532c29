"""A global mark (P onset ... T end) on a median-beat panel: one vertical line at a time from R.

The line moves from the first pixel of a drag: the press makes it the mouse grabber, so
pyqtgraph's drag threshold (a few pixels and half a second before a drag starts) never
applies and a 3 px drag moves the mark 3 px. A click selects it (the arrow keys then nudge it
one sample); a selected line is drawn with a wide halo, so the reader sees which mark the keys
will move. The view decides where the mark lands (it snaps to samples and sends the edit).
"""

from __future__ import annotations

import pyqtgraph as pg
from PySide6 import QtCore, QtGui

from reviewapp.ui.mark_items import GRAB_PX, HALO_ALPHA, HALO_PX


class MedianMarkLine(pg.InfiniteLine):
    """Signals: ``pressed(line)`` (select it), ``moved(line, ms)`` while dragged (the time
    under the mouse, keeping the offset at which the line was grabbed), ``released(line,
    moved)`` and ``reset_requested(line)`` on double-click."""

    pressed = QtCore.Signal(object)
    moved = QtCore.Signal(object, float)
    released = QtCore.Signal(object, bool)
    reset_requested = QtCore.Signal(object)

    def __init__(
        self,
        fiducial: str,
        pos_ms: float,
        pen: QtGui.QPen,
        hover_pen: QtGui.QPen,
        label: str | None = None,
        label_opts: dict | None = None,
    ) -> None:
        super().__init__(
            pos=pos_ms,
            angle=90,
            movable=True,  # the hover pen shows the line can be taken
            pen=pen,
            hoverPen=hover_pen,
            label=label,
            labelOpts=label_opts or {},
        )
        self.fiducial = fiducial
        self.selected = False
        # pyqtgraph widens the bounding rect by the largest marker: used here as the grab zone
        # (and room for the halo), wider than the 1.6 px line itself.
        self._maxMarkerSize = GRAB_PX
        self._grab: tuple[float, float] | None = None  # (mouse ms, line ms) at the press
        self._moved = False
        self._halo = QtGui.QPen(QtGui.QColor(0, 0, 0, 0), HALO_PX)
        self._halo.setCosmetic(True)
        # Its moves do not change what the view's auto-range sees (the view adds it with
        # ignoreBounds), so Qt need not report each one to pyqtgraph's item-change hook.
        self.setFlag(self.GraphicsItemFlag.ItemSendsGeometryChanges, False)
        self._px: float | None = None  # one screen pixel in view units, until the view changes

    def setPos(self, pos) -> None:
        """Moving a vertical line sideways leaves its own outline unchanged (it spans the
        view's height): only the position is set, without pyqtgraph recomputing the outline
        from the view on every step of a drag.

        The value (``value()``) is always the exact one; the drawing moves when the value is
        half a pixel or more from where the line is drawn. In a small panel at paper scale
        one pixel is about 10 ms, so a one-sample step of a mark dragged in the magnified
        beat would otherwise repaint twelve panels for no visible change."""
        if (
            isinstance(pos, int | float)
            and self.angle == 90
            and self._boundingRect is not None
            and self.maxRange == [None, None]
        ):
            x = float(pos)
            if self.getPos() == [x, 0.0]:
                return
            self.p = [x, 0.0]
            if abs(x - self.pos().x()) >= 0.5 * self._px_width():
                pg.GraphicsObject.setPos(self, QtCore.QPointF(x, 0.0))
            self.sigPositionChanged.emit(self)
            return
        super().setPos(pos)

    def viewTransformChanged(self) -> None:
        """The view's range or size changed (pyqtgraph calls this, as it does to renew the
        line's outline): the pixel width is measured again at the next move."""
        self._px = None
        super().viewTransformChanged()

    def _px_width(self) -> float:
        """Width of one screen pixel in the line's units (0 when not on screen)."""
        if self._px is None:
            vb = self.getViewBox()
            if not isinstance(vb, pg.ViewBox) or vb.pixelVectors()[0] is None:
                return 0.0  # not on a screen yet: there is no pixel, so the drawing always moves
            self._px = abs(float(vb.viewPixelSize()[0]))
        return self._px

    def settle(self) -> None:
        """Draw the line exactly at its value (a drag or a nudge has ended)."""
        x = float(self.value())
        if self.pos().x() != x:
            pg.GraphicsObject.setPos(self, QtCore.QPointF(x, 0.0))

    def drawn_value(self) -> float:
        """Where the line is drawn now (within half a pixel of ``value()``)."""
        return float(self.pos().x())

    def set_selected(self, on: bool, colour: QtGui.QColor) -> None:
        halo = QtGui.QColor(colour)
        halo.setAlphaF(HALO_ALPHA)
        self._halo.setColor(halo)
        if on != self.selected:
            self.selected = on
            self.update()

    def paint(self, p: QtGui.QPainter, *args) -> None:
        if self.selected:
            left, right = self._endPoints
            p.setPen(self._halo)
            p.drawLine(QtCore.QPointF(left, 0.0), QtCore.QPointF(right, 0.0))
        super().paint(p, *args)

    # --- the mouse ---------------------------------------------------------------------------
    def _view_ms(self, ev) -> float:
        parent = self.parentItem()
        if parent is None:
            return float(self.value())
        return float(parent.mapFromScene(ev.scenePos()).x())

    def _gives_way(self, ev) -> bool:
        """Another item here takes the press: a lead's J dot on top of this line, or a mark
        line nearer the mouse (grab zones of close marks overlap)."""
        scene = self.scene()
        if scene is None:
            return False
        mine = abs(self._view_ms(ev) - float(self.value()))
        for item in scene.items(ev.scenePos()):
            if item is self:
                continue
            if isinstance(item, pg.TargetItem) and item.isVisible():
                return True
            if isinstance(item, MedianMarkLine) and item.parentItem() is self.parentItem():
                if abs(item._view_ms(ev) - float(item.value())) < mine:
                    return True
        return False

    def mousePressEvent(self, ev) -> None:
        if ev.button() != QtCore.Qt.MouseButton.LeftButton or self._gives_way(ev):
            ev.ignore()
            return
        self._grab = (self._view_ms(ev), float(self.value()))
        self._moved = False
        ev.accept()
        self.pressed.emit(self)

    def mouseMoveEvent(self, ev) -> None:
        if self._grab is None:
            ev.ignore()
            return
        x0, v0 = self._grab
        self._moved = True
        self.moved.emit(self, v0 + self._view_ms(ev) - x0)
        ev.accept()

    def mouseReleaseEvent(self, ev) -> None:
        if self._grab is None:
            ev.ignore()
            return
        self._grab = None
        ev.accept()
        self.released.emit(self, self._moved)

    def mouseDoubleClickEvent(self, ev) -> None:
        if self._gives_way(ev):
            ev.ignore()
            return
        ev.accept()
        self.reset_requested.emit(self)

    @property
    def dragging(self) -> bool:
        return self._grab is not None
