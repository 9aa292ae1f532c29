"""The workbench window: composes the paper, the median-beat view, the summary and the record
list, and routes the reader's actions to the ``ReadingSession``."""

from __future__ import annotations

import dataclasses
import logging
from pathlib import Path

from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.errors import ReviewError
from reviewapp.core.fiducials import FIDUCIALS, MarkOverride
from reviewapp.core.record import Record
from reviewapp.ui.calibration import CalibrationDialog
from reviewapp.ui.calipers import CaliperPair, CaliperState
from reviewapp.ui.display_filters import DisplayFilters
from reviewapp.ui.export_actions import ExportActions
from reviewapp.ui.help_panel import HelpPanel, show_about
from reviewapp.ui.layouts import LAYOUTS
from reviewapp.ui.mark_items import FiducialMark
from reviewapp.ui.median_view import MedianBeatView
from reviewapp.ui.overview import OverviewStrip
from reviewapp.ui.paper import GAINS_MM_PER_MV, SPEEDS_MM_PER_S, PaperScale, screen_px_per_mm
from reviewapp.ui.paper_view import PaperView
from reviewapp.ui.reader import (
    ADJUDICATOR,
    FIRST,
    SECOND_BLINDED,
    UNIDENTIFIED,
    ReadMode,
    ask_reader,
    stored_reader,
)
from reviewapp.ui.reading_panel import STATUS_WORDS, ReadingPanel, SignOffDialog, when_text
from reviewapp.ui.session import ReadingSession
from reviewapp.ui.summary import SummaryPanel
from reviewapp.ui.theme import DARK, LIGHT, THEMES, Theme, apply_palette
from reviewapp.ui.undo import CaliperCommand, MarchCommand

log = logging.getLogger(__name__)
PART_NAMES = {"a": "leg 1", "b": "leg 2", "bar": "the whole pair"}


def default_settings() -> QtCore.QSettings:
    return QtCore.QSettings("reviewapp", "reviewapp")


def list_records(folder: Path) -> list[Path]:
    """Record files directly in ``folder`` (the readers' own rule: one entry per WFDB record,
    no sidecars, no CSV/XML that is not an ECG)."""
    from reviewapp.core.io import find_records

    try:
        from reviewapp.ui.worklist import is_listable
    except ImportError:  # the worklist needs the batch package; the plain list does not
        return find_records(folder, recursive=False)
    return [p for p in find_records(folder, recursive=False) if is_listable(p)]


class MainWindow(QtWidgets.QMainWindow):
    record_loaded = QtCore.Signal(object)
    analysis_ready = QtCore.Signal(object)

    def __init__(
        self,
        settings: QtCore.QSettings | None = None,
        *,
        px_per_mm: float | None = None,
        speed_mm_per_s: float | None = None,
        gain_mm_per_mv: float | None = None,
        layout: str | None = None,
        theme: str | None = None,
    ) -> None:
        super().__init__()
        self.settings = settings or default_settings()
        self.setWindowTitle("reviewapp")
        self.setAcceptDrops(True)
        self.record: Record | None = None
        self.session: ReadingSession | None = None
        self.folder: Path | None = None
        self.marks_note = ""
        self.read_mode: ReadMode = FIRST
        self.compare_dialog = None
        self.sign_off_dialog: SignOffDialog | None = None
        # The median beats go below the paper by themselves while there is room for them,
        # until the reader toggles them (B).
        self.median_auto = True
        s = self.settings
        self.theme: Theme = THEMES.get(theme or str(s.value("view/theme", "light")), LIGHT)
        speed = float(speed_mm_per_s or s.value("view/speed", 25.0))
        gain = float(gain_mm_per_mv or s.value("view/gain", 10.0))
        ppm = px_per_mm or screen_px_per_mm(self._screen(), self.settings)
        self.scale = PaperScale(ppm, speed, gain)
        self.filters = DisplayFilters()

        self.paper = PaperView(self.scale, self.theme)
        self.overview = OverviewStrip(self.theme)
        self.overview.setVisible(False)
        self.median = MedianBeatView(self.scale, self.theme)
        paper_box = QtWidgets.QWidget()
        pl = QtWidgets.QVBoxLayout(paper_box)
        pl.setContentsMargins(0, 0, 0, 0)
        pl.setSpacing(0)
        pl.addWidget(self.paper, 1)
        pl.addWidget(self.overview)
        # Paper above, median beats below (shown with "B"): the reader sees the strip at true
        # size and the median beats with their marks at once.
        self.split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Vertical)
        self.split.setObjectName("split_paper_median")
        self.split.addWidget(paper_box)
        self.split.addWidget(self.median)
        self.split.setChildrenCollapsible(False)
        self.median.setVisible(False)
        self.setCentralWidget(self.split)

        self.reading_panel = ReadingPanel()
        self.reading_dock = self._dock(
            "Reading", self.reading_panel, QtCore.Qt.DockWidgetArea.RightDockWidgetArea
        )
        self.summary = SummaryPanel()
        self.summary_dock = self._dock(
            "Measurements", self.summary, QtCore.Qt.DockWidgetArea.RightDockWidgetArea
        )
        self.splitDockWidget(self.reading_dock, self.summary_dock, QtCore.Qt.Orientation.Vertical)
        self.reading_panel.sign_off_requested.connect(lambda: self.sign_off())
        self.reading_panel.add_note_requested.connect(lambda: self.add_note())
        self.reading_panel.edit_note_requested.connect(lambda nid: self.edit_note(nid))
        self.reading_panel.delete_note_requested.connect(self.delete_note)
        self.worklist = _make_worklist()
        if self.worklist is not None:
            self.worklist.recordActivated.connect(self._open_from_list)
            # A click (or arrow key) on a row opens that record: a row highlighted while the
            # page shows another record is a wrong-patient risk.
            self.worklist.table.selectionModel().currentRowChanged.connect(
                lambda cur, _prev: (
                    self._open_from_list(self.worklist.current_path()) if cur.isValid() else None
                )
            )
            self.worklist.scanFinished.connect(lambda _n: self._select_in_list(self._current_path))
            self.worklist.scanFinished.connect(self._records_listed)
            records_widget: QtWidgets.QWidget = self.worklist
        else:
            self.records_list = QtWidgets.QListWidget()
            self.records_list.currentItemChanged.connect(
                lambda it, _prev: (
                    self._open_from_list(Path(it.data(QtCore.Qt.ItemDataRole.UserRole)))
                    if it is not None
                    else None
                )
            )
            records_widget = self.records_list
        self._current_path: Path | None = None
        self._records_fit_pending = False
        self.records_dock = self._dock(
            "Records", records_widget, QtCore.Qt.DockWidgetArea.LeftDockWidgetArea
        )
        self.records_dock.setVisible(False)
        self.help_dock = self._dock(
            "Keyboard", HelpPanel(), QtCore.Qt.DockWidgetArea.RightDockWidgetArea
        )
        self.help_dock.setVisible(False)

        self._build_actions()
        self._build_toolbar()
        self._build_menus()
        self.statusBar().showMessage("Open a record: File ▸ Open, drag a file here, or Ctrl+O.")
        self.reader_label = QtWidgets.QLabel()
        self.reader_label.setObjectName("reader_label")
        self.statusBar().addPermanentWidget(self.reader_label)
        self.scale_label = QtWidgets.QLabel()
        self.statusBar().addPermanentWidget(self.scale_label)
        self._median_timer = QtCore.QTimer(self)
        self._median_timer.setSingleShot(True)
        self._median_timer.setInterval(120)
        self._median_timer.timeout.connect(self._auto_median)

        self._caliper_timer = QtCore.QTimer(self)
        self._caliper_timer.setSingleShot(True)
        self._caliper_timer.setInterval(80)
        self._caliper_timer.timeout.connect(self._update_caliper_list)
        self._listed_calipers: list[CaliperPair] = []  # the calipers the summary lists
        self.paper.mark_dragging.connect(self._beat_mark_dragging)
        self.paper.mark_dropped.connect(self._beat_mark_dropped)
        self.paper.mark_reset.connect(self._beat_mark_reset)
        self.paper.caliper_changed.connect(self._calipers_changed)
        self.paper.caliper_added.connect(self._caliper_added)
        self.paper.caliper_removed.connect(self._caliper_removed)
        self.paper.caliper_rename.connect(self._rename_caliper_dialog)
        self.paper.caliper_drag_finished.connect(self._caliper_drag_finished)
        # Calipers moved by arrow keys (or from code) but not yet an undo step: a burst of
        # nudges becomes one step (one sidecar save) once the reader pauses, or at once before
        # any other caliper edit, undo, redo, sign-off or close. A mouse drag is one step at
        # its release.
        self._pending_calipers: set[CaliperPair] = set()
        self._caliper_save_timer = QtCore.QTimer(self)
        self._caliper_save_timer.setSingleShot(True)
        self._caliper_save_timer.setInterval(600)
        self._caliper_save_timer.timeout.connect(self.save_calipers)
        self._placing_caliper = False  # an undo/redo is moving a caliper: not a new edit
        self._switching_store = False
        self.paper.zoom_changed.connect(lambda _z: self._update_status())
        self.median.mark_dragging.connect(self._rep_mark_dragging)
        self.median.mark_dropped.connect(self._rep_mark_dropped)
        self.median.mark_reset.connect(self._rep_mark_reset)
        self.median.lead_mark_dragging.connect(self._lead_mark_dragging)
        self.median.lead_mark_dropped.connect(self._lead_mark_dropped)
        self.median.lead_mark_reset.connect(self._lead_mark_reset)
        self.overview.page_requested.connect(self._page_from_overview)

        self.set_theme(self.theme.name)
        self._apply_scale()
        if layout:
            self.set_layout(layout)
        else:
            self.set_layout(str(s.value("view/layout", "3x4+1")))
        geo = s.value("window/geometry")
        if geo is not None:
            self.restoreGeometry(geo)
        else:
            self.resize(1500, 980)
        state = s.value("window/state")
        if state is not None:
            self.restoreState(state)
        else:
            self.resizeDocks([self.summary_dock], [480], QtCore.Qt.Orientation.Horizontal)
            self.resizeDocks([self.records_dock], [190], QtCore.Qt.Orientation.Horizontal)
        self.summary_dock.setMinimumWidth(470)
        self._update_status()
        self._update_reading_panel()

    # --- building ------------------------------------------------------------------------
    def _screen(self) -> QtGui.QScreen | None:
        return QtGui.QGuiApplication.primaryScreen()

    def _dock(self, title: str, widget: QtWidgets.QWidget, area) -> QtWidgets.QDockWidget:
        dock = QtWidgets.QDockWidget(title, self)
        dock.setObjectName(f"dock_{title.lower()}")
        dock.setWidget(widget)
        self.addDockWidget(area, dock)
        return dock

    def _act(
        self,
        text: str,
        slot,
        shortcut: str | QtGui.QKeySequence | None = None,
        checkable: bool = False,
        tip: str = "",
    ) -> QtGui.QAction:
        a = QtGui.QAction(text, self)
        if shortcut:
            a.setShortcut(QtGui.QKeySequence(shortcut))
            a.setShortcutContext(QtCore.Qt.ShortcutContext.WindowShortcut)
        a.setCheckable(checkable)
        if tip:
            a.setToolTip(tip)
            a.setStatusTip(tip)
        if checkable:
            a.triggered.connect(slot)
        else:
            # QAction.triggered carries the checked flag; a plain command takes no argument
            # (File > Open once received False as its reading mode).
            a.triggered.connect(lambda _checked=False, f=slot: f())
        self.addAction(a)
        return a

    def _build_actions(self) -> None:
        A = self._act
        K = QtGui.QKeySequence.StandardKey
        self.act_open = A("&Open record…", self.open_dialog, QtGui.QKeySequence(K.Open))
        self.act_open_folder = A("Open &folder…", self.open_folder_dialog, "Ctrl+Shift+O")
        self.act_quit = A("&Quit", self.close, QtGui.QKeySequence(K.Quit))
        self.act_layouts = {
            key: A(text, lambda _=False, k=key: self.set_layout(k), str(i + 1), True)
            for i, (key, text) in enumerate(LAYOUTS.items())
        }
        self.act_median = A(
            "&Median beat",
            self._median_toggled,
            "B",
            True,
            "Each lead's representative (median) beat with the global marks",
        )
        self.act_median_auto = A(
            "Median beat where there is room",
            lambda: self.set_median_automatic(),
            tip="Show the median beats below the page whenever the page leaves room for them",
        )
        self.act_superimpose = A(
            "Superimpose beats",
            lambda on: self.median.set_superimpose(on),
            "Shift+B",
            True,
            "Draw every dominant beat under the median beat",
        )
        self.act_cabrera = A("Cabrera lead order", self._toggle_cabrera, "Ctrl+L", True)
        self.act_slower = A("Slower paper", lambda: self._step_speed(-1), "[")
        self.act_faster = A("Faster paper", lambda: self._step_speed(+1), "]")
        self.act_gain_down = A("Lower gain", lambda: self._step_gain(-1), "-")
        self.act_gain_up = A("Higher gain", lambda: self._step_gain(+1), "=")
        self.act_zoom_in = A("Zoom in", lambda: self.paper.zoom_by(1.25), "Ctrl+=")
        self.act_zoom_out = A("Zoom out", lambda: self.paper.zoom_by(0.8), "Ctrl+-")
        self.act_true = A(
            "True size",
            self.paper.true_size,
            "Ctrl+0",
            tip="1 mm of paper = 1 mm on the screen (see Tools ▸ Calibrate)",
        )
        self.act_fit = A("Fit page", self.fit_page, "F")
        self.act_prev = A(
            "Previous page",
            lambda: self._step_page(-1),
            QtGui.QKeySequence(QtCore.Qt.Key.Key_PageUp),
        )
        self.act_next = A(
            "Next page", lambda: self._step_page(+1), QtGui.QKeySequence(QtCore.Qt.Key.Key_PageDown)
        )
        self.act_first = A(
            "First page", lambda: self._go_page(0), QtGui.QKeySequence(QtCore.Qt.Key.Key_Home)
        )
        self.act_last = A(
            "Last page", lambda: self._go_page(10**12), QtGui.QKeySequence(QtCore.Qt.Key.Key_End)
        )
        self.act_time_cal = A(
            "Time caliper",
            lambda: self.add_caliper("time"),
            "C",
            tip="New time caliper: ms and bpm",
        )
        self.act_amp_cal = A(
            "Amplitude caliper",
            lambda: self.add_caliper("amplitude"),
            "A",
            tip="New amplitude caliper: mV and mm",
        )
        self.act_march = A(
            "March-out",
            self._toggle_march,
            "M",
            tip="Repeat the selected time caliper along the strip",
        )
        self.act_delete = A(
            "Delete caliper", self._delete_selected, QtGui.QKeySequence(QtCore.Qt.Key.Key_Delete)
        )
        self.act_tab = A(
            "Next caliper part", self._cycle_part, QtGui.QKeySequence(QtCore.Qt.Key.Key_Tab)
        )
        self.act_left = A(
            "Nudge left", lambda: self._nudge(-1, 0), QtGui.QKeySequence(QtCore.Qt.Key.Key_Left)
        )
        self.act_right = A(
            "Nudge right", lambda: self._nudge(+1, 0), QtGui.QKeySequence(QtCore.Qt.Key.Key_Right)
        )
        self.act_up = A(
            "Nudge up", lambda: self._nudge(0, +1), QtGui.QKeySequence(QtCore.Qt.Key.Key_Up)
        )
        self.act_down = A(
            "Nudge down", lambda: self._nudge(0, -1), QtGui.QKeySequence(QtCore.Qt.Key.Key_Down)
        )
        self.act_reset_marks = A("Reset all marks to automatic", self._reset_all, "Ctrl+Shift+R")
        self.act_undo = A("Undo", self._undo, QtGui.QKeySequence(K.Undo))
        self.act_redo = A("Redo", self._redo, "Ctrl+Shift+Z")
        self.act_f_base = A(
            "Baseline filter",
            lambda: self._filters_changed(),
            "Alt+1",
            True,
            "Display only: high-pass 0.5 Hz",
        )
        self.act_f_mains = A(
            "Mains filter",
            lambda: self._filters_changed(),
            "Alt+2",
            True,
            "Display only: notch at the mains frequency",
        )
        self.act_f_low = A(
            "Low-pass filter",
            lambda: self._filters_changed(),
            "Alt+3",
            True,
            "Display only: low-pass 40 Hz",
        )
        self.act_theme = A(
            "Dark theme", lambda on: self.set_theme("dark" if on else "light"), "Ctrl+T", True
        )
        self.act_calibrate = A("Calibrate screen scale…", self.calibrate)
        self.act_help = A(
            "Keyboard shortcuts",
            lambda: self.help_dock.setVisible(not self.help_dock.isVisible()),
            "F1",
        )
        self.act_about = A("About reviewapp", lambda: show_about(self))
        self.act_reader = A(
            "Reader…", self.choose_reader, tip="Your reviewer id for marks and sign-off"
        )
        self.act_sign_off = A(
            "Sign off reading…",
            lambda: self.sign_off(),
            tip="Confirm the values and sign this reading off under your reader id",
        )
        self.act_add_note = A("Add note…", lambda: self.add_note())
        self.act_open_second = A(
            "Open as second reader (blinded)…",
            lambda: self.open_dialog(SECOND_BLINDED),
            tip="Open a record blinded: the first reader's marks, values and notes stay hidden",
        )
        self.act_compare = A(
            "Compare readings…",
            self.open_compare,
            tip="Both readers' values side by side; an adjudicator records final values",
        )
        self.role_group = QtGui.QActionGroup(self)
        self.act_roles: dict[ReadMode, QtGui.QAction] = {}
        for mode, text in (
            (FIRST, "First reader"),
            (SECOND_BLINDED, "Second reader (blinded)"),
            (ReadMode("second", True, False), "Second reader (blinded, automatic marks hidden)"),
            (ADJUDICATOR, "Adjudicator"),
        ):
            act = A(text, lambda _=False, m=mode: self.set_read_mode(m), checkable=True)
            self.role_group.addAction(act)
            self.act_roles[mode] = act
        self.act_roles[FIRST].setChecked(True)
        self.act_next_unread = A("Next unread record", lambda: self._next_unread(+1), "N")
        self.act_prev_unread = A("Previous unread record", lambda: self._next_unread(-1), "Shift+N")

    def _build_toolbar(self) -> None:
        tb = self.addToolBar("Paper")
        tb.setObjectName("toolbar_paper")
        tb.setMovable(False)
        tb.addAction(self.act_open)
        tb.addSeparator()
        self.speed_box = QtWidgets.QComboBox()
        for v in SPEEDS_MM_PER_S:
            self.speed_box.addItem(f"{v:g} mm/s", v)
        self.speed_box.setToolTip("Paper speed ([ and ])")
        self.gain_box = QtWidgets.QComboBox()
        for v in GAINS_MM_PER_MV:
            self.gain_box.addItem(f"{v:g} mm/mV", v)
        self.gain_box.setToolTip("Gain (- and =)")
        self.layout_box = QtWidgets.QComboBox()
        for key, text in LAYOUTS.items():
            self.layout_box.addItem(text, key)
        self.layout_box.setToolTip("Layout (keys 1 to 4)")
        self.rhythm_box = QtWidgets.QComboBox()
        self.rhythm_box.setToolTip("Lead of the (first) rhythm strip")
        # Frequent actions only, so they all fit at 1600 px: paper speed, gain, layout and
        # rhythm lead as one group; median beats; the two calipers; page size; sign-off.
        # Rarely used toggles (superimpose, Cabrera order, march-out, reset) stay in the menus;
        # the display filters share one drop-down button.
        view_box = QtWidgets.QWidget()
        vl = QtWidgets.QHBoxLayout(view_box)
        vl.setContentsMargins(0, 0, 0, 0)
        vl.setSpacing(2)
        for w in (self.speed_box, self.gain_box, self.layout_box):
            w.setSizeAdjustPolicy(QtWidgets.QComboBox.SizeAdjustPolicy.AdjustToContents)
            vl.addWidget(w)
        rhythm_label = QtWidgets.QLabel(" Rhythm")
        rhythm_label.setBuddy(self.rhythm_box)
        vl.addWidget(rhythm_label)
        vl.addWidget(self.rhythm_box)
        view_box.setObjectName("toolbar_view_group")
        tb.addWidget(view_box)
        tb.addSeparator()
        tb.addAction(self.act_median)
        tb.addSeparator()
        for a in (self.act_time_cal, self.act_amp_cal):
            tb.addAction(a)
        tb.addSeparator()
        tb.addAction(self.act_true)
        tb.addAction(self.act_fit)
        tb.addSeparator()
        self.filters_button = QtWidgets.QToolButton()
        self.filters_button.setObjectName("toolbar_filters")
        self.filters_button.setText("Filters")
        self.filters_button.setToolTip("Display filters (the signal and the values are unchanged)")
        self.filters_button.setPopupMode(QtWidgets.QToolButton.ToolButtonPopupMode.InstantPopup)
        fm = QtWidgets.QMenu(self.filters_button)
        for a in (self.act_f_base, self.act_f_mains, self.act_f_low):
            fm.addAction(a)
        self.filters_button.setMenu(fm)
        tb.addWidget(self.filters_button)
        tb.addSeparator()
        tb.addAction(self.act_sign_off)
        self.toolbar = tb
        self.speed_box.activated.connect(lambda i: self.set_speed(self.speed_box.itemData(i)))
        self.gain_box.activated.connect(lambda i: self.set_gain(self.gain_box.itemData(i)))
        self.layout_box.activated.connect(lambda i: self.set_layout(self.layout_box.itemData(i)))
        self.rhythm_box.activated.connect(lambda _i: self._rhythm_changed())
        for box in (self.speed_box, self.gain_box, self.layout_box, self.rhythm_box):
            box.setFocusPolicy(QtCore.Qt.FocusPolicy.NoFocus)

    def _build_menus(self) -> None:
        mb = self.menuBar()
        m = mb.addMenu("&File")
        for a in (self.act_open, self.act_open_folder, self.act_open_second):
            m.addAction(a)
        roles = m.addMenu("Reading role")
        for a in self.act_roles.values():
            roles.addAction(a)
        m.addAction(self.act_reader)
        m.addSeparator()
        for a in (self.act_next_unread, self.act_prev_unread):
            m.addAction(a)
        m.addSeparator()
        self.exports = ExportActions(
            self, m, lambda: self.session, lambda text: self.show_error(ReviewError(text))
        )
        m.addSeparator()
        m.addAction(self.act_quit)
        m = mb.addMenu("&Edit")
        for a in (self.act_undo, self.act_redo, self.act_reset_marks):
            m.addAction(a)
        m.addSeparator()
        m.addAction(self.act_add_note)
        m.addAction(self.act_sign_off)
        m.addSeparator()
        for a in (self.act_time_cal, self.act_amp_cal, self.act_march, self.act_delete):
            m.addAction(a)
        m = mb.addMenu("&View")
        for a in self.act_layouts.values():
            m.addAction(a)
        m.addSeparator()
        for a in (self.act_median, self.act_median_auto, self.act_superimpose, self.act_cabrera):
            m.addAction(a)
        m.addSeparator()
        for a in (
            self.act_slower,
            self.act_faster,
            self.act_gain_down,
            self.act_gain_up,
            self.act_zoom_in,
            self.act_zoom_out,
            self.act_true,
            self.act_fit,
        ):
            m.addAction(a)
        m.addSeparator()
        for a in (self.act_prev, self.act_next, self.act_first, self.act_last):
            m.addAction(a)
        m.addSeparator()
        m.addAction(self.act_theme)
        for dock in (self.reading_dock, self.summary_dock, self.records_dock, self.help_dock):
            m.addAction(dock.toggleViewAction())
        m = mb.addMenu("Fi&lters")
        for a in (self.act_f_base, self.act_f_mains, self.act_f_low):
            m.addAction(a)
        m = mb.addMenu("&Tools")
        m.addAction(self.act_compare)
        m.addAction(self.act_calibrate)
        m = mb.addMenu("&Help")
        m.addAction(self.act_help)
        m.addAction(self.act_about)

    # --- opening -------------------------------------------------------------------------
    def open_dialog(self, mode: ReadMode | None = None) -> None:
        start = str(self.folder or self.settings.value("files/last_dir", str(Path.home())))
        path, _ = QtWidgets.QFileDialog.getOpenFileName(
            self,
            "Open ECG record",
            start,
            "ECG records (*.hea *.edf *.bdf *.csv *.tsv *.txt *.xml *.dcm);;All files (*)",
        )
        if path:
            if mode is not None:
                self.set_read_mode(mode, reopen=False)
            self.open_path(Path(path))

    def open_folder_dialog(self) -> None:
        path = QtWidgets.QFileDialog.getExistingDirectory(
            self, "Open folder of records", str(self.folder or Path.home())
        )
        if path:
            self.open_path(Path(path))

    def open_path(self, path: Path, *, analyse_now: bool = False) -> bool:
        """Open a record file, or a folder (lists it and opens its first record)."""
        path = Path(path)
        try:
            if path.is_dir():
                records = list_records(path)
                self.show_folder(path, records)
                if not records:
                    raise ReviewError("no ECG records in this folder", path)
                path = records[0]
            from reviewapp.core.io import open_record

            record = open_record(path)
        except ReviewError as err:
            self.show_error(err)
            # The list highlights the record on the page, never the one that failed.
            self._select_in_list(self._current_path)
            return False
        self.settings.setValue("files/last_dir", str(path.parent))
        if self.folder != path.parent:
            self.show_folder(path.parent, list_records(path.parent))
        self._select_in_list(path)
        self.load_record(record, analyse_now=analyse_now)
        return True

    def _open_from_list(self, path: Path | None) -> None:
        if path is not None and path != self._current_path:
            self.open_path(path)

    def show_folder(self, folder: Path, records: list[Path]) -> None:
        """List the folder: the worklist (status, cached values, flags) when available."""
        self.folder = folder
        self.records_dock.setWindowTitle(f"Records — {folder.name}")
        was_visible = self.records_dock.isVisible()
        self.records_dock.setVisible(len(records) > 1)
        if self.records_dock.isVisible() and not was_visible:
            # Once the dock has its first layout (and again once the rows are in, which widen
            # the table), narrow it so the page keeps its true size.
            self._records_fit_pending = True
            QtCore.QTimer.singleShot(0, self._fit_records_dock)
        if self.worklist is not None:
            self.worklist.open_folder(folder)
            return
        self.records_list.clear()
        for p in records:
            it = QtWidgets.QListWidgetItem(p.stem if p.suffix.lower() == ".hea" else p.name)
            it.setData(QtCore.Qt.ItemDataRole.UserRole, str(p))
            it.setToolTip(str(p))
            self.records_list.addItem(it)

    def _records_listed(self, _n: int) -> None:
        if self._records_fit_pending:
            self._records_fit_pending = False
            QtCore.QTimer.singleShot(0, self._fit_records_dock)

    def _fit_records_dock(self) -> None:
        """Narrow the records dock (down to 180 px) until the page fits at true size beside
        it; the reader can widen it again (the list then scrolls the page sideways)."""
        g = self.paper.geom
        if g is None or not self.records_dock.isVisible():
            return
        page_px = g.width_mm * self.scale.px_per_mm
        short = page_px - self.paper.vb.width()  # < 0: room to spare beside the page
        width = self.records_dock.width()
        want = max(180, int(width - short - 2))
        if self.worklist is not None and short < 0:
            want = min(want, max(width, self.worklist.preferred_width()))
        if want != width:
            self.resizeDocks([self.records_dock], [want], QtCore.Qt.Orientation.Horizontal)

    def _select_in_list(self, path: Path | None) -> None:
        self._current_path = path
        if path is None:
            return
        if self.worklist is not None:
            self.worklist.select_path(path)
            return
        for i in range(self.records_list.count()):
            it = self.records_list.item(i)
            if Path(it.data(QtCore.Qt.ItemDataRole.UserRole)) == path:
                self.records_list.setCurrentItem(it)

    def _next_unread(self, step: int) -> None:
        if self.worklist is not None:
            if step > 0:
                self.worklist.select_next_unread()
            else:
                self.worklist.select_previous_unread()

    def load_record(self, record: Record, *, analyse_now: bool = False) -> None:
        """Draw the record at once; run the automatic analysis right after the first paint."""
        self._close_session()
        self.record = record
        self.paper.set_record(record)
        self.median.set_session(None)
        self.summary.show_reading(None, record.subject, set())
        self._fill_rhythm_box()
        long = record.duration_s > self.paper.page_s + 1e-9
        self.overview.setVisible(long)
        if long:
            self.overview.set_record(record, self.paper.page_s)
        self.setWindowTitle(window_title(record, ""))
        self._update_status()
        self.record_loaded.emit(record)
        if analyse_now:
            self.analyse()
        else:
            self.paper.call_after_paint(self.analyse)
            # Fallback when nothing paints (window hidden): analyse is a no-op if already done.
            QtCore.QTimer.singleShot(400, self.analyse)

    def analyse(self) -> None:
        rec = self.record
        if rec is None or (self.session is not None and self.session.analysis.record is rec):
            return
        try:
            from reviewapp.core.engine import analyse

            analysis = analyse(rec)
        except ReviewError as err:
            self.summary.status.setText(f"No automatic analysis: {err.problem}")
            self.show_error(err)
            return
        if self.record is not rec:
            return
        store = self._open_store(rec)
        self.session = ReadingSession(analysis, self, store=store)
        self.session.edit_guard = self._ensure_reader
        self.session.stored.connect(self._update_reading_panel)
        self.session.reopened.connect(self._on_reopened)
        self.session.store_error.connect(self.show_error)
        self.session.changed.connect(self._reading_changed)
        self.session.overrides_changed.connect(self._overrides_changed)
        self.paper.set_session(self.session)
        self.median.set_session(self.session)
        self.restore_calipers()
        # Calipers drawn while the analysis ran become undo steps (saved if the reader is set).
        self._switching_store = True
        try:
            for c in list(self.paper.calipers):
                if c.committed is None and c.store_id is None and not c.drawing:
                    self._caliper_added(c)
        finally:
            self._switching_store = False
        self._reading_changed(self.session.reading)
        self._update_reading_panel()
        self._auto_median()
        parts = ["Analysis: " + "; ".join(analysis.notes)] if analysis.notes else []
        self.statusBar().showMessage("; ".join([*parts, self.marks_note]), 8000)
        self.analysis_ready.emit(self.session)

    def reviewer_id(self) -> str | None:
        """The reader's id for the marks sidecar (Settings ``reader/id``); None until the
        reader has given it (the login name is only a suggestion in the Reader dialog)."""
        return stored_reader(self.settings)

    def _open_store(self, rec: Record):
        """The record's marks sidecar for this reader in the current role; None keeps marks
        in memory (and says so). Before the reader has given their id the sidecar is opened
        read-only; the first edit asks who is reading."""
        self.marks_note = "marks kept in this window only (the record has no file)"
        if rec.source_path is None:
            return None
        from reviewapp.core.marks import MarksStore
        from reviewapp.core.marks.errors import LockedError

        mode = self.read_mode
        kw = {"role": mode.role, "blinded": mode.blinded, "show_automatic": mode.show_automatic}
        reviewer = self.reviewer_id()
        try:
            if reviewer is None:
                store = MarksStore.open(rec, UNIDENTIFIED, read_only=True, lock=False, **kw)
                self.marks_note = "reader not set: you are asked for your id at the first edit"
                return store
            store = MarksStore.open(rec, reviewer, **kw)
        except LockedError as err:
            self.show_error(err)
            try:
                store = MarksStore.open(rec, reviewer, read_only=True, **kw)
            except ReviewError as err2:
                self.show_error(err2)
                return None
            self.marks_note = f"marks read-only: {err.problem}"
            return store
        except ReviewError as err:
            self.show_error(err)
            self.marks_note = "marks kept in this window only: the marks file could not be used"
            return None
        self.marks_note = f"marks saved to {store.path.name} as reader {reviewer}"
        return store

    def _switch_store(self, *, keep_unsaved_calipers: bool) -> bool:
        """Reopen the current record's marks (new reader id or role) without analysing again:
        the session continues with the new store and the calipers are the new reading's."""
        s, rec = self.session, self.record
        if s is None or rec is None:
            return False
        self._switching_store = True
        try:
            self.save_calipers()
            pending = [c for c in self.paper.calipers if c.store_id is None]
            # Take the old reading's calipers off the paper without deleting them from its file.
            self.paper.blockSignals(True)
            try:
                for c in list(self.paper.calipers):
                    if c.store_id is not None or not keep_unsaved_calipers:
                        self.paper.remove_caliper(c)
            finally:
                self.paper.blockSignals(False)
            self._pending_calipers.clear()
            s.close_store()
            s.set_store(self._open_store(rec))  # clears the undo history of the old reading
            self.restore_calipers()
            if keep_unsaved_calipers:
                for c in pending:
                    c.committed = None  # an add step (and a save) in the new reading
                    self._caliper_added(c)
        finally:
            self._switching_store = False
        self._calipers_changed(None)
        self._reading_changed(s.reading)
        self._update_reading_panel()
        self.statusBar().showMessage(self.marks_note, 8000)
        return True

    def _ensure_reader(self) -> bool:
        """Called before every edit: asks who is reading when the reader id is not set yet.
        False (the edit is dropped) when the reader cancels or the marks cannot be opened."""
        s = self.session
        if s is None or s.store is None or s.store.reviewer != UNIDENTIFIED:
            return True
        rid = ask_reader(
            self, self.settings, "Who is reading? Your corrections are saved under this id."
        )
        if rid is None:
            self.statusBar().showMessage("Not changed: no reader id given.", 6000)
            return False
        self._switch_store(keep_unsaved_calipers=True)
        st = self.session.store if self.session is not None else None
        return st is not None and not st.read_only and st.reviewer == rid

    def choose_reader(self) -> None:
        """File ▸ Reader…: set or change the reader id; the open record continues under it."""
        old = self.reviewer_id()
        rid = ask_reader(self, self.settings)
        if rid is not None and rid != old and self.session is not None:
            self._switch_store(keep_unsaved_calipers=False)
        if rid is not None and self.worklist is not None and self.read_mode.blinded:
            self.worklist.set_blinded(True, rid)  # the list shows this reader's own status
        self._update_reading_panel()

    def set_read_mode(self, mode: ReadMode, *, reopen: bool = True) -> None:
        """Read as first reader, blinded second reader or adjudicator; the open record's marks
        are reopened in that role."""
        old, self.read_mode = self.read_mode, mode
        act = self.act_roles.get(mode)
        if act is not None:
            act.setChecked(True)
        if reopen and self.session is not None:
            self._switch_store(keep_unsaved_calipers=False)
            rec = self.record
            if (
                self.session.store is None
                and rec is not None
                and rec.source_path is not None
                and old != mode
            ):
                # Refused (e.g. this id already reads the record in another role): go back,
                # so edits are never kept in the window only by surprise.
                self.set_read_mode(old)
                self.statusBar().showMessage(f"Still reading as {old.text}.", 8000)
                return
        if self.compare_dialog is not None and mode.blinded:
            self.compare_dialog.close()
        if self.worklist is not None:
            self.worklist.set_blinded(self.read_mode.blinded, self.reviewer_id())
        self._update_reading_panel()

    # --- reading status, sign-off, notes -------------------------------------------------
    def _writable_store(self):
        s = self.session
        if s is None or s.store is None:
            return None
        if not s.may_edit():
            return None
        st = s.store
        if st.read_only:
            self.show_error(ReviewError("this reading is open read-only here", st.path))
            return None
        return st

    def sign_off(self) -> bool:
        """Show the key values and sign off on confirmation (undoable, audited)."""
        s = self.session
        if s is None or self.record is None:
            return False
        if s.store is None:
            self.show_error(
                ReviewError("a reading can be signed off only for a record file (marks file)")
            )
            return False
        st = self._writable_store()
        if st is None:
            return False
        # Calipers moved just now are saved first, so their save does not reopen the reading.
        self.save_calipers()
        if st.reading.status == "signed_off":
            self.statusBar().showMessage("This reading is already signed off.", 5000)
            return False
        n_corr = len(st.reading.overrides)
        dlg = SignOffDialog(
            self.record.name,
            st.reviewer,
            self.read_mode.text,
            s.reading,
            n_corr,
            len(st.reading.notes),
            self,
        )
        self.sign_off_dialog = dlg
        try:
            if dlg.exec() != QtWidgets.QDialog.DialogCode.Accepted:
                return False
        finally:
            self.sign_off_dialog = None
        try:
            cmd = st.edits.sign_off()
        except ReviewError as err:
            self.show_error(err)
            return False
        ok = s.push_store_command(cmd, "Sign off reading")
        if ok:
            self.reading_panel.show_notice("")
            self.statusBar().showMessage(
                f"Signed off by {st.reviewer} at {when_text(st.reading.signed_off_at)}.", 8000
            )
        return ok

    def add_note(self, text: str | None = None) -> bool:
        """Add a note to this reading (asks for the text when not given); undoable."""
        st = self._writable_store()
        if st is None:
            return False
        if text is None:
            text, ok = QtWidgets.QInputDialog.getMultiLineText(self, "Add note", "Note:")
            if not ok:
                return False
        text = text.strip()
        if not text:
            return False
        return self.session.push_store_command(st.edits.add_note(text), "Add note")

    def edit_note(self, note_id: str, text: str | None = None) -> bool:
        st = self._writable_store()
        if st is None:
            return False
        note = st.reading.note(note_id)
        if note is None:
            return False
        if text is None:
            text, ok = QtWidgets.QInputDialog.getMultiLineText(
                self, "Edit note", "Note:", note.text
            )
            if not ok:
                return False
        text = text.strip()
        if not text or text == note.text:
            return False
        return self.session.push_store_command(st.edits.edit_note(note_id, text), "Edit note")

    def delete_note(self, note_id: str) -> bool:
        st = self._writable_store()
        if st is None or st.reading.note(note_id) is None:
            return False
        return self.session.push_store_command(st.edits.delete_note(note_id), "Delete note")

    def _on_reopened(self, by: str, at: str) -> None:
        text = (
            f"⚠ Reopened: this reading was signed off by {by} at {when_text(at)}; your change "
            "reopened it (recorded in the marks file). Sign off again when done."
        )
        self.reading_panel.show_notice(text)
        self.statusBar().showMessage(text, 10000)

    def _update_reading_panel(self) -> None:
        s = self.session
        st = None if s is None else s.store
        rid = self.reviewer_id()
        who = (
            f"Reader {rid} · {self.read_mode.text}"
            if rid
            else f"Reader not set (asked at your first edit) · {self.read_mode.text}"
        )
        self.reader_label.setText(who)
        if st is not None and st.read_only and st.reviewer != UNIDENTIFIED:
            who += " · read-only"
        if s is None:
            self.reading_panel.show_reading(None, who, writable=False)
            self.reading_panel.banner.setText("No record open" if self.record is None else "…")
        else:
            reading = None if st is None else st.reading
            self.reading_panel.show_reading(
                reading, who, writable=st is not None and (not st.read_only or rid is None)
            )
            if reading is not None and reading.status == "signed_off":
                self.reading_panel.show_notice("")
        self.act_sign_off.setEnabled(
            st is not None and st.reading.status != "signed_off" and (not st.read_only or not rid)
        )
        self.act_add_note.setEnabled(st is not None)
        if self.record is not None:
            status = "" if st is None else STATUS_WORDS.get(st.reading.status, "").lower()
            self.setWindowTitle(window_title(self.record, status))
        self.act_compare.setEnabled(st is not None and not st.blinded)

    def open_compare(self) -> None:
        """Tools ▸ Compare readings…: refused to a blinded reader."""
        from reviewapp.ui.compare_view import CompareDialog

        s = self.session
        if s is None or s.store is None:
            self.show_error(ReviewError("open a record file to compare its readings"))
            return
        if s.store.blinded:
            self.show_error(ReviewError("a blinded reader cannot see other readings", s.store.path))
            return
        if self.compare_dialog is not None:
            self.compare_dialog.close()
            self.compare_dialog.deleteLater()
        dlg = CompareDialog(self)
        s.stored.connect(dlg.fill_readers)
        self.compare_dialog = dlg
        dlg.show()

    def _close_session(self) -> None:
        if self.compare_dialog is not None:
            self.compare_dialog.close()
            self.compare_dialog = None
        if self.session is not None:
            self.save_calipers()
            self.session.close_store()
        self.session = None
        self.reading_panel.show_notice("")
        self._update_reading_panel()

    # --- view settings -------------------------------------------------------------------
    def set_speed(self, speed: float) -> None:
        self.scale = self.scale.with_speed(speed)
        self._apply_scale()

    def set_gain(self, gain: float) -> None:
        self.scale = self.scale.with_gain(gain)
        self._apply_scale()

    def set_px_per_mm(self, ppm: float) -> None:
        self.scale = self.scale.with_px_per_mm(ppm)
        self._apply_scale()

    def _apply_scale(self) -> None:
        self.paper.set_scale(self.scale)
        self.median.set_scale(self.scale)
        self.speed_box.setCurrentIndex(max(0, self.speed_box.findData(self.scale.speed_mm_per_s)))
        self.gain_box.setCurrentIndex(max(0, self.gain_box.findData(self.scale.gain_mm_per_mv)))
        self.settings.setValue("view/speed", self.scale.speed_mm_per_s)
        self.settings.setValue("view/gain", self.scale.gain_mm_per_mv)
        self._calipers_changed(None)
        self._update_status()
        if self.median_auto and self.median.isVisible():
            self._place_median(False)
        self._auto_median()

    def _step_speed(self, d: int) -> None:
        i = _nearest(SPEEDS_MM_PER_S, self.scale.speed_mm_per_s) + d
        self.set_speed(SPEEDS_MM_PER_S[min(max(i, 0), len(SPEEDS_MM_PER_S) - 1)])

    def _step_gain(self, d: int) -> None:
        i = _nearest(GAINS_MM_PER_MV, self.scale.gain_mm_per_mv) + d
        self.set_gain(GAINS_MM_PER_MV[min(max(i, 0), len(GAINS_MM_PER_MV) - 1)])

    def set_layout(self, key: str) -> None:
        if key not in LAYOUTS:
            key = "12x1"
        self.paper.set_layout(key)
        for k, a in self.act_layouts.items():
            a.setChecked(k == key)
        self.layout_box.setCurrentIndex(max(0, self.layout_box.findData(key)))
        self.rhythm_box.setEnabled(key.startswith("3x4"))
        self.settings.setValue("view/layout", key)
        self._calipers_changed(None)
        if self.median_auto and self.median.isVisible():
            self._place_median(False)  # re-placed for the new page height
        self._auto_median()

    def _fill_rhythm_box(self) -> None:
        self.rhythm_box.clear()
        if self.record is None:
            return
        for n in self.record.lead_names:
            self.rhythm_box.addItem(n, n)
        want = self.paper.rhythm_leads[0] if self.paper.rhythm_leads else "II"
        self.rhythm_box.setCurrentIndex(max(0, self.rhythm_box.findData(want)))

    def _rhythm_changed(self) -> None:
        lead = self.rhythm_box.currentData()
        if lead:
            rest = tuple(x for x in ("II", "V1", "V5") if x != lead)
            self.paper.set_layout(self.paper.layout_key, rhythm=(lead, *rest))

    def _toggle_cabrera(self, on: bool) -> None:
        order = "cabrera" if on else "standard"
        self.paper.set_layout(self.paper.layout_key, order=order)
        self.median.set_lead_order(order)

    def _median_toggled(self, on: bool) -> None:
        self.show_median(on)

    def median_room_px(self) -> int:
        """Height left below the page at the current zoom (px) in the paper/median split."""
        g = self.paper.geom
        total = self.split.height()
        if g is None:
            return 0
        page = self.paper.page_height_px() + 8
        return total - page

    def _auto_median(self) -> None:
        """Show the median beats below the page while there is room for them (at least
        240 px) and the reader has not toggled them: a tall screen is not left blank."""
        if not self.median_auto or self.session is None:
            return
        self._place_median(self.median_room_px() >= 240)

    def resizeEvent(self, ev: QtGui.QResizeEvent) -> None:
        super().resizeEvent(ev)
        if self.median_auto:
            self._median_timer.start()

    def show_median(self, on: bool) -> None:
        """Median beats on or off, as the reader chose (no longer placed automatically)."""
        self.median_auto = False
        self._place_median(on)

    def set_median_automatic(self) -> None:
        """Back to automatic placement: the median beats fill the room below the page while
        there is room (the same rule in every theme)."""
        self.median_auto = True
        self._auto_median()

    def _place_median(self, on: bool) -> None:
        self.act_median.setChecked(on)
        if on == self.median.isVisible():
            return
        self.median.setVisible(on)
        if on:
            # Give the paper the height of its page at the current zoom (if it fits in 60 %).
            total = max(1, self.split.height())
            g = self.paper.geom
            want = total // 2
            if g is not None:
                want = self.paper.page_height_px() + 8
            top = max(160, min(want, int(total * 0.6)))
            self.split.setSizes([top, total - top])

    def _filters_changed(self) -> None:
        self.filters = DisplayFilters(
            baseline=self.act_f_base.isChecked(),
            mains=self.act_f_mains.isChecked(),
            lowpass=self.act_f_low.isChecked(),
        )
        self.paper.set_filters(self.filters)
        self._show_filter_count()

    def _show_filter_count(self) -> None:
        # The button says how many display filters are on: a filtered trace must not pass
        # for the raw signal.
        n = sum(a.isChecked() for a in (self.act_f_base, self.act_f_mains, self.act_f_low))
        self.filters_button.setText(f"Filters ({n} on)" if n else "Filters")

    def set_filters(self, filters: DisplayFilters) -> None:
        self.act_f_base.setChecked(filters.baseline)
        self.act_f_mains.setChecked(filters.mains)
        self.act_f_low.setChecked(filters.lowpass)
        self.filters = filters
        self.paper.set_filters(filters)
        self._show_filter_count()

    def set_theme(self, name: str) -> None:
        self.theme = DARK if name == "dark" else LIGHT
        app = QtWidgets.QApplication.instance()
        if isinstance(app, QtWidgets.QApplication):
            apply_palette(app, self.theme)
        self.act_theme.setChecked(self.theme is DARK)
        self.paper.set_theme(self.theme)
        self.median.set_theme(self.theme)
        self.overview.set_theme(self.theme)
        self.settings.setValue("view/theme", self.theme.name)

    def fit_page(self) -> None:
        self.paper.fit_page()

    def _step_page(self, d: int) -> None:
        if self.record is None:
            return
        step = round(self.paper.page_s * self.record.fs_hz)
        self._go_page(self.paper.page_start + d * step)

    def _go_page(self, start: int) -> None:
        if self.record is None:
            return
        self.paper.set_page_start(start)
        self.overview.set_page(self.paper.page_start / self.record.fs_hz)
        self._update_status()

    def _page_from_overview(self, start_s: float) -> None:
        if self.record is not None:
            self.paper.set_page_start(round(start_s * self.record.fs_hz))
            self._update_status()

    def calibrate(self) -> None:
        dlg = CalibrationDialog(self.screen(), self.settings, self)
        if dlg.exec() == QtWidgets.QDialog.DialogCode.Accepted:
            self.set_px_per_mm(dlg.value())
            self.paper.true_size()

    def _update_status(self) -> None:
        z = self.paper.zoom
        size = "true size" if abs(z - 1.0) < 0.005 else f"zoom {z * 100:.0f} %"
        self.scale_label.setText(
            f"{self.scale.speed_mm_per_s:g} mm/s · {self.scale.gain_mm_per_mv:g} mm/mV · {size} · "
            f"screen {self.scale.px_per_mm:.2f} px/mm"
        )
        if self.record is not None:
            r = self.record
            self.statusBar().showMessage(
                f"{r.name} · {r.source_format or 'record'} · {r.n_leads} leads · {r.fs_hz:g} Hz · "
                f"{r.duration_s:.1f} s"
            )

    # --- calipers ------------------------------------------------------------------------
    def add_caliper(
        self, kind: str, row: int | None = None, center_sample: int | None = None
    ) -> CaliperPair | None:
        return self.paper.add_caliper(kind, row, center_sample)  # type: ignore[arg-type]

    def _selected_caliper(self) -> CaliperPair | None:
        sel = self.paper.selected
        return sel if isinstance(sel, CaliperPair) else None

    def _toggle_march(self) -> None:
        c = self._selected_caliper()
        if c is None or c.kind != "time":
            return
        if self.session is None:
            c.march = not c.march
            c.update()
            return
        self.save_calipers()
        self.session.undo_stack.push(MarchCommand(c, not c.march))

    def _delete_selected(self) -> None:
        c = self._selected_caliper()
        if c is not None:
            self.paper.remove_caliper(c)

    def _cycle_part(self) -> None:
        c = self._selected_caliper()
        if c is not None:
            order = ["a", "b", "bar"]
            c.part = order[(order.index(c.part) + 1) % 3]  # type: ignore[assignment]
            self.statusBar().showMessage(
                f"{c.name}: arrow keys move {PART_NAMES[c.part]}",
                3000,
            )

    def _nudge(self, dx: int, dy: int) -> None:
        sel = self.paper.selected
        if isinstance(sel, CaliperPair):
            sel.nudge(dx, dy)
        elif isinstance(sel, FiducialMark) and dx:
            sel.nudge(dx)

    # --- calipers in the marks sidecar --------------------------------------------------
    def _store(self):
        s = self.session
        return None if s is None or s.store is None or s.store.read_only else s.store

    @staticmethod
    def _caliper_fields(c: CaliperPair, fs: float) -> dict:
        if c.kind == "time":
            return {"t1_s": c.a / fs, "t2_s": c.b / fs, "v1_mv": 0.0, "v2_mv": 0.0}
        return {"t1_s": c.at / fs, "t2_s": c.at / fs, "v1_mv": c.a_mv, "v2_mv": c.b_mv}

    def _place_caliper(self, c: CaliperPair, st: CaliperState | None) -> None:
        """Undo / redo: put a caliper where a step left it (``None``: off the paper)."""
        self._placing_caliper = True
        try:
            if st is None:
                self.paper.remove_caliper(c)
            elif self.paper.attach_caliper(c):
                c.apply_state(st)
        finally:
            self._placing_caliper = False
        self._pending_calipers.discard(c)
        c.committed = st
        self._update_caliper_list()

    def _push_caliper(self, c: CaliperPair, cmd: CaliperCommand) -> None:
        assert self.session is not None
        for other in list(self._pending_calipers - {c}):
            self._commit_caliper(other)  # earlier nudges of other calipers come first
        self.session.undo_stack.push(cmd)

    def _caliper_added(self, c: CaliperPair) -> None:
        """A new caliper (C / A keys, or a Shift + drag once released): one undo step, saved
        to the sidecar when the reader is known (asked for here, as for a mark edit)."""
        s = self.session
        if c.drawing or c.committed is not None or s is None or self.record is None:
            return
        if (
            not self._switching_store
            and s.store is not None
            and s.store.reviewer == UNIDENTIFIED
            and not s.may_edit()
        ):
            self.statusBar().showMessage(
                "Caliper kept in this window only: no reader id given.", 6000
            )
        s = self.session
        if s is None or c.committed is not None or c not in self.paper.calipers:
            return  # the reader switch just added it (with its save)
        store = self._store()
        cmd = None
        if store is not None and c.store_id is None:
            f = self._caliper_fields(c, self.record.fs_hz)
            try:
                cmd = store.edits.add_caliper(
                    c.kind,
                    f["t1_s"],
                    f["t2_s"],
                    v1_mv=f["v1_mv"],
                    v2_mv=f["v2_mv"],
                    lead=c.lead,
                    label=c.name,
                )
            except ReviewError as err:
                self.show_error(err)
        self._push_caliper(
            c,
            CaliperCommand(
                s, self._place_caliper, c, None, c.state(), f"Add caliper {c.name}", cmd
            ),
        )

    def _caliper_drag_finished(self, c: CaliperPair) -> None:
        if c.drawing:
            c.drawing = False
            self._caliper_added(c)
        else:
            self._commit_caliper(c)

    def _commit_caliper(self, c: CaliperPair, *, removed: bool = False) -> None:
        """The caliper's change since its last undo step (drag, nudges, label) as one step;
        ``removed``: it has just been deleted from the paper (its delete step follows)."""
        self._pending_calipers.discard(c)
        s, old = self.session, c.committed
        if s is None or old is None or self.record is None:
            return
        if not removed and c not in self.paper.calipers:
            return
        new = c.state()
        if new == old:
            return
        store = self._store()
        cmd = None
        if store is not None and c.store_id is not None:
            f = self._caliper_fields(c, self.record.fs_hz)
            f["label"] = c.name
            try:
                cmd = store.edits.move_caliper(c.store_id, **f)
            except ReviewError as err:
                self.show_error(err)
                self._place_caliper(c, old)
                return
        renamed = new.name != old.name
        text = (
            f"Rename caliper {old.name} to {new.name}"
            if renamed and dataclasses.replace(new, name=old.name) == old
            else f"Move caliper {c.name}"
        )
        self._push_caliper(c, CaliperCommand(s, self._place_caliper, c, old, new, text, cmd))

    def _caliper_removed(self, c: CaliperPair) -> None:
        if self._placing_caliper:
            return
        s = self.session
        if c.committed is None or s is None:
            self._pending_calipers.discard(c)
            return  # never an undo step (e.g. drawn while the analysis ran): nothing to undo
        if c in self._pending_calipers:
            # Its last nudges are a step of their own, so undoing the delete brings it back
            # exactly where it was.
            self._commit_caliper(c, removed=True)
        store = self._store()
        cmd = None
        if store is not None and c.store_id is not None:
            try:
                cmd = store.edits.delete_caliper(c.store_id)
            except ReviewError as err:
                self.show_error(err)
        self._push_caliper(
            c,
            CaliperCommand(
                s, self._place_caliper, c, c.committed, None, f"Delete caliper {c.name}", cmd
            ),
        )

    def save_calipers(self) -> None:
        """Make the calipers' pending changes (arrow-key nudges, changes from code) undo
        steps now, each saved once to the sidecar; called after a pause and before any other
        caliper edit, undo, redo, sign-off, reader switch or close."""
        self._caliper_save_timer.stop()
        for c in list(self._pending_calipers):
            self._commit_caliper(c)

    def restore_calipers(self) -> None:
        s = self.session
        if s is None or s.store is None or self.record is None:
            return
        fs = self.record.fs_hz
        for saved in s.store.reading.calipers:
            common = {"lead": saved.lead, "name": saved.label, "store_id": saved.id}
            if saved.kind == "time":
                extra = {"a": round(saved.t1_s * fs), "b": round(saved.t2_s * fs)}
            else:
                extra = {"at": round(saved.t1_s * fs), "a_mv": saved.v1_mv, "b_mv": saved.v2_mv}
            c = self.paper.add_caliper(saved.kind, restore={**common, **extra})
            if c is not None:
                c.committed = c.state()

    def rename_caliper(self, c: CaliperPair, label: str) -> None:
        """A new label: one undo step (saved with the caliper)."""
        c.name = label.strip()[:40]
        c.update()
        self._commit_caliper(c)
        self._update_caliper_list()

    def _rename_caliper_dialog(self, c: CaliperPair) -> None:
        text, ok = QtWidgets.QInputDialog.getText(
            self, "Caliper label", "Label (e.g. QT, RR):", text=c.name
        )
        if ok:
            self.rename_caliper(c, text)

    def _calipers_changed(self, _c: object) -> None:
        if (
            isinstance(_c, CaliperPair)
            and not self._placing_caliper
            and _c.committed is not None
            and not _c.dragging
            and _c in self.paper.calipers
        ):
            self._pending_calipers.add(_c)
            self._caliper_save_timer.start()
        # A caliper added, deleted, restored or cleared with the record is listed at once, so
        # the list never names calipers that are not on the paper. While a leg is dragged the
        # paper label follows every step and the list at most every 80 ms, so dragging never
        # waits for a dock relayout.
        if self.paper.calipers != self._listed_calipers:
            self._update_caliper_list()
        elif not self._caliper_timer.isActive():
            self._caliper_timer.start()

    def _update_caliper_list(self) -> None:
        self._caliper_timer.stop()
        self._listed_calipers = list(self.paper.calipers)
        self.summary.show_calipers(self.caliper_lines())

    def caliper_lines(self) -> list[str]:
        """One line per caliper on the paper, in the order they were drawn."""
        return [c.label_text() + f"  ({c.lead})" for c in self.paper.calipers]

    # --- marks ---------------------------------------------------------------------------
    def _beat_mark_dragging(self, mark: FiducialMark, sample: int) -> None:
        if self.session is not None and mark.beat_index is not None:
            self.session.preview(self.session.beat_override(mark.beat_index, mark.fiducial, sample))

    def _beat_mark_dropped(self, mark: FiducialMark, sample: int) -> None:
        if self.session is not None and mark.beat_index is not None:
            self.session.commit(self.session.beat_override(mark.beat_index, mark.fiducial, sample))

    def _beat_mark_reset(self, mark: FiducialMark) -> None:
        if self.session is not None and mark.beat_index is not None:
            r = self.session.analysis.beats[mark.beat_index].r
            self.session.reset_mark(("beat", mark.fiducial, r, None))

    def _rep_mark_dragging(self, fid: str, sample: int) -> None:
        if self.session is not None:
            self.session.preview(self.session.representative_override(fid, sample))

    def _rep_mark_dropped(self, fid: str, sample: int) -> None:
        if self.session is not None:
            self.session.commit(self.session.representative_override(fid, sample))

    def _rep_mark_reset(self, fid: str) -> None:
        if self.session is not None:
            self.session.reset_mark(("representative", fid, None, None))

    def _lead_mark_dragging(self, fid: str, lead: str, sample: int) -> None:
        if self.session is not None:
            self.session.preview(MarkOverride("representative", fid, sample, lead=lead))

    def _lead_mark_dropped(self, fid: str, lead: str, sample: int) -> None:
        if self.session is not None:
            self.session.commit(MarkOverride("representative", fid, sample, lead=lead))

    def _lead_mark_reset(self, fid: str, lead: str) -> None:
        if self.session is not None:
            self.session.reset_mark(("representative", fid, None, lead))

    def _reset_all(self) -> None:
        if self.session is not None:
            self.session.reset_all()

    def _undo(self) -> None:
        if self.session is not None:
            self.save_calipers()  # a nudge burst in progress is the step undone
            self.session.undo_stack.undo()

    def _redo(self) -> None:
        if self.session is not None:
            self.save_calipers()
            self.session.undo_stack.redo()

    def _reading_changed(self, reading) -> None:
        if self.record is None or self.session is None:
            return
        corrected = {f for f in FIDUCIALS if self.session.is_corrected("representative", f)}
        st = self.session.store
        self.summary.show_reading(
            reading,
            self.record.subject,
            corrected,
            hide_automatic=st is not None and st.blinded and not st.show_automatic,
        )

    def _overrides_changed(self) -> None:
        if (
            self.worklist is not None
            and self.session is not None
            and self.session.store is not None
        ):
            src = self.record.source_path if self.record is not None else None
            if src is not None:
                QtCore.QTimer.singleShot(0, lambda p=src: self.worklist.refresh_record(p))
        # Marks are re-placed only when an edit is committed, undone or reset: while dragging,
        # the dragged item moves itself.
        QtCore.QTimer.singleShot(0, self._refresh_marks)

    def _refresh_marks(self) -> None:
        self.paper.rebuild_marks()
        self.median.refresh_marks()

    # --- errors, drag and drop, state ----------------------------------------------------
    def show_error(self, err: BaseException) -> None:
        text = str(err) if isinstance(err, ReviewError) else f"{type(err).__name__}: {err}"
        log.info("error shown to the reader: %s", text)
        box = QtWidgets.QMessageBox(
            QtWidgets.QMessageBox.Icon.Warning,
            "reviewapp",
            text,
            QtWidgets.QMessageBox.StandardButton.Ok,
            self,
        )
        box.setModal(True)
        if QtWidgets.QApplication.platformName() == "offscreen":
            box.show()  # tests look at it; never block a headless run
            self.last_error_box = box
        else:
            box.exec()

    def dragEnterEvent(self, ev: QtGui.QDragEnterEvent) -> None:
        if ev.mimeData().hasUrls():
            ev.acceptProposedAction()

    def dropEvent(self, ev: QtGui.QDropEvent) -> None:
        urls = [u.toLocalFile() for u in ev.mimeData().urls() if u.isLocalFile()]
        if urls:
            ev.acceptProposedAction()
            self.open_path(Path(urls[0]))

    def closeEvent(self, ev: QtGui.QCloseEvent) -> None:
        self._close_session()
        self.settings.setValue("window/geometry", self.saveGeometry())
        self.settings.setValue("window/state", self.saveState())
        self.settings.sync()
        super().closeEvent(ev)


def window_title(record: Record, status: str) -> str:
    """The record, its subject and the reading status: the reader always sees whose ECG is
    on the page."""
    sid = record.subject.subject_id
    subject = f"subject {sid}" if sid else "subject not stated"
    return " — ".join(x for x in (record.name, subject, status, "reviewapp") if x)


def _make_worklist():
    """The worklist widget (reviewapp/ui/worklist.py) if it imports, else None (simple list)."""
    try:
        from reviewapp.ui.worklist import WorklistWidget
    except ImportError:
        return None
    return WorklistWidget()


def _nearest(values: tuple[float, ...], v: float) -> int:
    return min(range(len(values)), key=lambda i: abs(values[i] - v))
