"""The page controls: paper speed, gain, layout and rhythm lead (toolbar boxes and keys),
zoom and true size, paging through a long record, the median beats below the page, display
filters, theme, and the screen calibration. Settings are remembered."""

from __future__ import annotations

from collections.abc import Callable

from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.record import Record
from reviewapp.ui.calibration import CalibrationDialog
from reviewapp.ui.display_filters import DisplayFilters
from reviewapp.ui.layouts import DEFAULT_RHYTHM_LEADS, GRID_MIN_STANDARD, LAYOUTS
from reviewapp.ui.median_view import MedianBeatView
from reviewapp.ui.overview import OverviewStrip
from reviewapp.ui.paper import GAINS_MM_PER_MV, SPEEDS_MM_PER_S, PaperScale
from reviewapp.ui.paper_view import PaperView
from reviewapp.ui.theme import DARK, LIGHT, Theme, apply_palette

MEDIAN_MIN_PX = 300  # the median beats' least height: never squeezed out by the page
PAPER_MIN_PX = 160  # the paper's least height beside them
FILTER_KEYS = (
    ("f_base", "baseline"),
    ("f_mains", "mains"),
    ("f_low", "lowpass"),
    ("f_centre", "centre"),
)


def _nearest(values: tuple[float, ...], v: float) -> int:
    return min(range(len(values)), key=lambda i: abs(values[i] - v))


def _box(tip: str, items: list[tuple[str, object]]) -> QtWidgets.QComboBox:
    box = QtWidgets.QComboBox()
    for text, data in items:
        box.addItem(text, data)
    box.setToolTip(tip)
    box.setSizeAdjustPolicy(QtWidgets.QComboBox.SizeAdjustPolicy.AdjustToContents)
    box.setFocusPolicy(QtCore.Qt.FocusPolicy.NoFocus)  # keys stay with the window
    return box


class PageControls(QtCore.QObject):
    """How the record is drawn; one object the toolbar, the View menu and the keys share."""

    scale_changed = QtCore.Signal()

    def __init__(
        self,
        window: QtWidgets.QMainWindow,
        settings: QtCore.QSettings,
        scale: PaperScale,
        theme: Theme,
        actions: dict[str, QtGui.QAction],
        has_reading: Callable[[], bool],
    ) -> None:
        super().__init__(window)
        self.window = window
        self.settings = settings
        self.scale = scale
        self.theme = theme
        self.actions = actions
        self._has_reading = has_reading
        self.record: Record | None = None
        self.filters = self._stored_filters()
        # The median beats go below the paper by themselves, in the height the page leaves
        # (never less than MEDIAN_MIN_PX), until the reader toggles them (B).
        self.median_auto = True
        self.paper = PaperView(scale, theme)
        self.overview = OverviewStrip(theme)
        self.overview.setVisible(False)
        self.median = MedianBeatView(scale, theme)
        # The median beats with the magnifier's bar above them: one area, shown or hidden.
        self.median_area = QtWidgets.QWidget()
        self.median_area.setObjectName("median_area")
        ml = QtWidgets.QVBoxLayout(self.median_area)
        ml.setContentsMargins(0, 0, 0, 0)
        ml.setSpacing(0)
        ml.addWidget(self.median.bar)
        ml.addWidget(self.median, 1)
        self.median_area.setVisible(False)
        paper_box = QtWidgets.QWidget()
        pl = QtWidgets.QVBoxLayout(paper_box)
        pl.setContentsMargins(0, 0, 0, 0)
        pl.setSpacing(0)
        pl.addWidget(self.paper, 1)
        pl.addWidget(self.overview)
        # Paper above, median beats below: the strip at true size and the median beats with
        # their marks at once.
        self.split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Vertical)
        self.split.setObjectName("split_paper_median")
        self.split.addWidget(paper_box)
        self.split.addWidget(self.median_area)
        self.split.setChildrenCollapsible(False)
        self.speed_box = _box(
            "Paper speed ([ and ])", [(f"{v:g} mm/s", v) for v in SPEEDS_MM_PER_S]
        )
        self.gain_box = _box("Gain (- and =)", [(f"{v:g} mm/mV", v) for v in GAINS_MM_PER_MV])
        self.layout_box = _box("Layout (keys 1 to 4)", [(t, k) for k, t in LAYOUTS.items()])
        self.rhythm_box = _box("Lead of the (first) rhythm strip", [])
        self.speed_box.activated.connect(lambda i: self.set_speed(self.speed_box.itemData(i)))
        self.gain_box.activated.connect(lambda i: self.set_gain(self.gain_box.itemData(i)))
        self.layout_box.activated.connect(lambda i: self.set_layout(self.layout_box.itemData(i)))
        self.rhythm_box.activated.connect(lambda _i: self.rhythm_changed())
        self.filters_button = QtWidgets.QToolButton()
        self.filters_button.setObjectName("toolbar_filters")
        self.filters_button.setText("Filters")
        self.filters_button.setToolTip("Display filters (the signal and the values are unchanged)")
        self.filters_button.setPopupMode(QtWidgets.QToolButton.ToolButtonPopupMode.InstantPopup)
        menu = QtWidgets.QMenu(self.filters_button)
        for name, _field in FILTER_KEYS:
            menu.addAction(actions[name])
        self.filters_button.setMenu(menu)
        self.scale_label = QtWidgets.QLabel()
        self._median_timer = QtCore.QTimer(self)
        self._median_timer.setSingleShot(True)
        self._median_timer.setInterval(120)
        self._median_timer.timeout.connect(self.auto_median)
        self.paper.zoom_changed.connect(lambda _z: self.update_status())
        self.overview.page_requested.connect(self.page_from_overview)
        self.set_filters(self.filters)

    def view_group(self) -> QtWidgets.QWidget:
        """Speed, gain, layout and rhythm lead as one toolbar group."""
        box = QtWidgets.QWidget()
        box.setObjectName("toolbar_view_group")
        lay = QtWidgets.QHBoxLayout(box)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(2)
        for w in (self.speed_box, self.gain_box, self.layout_box):
            lay.addWidget(w)
        label = QtWidgets.QLabel(" Rhythm")
        label.setBuddy(self.rhythm_box)
        lay.addWidget(label)
        lay.addWidget(self.rhythm_box)
        return box

    # --- the record ---------------------------------------------------------------------------
    def show_record(self, record: Record) -> None:
        self.record = record
        self.paper.set_record(record)
        self.rhythm_box.clear()
        for n in record.lead_names:
            self.rhythm_box.addItem(n, n)
        self._sync_rhythm_box()
        long = record.duration_s > self.paper.page_s + 1e-9
        self.overview.setVisible(long)
        if long:
            self.overview.set_record(record, self.paper.page_s)
        self.update_status()

    # --- scale --------------------------------------------------------------------------------
    def set_speed(self, speed: float) -> None:
        self._set_scale(self.scale.with_speed(speed))

    def set_gain(self, gain: float) -> None:
        self._set_scale(self.scale.with_gain(gain))

    def set_px_per_mm(self, ppm: float) -> None:
        self._set_scale(self.scale.with_px_per_mm(ppm))

    def step_speed(self, d: int) -> None:
        i = _nearest(SPEEDS_MM_PER_S, self.scale.speed_mm_per_s) + d
        self.set_speed(SPEEDS_MM_PER_S[min(max(i, 0), len(SPEEDS_MM_PER_S) - 1)])

    def step_gain(self, d: int) -> None:
        i = _nearest(GAINS_MM_PER_MV, self.scale.gain_mm_per_mv) + d
        self.set_gain(GAINS_MM_PER_MV[min(max(i, 0), len(GAINS_MM_PER_MV) - 1)])

    def _set_scale(self, scale: PaperScale) -> None:
        self.scale = scale
        self.paper.set_scale(scale)
        self.median.set_scale(scale)
        self.speed_box.setCurrentIndex(max(0, self.speed_box.findData(scale.speed_mm_per_s)))
        self.gain_box.setCurrentIndex(max(0, self.gain_box.findData(scale.gain_mm_per_mv)))
        self.settings.setValue("view/speed", scale.speed_mm_per_s)
        self.settings.setValue("view/gain", scale.gain_mm_per_mv)
        self.scale_changed.emit()
        self.update_status()
        self._page_height_changed()

    def apply_scale(self) -> None:
        self._set_scale(self.scale)

    # --- layout -------------------------------------------------------------------------------
    def set_layout(self, key: str) -> None:
        if key not in LAYOUTS:
            key = "12x1"
        self.paper.set_layout(key)
        for k in LAYOUTS:
            self.actions[f"layout_{k}"].setChecked(k == key)
        self.layout_box.setCurrentIndex(max(0, self.layout_box.findData(key)))
        self._sync_rhythm_box()
        self.settings.setValue("view/layout", key)
        self.scale_changed.emit()
        self._page_height_changed()

    def _sync_rhythm_box(self) -> None:
        """The box names the lead the (first) rhythm strip shows; without a rhythm strip on
        the page (12 stacked, 6 x 2, or every lead already a full strip) it is off, and says
        why."""
        g = self.paper.geom
        strips = g is not None and g.layout.strips
        self.layout_box.setToolTip(
            "Layout (keys 1 to 4)"
            + (
                f"; this record has too few of the standard 12 leads for a grid (at least "
                f"{GRID_MIN_STANDARD}): each lead is a full strip"
                if strips
                else ""
            )
        )
        shown = () if g is None else g.layout.rhythm_leads
        box = self.rhythm_box
        box.setEnabled(bool(shown))
        if shown:
            box.setCurrentIndex(max(0, box.findData(shown[0])))
            box.setToolTip("Lead of the (first) rhythm strip")
        elif strips:
            box.setToolTip("Every lead of this record is a full strip: no rhythm strip")
        else:
            box.setToolTip("Lead of the rhythm strip (layouts 3 x 4 with rhythm strips)")

    def rhythm_changed(self) -> None:
        lead = self.rhythm_box.currentData()
        if lead:
            rest = tuple(x for x in DEFAULT_RHYTHM_LEADS if x != lead)
            self.paper.set_layout(self.paper.layout_key, rhythm=(lead, *rest))
            self._sync_rhythm_box()

    def set_cabrera(self, on: bool) -> None:
        order = "cabrera" if on else "standard"
        self.paper.set_layout(self.paper.layout_key, order=order)
        self.median.set_lead_order(order)
        self._sync_rhythm_box()

    def set_superimpose(self, on: bool) -> None:
        self.median.set_superimpose(on)

    # --- the median beats below the page ------------------------------------------------------
    def median_room_px(self) -> int:
        """Height left below the page at the current zoom (px) in the paper/median split."""
        if self.paper.geom is None:
            return 0
        return self.split.height() - (self.paper.page_height_px() + 8)

    def auto_median(self) -> None:
        """Show the median beats below the page, in the height the page leaves and never less
        than MEDIAN_MIN_PX, until the reader toggles them: a tall screen is not left blank,
        and a tall page (high gain, three rhythm strips, fifteen leads) scrolls instead of
        pushing the median beats out."""
        if self.median_auto and self._has_reading():
            self._place_median(True)

    def window_resized(self) -> None:
        if self.median_auto:
            self._median_timer.start()

    def show_median(self, on: bool) -> None:
        """Median beats on or off, as the reader chose (no longer placed automatically)."""
        self.median_auto = False
        self._place_median(on)

    def set_median_automatic(self) -> None:
        self.median_auto = True
        self.auto_median()

    def _page_height_changed(self) -> None:
        self.auto_median()

    def _place_median(self, on: bool) -> None:
        self.actions["median"].setChecked(on)
        if not on:
            self.median_area.setVisible(False)
            return
        self.median_area.setVisible(True)
        # The paper gets the height of its page at the current zoom, as far as the median
        # beats keep their least height.
        total = max(1, self.split.height())
        strip = self.overview.sizeHint().height() if self.overview.isVisibleTo(self.window) else 0
        want = total // 2 if self.paper.geom is None else self.paper.page_height_px() + 8 + strip
        top = max(PAPER_MIN_PX, min(want, total - MEDIAN_MIN_PX))
        self.split.setSizes([top, max(0, total - top)])

    # --- filters and theme --------------------------------------------------------------------
    def _stored_filters(self) -> DisplayFilters:
        """The display filters as the reader last left them (baseline centring on at first)."""
        default = DisplayFilters()
        on = {
            field: self.settings.value(f"view/filters/{field}", getattr(default, field), type=bool)
            for _name, field in FILTER_KEYS
        }
        return DisplayFilters(**{k: bool(v) for k, v in on.items()})

    def filters_changed(self, _on: bool = False) -> None:
        a = self.actions
        self.set_filters(
            DisplayFilters(**{field: a[name].isChecked() for name, field in FILTER_KEYS})
        )

    def set_filters(self, filters: DisplayFilters) -> None:
        """Display filters on the page; remembered for the next record and the next start."""
        for name, field in FILTER_KEYS:
            self.actions[name].setChecked(getattr(filters, field))
            self.settings.setValue(f"view/filters/{field}", getattr(filters, field))
        self.filters = filters
        self.paper.set_filters(filters)
        # The button says how many display filters are on: a filtered trace must not pass
        # for the raw signal.
        n = sum((filters.baseline, filters.mains, filters.lowpass))
        self.filters_button.setText(f"Filters ({n} on)" if n else "Filters")

    def set_dark(self, on: bool) -> None:
        self.set_theme("dark" if on else "light")

    def set_theme(self, name: str) -> None:
        self.theme = DARK if name == "dark" else LIGHT
        app = QtWidgets.QApplication.instance()
        if isinstance(app, QtWidgets.QApplication):
            apply_palette(app, self.theme)
        self.actions["theme"].setChecked(self.theme is DARK)
        self.paper.set_theme(self.theme)
        self.median.set_theme(self.theme)
        self.overview.set_theme(self.theme)
        self.settings.setValue("view/theme", self.theme.name)

    # --- zoom and pages -----------------------------------------------------------------------
    def zoom_by(self, factor: float) -> None:
        self.paper.zoom_by(factor)

    def true_size(self) -> None:
        self.paper.true_size()

    def fit_page(self) -> None:
        self.paper.fit_page()

    def step_page(self, d: int) -> None:
        if self.record is not None:
            step = round(self.paper.page_s * self.record.fs_hz)
            self.go_page(self.paper.page_start + d * step)

    def go_page(self, start: int) -> None:
        if self.record is None:
            return
        self.paper.set_page_start(start)
        self.overview.set_page(self.paper.page_start / self.record.fs_hz)
        self.update_status()

    def page_from_overview(self, start_s: float) -> None:
        if self.record is not None:
            self.paper.set_page_start(round(start_s * self.record.fs_hz))
            self.update_status()

    def calibrate(self) -> None:
        dlg = CalibrationDialog(self.window.screen(), self.settings, self.window)
        if dlg.exec() == QtWidgets.QDialog.DialogCode.Accepted:
            self.set_px_per_mm(dlg.value())
            self.paper.true_size()

    def update_status(self) -> None:
        z = self.paper.zoom
        size = "true size" if abs(z - 1.0) < 0.005 else f"zoom {z * 100:.0f} %"
        self.scale_label.setText(
            f"{self.scale.speed_mm_per_s:g} mm/s · {self.scale.gain_mm_per_mv:g} mm/mV · {size} · "
            f"screen {self.scale.px_per_mm:.2f} px/mm"
        )
        r = self.record
        if r is not None:
            self.window.statusBar().showMessage(
                f"{r.name} · {r.source_format or 'record'} · {r.n_leads} leads · "
                f"{r.fs_hz:g} Hz · {r.duration_s:.1f} s"
            )
