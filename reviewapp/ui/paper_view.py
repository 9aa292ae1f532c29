"""The paper canvas: grid, traces, pulses, labels, marks and calipers for one page.

Drawn in millimetres of paper (y down). At zoom 1 one millimetre is ``px_per_mm`` screen
pixels, so the paper is true size; the wheel zooms, a drag on the paper pans, "0" returns to
true size. When the page at the current zoom is larger than the view, scroll bars show the
part in sight and move it (they follow wheel zoom and drag panning). Marks and calipers keep
samples and millivolts; this view only places them.
"""

from __future__ import annotations

from typing import Any, Literal

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.fiducials import FIDUCIALS
from reviewapp.core.record import Record
from reviewapp.core.workflow import MarkAction, MarkEdit, MarkTarget, ReadingWorkflow
from reviewapp.ui.beat_tags import beat_tag_items
from reviewapp.ui.calipers import CaliperPair
from reviewapp.ui.display_filters import (
    DisplayFilters,
    apply_display_filters,
    baseline_offsets_mv,
)
from reviewapp.ui.geometry import LEFT_MARGIN_MM, TOP_MARGIN_MM, PageGeometry
from reviewapp.ui.layouts import DEFAULT_RHYTHM_LEADS, build_layout
from reviewapp.ui.mark_items import FiducialMark
from reviewapp.ui.paper import PaperGrid, PaperScale
from reviewapp.ui.theme import LIGHT, Theme
from reviewapp.ui.traces import CalibrationPulse, LeadTrace, group_heading, lead_label

DEFAULT_PAGE_S = 10.0
FILTER_PAD_S = 1.0  # extra signal each side so display filters settle before the page edge


class PaperView(pg.GraphicsView):
    mark_edit = QtCore.Signal(object)  # a MarkEdit of one beat's mark (record samples)
    caliper_changed = QtCore.Signal(object)
    caliper_added = QtCore.Signal(object)
    caliper_removed = QtCore.Signal(object)
    caliper_rename = QtCore.Signal(object)
    caliper_drag_finished = QtCore.Signal(object)
    zoom_changed = QtCore.Signal(float)
    selection_changed = QtCore.Signal(object)  # the selected caliper or beat mark, or None

    def __init__(self, scale: PaperScale, theme: Theme = LIGHT, parent=None) -> None:
        super().__init__(parent)
        self.theme = theme
        self.scale = scale
        self.record: Record | None = None
        self.workflow: ReadingWorkflow | None = None
        self.filters = DisplayFilters()
        self.layout_key = "12x1"
        self.lead_order = "standard"
        self.rhythm_leads: tuple[str, ...] = DEFAULT_RHYTHM_LEADS
        self.page_s = DEFAULT_PAGE_S
        self.page_start = 0
        self.show_beat_marks = True
        self.geom: PageGeometry | None = None
        self.traces: list[LeadTrace] = []
        self.marks: list[FiducialMark] = []
        self.beat_tags: list[pg.TextItem] = []  # words under non-dominant beats (beat_tags)
        self.calipers: list[CaliperPair] = []
        self.selected: CaliperPair | FiducialMark | None = None
        self.baselines_mv: dict[str, float] = {}  # each lead's median on the page (display)
        self._furniture: list[QtCore.QObject] = []
        self._zoom = 1.0
        self._after_paint: list = []

        self.vb = pg.ViewBox(invertY=True, enableMenu=False, defaultPadding=0.0)
        self.vb.disableAutoRange()
        self.setCentralItem(self.vb)
        self.setBackground(theme.window)
        self.grid = PaperGrid(QtCore.QRectF(0, 0, 10, 10), 1.0, 1.0)
        self.vb.addItem(self.grid)
        self.header = pg.TextItem("", color=theme.text, anchor=(0, 0))
        self.footer = pg.TextItem("", color=theme.text_muted, anchor=(0, 0))
        for item in (self.header, self.footer):
            f = QtGui.QFont()
            f.setPointSizeF(10.0)
            item.setFont(f)
            item.setZValue(25)
            self.vb.addItem(item)
        # Items move all the time while the reader drags: a BSP index would only cost.
        self.scene().setItemIndexMethod(QtWidgets.QGraphicsScene.ItemIndexMethod.NoIndex)
        self.vb.sigResized.connect(self._keep_zoom)
        self.vb.sigRangeChanged.connect(self._range_changed)
        self.setFocusPolicy(QtCore.Qt.FocusPolicy.StrongFocus)
        self.setAcceptDrops(False)
        # Own scroll bars in the viewport margins: pyqtgraph keeps the QGraphicsView's scene rect
        # equal to the viewport, so its built-in bars would never have a range. These are bound
        # to the ViewBox range (paper mm) instead, in screen pixels at the current zoom.
        self._syncing_bars = False
        self.h_scroll = QtWidgets.QScrollBar(QtCore.Qt.Orientation.Horizontal, self)
        self.v_scroll = QtWidgets.QScrollBar(QtCore.Qt.Orientation.Vertical, self)
        for sb in (self.h_scroll, self.v_scroll):
            # No focus: PageUp/PageDown must keep turning the page in time, not scroll a bar.
            sb.setFocusPolicy(QtCore.Qt.FocusPolicy.NoFocus)
            sb.setVisible(False)
        self.h_scroll.setObjectName("paper_h_scroll")
        self.v_scroll.setObjectName("paper_v_scroll")
        self.h_scroll.valueChanged.connect(self._h_scrolled)
        self.v_scroll.valueChanged.connect(self._v_scrolled)

    # --- configuration ---------------------------------------------------------------------
    def set_record(self, record: Record, page_s: float = DEFAULT_PAGE_S) -> None:
        self.record = record
        self.workflow = None
        self.page_s = min(page_s, record.duration_s)
        self.page_start = 0
        had_calipers = bool(self.calipers)
        for c in self.calipers:
            self.vb.removeItem(c)
        self.calipers.clear()
        self.selected = None
        self.rebuild()
        self.true_size()
        if had_calipers:
            # Another record: the window's caliper list must not keep the old record's ones.
            self.caliper_changed.emit(None)

    def set_workflow(self, workflow: ReadingWorkflow | None) -> None:
        self.workflow = workflow
        self.rebuild_marks()

    def set_scale(self, scale: PaperScale) -> None:
        self.scale = scale
        self.rebuild()
        self._keep_zoom()

    def set_layout(
        self, key: str, order: str | None = None, rhythm: tuple[str, ...] | None = None
    ) -> None:
        self.layout_key = key
        if order is not None:
            self.lead_order = order
        if rhythm is not None:
            self.rhythm_leads = rhythm
        self.rebuild()
        # Calipers belong to a lead, not to a place on the page: move them to that lead's row.
        for c in list(self.calipers):
            row = self.row_for_lead(c.lead)
            if row is None or self.geom is None:
                self.remove_caliper(c)
            else:
                c.row = row
                c.set_geometry(self.geom, self.scale.gain_mm_per_mv)

    def row_for_lead(self, lead: str | None) -> int | None:
        """The row showing ``lead`` (its rhythm strip if it has one, which spans the page)."""
        if self.geom is None:
            return None
        cells = [c for c in self.geom.layout.cells if c.lead == lead]
        if not cells:
            return None
        return next((c.row for c in cells if c.rhythm), cells[0].row)

    def set_filters(self, filters: DisplayFilters) -> None:
        self.filters = filters
        self.rebuild()

    def set_page_start(self, sample: int) -> None:
        if self.record is None:
            return
        n = self.record.n_samples
        span = round(self.page_s * self.record.fs_hz)
        self.page_start = int(min(max(0, sample), max(0, n - span)))
        self.rebuild()

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.setBackground(theme.window)
        for c in self.calipers:
            c.set_theme(theme)
        self.rebuild()

    # --- building the page ---------------------------------------------------------------
    def rebuild(self) -> None:
        """Re-place everything for the current record, page, layout, scale and filters."""
        for item in self._furniture:
            self.vb.removeItem(item)
        self._furniture.clear()
        for t in self.traces:
            self.vb.removeItem(t)
        self.traces.clear()
        self.grid.set_colours(self.theme.grid_minor, self.theme.grid_major, self.theme.paper)
        if self.record is None:
            self.geom = None
            self.rebuild_marks()
            return
        rec = self.record
        layout = build_layout(
            self.layout_key,
            rec.lead_names,
            self.page_s,
            order=self.lead_order,
            rhythm_leads=self.rhythm_leads,
        )
        fs = rec.fs_hz
        page_samples = round(layout.page_s * fs)
        pad = round(FILTER_PAD_S * fs) if self.filters.any else 0
        lo = max(0, self.page_start - pad)
        hi = min(rec.n_samples, self.page_start + page_samples + pad)
        data = rec.window(lo, hi)
        data = apply_display_filters(data, fs, self.filters)
        on_page = data[self.page_start - lo : self.page_start - lo + page_samples]
        baselines = dict(zip(rec.lead_names, baseline_offsets_mv(on_page).tolist(), strict=True))
        self.baselines_mv = baselines
        offsets = baselines if self.filters.centre else {}
        geom = PageGeometry(layout, self.scale, fs, self.page_start, offsets)
        self.geom = geom
        self.grid.set_geometry(QtCore.QRectF(0, 0, geom.width_mm, geom.height_mm), 1.0, 1.0)
        for cell in layout.cells:
            s0, s1 = geom.sample_range(cell)
            s1 = min(s1 + 1, rec.n_samples)  # join the columns without a gap
            idx = rec.lead_index(cell.lead)
            seg = data[s0 - lo : s1 - lo, idx]
            trace = LeadTrace(cell, self.theme)
            # Parent first: pyqtgraph's PlotDataItem looks for its ViewBox while being added.
            trace.setParentItem(self.vb.childGroup)
            self.vb.addItem(trace)
            trace.set_signal(geom, np.arange(s0, s0 + seg.shape[0]), seg)
            self.traces.append(trace)
            label = lead_label(cell, geom, self.theme)
            self.vb.addItem(label)
            self._furniture.append(label)
        for row in sorted({c.row for c in layout.cells}):
            pulse = CalibrationPulse(row, self.theme)
            pulse.set_geometry(geom)
            self.vb.addItem(pulse)
            self._furniture.append(pulse)
        for group in layout.groups:
            heading = group_heading(group, geom, self.theme)
            self.vb.addItem(heading)
            self._furniture.append(heading)
        self._add_column_ticks(geom)
        self.header.setColor(self.theme.text)
        self.footer.setColor(self.theme.text_muted)
        self.header.setText(self._header_text())
        self.header.setPos(LEFT_MARGIN_MM, 1.5)
        self.footer.setText(self._footer_text())
        self.footer.setPos(LEFT_MARGIN_MM, geom.height_mm - 8.5)
        for c in self.calipers:
            c.set_geometry(geom, self.scale.gain_mm_per_mv)
        self.rebuild_marks()
        self._update_scrollbars()

    def _header_text(self) -> str:
        rec = self.record
        assert rec is not None and self.geom is not None
        t0 = self.page_start / rec.fs_hz
        note = self.geom.layout.note
        return (
            f"{self.scale.speed_mm_per_s:g} mm/s     {self.scale.gain_mm_per_mv:g} mm/mV     "
            f"{rec.name}   {_clock(t0)}–{_clock(t0 + self.page_s)} of {_clock(rec.duration_s)}"
            + (f"     {note}" if note else "")
        )

    def off_row_leads(self) -> list[str]:
        """Leads whose baseline lies outside their row as drawn (centring off)."""
        g = self.geom
        if g is None or self.filters.centre:
            return []
        half_row_mv = 0.5 * g.pitch_mm / self.scale.gain_mm_per_mv
        return [n for n, v in self.baselines_mv.items() if abs(v) > half_row_mv]

    def _footer_text(self) -> str:
        """The display filters, and the leads drawn off their rows when centring is off, so a
        page is never blank without a word saying why."""
        off = self.off_row_leads()
        if not off:
            return self.filters.legend()
        shown = ", ".join(f"{n} {self.baselines_mv[n]:+.1f} mV" for n in off[:6])
        more = f" and {len(off) - 6} more" if len(off) > 6 else ""
        return (
            f"{self.filters.legend()}  ·  baseline off its row: {shown}{more} "
            "(Filters ▸ Centre baselines draws each on its row)"
        )

    def _add_column_ticks(self, geom: PageGeometry) -> None:
        layout = geom.layout
        if layout.n_cols <= 1:
            return
        xs, ys = [], []
        for c in layout.cells:
            if c.rhythm or c.col == 0:
                continue
            x = geom.x_of_time(c.t0_s)
            base = geom.baseline_y(c.row)
            xs += [x, x]
            ys += [base - 3.0, base + 3.0]
        if xs:
            item = pg.PlotCurveItem(
                np.array(xs),
                np.array(ys),
                connect="pairs",
                pen=pg.mkPen(self.theme.trace, width=1.6, cosmetic=True),
            )
            item.setZValue(11)
            self.vb.addItem(item)
            self._furniture.append(item)

    def rebuild_marks(self) -> None:
        for m in [*self.marks, *self.beat_tags]:
            self.vb.removeItem(m)
        self.marks.clear()
        self.beat_tags.clear()
        keep = self.selected.target if isinstance(self.selected, FiducialMark) else None
        if keep is not None:
            self.selected = None
        geom, workflow = self.geom, self.workflow
        if geom is None or workflow is None:
            return
        for tag in beat_tag_items(workflow.analysis.beats, geom, geom.fs_hz, self.theme):
            self.vb.addItem(tag)
            self.beat_tags.append(tag)
        if not self.show_beat_marks:
            return
        beats = workflow.analysis.beats
        marks = workflow.beat_marks()
        end = self.page_start + geom.page_samples
        for i, (beat, wm) in enumerate(zip(beats, marks, strict=False)):
            if not (self.page_start <= beat.r < end):
                continue
            for fid in FIDUCIALS:
                s = wm.get(fid)
                if s is None or not (self.page_start <= s < end):
                    continue
                target = MarkTarget("beat", fid, beat_r=beat.r)
                corrected = workflow.is_corrected(target)
                if workflow.hide_automatic and not corrected:
                    continue  # automatic (or carried from automatic) positions stay hidden
                item = FiducialMark(
                    fid,
                    s,
                    i,
                    corrected=corrected,
                    theme=self.theme,
                    x_of_sample=geom.x_of_sample,
                    sample_of_x=geom.sample_of_x,
                    bands=geom.bands_at_sample(s),
                    fs_hz=geom.fs_hz,
                )
                item.target = target
                item.pressed.connect(self._select)
                item.dragging.connect(self._on_mark_dragging)
                item.dropped.connect(lambda m, k: self._emit_mark(m, "move", k))
                item.reset_requested.connect(lambda m: self._emit_mark(m, "reset", None))
                self.vb.addItem(item)
                self.marks.append(item)
                if target == keep:
                    # The same mark, drawn again after its correction: still the selection.
                    self.selected = item
                    item.set_selected(True)
        if keep is not None and self.selected is None:
            self.selection_changed.emit(None)  # its beat is off the page now

    def _on_mark_dragging(self, mark: FiducialMark, sample: int) -> None:
        self._select(mark)
        self._emit_mark(mark, "preview", sample)

    def _emit_mark(self, mark: FiducialMark, action: MarkAction, sample: int | None) -> None:
        if mark.target is not None:
            self.mark_edit.emit(MarkEdit(mark.target, action, sample))

    def call_after_paint(self, fn) -> None:
        """Run ``fn`` once, right after the next paint (e.g. the analysis after the first
        painted record, so the reader sees the traces at once)."""
        self._after_paint.append(fn)
        self.viewport().update()

    def mousePressEvent(self, ev) -> None:
        """Shift + drag on a trace draws a new time caliper from the press to the release."""
        shift = ev.modifiers() & QtCore.Qt.KeyboardModifier.ShiftModifier
        if shift and ev.button() == QtCore.Qt.MouseButton.LeftButton and self.geom is not None:
            p = self.vb.mapSceneToView(self.mapToScene(ev.position().toPoint()))
            cell = self.geom.cell_at(p.x(), p.y())
            if cell is not None:
                s = self.geom.sample_of_x(p.x())
                c = self.add_caliper("time", row=cell.row, center_sample=s, drawing=True)
                if c is not None:
                    c.start_drag_from_press(p.x(), s)
                    ev.accept()
                    return
        super().mousePressEvent(ev)

    def paintEvent(self, ev) -> None:
        super().paintEvent(ev)
        if self._after_paint:
            todo, self._after_paint = self._after_paint, []
            for fn in todo:
                QtCore.QTimer.singleShot(0, fn)

    # --- calipers ------------------------------------------------------------------------
    def add_caliper(
        self,
        kind: Literal["time", "amplitude"],
        row: int | None = None,
        center_sample: int | None = None,
        *,
        restore: dict | None = None,
        drawing: bool = False,
    ) -> CaliperPair | None:
        """A new caliper pair (legs 400 ms or 1 mV apart around ``center_sample``).

        ``restore`` re-creates a saved one (keys: lead, a, b, at, a_mv, b_mv, name, store_id).
        ``drawing``: the reader is drawing it with Shift + drag (it is an edit once released).
        """
        geom, rec = self.geom, self.record
        if geom is None or rec is None:
            return None
        cells = geom.layout.cells
        if restore is not None:
            row = self.row_for_lead(restore.get("lead"))
            if row is None:
                return None
        if row is None:
            # Prefer the first rhythm strip (a full-length lead), else the top row.
            rhythm = [c for c in cells if c.rhythm]
            row = (rhythm[0] if rhythm else cells[0]).row
        cell = next(c for c in cells if c.row == row)
        if center_sample is None:
            vr = self.vb.viewRect()
            center_sample = geom.sample_of_x(
                min(max(vr.center().x(), geom.x_of_time(cell.t0_s)), geom.x_of_time(cell.t1_s))
            )
        half = round(0.2 * rec.fs_hz)
        values: dict[str, Any] = {
            "a": center_sample - half,
            "b": center_sample + half,
            "at": center_sample,
            # At the lead's baseline as drawn (its display offset), 1 mV apart.
            "a_mv": geom.offset_mv(cell.lead),
            "b_mv": geom.offset_mv(cell.lead) + 1.0,
            "name": self.next_caliper_name(),
        }
        if restore is not None:
            values.update({k: v for k, v in restore.items() if k in values})
        c = CaliperPair(kind, row, cell.lead, geom, self.scale.gain_mm_per_mv, self.theme, **values)
        if restore is not None:
            c.store_id = restore.get("store_id")
        c.drawing = drawing
        c.changed.connect(self.caliper_changed)
        c.drag_finished.connect(self.caliper_drag_finished)
        c.selected_changed.connect(self._on_caliper_selected)
        c.rename_requested.connect(self.caliper_rename)
        self.vb.addItem(c)
        self.calipers.append(c)
        if restore is None:
            self._select(c)
            self.caliper_added.emit(c)
        self.caliper_changed.emit(c)
        return c

    def next_caliper_name(self) -> str:
        """``C<n>`` with the lowest n no caliper on the paper uses: after deleting C1 of C1, C2
        the next one is C1 again, so two calipers never share a name and numbers do not jump."""
        used = {c.name for c in self.calipers}
        n = 1
        while f"C{n}" in used:
            n += 1
        return f"C{n}"

    def attach_caliper(self, c: CaliperPair) -> bool:
        """Put a removed caliper back on its lead's row (undo of a delete, redo of an add);
        False if that lead is not on the page."""
        if c in self.calipers:
            return True
        row = self.row_for_lead(c.lead)
        if row is None or self.geom is None:
            return False
        c.row = row
        c.set_geometry(self.geom, self.scale.gain_mm_per_mv)
        c.set_theme(self.theme)
        self.vb.addItem(c)
        self.calipers.append(c)
        self.caliper_changed.emit(c)
        return True

    def remove_caliper(self, c: CaliperPair) -> None:
        if c in self.calipers:
            self.calipers.remove(c)
            self.vb.removeItem(c)
            if self.selected is c:
                self.selected = None
            self.caliper_removed.emit(c)
            self.caliper_changed.emit(None)

    def _on_caliper_selected(self, c: CaliperPair) -> None:
        if c.selected:
            self._select(c)

    def _select(self, item: CaliperPair | FiducialMark | None) -> None:
        if self.selected is item:
            return
        if self.selected is not None:
            self.selected.set_selected(False)
        self.selected = item
        if item is not None:
            item.set_selected(True)
        self.selection_changed.emit(item)

    def select_item(self, item: CaliperPair | FiducialMark | None) -> None:
        """Select a caliper or a beat's mark (None: nothing); the arrow keys move it."""
        self._select(item)

    # --- zoom: true size and back ---------------------------------------------------------
    @property
    def px_per_mm(self) -> float:
        return self.scale.px_per_mm

    @property
    def zoom(self) -> float:
        return self._zoom

    def true_size(self) -> None:
        self.set_zoom(1.0, top_left=QtCore.QPointF(0.0, 0.0))

    def set_zoom(self, zoom: float, top_left: QtCore.QPointF | None = None) -> None:
        zoom = float(min(max(zoom, 0.05), 40.0))
        self._zoom = zoom
        w, h = self.vb.width(), self.vb.height()
        if w <= 1 or h <= 1:
            return
        ppu = self.px_per_mm * zoom
        if top_left is None:
            vr = self.vb.viewRect()
            top_left = QtCore.QPointF(vr.left(), vr.top())
        self.vb.setRange(
            xRange=(top_left.x(), top_left.x() + w / ppu),
            yRange=(top_left.y(), top_left.y() + h / ppu),
            padding=0.0,
        )

    def zoom_by(self, factor: float) -> None:
        vr = self.vb.viewRect()
        c = vr.center()
        new = min(max(self._zoom * factor, 0.05), 40.0)
        w, h = self.vb.width() / (self.px_per_mm * new), self.vb.height() / (self.px_per_mm * new)
        self.set_zoom(new, QtCore.QPointF(c.x() - w / 2, c.y() - h / 2))

    def fit_page(self) -> None:
        """The whole page in sight, as large as the view allows (measured without scroll
        bars, which a fitted page does not need)."""
        g = self.geom
        if g is None:
            return
        area = self._full_area()
        if area.width() <= 1 or area.height() <= 1:
            return
        z = min(
            area.width() / (g.width_mm * self.px_per_mm),
            area.height() / (g.height_mm * self.px_per_mm),
        )
        # Drop the bars first so the ViewBox has the whole area when the zoom is applied.
        self._set_bars(False, False)
        self.set_zoom(z, QtCore.QPointF(0.0, 0.0))

    def page_height_px(self) -> int:
        """Height (px) the paper needs for its whole page height at the current zoom, plus the
        horizontal scroll bar when the page is wider than the view (so no vertical one)."""
        g = self.geom
        if g is None:
            return 0
        ppu = self.px_per_mm * self._zoom
        bar = self._bar_extent() if g.width_mm * ppu > self._full_area().width() + 0.5 else 0
        return int(g.height_mm * ppu) + bar

    def _keep_zoom(self, *_args) -> None:
        self.set_zoom(self._zoom)

    def _range_changed(self, *_args) -> None:
        vr = self.vb.viewRect()
        if vr.width() > 0 and self.vb.width() > 1:
            z = self.vb.width() / vr.width() / self.px_per_mm
            if abs(z - self._zoom) > 1e-6:
                self._zoom = z
                self.zoom_changed.emit(z)
        self._update_scrollbars()

    # --- scroll bars: the page beyond the view ------------------------------------------
    def resizeEvent(self, ev) -> None:
        # pyqtgraph sizes the scene to the whole widget; with scroll bars in the viewport
        # margins the scene must be the viewport only, or the ViewBox would run under the bars.
        if self.closed:
            return
        vp = self.viewport().size()
        self.range = QtCore.QRectF(0, 0, vp.width(), vp.height())
        pg.GraphicsView.setRange(self, self.range, padding=0, disableAutoPixel=False)
        self.updateMatrix()
        if "h_scroll" in self.__dict__:  # pyqtgraph resizes once inside its own __init__
            self._place_scrollbars()
            self._update_scrollbars()

    def _full_area(self) -> QtCore.QSize:
        """The paper's area without scroll bars (viewport plus the margins they take)."""
        m = self.viewportMargins()
        vp = self.viewport().size()
        return QtCore.QSize(vp.width() + m.right(), vp.height() + m.bottom())

    def _bar_extent(self) -> int:
        return self.style().pixelMetric(QtWidgets.QStyle.PixelMetric.PM_ScrollBarExtent)

    def _set_bars(self, need_h: bool, need_v: bool) -> None:
        ext = self._bar_extent()
        m = self.viewportMargins()
        want = (ext if need_v else 0, ext if need_h else 0)
        self.h_scroll.setVisible(need_h)
        self.v_scroll.setVisible(need_v)
        if (m.right(), m.bottom()) != want:
            self.setViewportMargins(0, 0, *want)
        self._place_scrollbars()

    def _place_scrollbars(self) -> None:
        cr = self.contentsRect()
        m = self.viewportMargins()
        self.h_scroll.setGeometry(
            cr.left(), cr.bottom() + 1 - m.bottom(), cr.width() - m.right(), m.bottom()
        )
        self.v_scroll.setGeometry(
            cr.right() + 1 - m.right(), cr.top(), m.right(), cr.height() - m.bottom()
        )

    def _update_scrollbars(self) -> None:
        """Show a bar on each axis where the page at the current zoom is larger than the view,
        with its range covering the page (and the view, if it was panned past an edge)."""
        if self._syncing_bars:
            return
        g = self.geom
        ppu = self.px_per_mm * self._zoom
        if g is None or ppu <= 0:
            self._set_bars(False, False)
            return
        area = self._full_area()
        page_w, page_h = g.width_mm * ppu, g.height_mm * ppu
        ext = self._bar_extent()
        tol = 0.5  # px: a fitted page must not get a bar from rounding
        need_h = page_w > area.width() + tol
        need_v = page_h > area.height() + tol
        # One bar takes room from the other axis, which may then need a bar too.
        if need_h and not need_v:
            need_v = page_h > area.height() - ext + tol
        if need_v and not need_h:
            need_h = page_w > area.width() - ext + tol
        self._syncing_bars = True
        try:
            self._set_bars(need_h, need_v)
            vr = self.vb.viewRect()
            for sb, need, start_mm, size_mm, page_px in (
                (self.h_scroll, need_h, vr.left(), vr.width(), page_w),
                (self.v_scroll, need_v, vr.top(), vr.height(), page_h),
            ):
                if not need:
                    continue
                start, size = start_mm * ppu, size_mm * ppu
                sb.setRange(round(min(0.0, start)), round(max(page_px - size, start)))
                sb.setPageStep(max(1, round(size)))
                sb.setSingleStep(max(1, round(5.0 * ppu)))  # one large (5 mm) square
                sb.setValue(round(start))
        finally:
            self._syncing_bars = False

    def _h_scrolled(self, value: int) -> None:
        if self._syncing_bars:
            return
        vr = self.vb.viewRect()
        x0 = value / (self.px_per_mm * self._zoom)
        self.vb.setXRange(x0, x0 + vr.width(), padding=0.0)

    def _v_scrolled(self, value: int) -> None:
        if self._syncing_bars:
            return
        vr = self.vb.viewRect()
        y0 = value / (self.px_per_mm * self._zoom)
        self.vb.setYRange(y0, y0 + vr.height(), padding=0.0)

    def map_to_viewport(self, x_mm: float, y_mm: float) -> QtCore.QPointF:
        """Paper mm -> viewport pixel (what a mouse event sees)."""
        scene = self.vb.mapViewToScene(QtCore.QPointF(x_mm, y_mm))
        return self.viewportTransform().map(scene)

    def sample_point(self, row: int, sample: int, mv: float = 0.0) -> QtCore.QPoint:
        """Viewport pixel of a sample on a row (for tests and keyboard placement)."""
        assert self.geom is not None
        cell = self.geom.cell_of(row, sample)
        lead = None if cell is None else cell.lead
        p = self.map_to_viewport(self.geom.x_of_sample(sample), self.geom.y_of_mv(row, mv, lead))
        return p.toPoint()


def _clock(seconds: float) -> str:
    s = max(0.0, seconds)
    h, rem = divmod(s, 3600)
    m, sec = divmod(rem, 60)
    return f"{int(h)}:{int(m):02d}:{sec:04.1f}" if h >= 1 else f"{int(m)}:{sec:04.1f}"


__all__ = ["TOP_MARGIN_MM", "PaperView"]
