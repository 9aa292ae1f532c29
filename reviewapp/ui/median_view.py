"""Representative-beat view: a magnified median beat for precise correction beside each lead's
median beat on calibrated paper, optionally with every dominant beat superimposed, and the
global (all-lead) fiducials as lines the reader can drag.

x is milliseconds from the R fiducial point, y is millivolts. In the small panels one grid
square is one millimetre of paper at the page's speed and gain, magnified so the beat fills
its panel. The magnified panel has its own time scale, independent of the page: at true size
one screen pixel is about 10 ms of a 25 mm/s page, too coarse for the 10-30 ms corrections a
reader makes to T end all day, so it shows 2, 1 or 0.5 ms per pixel (or the whole beat),
centred on the selected mark, with the grid of standard paper (40 ms, 0.1 mV) and a time
axis. Every mark line moves from the first pixel of a drag; a click selects it and the arrow
keys nudge it one sample (``ui/selection.py``).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.fiducials import FIDUCIALS
from reviewapp.core.measure import limit_text
from reviewapp.core.measure.amplitudes import isoelectric_levels
from reviewapp.core.workflow import MarkAction, MarkEdit, MarkTarget, ReadingWorkflow
from reviewapp.ui.layouts import ordered_leads
from reviewapp.ui.mark_items import SHORT_LABELS
from reviewapp.ui.median_marks import MedianMarkLine
from reviewapp.ui.paper import PaperGrid, PaperScale
from reviewapp.ui.theme import LIGHT, Theme, mark_colour

if TYPE_CHECKING:
    from reviewapp.core.engine import Reading

MAX_SUPERIMPOSED = 300
# Curves and grids are cached as device pixels: dragging a mark line repaints a thin column of
# every panel, which should copy pixels, not stroke the beats and the grid again.
_CACHE = QtWidgets.QGraphicsItem.CacheMode.DeviceCoordinateCache
# Mark labels sit in two rows near the magnified panel's bottom: P and T labels on the lower
# row, QRS labels on the one above. Rows are set in pixels, from the panel's height, so they
# never touch however short the panel is.
LABEL_ROWS = {"p_on": 0, "p_off": 0, "qrs_on": 1, "qrs_off": 1, "t_off": 0}
LABEL_BASE_PX = 13.0  # centre of the lower row above the panel's bottom edge
LABEL_ROW_PX = 24.0  # label height (22 px: 9-10 pt text with its fill) plus a gap
# Where a mark starts, relative to R, in a blinded read with the automatic marks hidden: fixed
# positions (not the engine's), drawn dotted and grey until the reader drags each into place,
# so nothing on screen tells where the engine put it (common practice, no source).
UNPLACED_MS = {"p_on": -250.0, "p_off": -150.0, "qrs_on": -70.0, "qrs_off": 70.0, "t_off": 380.0}
# Onset labels sit left of their line, end labels right of it, so a close pair reads apart.
LABEL_ANCHORS = {
    "p_on": [(1, 0.5), (1, 0.5)],
    "p_off": [(0, 0.5), (0, 0.5)],
    "qrs_on": [(1, 0.5), (1, 0.5)],
    "qrs_off": [(0, 0.5), (0, 0.5)],
    "t_off": [(0, 0.5), (0, 0.5)],
}
# The magnified panel's time scales (None: the whole beat) and its grid: standard paper
# (25 mm/s, 10 mm/mV: 40 ms and 0.1 mV squares), whatever the page's speed and gain.
MAGNIFICATIONS: tuple[tuple[str, float | None], ...] = (
    ("Whole beat", None),
    ("2 ms per pixel", 2.0),
    ("1 ms per pixel", 1.0),
    ("0.5 ms per pixel", 0.5),
)
DEFAULT_MS_PER_PX = 1.0
MAGNIFIER_PAPER = PaperScale(px_per_mm=1.0, speed_mm_per_s=25.0, gain_mm_per_mv=10.0)
ALL_LEADS = "*"  # the magnified panel shows every lead superimposed
MAGNIFIER_SHARE = 0.42  # of the view's width
# The values that depend on each mark, shown beside it in the magnified beat while it moves.
LIVE_VALUES: dict[str, tuple[tuple[str, str], ...]] = {
    "p_on": (("pr_ms", "PR"), ("p_ms", "P")),
    "p_off": (("p_ms", "P"),),
    "qrs_on": (("qrs_ms", "QRS"), ("pr_ms", "PR"), ("qt_ms", "QT")),
    "qrs_off": (("qrs_ms", "QRS"),),
    "t_off": (("qt_ms", "QT"), ("qtc_fridericia_ms", "QTcF"), ("qtc_bazett_ms", "QTcB")),
}
LEGEND_PX = 44.0  # height the key under the small panels takes
MIN_PANEL_PX = 90.0  # least width of a small panel


class _Legend(pg.LabelItem):
    """The key under the small panels: wrapped to the width it is given, so it never widens
    the panels past the view (pyqtgraph's label would ask for its whole line)."""

    def updateMin(self) -> None:
        h = float(self.item.boundingRect().height())
        self.setMinimumWidth(0)
        self.setMinimumHeight(h)
        hint = QtCore.Qt.SizeHint
        self._sizeHint = {
            hint.MinimumSize: (0, h),
            hint.PreferredSize: (0, h),
            hint.MaximumSize: (-1, -1),
            hint.MinimumDescent: (0, 0),
        }
        self.updateGeometry()

    def resizeEvent(self, ev) -> None:
        w = max(80.0, float(self.width()))
        if abs(self.item.textWidth() - w) > 1.0:
            self.item.setTextWidth(w)
        super().resizeEvent(ev)


class MagnifierBar(QtWidgets.QWidget):
    """Above the median beats: the magnified lead and time scale, and what the selected mark
    is and how to move it."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("median_magnifier_bar")
        lay = QtWidgets.QHBoxLayout(self)
        lay.setContentsMargins(4, 2, 4, 2)
        lay.setSpacing(6)
        title = QtWidgets.QLabel("<b>Magnified</b>")
        self.lead_box = QtWidgets.QComboBox()
        self.lead_box.setObjectName("magnifier_lead")
        self.lead_box.setToolTip("Lead shown magnified (or click a lead's panel)")
        self.scale_box = QtWidgets.QComboBox()
        self.scale_box.setObjectName("magnifier_scale")
        self.scale_box.setToolTip(
            "Time scale of the magnified beat, independent of the page's paper speed"
        )
        for text, ms in MAGNIFICATIONS:
            self.scale_box.addItem(text, ms)
        for box in (self.lead_box, self.scale_box):
            box.setSizeAdjustPolicy(QtWidgets.QComboBox.SizeAdjustPolicy.AdjustToContents)
            box.setFocusPolicy(QtCore.Qt.FocusPolicy.NoFocus)  # the arrow keys stay with marks
        self.readout = QtWidgets.QLabel("")
        self.readout.setObjectName("magnifier_readout")
        self.readout.setTextFormat(QtCore.Qt.TextFormat.PlainText)
        self.readout.setMinimumWidth(0)
        self.readout.setSizePolicy(
            QtWidgets.QSizePolicy.Policy.Ignored, QtWidgets.QSizePolicy.Policy.Preferred
        )
        for w in (title, self.lead_box, self.scale_box):
            lay.addWidget(w)
        lay.addWidget(self.readout, 1)


class MedianBeatView(pg.GraphicsLayoutWidget):
    """The magnified median beat (left) and a grid of every lead's median beat (right), sharing
    one set of draggable, selectable global fiducial lines."""

    # Every edit of a global line or of a lead's J point: a MarkEdit in window samples.
    mark_edit = QtCore.Signal(object)
    # The fiducial whose lines are selected (None: none): the arrow keys move it.
    selection_changed = QtCore.Signal(object)

    def __init__(self, scale: PaperScale, theme: Theme = LIGHT, parent=None) -> None:
        super().__init__(parent)
        self.scale = scale
        self.theme = theme
        self.workflow: ReadingWorkflow | None = None
        self.superimpose = False
        self.lead_order = "standard"
        self.plots: list[pg.ViewBox] = []  # the small panels, in display order
        self.lines: dict[str, list[MedianMarkLine]] = {}  # per fiducial, one per small panel
        self.j_marks: list[pg.TargetItem] = []  # one per small panel: that lead's own J point
        self.magnifier: pg.PlotItem | None = None
        self.mag_lines: dict[str, MedianMarkLine] = {}
        self.mag_j: pg.TargetItem | None = None
        # The magnified beat's curves (curve, lead index), its superimposed beats (curve, x,
        # y) and the levels they are drawn from (``_levels``).
        self._mag_curves: list[tuple[pg.PlotCurveItem, int]] = []
        self._mag_over: tuple[pg.PlotCurveItem, np.ndarray, np.ndarray] | None = None
        self._mag_level: np.ndarray = np.zeros(0)
        self._mag_shown: list[int] = []
        self.mag_lead: str | None = None  # None until a record: lead II, else the first
        self.mag_ms_per_px: float | None = DEFAULT_MS_PER_PX
        self.selected_fid: str | None = None
        self._drag_sample: int | None = None
        self._syncing = False
        self._dirty = True
        self.bar = MagnifierBar()
        self.bar.lead_box.activated.connect(
            lambda i: self.set_magnified_lead(self.bar.lead_box.itemData(i))
        )
        self.bar.scale_box.activated.connect(
            lambda i: self.set_magnification(self.bar.scale_box.itemData(i))
        )
        self._sync_scale_box()
        self.setBackground(theme.window)

    # --- configuration -------------------------------------------------------------------
    def set_workflow(self, workflow: ReadingWorkflow | None) -> None:
        if workflow is not self.workflow:
            self.selected_fid = None
        self.workflow = workflow
        self._fill_lead_box()
        self.invalidate()

    def _emit(
        self, action: MarkAction, fid: str, sample: int | None, lead: str | None = None
    ) -> None:
        self.mark_edit.emit(MarkEdit(MarkTarget("representative", fid, lead=lead), action, sample))

    def set_scale(self, scale: PaperScale) -> None:
        self.scale = scale
        self.invalidate()

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.setBackground(theme.window)
        self.invalidate()

    def set_superimpose(self, on: bool) -> None:
        self.superimpose = on
        self.invalidate()

    def set_lead_order(self, order: str) -> None:
        self.lead_order = order
        self.invalidate()

    def set_magnified_lead(self, lead: str | None) -> None:
        """The lead in the magnified panel (``ALL_LEADS``: every lead superimposed)."""
        self.mag_lead = lead
        self._sync_lead_box()
        self.invalidate()

    def set_magnification(self, ms_per_px: float | None) -> None:
        """The magnified panel's time scale in ms per screen pixel (None: the whole beat)."""
        self.mag_ms_per_px = ms_per_px
        self._sync_scale_box()
        self._fit_magnifier()
        self._update_readout()

    def invalidate(self) -> None:
        """Rebuild now if shown, else on the next show (building the panels is not free)."""
        self._dirty = True
        if self.isVisible():
            self.rebuild()

    def showEvent(self, ev) -> None:
        if self._dirty:
            self.rebuild()
        super().showEvent(ev)

    # --- the magnifier's choices -----------------------------------------------------------
    def _lead_names(self) -> tuple[str, ...]:
        s = self.workflow
        return () if s is None else tuple(s.analysis.record.lead_names)

    def _fill_lead_box(self) -> None:
        names = self._lead_names()
        if self.mag_lead not in (*names, ALL_LEADS):
            self.mag_lead = "II" if "II" in names else (names[0] if names else None)
        box = self.bar.lead_box
        box.clear()
        for n in names:
            box.addItem(f"Lead {n}", n)
        if names:
            box.addItem("All leads superimposed", ALL_LEADS)
        self._sync_lead_box()

    def _sync_lead_box(self) -> None:
        box = self.bar.lead_box
        box.setCurrentIndex(max(0, box.findData(self.mag_lead)))

    def _sync_scale_box(self) -> None:
        box = self.bar.scale_box
        box.setCurrentIndex(max(0, box.findData(self.mag_ms_per_px)))

    # --- building ------------------------------------------------------------------------
    def rebuild(self) -> None:
        self._dirty = False
        # Let go of the previous build's panel grid and legend with the items themselves: a
        # Python reference kept to a graphics item the layout has deleted crashes the
        # interpreter when Qt cleans up at exit.
        self._small: pg.GraphicsLayout | None = None
        self._legend: _Legend | None = None
        self.clear()
        self.plots.clear()
        self.lines.clear()
        self.j_marks.clear()
        self.mag_lines.clear()
        self.magnifier = None
        self.mag_j = None
        self._mag_curves = []
        self._mag_over = None
        self.mag_position: QtWidgets.QGraphicsSimpleTextItem | None = None
        s = self.workflow
        if s is None or s.reading.marked.representative is None:
            label = self.addLabel("No representative beat for this record.", color=self.theme.text)
            label.setAttr("size", "12pt")
            self._update_readout()
            return
        rep = s.reading.marked.representative
        wave = rep.waveform_mv
        n = wave.shape[0]
        t_ms = (np.arange(n) - rep.r_index) / s.fs_hz * 1000.0
        names = s.analysis.record.lead_names
        leads = ordered_leads(names, self.lead_order)
        overlay = self._superimposed(s, rep.r_index, n) if self.superimpose else None
        self._build_magnifier(s, t_ms, wave, names, overlay)
        small = self.addLayout(row=0, col=1)
        small.setContentsMargins(0, 0, 0, 0)
        self._build_small_panels(small, s, t_ms, wave, names, leads, overlay)
        self._size_magnifier()
        self._place_labels()
        self._fit_magnifier()
        self._show_selection()

    def resizeEvent(self, ev) -> None:
        super().resizeEvent(ev)
        self._size_magnifier()
        self._arrange()

    def _size_magnifier(self) -> None:
        """The magnified panel takes a fixed share of the width, whatever the small panels
        would like (two leads' panels would otherwise squeeze it)."""
        plot = getattr(self, "magnifier", None)  # Qt resizes once inside __init__
        if plot is not None:
            w = max(260.0, self.width() * MAGNIFIER_SHARE)
            plot.setMinimumWidth(w)
            plot.setMaximumWidth(w)

    def _paper_bounds(
        self, wave: np.ndarray, t_ms: np.ndarray, scale: PaperScale
    ) -> tuple[float, float, float, float]:
        """(x0, x1, lo, hi): the beat's window and amplitude range, out to whole 5 mm squares."""
        minor_ms = 1000.0 / scale.speed_mm_per_s
        minor_mv = 1.0 / scale.gain_mm_per_mv
        finite = np.isfinite(wave).any()
        lo = float(np.nanmin(wave)) if finite else -1.0
        hi = float(np.nanmax(wave)) if finite else 1.0
        lo = float(np.floor(min(lo, -0.5) / (5 * minor_mv)) * 5 * minor_mv)
        hi = float(np.ceil(max(hi, 0.5) / (5 * minor_mv)) * 5 * minor_mv)
        x0 = float(np.floor(t_ms[0] / (5 * minor_ms)) * 5 * minor_ms)
        x1 = float(np.ceil(t_ms[-1] / (5 * minor_ms)) * 5 * minor_ms)
        return x0, x1, lo, hi

    def _grid(self, vb: pg.ViewBox, scale: PaperScale) -> PaperGrid:
        """Paper behind a panel, fitted to what the panel shows whenever its range changes: a
        grid reaching far past the view would make every cached repaint a large one."""
        minor_ms = 1000.0 / scale.speed_mm_per_s
        minor_mv = 1.0 / scale.gain_mm_per_mv
        grid = PaperGrid(
            QtCore.QRectF(0, 0, 1, 1),
            minor_ms,
            minor_mv,
            minor_colour=self.theme.grid_minor,
            major_colour=self.theme.grid_major,
        )
        grid.set_colours(self.theme.grid_minor, self.theme.grid_major, self.theme.paper)
        grid.setCacheMode(_CACHE)
        grid.setZValue(-100)

        def fit(*_args) -> None:
            r = vb.viewRect()
            mx, my = 5 * minor_ms, 5 * minor_mv
            left, right = np.floor(r.left() / mx) * mx, np.ceil(r.right() / mx) * mx
            top, bottom = np.floor(r.top() / my) * my, np.ceil(r.bottom() / my) * my
            rect = QtCore.QRectF(left, top, right - left, bottom - top)
            if rect != grid.rect():
                grid.set_geometry(rect, minor_ms, minor_mv)

        vb.sigRangeChanged.connect(fit)
        vb.addItem(grid, ignoreBounds=True)
        fit()
        return grid

    def _build_magnifier(
        self,
        s: ReadingWorkflow,
        t_ms: np.ndarray,
        wave: np.ndarray,
        names: tuple[str, ...],
        overlay: tuple[np.ndarray, np.ndarray] | None,
    ) -> None:
        axis_pen = pg.mkPen(self.theme.text_muted)
        plot = self.addPlot(row=0, col=0, enableMenu=False)
        plot.setMouseEnabled(x=False, y=False)
        plot.hideButtons()
        for name, text in (("bottom", "ms from R"), ("left", "mV from the isoelectric level")):
            ax = plot.getAxis(name)
            ax.enableAutoSIPrefix(False)  # millivolts stay millivolts (no "x0.001")
            ax.setPen(axis_pen)
            ax.setTextPen(pg.mkPen(self.theme.text))
            ax.setLabel(text, color=self.theme.text_muted)
        vb = plot.getViewBox()
        vb.setBackgroundColor(self.theme.paper)
        self._grid(vb, MAGNIFIER_PAPER)
        self.magnifier = plot
        if self.mag_lead == ALL_LEADS:
            shown = list(range(len(names)))
            pen = pg.mkPen(self.theme.trace, width=1.0, cosmetic=True)
        else:
            shown = [names.index(self.mag_lead)] if self.mag_lead in names else [0]
            pen = pg.mkPen(self.theme.trace, width=2.0, cosmetic=True)
        self._mag_shown = shown
        self._mag_t = t_ms
        self._mag_over = None
        self._mag_curves = []
        if overlay is not None and len(shown) == 1:
            ox, oy = overlay
            over_pen = pg.mkPen(self.theme.superimposed, width=0.8, cosmetic=True)
            over = pg.PlotCurveItem(pen=over_pen, connect="finite")
            over.setCacheMode(_CACHE)
            vb.addItem(over)
            self._mag_over = (over, ox, oy[:, shown[0]])
        for idx in shown:
            curve = pg.PlotCurveItem(pen=pen, antialias=True)
            curve.setSegmentedLineMode("on")
            curve.setCacheMode(_CACHE)
            vb.addItem(curve)
            self._mag_curves.append((curve, idx))
        self._draw_magnified(wave, self._levels(s, wave))
        for fid in FIDUCIALS:
            line = self._new_line(fid, vb, labelled=True)
            if line is not None:
                self.mag_lines[fid] = line
        if len(shown) == 1:
            self.mag_j = self._add_j_mark(vb, names[shown[0]], shown[0], 1.0, magnified=True)
        vb.sigResized.connect(self._fit_magnifier)
        vb.sigResized.connect(self._place_labels)
        # The selected mark's position, pinned to the panel's top-left corner (pixels).
        pos = QtWidgets.QGraphicsSimpleTextItem("", vb)
        font = QtGui.QFont()
        font.setPointSizeF(10.0)
        font.setBold(True)
        pos.setFont(font)
        pos.setBrush(QtGui.QColor(self.theme.text))
        pos.setPos(8.0, 4.0)
        pos.setZValue(60)
        self.mag_position = pos

    def _build_small_panels(
        self,
        grid_layout: pg.GraphicsLayout,
        s: ReadingWorkflow,
        t_ms: np.ndarray,
        wave: np.ndarray,
        names: tuple[str, ...],
        leads: list[tuple[str, bool]],
        overlay: tuple[np.ndarray, np.ndarray] | None,
    ) -> None:
        x0, x1, lo, hi = self._paper_bounds(wave, t_ms, self.scale)
        pen = pg.mkPen(self.theme.trace, width=1.6, cosmetic=True)
        over_pen = pg.mkPen(self.theme.superimposed, width=0.8, cosmetic=True)
        self._beat_mm = (
            (x1 - x0) * self.scale.speed_mm_per_s,
            (hi - lo) * self.scale.gain_mm_per_mv * 1000.0,
        )
        font = QtGui.QFont()
        font.setPointSizeF(10.5)
        font.setBold(True)
        for k, (lead, inverted) in enumerate(leads):
            idx = names.index(lead)
            sign = -1.0 if inverted else 1.0
            vb = grid_layout.addViewBox(row=k, col=0, enableMenu=False, enableMouse=False)
            # One paper millimetre is square: pyqtgraph's ratio is (ms per px) / (mV per px).
            vb.setAspectLocked(
                True, ratio=self.scale.speed_mm_per_s / (self.scale.gain_mm_per_mv * 1000.0)
            )
            y_lo, y_hi = (-hi, -lo) if inverted else (lo, hi)
            vb.setRange(xRange=(x0, x1), yRange=(y_lo, y_hi), padding=0.02)
            self._grid(vb, self.scale)
            if overlay is not None:
                ox, oy = overlay
                over = pg.PlotCurveItem(ox, sign * oy[:, idx], pen=over_pen, connect="finite")
                over.setCacheMode(_CACHE)
                vb.addItem(over)
            median_curve = pg.PlotCurveItem(t_ms, sign * wave[:, idx], pen=pen, antialias=True)
            median_curve.setSegmentedLineMode("on")  # thick antialiased paths stroke slowly
            median_curve.setCacheMode(_CACHE)
            vb.addItem(median_curve)
            title = pg.TextItem(
                ("-" if inverted else "") + lead, color=self.theme.text, anchor=(0, 0)
            )
            title.setFont(font)
            title.setPos(x0, y_hi)
            title.setZValue(50)  # the lead name stays readable above mark lines and labels
            vb.addItem(title)
            vb.lead = lead
            vb.mouseClickEvent = self._panel_clicker(lead)
            self.plots.append(vb)
            for fid in FIDUCIALS:
                line = self._new_line(fid, vb, labelled=False)
                if line is not None:
                    self.lines.setdefault(fid, []).append(line)
            self.j_marks.append(self._add_j_mark(vb, lead, idx, sign))
        rep = s.reading.marked.representative
        assert rep is not None
        legend = (
            f"Median of {rep.n_beats_used} beats  ·  {self.scale.speed_mm_per_s:g} mm/s  ·  "
            f"{self.scale.gain_mm_per_mv:g} mm/mV  ·  {self._colour_key()}<br>"
            "solid = automatic, dashed with ◆ = corrected  ·  ○ = the lead's J point (drag: "
            "that lead only)  ·  click a lead to magnify it"
            + ("  ·  grey = every dominant beat" if self.superimpose else "")
        )
        item = _Legend(legend, color=self.theme.text_muted, size="9pt", justify="left")
        grid_layout.addItem(item, row=len(leads), col=0)
        self._small = grid_layout
        self._legend = item
        self._ncols = 0
        self._arrange()

    def _arrange(self) -> None:
        """Place the small panels in the number of columns that draws each beat largest in
        the room there is, moving the panels (never rebuilding them: a line may be held)."""
        lay = getattr(self, "_small", None)
        if lay is None or not self.plots:
            return
        ncols = self._columns(len(self.plots), *self._beat_mm)
        if ncols == self._ncols:
            return
        self._ncols = ncols
        grid = lay.layout
        items = [*self.plots, self._legend]
        for it in items:
            for i in range(grid.count()):
                if grid.itemAt(i).graphicsItem() is it:
                    grid.removeAt(i)
                    break
        for r in range(grid.rowCount()):
            grid.setRowStretchFactor(r, 0)
        lay.rows.clear()
        n_rows = -(-len(self.plots) // ncols)
        for k, vb in enumerate(self.plots):
            r, c = divmod(k, ncols)
            grid.addItem(vb, r, c)
            grid.setRowStretchFactor(r, 1)
            lay.rows.setdefault(r, {})[c] = vb
            lay.items[vb] = [(r, c)]
        grid.addItem(self._legend, n_rows, 0, 1, ncols)
        lay.rows.setdefault(n_rows, {}).update({c: self._legend for c in range(ncols)})
        lay.items[self._legend] = [(n_rows, c) for c in range(ncols)]
        grid.activate()

    def _small_area(self) -> tuple[float, float]:
        """Width and height (px) the small panels share."""
        w = max(1.0, self.width() * (1.0 - MAGNIFIER_SHARE) - 20.0)
        h = max(1.0, self.height() - LEGEND_PX - 20.0)
        return w, h

    def _columns(self, n: int, beat_w: float, beat_h: float) -> int:
        """How many columns of small panels draw each beat largest in the room there is: a
        wide, low strip (a tall page leaves little height) takes more columns than four."""
        if n <= 1:
            return 1
        w, h = self._small_area()
        best, best_scale = 1, 0.0
        # A panel narrower than MIN_PANEL_PX has no room for its lead name beside the marks.
        for cols in range(1, max(1, min(n, int(w // MIN_PANEL_PX))) + 1):
            rows = -(-n // cols)
            scale = min(w / cols / max(beat_w, 1e-9), h / rows / max(beat_h, 1e-9))
            if scale > best_scale * 1.001:
                best, best_scale = cols, scale
        return best

    def _panel_clicker(self, lead: str) -> Callable[[object], None]:
        def clicked(ev) -> None:
            if ev.button() == QtCore.Qt.MouseButton.LeftButton:
                ev.accept()
                self.set_magnified_lead(lead)

        return clicked

    @staticmethod
    def _levels(s: ReadingWorkflow, wave: np.ndarray) -> np.ndarray:
        """Each lead's isoelectric level (mV) as the measurements take it (``isoelectric_levels``
        at the reading's QRS onset and P end); zeros where there is none."""
        rep = s.reading.marked.representative
        marks = None if rep is None else rep.marks
        levels = None
        if marks is not None and marks.qrs_on is not None and 0 < marks.qrs_on <= wave.shape[0]:
            levels = isoelectric_levels(wave, marks.qrs_on, marks.p_off, s.fs_hz)
        return np.zeros(wave.shape[1]) if levels is None else np.asarray(levels, np.float64)

    def _draw_magnified(self, wave: np.ndarray, level: np.ndarray) -> None:
        """The magnified beat (and its superimposed beats) drawn from ``level``, the level ST
        is measured from, so its mV axis reads ST and wave amplitudes as the Measurements dock
        gives them."""
        self._mag_level = level
        for curve, idx in self._mag_curves:
            curve.setData(self._mag_t, wave[:, idx] - level[idx])
        if self._mag_over is not None:
            over, ox, over_y = self._mag_over
            over.setData(ox, over_y - level[self._mag_shown[0]], connect="finite")
        self._mag_wave = wave[:, self._mag_shown] - level[self._mag_shown]

    def _follow_level(self) -> None:
        """Redraw the magnified beat from the level after a correction moved it (a QRS onset
        or P end changes the segment the level is read from)."""
        s = self.workflow
        rep = None if s is None else s.reading.marked.representative
        if s is None or rep is None or not self._mag_curves:
            return
        level = self._levels(s, rep.waveform_mv)
        if not np.array_equal(level, self._mag_level):
            self._draw_magnified(rep.waveform_mv, level)

    def _superimposed(
        self, s: ReadingWorkflow, r_index: int, n: int
    ) -> tuple[np.ndarray, np.ndarray]:
        """Every dominant beat's window, aligned at R, joined with NaN breaks for one curve."""
        x = s.analysis.conditioned_mv
        rs = np.array([b.r for b in s.analysis.beats if b.in_dominant_rhythm], dtype=np.int64)
        rs = rs[(rs - r_index >= 0) & (rs - r_index + n <= x.shape[0])][:MAX_SUPERIMPOSED]
        if rs.size == 0:
            return np.zeros(0), np.zeros((0, x.shape[1]))
        idx = (rs[:, None] - r_index) + np.arange(n)[None, :]
        segs = x[idx]  # (beats, n, leads)
        segs = np.concatenate([segs, np.full((rs.size, 1, x.shape[1]), np.nan, np.float32)], axis=1)
        t = (np.arange(n + 1) - r_index) / s.fs_hz * 1000.0
        t = np.tile(t, rs.size)
        return t, segs.reshape(-1, x.shape[1])

    # --- the magnified panel's range -------------------------------------------------------
    def magnifier_ms_per_px(self) -> float | None:
        """Milliseconds per screen pixel of the magnified panel as drawn now."""
        if self.magnifier is None:
            return None
        vb = self.magnifier.getViewBox()
        w = float(vb.width())
        return None if w <= 1 else float(vb.viewRect().width()) / w

    def _fit_magnifier(self, *_args) -> None:
        """The chosen time scale, centred on the selected mark (T end until one is chosen);
        the height fitted to the beat in sight, so the slow T wave is magnified too."""
        plot = self.magnifier
        t = getattr(self, "_mag_t", None)
        if plot is None or t is None or t.size == 0:
            return
        vb = plot.getViewBox()
        width_px = float(vb.width())
        if self.mag_ms_per_px is None or width_px <= 1:
            lo_ms, hi_ms = float(t[0]), float(t[-1])
        else:
            span = self.mag_ms_per_px * width_px
            fid = self.selected_fid or "t_off"
            k = self.shown_sample(fid)
            centre = self.window_ms(k) if k is not None else 0.0
            lo_ms = min(max(centre - span / 2, float(t[0])), float(t[-1]) - span)
            hi_ms = lo_ms + span
        sel = (t >= lo_ms) & (t <= hi_ms)
        part = self._mag_wave[sel] if sel.any() else self._mag_wave
        finite = np.isfinite(part)
        lo_mv = float(np.min(part[finite])) if finite.any() else -0.5
        hi_mv = float(np.max(part[finite])) if finite.any() else 0.5
        # At least 0.4 mV tall: a flat stretch is not blown up into its noise.
        mid, half = (lo_mv + hi_mv) / 2, max(0.2, (hi_mv - lo_mv) / 2 * 1.15)
        vb.setRange(xRange=(lo_ms, hi_ms), yRange=(mid - half, mid + half), padding=0.0)

    # --- the mark lines --------------------------------------------------------------------
    def _all_lines(self, fid: str) -> list[MedianMarkLine]:
        mag = self.mag_lines.get(fid)
        return [*self.lines.get(fid, []), *([mag] if mag is not None else [])]

    def _new_line(self, fid: str, vb: pg.ViewBox, *, labelled: bool) -> MedianMarkLine | None:
        s = self.workflow
        assert s is not None
        v = self._shown_sample(fid)
        if v is None:
            return None
        corrected = s.is_corrected(MarkTarget("representative", fid))
        pen, hover, colour = self._pens(fid, corrected)
        line = MedianMarkLine(
            fid,
            self.window_ms(v),
            pen,
            hover,
            label=self._label_text(fid, corrected) if labelled else None,
            label_opts={
                "position": self._label_position(fid, vb),
                "color": colour,
                "anchors": LABEL_ANCHORS[fid],
                "fill": self.theme.paper,
            },
        )
        line.setToolTip(self._line_tip(fid, corrected))
        line.pressed.connect(self._on_press)
        line.moved.connect(self._on_drag)
        line.released.connect(self._on_drop)
        line.reset_requested.connect(lambda ln: self._emit("reset", ln.fiducial, None))
        vb.addItem(line, ignoreBounds=True)
        return line

    def refresh_marks(self) -> None:
        """Move and restyle the existing lines after an edit (no rebuild)."""
        s = self.workflow
        if self._dirty or s is None or s.reading.marked.representative is None or not self.plots:
            self.invalidate()
            return
        have = set(self.lines)
        want = {f for f in FIDUCIALS if self._shown_sample(f) is not None}
        if have != want:
            self.rebuild()
            return
        for fid in self.lines:
            k = self._shown_sample(fid)
            if k is None:
                continue
            pos = self.window_ms(k)
            corrected = s.is_corrected(MarkTarget("representative", fid))
            pen, hover, colour = self._pens(fid, corrected)
            self._syncing = True
            try:
                for line in self._all_lines(fid):
                    line.setPos(pos)
                    line.settle()
                    line.setPen(pen)
                    line.setHoverPen(hover)
                    if getattr(line, "label", None) is not None:
                        line.label.setFormat(self._label_text(fid, corrected))
                        line.label.setColor(colour)
                    line.setToolTip(self._line_tip(fid, corrected))
            finally:
                self._syncing = False
        self._follow_level()
        self._place_j_marks()
        self._show_selection()

    def _unplaced(self, fid: str) -> bool:
        """The mark is shown at its fixed start position (automatic marks hidden)."""
        s = self.workflow
        return (
            s is not None
            and s.hide_automatic
            and not s.is_corrected(MarkTarget("representative", fid))
        )

    def _shown_sample(self, fid: str) -> int | None:
        """Window sample where ``fid``'s line is drawn (None: no line)."""
        s = self.workflow
        rep = None if s is None else s.reading.marked.representative
        if s is None or rep is None:
            return None
        if self._unplaced(fid):
            k = rep.r_index + round(UNPLACED_MS[fid] * s.fs_hz / 1000.0)
            return min(max(k, 0), rep.waveform_mv.shape[0] - 1)
        return rep.marks.get(fid)

    def shown_sample(self, fid: str) -> int | None:
        """Window sample where ``fid``'s lines are drawn now (also while dragged or nudged)."""
        lines = self._all_lines(fid)
        if lines:
            return self.window_sample(lines[0].value())
        return self._shown_sample(fid)

    def _label_text(self, fid: str, corrected: bool) -> str:
        if self._unplaced(fid):
            return SHORT_LABELS[fid] + " ?"
        return ("◆ " if corrected else "") + SHORT_LABELS[fid]

    def _mark_colour(self, fid: str, corrected: bool) -> QtGui.QColor:
        return QtGui.QColor(
            self.theme.mark_corrected if corrected else mark_colour(self.theme, fid)
        )

    def _pens(self, fid: str, corrected: bool):
        if self._unplaced(fid):
            grey = QtGui.QColor(self.theme.text_muted)
            dot = QtCore.Qt.PenStyle.DotLine
            pen = pg.mkPen(grey, width=1.6, style=dot, cosmetic=True)
            return pen, pg.mkPen(grey, width=3.0, style=dot, cosmetic=True), grey
        colour = self._mark_colour(fid, corrected)
        style = QtCore.Qt.PenStyle.DashLine if corrected else QtCore.Qt.PenStyle.SolidLine
        pen = pg.mkPen(colour, width=1.6, style=style, cosmetic=True)
        hover = pg.mkPen(colour, width=3.0, style=style, cosmetic=True)
        return pen, hover, colour

    def _line_tip(self, fid: str, corrected: bool) -> str:
        if self._unplaced(fid):
            return (
                f"{SHORT_LABELS[fid]}: not placed yet (automatic marks are hidden in this "
                "reading); drag it onto the median beat's boundary"
            )
        return self._tip(fid, corrected)

    @staticmethod
    def _tip(fid: str, corrected: bool) -> str:
        return (
            f"{SHORT_LABELS[fid]} of the median beat, "
            f"{'corrected by the reader' if corrected else 'automatic'}; drag to correct "
            "(all leads move together), click and use the arrow keys for one sample, "
            "double-click to reset"
        )

    @staticmethod
    def _label_position(fid: str, p: pg.ViewBox) -> float:
        """Label position along the line (0 = bottom, 1 = top) for ``fid``'s label row."""
        h = max(float(p.height()), 1.0)
        if h < 4 * LABEL_ROW_PX:
            h = 160.0  # not laid out yet: a typical panel height until the first resize
        return min(0.45, (LABEL_BASE_PX + LABEL_ROW_PX * LABEL_ROWS[fid]) / h)

    def _colour_key(self) -> str:
        """HTML colour key of the mark lines for the legend."""
        parts = []
        for fids, name in (("p_on", "P"), ("qrs_on", "QRS"), ("t_off", "T end")):
            colour = QtGui.QColor(mark_colour(self.theme, fids)).name()
            parts.append(f'<span style="color:{colour}">&#9475; {name}</span>')
        return "  ".join(parts)

    def _place_labels(self, *_args) -> None:
        """Keep the magnified panel's label rows a fixed number of pixels apart as it changes
        height."""
        if self.magnifier is None:
            return
        vb = self.magnifier.getViewBox()
        for fid, line in self.mag_lines.items():
            label = getattr(line, "label", None)
            if label is not None:
                label.setPosition(self._label_position(fid, vb))

    # --- selection -------------------------------------------------------------------------
    def select(self, fid: str | None) -> None:
        """Select ``fid``'s lines (None: none); the arrow keys then move that mark."""
        if fid is not None and fid not in self.lines and fid not in self.mag_lines:
            fid = None
        changed = fid != self.selected_fid
        self.selected_fid = fid
        self._show_selection()
        if changed:
            if fid is not None:
                self.keep_in_sight(fid)
            self.selection_changed.emit(fid)

    def keep_in_sight(self, fid: str) -> None:
        """Re-centre the magnified panel on ``fid`` if its line is not well inside it (never
        while the reader holds a line there: the panel would slide under the mouse)."""
        plot, mag = self.magnifier, self.mag_lines.get(fid)
        if plot is None or mag is None or self.mag_ms_per_px is None or mag.dragging:
            return
        vr = plot.getViewBox().viewRect()
        margin = 0.08 * vr.width()
        if not vr.left() + margin <= mag.value() <= vr.right() - margin:
            self._fit_magnifier()

    def selected_target(self) -> MarkTarget | None:
        return (
            None if self.selected_fid is None else MarkTarget("representative", self.selected_fid)
        )

    def _show_selection(self) -> None:
        for fid in FIDUCIALS:
            on = fid == self.selected_fid
            for line in self._all_lines(fid):
                line.set_selected(on, QtGui.QColor(self.theme.highlight))
        for vb in self.plots:
            magnified = getattr(vb, "lead", None) == self.mag_lead
            vb.setBorder(pg.mkPen(self.theme.highlight, width=2) if magnified else None)
        self._update_readout()

    def _update_readout(self) -> None:
        """The bar: the magnified scale and how to move a mark (it changes with the scale and
        the selection only: a widget's text change relays the window out)."""
        s = self.workflow
        ms_px = self.magnifier_ms_per_px()
        scale = "" if ms_px is None else f"1 px = {ms_px:.1f} ms  ·  "
        if s is None:
            self.bar.readout.setText("")
            return
        step = f"{1000.0 / s.fs_hz:g} ms"
        fid = self.selected_fid
        text = (
            f"{scale}click a mark to select it; drag it, or move it with ← → one sample "
            f"({step}) at a time"
            if fid is None
            else f"{scale}selected: {SHORT_LABELS[fid]}  ·  ← → move it one sample ({step})"
        )
        if self.bar.readout.text() != text:
            self.bar.readout.setText(text)
        self._update_position()

    def show_values(self, reading: Reading) -> bool:
        """The values that depend on the selected mark, beside its position in the magnified
        beat (while it is dragged or nudged, and after). True if they are shown there."""
        self._live = None
        fid = self.selected_fid
        s = self.workflow
        if fid is None or s is None or s.hide_automatic or not self.isVisible():
            self._update_position()
            return False
        iv = reading.measurements.intervals
        parts = []
        for key, label in LIVE_VALUES[fid]:
            v = getattr(iv, key, None)
            parts.append(f"{label} {limit_text.value_text(v, 'ms')}")
        self._live = "  ·  ".join(parts)
        self._update_position()
        return True

    def _update_position(self) -> None:
        """Where the selected mark is, in the magnified beat's corner (drawn in the scene, so
        following a drag costs no relayout)."""
        item = getattr(self, "mag_position", None)
        if item is None:
            return
        fid = self.selected_fid
        k = None if fid is None else self.shown_sample(fid)
        text = (
            ""
            if fid is None or k is None
            else (f"{SHORT_LABELS[fid]} {self.window_ms(k):+.0f} ms from R")
        )
        live = getattr(self, "_live", None)
        if text and live:
            text += "\n" + live
        if item.text() != text:
            item.setText(text)

    # --- each lead's own J point ---------------------------------------------------------
    def _add_j_mark(
        self, p: pg.ViewBox, lead: str, idx: int, sign: float, *, magnified: bool = False
    ) -> pg.TargetItem:
        """A dot on the lead's median beat at its own J point (its QRS end), where its ST
        levels are measured; dragging it corrects this lead only."""
        item = pg.TargetItem(pos=(0.0, 0.0), size=9, symbol="o", movable=True)
        item.lead = lead
        item.lead_index = idx
        item.sign = sign
        item.magnified = magnified  # drawn from the isoelectric level, as its curve
        item.setZValue(40)
        item.sigPositionChanged.connect(self._on_j_drag)
        item.sigPositionChangeFinished.connect(self._on_j_drop)
        item.mouseDoubleClickEvent = self._resetter("qrs_off", lead)
        p.addItem(item, ignoreBounds=True)
        self._place_j_mark(item)
        return item

    def _resetter(self, fid: str, lead: str | None = None) -> Callable[[QtGui.QMouseEvent], None]:
        """A double-click handler that resets the mark to automatic."""

        def reset(ev: QtGui.QMouseEvent) -> None:
            ev.accept()
            self._emit("reset", fid, None, lead)

        return reset

    def _j_corrected(self, lead: str) -> bool:
        s = self.workflow
        return s is not None and s.is_corrected(MarkTarget("representative", "qrs_off", lead=lead))

    def _put_on_curve(self, item: pg.TargetItem, k: int) -> None:
        """Place a J dot at window sample ``k`` on its lead's median beat."""
        rep = None if self.workflow is None else self.workflow.reading.marked.representative
        assert rep is not None
        self._syncing = True
        try:
            y = float(rep.waveform_mv[k, item.lead_index])
            if item.magnified:
                y -= float(self._mag_level[item.lead_index])
            item.setPos(self.window_ms(k), item.sign * y)
        finally:
            self._syncing = False

    def _place_j_mark(self, item: pg.TargetItem) -> None:
        s = self.workflow
        rep = None if s is None else s.reading.marked.representative
        idx = item.lead_index
        j = None if rep is None or idx >= len(rep.lead_marks) else rep.lead_marks[idx].qrs_off
        corrected = self._j_corrected(item.lead)
        # With the automatic marks hidden, a J dot shows only where the reader set the QRS end
        # (globally or for this lead): elsewhere it would give away the engine's J point.
        hidden = self._unplaced("qrs_off") and not corrected
        if rep is None or j is None or not 0 <= j < rep.waveform_mv.shape[0] or hidden:
            item.setVisible(False)
            return
        colour = self._mark_colour("qrs_off", corrected)
        item.setPen(pg.mkPen(colour, width=1.5))
        item.setBrush(pg.mkBrush(colour if corrected else self.theme.paper))
        item.setHoverPen(pg.mkPen(colour, width=2.5))
        item.setHoverBrush(pg.mkBrush(colour))
        self._put_on_curve(item, j)
        item.setVisible(True)
        item.setToolTip(self._j_tip(item.lead, corrected))

    def _place_j_marks(self) -> None:
        for item in [*self.j_marks, *([self.mag_j] if self.mag_j is not None else [])]:
            self._place_j_mark(item)

    def _j_tip(self, lead: str, corrected: bool) -> str:
        s = self.workflow
        st = ""
        if s is not None:
            lm = next((m for m in s.reading.measurements.leads if m.lead == lead), None)
            vals = [] if lm is None else [lm.st_j_mv, lm.st_j60_mv, lm.st_j80_mv]
            if vals and all(v is not None for v in vals):
                st = "<br>ST at J / J+60 / J+80: " + " / ".join(f"{v:+.2f}" for v in vals) + " mV"
        state = "corrected for this lead" if corrected else "automatic"
        return (
            f"<b>J point, lead {lead}</b> ({state}){st}<br>"
            "Drag to correct this lead only; double-click: back to the global QRS end."
        )

    def _on_j_drag(self, item: pg.TargetItem) -> None:
        if self._syncing:
            return
        k = self.window_sample(item.pos().x())
        s = self.workflow
        rep = None if s is None else s.reading.marked.representative
        if rep is not None:
            k = min(max(k, 0), rep.waveform_mv.shape[0] - 1)
            self._put_on_curve(item, k)  # only time is the reader's to choose
        self._emit("preview", "qrs_off", k, item.lead)

    def _on_j_drop(self, item: pg.TargetItem) -> None:
        if self._syncing:
            return
        self._emit("move", "qrs_off", self.window_sample(item.pos().x()), item.lead)

    # --- dragging ------------------------------------------------------------------------
    def window_sample(self, t_ms: float) -> int:
        s = self.workflow
        assert s is not None and s.reading.marked.representative is not None
        return s.reading.marked.representative.r_index + round(t_ms / 1000.0 * s.fs_hz)

    def window_ms(self, sample: int) -> float:
        """Time (ms from R) of a window sample of the median beat: ``window_sample``'s inverse."""
        s = self.workflow
        assert s is not None and s.reading.marked.representative is not None
        return (sample - s.reading.marked.representative.r_index) / s.fs_hz * 1000.0

    def _clamp(self, k: int) -> int:
        rep = None if self.workflow is None else self.workflow.reading.marked.representative
        return k if rep is None else min(max(k, 0), rep.waveform_mv.shape[0] - 1)

    def snap(self, fid: str, sample: int, *, position: bool = True) -> None:
        """Every line of ``fid`` at window sample ``sample`` (a drag or a nudge in progress);
        ``position``: also write where the selected mark is (a caller about to recompute the
        values writes it once, afterwards, with them)."""
        pos = self.window_ms(sample)
        self._syncing = True
        try:
            for line in self._all_lines(fid):
                line.setPos(pos)
        finally:
            self._syncing = False
        if position and fid == self.selected_fid:
            self._update_position()

    _snap = snap  # the name the benchmark has always driven

    def _on_press(self, line: MedianMarkLine) -> None:
        self._drag_sample = None
        self.select(line.fiducial)

    def drag_to(self, fid: str, t_ms: float) -> int:
        """A drag of ``fid``'s line reaching ``t_ms`` (the mouse, or a benchmark): the lines
        snap to the nearest sample and the values follow. Returns that sample."""
        k = self._clamp(self.window_sample(t_ms))
        if k != self._drag_sample:
            self._drag_sample = k
            # The position text is written once a step, with the new values (show_values on
            # the preview's values_changed), not also before them with the old ones.
            self.snap(fid, k, position=False)
            self._emit("preview", fid, k)
            if fid == self.selected_fid:
                self._update_position()
        return k

    def _on_drag(self, line: MedianMarkLine, t_ms: float) -> None:
        if not self._syncing:
            self.drag_to(line.fiducial, t_ms)

    def _on_drop(self, line: MedianMarkLine, moved: bool) -> None:
        k, self._drag_sample = self._drag_sample, None
        if moved and k is not None and not self._syncing:
            self._emit("move", line.fiducial, k)

    def line_point(self, fid: str, plot_index: int = 0, frac_y: float = 0.5) -> QtCore.QPoint:
        """Viewport pixel on a fiducial line of a small panel (tests and keyboard focus)."""
        vb = self.plots[plot_index]
        line = self.lines[fid][plot_index]
        vr = vb.viewRect()
        y = vr.top() + frac_y * vr.height()
        scene = vb.mapViewToScene(QtCore.QPointF(line.value(), y))
        return self.mapFromScene(scene)

    def magnifier_point(self, fid: str, frac_y: float = 0.5) -> QtCore.QPoint:
        """Viewport pixel on a fiducial line of the magnified panel."""
        assert self.magnifier is not None
        vb = self.magnifier.getViewBox()
        vr = vb.viewRect()
        y = vr.top() + frac_y * vr.height()
        scene = vb.mapViewToScene(QtCore.QPointF(self.mag_lines[fid].value(), y))
        return self.mapFromScene(scene)

    def time_point(self, t_ms: float, plot_index: int = 0, frac_y: float = 0.5) -> QtCore.QPoint:
        vb = self.plots[plot_index]
        vr = vb.viewRect()
        scene = vb.mapViewToScene(QtCore.QPointF(t_ms, vr.top() + frac_y * vr.height()))
        return self.mapFromScene(scene)
