"""Lead traces, 1 mV calibration pulses and lead labels on the paper canvas (mm coordinates)."""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.ui.geometry import GROUP_GAP_MM, LEFT_MARGIN_MM, PageGeometry
from reviewapp.ui.layouts import Cell, LeadGroup
from reviewapp.ui.theme import Theme


class LeadTrace(pg.PlotDataItem):
    """One cell's signal, drawn with pyqtgraph's clip-to-view and peak-preserving decimation
    (``autoDownsample`` with method "peak"), so a zoomed-out page costs what the screen shows."""

    def __init__(self, cell: Cell, theme: Theme) -> None:
        super().__init__(
            pen=pg.mkPen(theme.trace, width=theme.trace_width_px, cosmetic=True),
            antialias=True,
            connect="finite",
        )
        self.setDownsampling(auto=True, method="peak")
        # About three points per screen pixel after peak decimation (pyqtgraph's default keeps
        # ~10): the same picture, a third of the line segments to stroke.
        self.opts["autoDownsampleFactor"] = 1.5
        self.setClipToView(True)
        # Line segments instead of one path: Qt strokes a >1 px antialiased path ~20x slower.
        self.curve.setSegmentedLineMode("on")
        # Cache the stroked trace in device pixels: a caliper or mark drag then repaints its
        # strip by copying pixels instead of stroking thousands of segments again.
        self.curve.setCacheMode(QtWidgets.QGraphicsItem.CacheMode.DeviceCoordinateCache)
        self.cell = cell
        self.setZValue(10)

    def set_signal(self, geom: PageGeometry, x_samples: np.ndarray, mv: np.ndarray) -> None:
        """``x_samples``: record sample indices; ``mv``: that lead's values (NaN = gap)."""
        sign = -1.0 if self.cell.inverted else 1.0
        x_mm = (
            LEFT_MARGIN_MM + (x_samples - geom.page_start) / geom.fs_hz * geom.scale.speed_mm_per_s
        )
        shown = mv - geom.offset_mv(self.cell.lead)  # display-only baseline centring
        y_mm = geom.baseline_y(self.cell.row) - sign * shown * geom.scale.gain_mm_per_mv
        self.setData(x_mm.astype(np.float64), y_mm.astype(np.float64))

    def set_theme(self, theme: Theme) -> None:
        self.setPen(pg.mkPen(theme.trace, width=theme.trace_width_px, cosmetic=True))


class CalibrationPulse(pg.GraphicsObject):
    """The 1 mV square pulse at the start of a row: its height is the gain, in millimetres."""

    def __init__(self, row: int, theme: Theme) -> None:
        super().__init__()
        self.row = row
        self._path = QtGui.QPainterPath()
        self._pen = pg.mkPen(theme.trace, width=theme.trace_width_px, cosmetic=True)
        self.setZValue(10)

    def set_geometry(self, geom: PageGeometry) -> None:
        self.prepareGeometryChange()
        base = geom.baseline_y(self.row)
        top = geom.y_of_mv(self.row, 1.0)
        # Pulse width 0.2 s at the current speed, kept between 2.5 and 7 mm so it never crowds
        # the trace (common practice, no source).
        w = min(7.0, max(2.5, geom.scale.x_mm(0.2)))
        x0 = LEFT_MARGIN_MM - w - 4.0
        p = QtGui.QPainterPath(QtCore.QPointF(x0 - 2.0, base))
        for x, y in ((x0, base), (x0, top), (x0 + w, top), (x0 + w, base), (x0 + w + 2.0, base)):
            p.lineTo(x, y)
        self._path = p
        self.update()

    def set_theme(self, theme: Theme) -> None:
        self._pen = pg.mkPen(theme.trace, width=theme.trace_width_px, cosmetic=True)
        self.update()

    def boundingRect(self) -> QtCore.QRectF:
        return self._path.boundingRect().adjusted(-1, -1, 1, 1)

    def paint(self, painter: QtGui.QPainter, option, widget=None) -> None:
        painter.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing, True)
        painter.setPen(self._pen)
        painter.drawPath(self._path)


def lead_label(cell: Cell, geom: PageGeometry, theme: Theme) -> pg.TextItem:
    """The lead name at the top-left of its cell, in a fixed screen size."""
    item = pg.TextItem(cell.label, color=theme.text, anchor=(0, 0))
    f = QtGui.QFont()
    f.setPointSizeF(10.5)
    f.setBold(True)
    item.setFont(f)
    if cell.t0_s == 0.0:
        # First column: in the left margin under the 1 mV pulse, clear of the first beat.
        item.setPos(0.8, geom.baseline_y(cell.row) + 1.0)
    else:
        top, _bottom = geom.row_band(cell.row)
        item.setPos(geom.x_of_time(cell.t0_s) + 1.5, top + 0.3)
    item.setZValue(20)
    return item


def group_heading(group: LeadGroup, geom: PageGeometry, theme: Theme) -> pg.TextItem:
    """The heading of an extra-lead group, in the gap above its first row."""
    item = pg.TextItem(group.title, color=theme.text_muted, anchor=(0, 0.5))
    f = QtGui.QFont()
    f.setPointSizeF(9.0)
    f.setItalic(True)
    item.setFont(f)
    item.setPos(LEFT_MARGIN_MM, geom.row_top(group.first_row) - 0.5 * GROUP_GAP_MM)
    item.setZValue(20)
    return item
