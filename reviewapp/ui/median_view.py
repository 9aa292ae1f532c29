"""Representative-beat view: each lead's median beat on calibrated paper, optionally with every
dominant beat superimposed, and the global (all-lead) fiducials as lines the reader can drag.

x is milliseconds from the R fiducial point, y is millivolts; one grid square is one millimetre
of paper at the current speed and gain, magnified so the beat fills its panel.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.fiducials import FIDUCIALS
from reviewapp.core.workflow import MarkAction, MarkEdit, MarkTarget, ReadingWorkflow
from reviewapp.ui.layouts import ordered_leads
from reviewapp.ui.mark_items import SHORT_LABELS
from reviewapp.ui.paper import PaperGrid, PaperScale
from reviewapp.ui.theme import LIGHT, Theme, mark_colour

MAX_SUPERIMPOSED = 300
# Curves and grids are cached as device pixels: dragging a mark line repaints a thin column of
# every panel, which should copy pixels, not stroke the beats again.
_CACHE = QtWidgets.QGraphicsItem.CacheMode.DeviceCoordinateCache
# Mark labels sit in two rows near the panel's bottom (the lead name sits top-left, and an
# onset label up there hid it in narrow panels): P and T labels on the lower row, QRS labels on
# the one above. Rows are set in pixels, from the panel's height, so they never touch however
# short the panel is.
LABEL_ROWS = {"p_on": 0, "p_off": 0, "qrs_on": 1, "qrs_off": 1, "t_off": 0}
LABEL_BASE_PX = 13.0  # centre of the lower row above the panel's bottom edge
LABEL_ROW_PX = 24.0  # label height (22 px: 9-10 pt text with its fill) plus a gap
# Narrower panels show no labels on the lines (they would run into each other and past the
# panel's edges); the legend's colour key and each line's tooltip name the marks instead.
LABEL_MIN_PANEL_PX = 230.0
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


class MedianBeatView(pg.GraphicsLayoutWidget):
    """Grid of median beats (4 columns) sharing one set of draggable global fiducial lines."""

    # Every edit of a global line or of a lead's J point: a MarkEdit in window samples.
    mark_edit = QtCore.Signal(object)

    def __init__(self, scale: PaperScale, theme: Theme = LIGHT, parent=None) -> None:
        super().__init__(parent)
        self.scale = scale
        self.theme = theme
        self.workflow: ReadingWorkflow | None = None
        self.superimpose = False
        self.lead_order = "standard"
        self.plots: list[pg.ViewBox] = []
        self.lines: dict[str, list[pg.InfiniteLine]] = {}
        self.j_marks: list[pg.TargetItem] = []  # one per panel: that lead's own J point
        self._syncing = False
        self._dirty = True
        self.setBackground(theme.window)

    # --- configuration -------------------------------------------------------------------
    def set_workflow(self, workflow: ReadingWorkflow | None) -> None:
        self.workflow = workflow
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

    def invalidate(self) -> None:
        """Rebuild now if shown, else on the next show (building twelve panels is not free)."""
        self._dirty = True
        if self.isVisible():
            self.rebuild()

    def showEvent(self, ev) -> None:
        if self._dirty:
            self.rebuild()
        super().showEvent(ev)

    # --- building ------------------------------------------------------------------------
    def rebuild(self) -> None:
        self._dirty = False
        self.clear()
        self.plots.clear()
        self.lines.clear()
        self.j_marks.clear()
        s = self.workflow
        if s is None or s.reading.marked.representative is None:
            label = self.addLabel("No representative beat for this record.", color=self.theme.text)
            label.setAttr("size", "12pt")
            return
        rep = s.reading.marked.representative
        fs = s.fs_hz
        wave = rep.waveform_mv
        n = wave.shape[0]
        t_ms = (np.arange(n) - rep.r_index) / fs * 1000.0
        names = s.analysis.record.lead_names
        leads = ordered_leads(names, self.lead_order)
        minor_ms = 1000.0 / self.scale.speed_mm_per_s
        minor_mv = 1.0 / self.scale.gain_mm_per_mv
        lo = float(np.nanmin(wave)) if np.isfinite(wave).any() else -1.0
        hi = float(np.nanmax(wave)) if np.isfinite(wave).any() else 1.0
        lo = np.floor(min(lo, -0.5) / (5 * minor_mv)) * 5 * minor_mv
        hi = np.ceil(max(hi, 0.5) / (5 * minor_mv)) * 5 * minor_mv
        x0 = np.floor(t_ms[0] / (5 * minor_ms)) * 5 * minor_ms
        x1 = np.ceil(t_ms[-1] / (5 * minor_ms)) * 5 * minor_ms
        overlay = self._superimposed(s, rep.r_index, n) if self.superimpose else None
        ncols = 4
        pen = pg.mkPen(self.theme.trace, width=1.6, cosmetic=True)
        over_pen = pg.mkPen(self.theme.superimposed, width=0.8, cosmetic=True)
        for k, (lead, inverted) in enumerate(leads):
            idx = names.index(lead)
            sign = -1.0 if inverted else 1.0
            p = self.addViewBox(row=k // ncols, col=k % ncols, enableMenu=False, enableMouse=False)
            vb = p
            # One paper millimetre is square: pyqtgraph's ratio is (ms per px) / (mV per px).
            vb.setAspectLocked(
                True, ratio=self.scale.speed_mm_per_s / (self.scale.gain_mm_per_mv * 1000.0)
            )
            y_lo, y_hi = (-hi, -lo) if inverted else (lo, hi)
            # The grid reaches well past the beat so the paper fills the panel whatever its shape.
            gx0, gx1 = x0 - 100 * minor_ms, x1 + 100 * minor_ms
            gy0, gy1 = y_lo - 100 * minor_mv, y_hi + 100 * minor_mv
            grid = PaperGrid(
                QtCore.QRectF(gx0, gy0, gx1 - gx0, gy1 - gy0),
                minor_ms,
                minor_mv,
                minor_colour=self.theme.grid_minor,
                major_colour=self.theme.grid_major,
            )
            grid.set_colours(self.theme.grid_minor, self.theme.grid_major, self.theme.paper)
            p.addItem(grid)
            if overlay is not None:
                ox, oy = overlay
                over = pg.PlotCurveItem(ox, sign * oy[:, idx], pen=over_pen, connect="finite")
                over.setCacheMode(_CACHE)
                p.addItem(over)
            median_curve = pg.PlotCurveItem(t_ms, sign * wave[:, idx], pen=pen, antialias=True)
            median_curve.setSegmentedLineMode("on")  # thick antialiased paths stroke slowly
            median_curve.setCacheMode(_CACHE)
            p.addItem(median_curve)
            title = pg.TextItem(
                ("-" if inverted else "") + lead, color=self.theme.text, anchor=(0, 0)
            )
            f = QtGui.QFont()
            f.setPointSizeF(10.5)
            f.setBold(True)
            title.setFont(f)
            title.setPos(x0, y_hi)
            title.setZValue(50)  # the lead name stays readable above mark lines and labels
            p.addItem(title)
            p.setRange(xRange=(x0, x1), yRange=(y_lo, y_hi), padding=0.02)
            self.plots.append(p)
            self._add_lines(p, first_row=k == 0)
            self._add_j_mark(p, lead, idx, sign)
        for k in range(len(leads), ((len(leads) + ncols - 1) // ncols) * ncols):
            self.addLabel("", row=k // ncols, col=k % ncols)
        legend = (
            f"Median of {rep.n_beats_used} beats  ·  {self.scale.speed_mm_per_s:g} mm/s  ·  "
            f"{self.scale.gain_mm_per_mv:g} mm/mV  ·  {self._colour_key()}<br>"
            "solid line = automatic, dashed line with ◆ = corrected by the reader  ·  "
            "○ = the lead's J point (drag: that lead only)"
            + ("  ·  grey = every dominant beat" if self.superimpose else "")
        )
        item = self.addLabel(
            legend,
            row=(len(leads) + ncols - 1) // ncols,
            col=0,
            colspan=ncols,
            color=self.theme.text_muted,
            size="9pt",
        )
        # The legend's text width must not widen the grid past the widget (the right-hand
        # column of beats was cut off in narrow windows): it may be cut itself, the beats not.
        item.setMinimumWidth(0)
        if self.plots:
            self.plots[0].sigResized.connect(self._place_labels)
            # The layout has already sized the panels while they were added (each new one
            # shrank the others): place the labels for the final size now.
            self._place_labels()

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
        for fid, lines in self.lines.items():
            k = self._shown_sample(fid)
            if k is None:
                continue
            pos = self.window_ms(k)
            corrected = s.is_corrected(MarkTarget("representative", fid))
            pen, hover, colour = self._pens(fid, corrected)
            self._syncing = True
            try:
                for line in lines:
                    line.setPos(pos)
                    line.setPen(pen)
                    line.setHoverPen(hover)
                    if getattr(line, "label", None) is not None:
                        line.label.setFormat(self._label_text(fid, corrected))
                        line.label.setColor(colour)
                    line.setToolTip(self._line_tip(fid, corrected))
            finally:
                self._syncing = False
        self._place_j_marks()

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
            "(all leads move together), double-click to reset"
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

    def _place_labels(self) -> None:
        """Keep the label rows a fixed number of pixels apart as the panels change height;
        hide the labels where the panels are too narrow to hold them apart."""
        if not self.plots:
            return
        show = float(self.plots[0].width()) >= LABEL_MIN_PANEL_PX
        for fid, lines in self.lines.items():
            for line in lines:
                label = getattr(line, "label", None)
                if label is not None:
                    label.setPosition(self._label_position(fid, self.plots[0]))
                    label.setVisible(show)

    def _add_lines(self, p: pg.ViewBox, first_row: bool) -> None:
        s = self.workflow
        assert s is not None
        for fid in FIDUCIALS:
            v = self._shown_sample(fid)
            if v is None:
                continue
            corrected = s.is_corrected(MarkTarget("representative", fid))
            pen, hover, colour = self._pens(fid, corrected)
            text = self._label_text(fid, corrected) if first_row else None
            line = pg.InfiniteLine(
                pos=self.window_ms(v),
                angle=90,
                movable=True,
                pen=pen,
                hoverPen=hover,
                label=text,
                labelOpts={
                    "position": self._label_position(fid, p),
                    "color": colour,
                    "anchors": LABEL_ANCHORS[fid],
                    "fill": self.theme.paper,
                },
            )
            line.fiducial = fid
            line.setToolTip(self._line_tip(fid, corrected))
            line.sigDragged.connect(self._on_drag)
            line.sigPositionChangeFinished.connect(self._on_drop)
            line.mouseDoubleClickEvent = self._resetter(fid)
            p.addItem(line)
            self.lines.setdefault(fid, []).append(line)

    # --- each lead's own J point ---------------------------------------------------------
    def _add_j_mark(self, p: pg.ViewBox, lead: str, idx: int, sign: float) -> None:
        """A dot on the lead's median beat at its own J point (its QRS end), where its ST
        levels are measured; dragging it corrects this lead only."""
        item = pg.TargetItem(pos=(0.0, 0.0), size=9, symbol="o", movable=True)
        item.lead = lead
        item.lead_index = idx
        item.sign = sign
        item.setZValue(40)
        item.sigPositionChanged.connect(self._on_j_drag)
        item.sigPositionChangeFinished.connect(self._on_j_drop)
        item.mouseDoubleClickEvent = self._resetter("qrs_off", lead)
        p.addItem(item)
        self.j_marks.append(item)
        self._place_j_mark(item)

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
            item.setPos(self.window_ms(k), item.sign * float(rep.waveform_mv[k, item.lead_index]))
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
        for item in self.j_marks:
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

    def _snap(self, fid: str, sample: int) -> None:
        pos = self.window_ms(sample)
        self._syncing = True
        try:
            for line in self.lines.get(fid, []):
                line.setPos(pos)
        finally:
            self._syncing = False

    def _on_drag(self, line: pg.InfiniteLine) -> None:
        if self._syncing:
            return
        k = self.window_sample(line.value())
        self._snap(line.fiducial, k)
        self._emit("preview", line.fiducial, k)

    def _on_drop(self, line: pg.InfiniteLine) -> None:
        if self._syncing:
            return
        self._emit("move", line.fiducial, self.window_sample(line.value()))

    def line_point(self, fid: str, plot_index: int = 0, frac_y: float = 0.5) -> QtCore.QPoint:
        """Viewport pixel on a fiducial line (tests and keyboard focus use it)."""
        vb = self.plots[plot_index]
        line = self.lines[fid][plot_index]
        vr = vb.viewRect()
        y = vr.top() + frac_y * vr.height()
        scene = vb.mapViewToScene(QtCore.QPointF(line.value(), y))
        return self.mapFromScene(scene)

    def time_point(self, t_ms: float, plot_index: int = 0, frac_y: float = 0.5) -> QtCore.QPoint:
        vb = self.plots[plot_index]
        vr = vb.viewRect()
        scene = vb.mapViewToScene(QtCore.QPointF(t_ms, vr.top() + frac_y * vr.height()))
        return self.mapFromScene(scene)
