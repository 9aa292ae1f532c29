"""The workbench window: composition only. It puts together the page and its controls
(page_controls), the records dock (records_dock), the reading and measurement docks, the
actions declared as data (actions), the calipers bound to the reading (caliper_binding) and
the Qt adapter over the reading workflow (workflow_adapter), and opens records."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.errors import ReviewError
from reviewapp.core.fiducials import FIDUCIALS
from reviewapp.core.record import Record
from reviewapp.core.workflow import READ_MODES, MarkTarget, ReadingWorkflow
from reviewapp.ui.actions import build_actions, build_menus, build_toolbar
from reviewapp.ui.caliper_binding import CaliperBinding
from reviewapp.ui.errors import show_error
from reviewapp.ui.export_actions import ExportActions
from reviewapp.ui.help_panel import HelpPanel, show_about
from reviewapp.ui.interpretation_panel import InterpretationPanel, InterpretationView
from reviewapp.ui.layouts import LAYOUTS
from reviewapp.ui.page_controls import PageControls
from reviewapp.ui.paper import PaperScale, screen_px_per_mm
from reviewapp.ui.reading_panel import ReadingPanel
from reviewapp.ui.records_dock import RecordsDock, folder_listing, list_records
from reviewapp.ui.selection import SelectionKeys
from reviewapp.ui.summary import SummaryPanel
from reviewapp.ui.theme import LIGHT, THEMES
from reviewapp.ui.workflow_adapter import WorkflowAdapter

if TYPE_CHECKING:
    from reviewapp.core.engine import Reading

Area = QtCore.Qt.DockWidgetArea
DOCK_PAUSE_MS = 120  # a median-beat drag's pause after which the Measurements dock follows
# The docks and their places, as saved by QMainWindow.saveState; raise it when a dock is added,
# removed or moves, so an older saved layout gives way to the default one.
DOCK_LAYOUT_VERSION = 2


def default_settings() -> QtCore.QSettings:
    return QtCore.QSettings("reviewapp", "reviewapp")


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
        self.settings = s = settings or default_settings()
        self.setWindowTitle("reviewapp")
        self.setAcceptDrops(True)
        self.record: Record | None = None
        self.last_error_box: QtWidgets.QMessageBox | None = None
        self.acts = build_actions(self)
        for name, act in self.acts.items():
            if name.isidentifier():
                setattr(self, f"act_{name}", act)
        self.act_roles = {m: self.acts[f"role_{i}"] for i, m in enumerate(READ_MODES)}
        self.act_layouts = {k: self.acts[f"layout_{k}"] for k in LAYOUTS}
        scale = PaperScale(
            px_per_mm or screen_px_per_mm(QtGui.QGuiApplication.primaryScreen(), s),
            float(speed_mm_per_s or s.value("view/speed", 25.0)),  # type: ignore[arg-type]
            float(gain_mm_per_mv or s.value("view/gain", 10.0)),  # type: ignore[arg-type]
        )
        look = THEMES.get(theme or str(s.value("view/theme", "light")), LIGHT)
        self.view = PageControls(self, s, scale, look, self.acts, lambda: self.workflow is not None)
        self.paper, self.median, self.overview = (
            self.view.paper,
            self.view.median,
            self.view.overview,
        )
        self.setCentralWidget(self.view.split)

        self.reading_panel = ReadingPanel()
        self.reading_dock = self._dock("Reading", self.reading_panel, Area.RightDockWidgetArea)
        self.summary = SummaryPanel()
        self.summary_dock = self._dock("Measurements", self.summary, Area.RightDockWidgetArea)
        self.splitDockWidget(self.reading_dock, self.summary_dock, QtCore.Qt.Orientation.Vertical)
        self.interpretation_panel = InterpretationPanel()
        self.interpretation_dock = self._dock(
            "Interpretation", self.interpretation_panel, Area.RightDockWidgetArea
        )
        # A tab beside the reading's, the tabs on the side: a third dock stacked under it, or
        # a tab bar above it, would not fit a small window (the minimum heights add up).
        self.tabifyDockWidget(self.reading_dock, self.interpretation_dock)
        self.setTabPosition(Area.RightDockWidgetArea, QtWidgets.QTabWidget.TabPosition.West)
        self.reading_dock.raise_()
        self.records = RecordsDock(self, self._page_short_px)
        self.addDockWidget(Area.LeftDockWidgetArea, self.records)
        self.records.setVisible(False)
        self.records_dock, self.worklist = self.records, self.records.worklist
        self.help_dock = self._dock("Keyboard", HelpPanel(), Area.RightDockWidgetArea)
        self.help_dock.setVisible(False)

        self._dock_timer = QtCore.QTimer(self)
        self._dock_timer.setSingleShot(True)
        self._dock_timer.setInterval(DOCK_PAUSE_MS)
        self._dock_timer.timeout.connect(self._fill_dock)
        self.calipers = CaliperBinding(self.paper, self)
        self.selection = SelectionKeys(self.paper, self.median, self.calipers, self)
        self.adapter = WorkflowAdapter(
            self, s, self.acts, self.reading_panel, self.records, self._flush_nudges
        )
        self.reader_label = self.adapter.reader_label
        self.interpretation = InterpretationView(
            self,
            self.interpretation_panel,
            lambda: self.adapter.workflow,
            self.adapter.tell,
            self.adapter.started,
            self.adapter.values_changed,
        )
        self.exports = ExportActions(self, lambda: self.workflow, self.show_error)
        widgets = {"view": self.view.view_group(), "filters": self.view.filters_button}
        self.toolbar = build_toolbar(self, self.acts, widgets)
        docks = {
            d.objectName()[5:]: d
            for d in (self.reading_dock, self.summary_dock, self.interpretation_dock)
        }
        docks |= {"records": self.records, "keyboard": self.help_dock}
        build_menus(self.menuBar(), self.acts, docks)
        self.statusBar().showMessage("Open a record: File ▸ Open, drag a file here, or Ctrl+O.")
        self.statusBar().addPermanentWidget(self.adapter.reader_label)
        self.statusBar().addPermanentWidget(self.view.scale_label)
        self._wire()

        self.view.set_theme(look.name)
        self.view.apply_scale()
        self.view.set_layout(layout or str(s.value("view/layout", "3x4+1")))
        self._restore_geometry()
        self.adapter.refresh()

    def _dock(self, title: str, widget: QtWidgets.QWidget, area: Area) -> QtWidgets.QDockWidget:
        dock = QtWidgets.QDockWidget(title, self)
        dock.setObjectName(f"dock_{title.lower()}")
        dock.setWidget(widget)
        self.addDockWidget(area, dock)
        return dock

    def _wire(self) -> None:
        a, c = self.adapter, self.calipers
        self.paper.mark_edit.connect(a.mark_edit)
        self.median.mark_edit.connect(a.mark_edit)
        self.selection.edit.connect(a.mark_edit)
        self.selection.report.connect(a.tell)
        a.started.connect(self._reading_started)
        a.values_changed.connect(self._show_values)
        a.marks_changed.connect(self._refresh_marks)
        a.calipers_changed.connect(c.sync)
        a.message.connect(lambda text, ms: self.statusBar().showMessage(text, ms))
        c.lines_changed.connect(self.summary.show_calipers)
        c.report.connect(a.tell)
        self.view.scale_changed.connect(c.update_list)
        self.records.open_requested.connect(self.open_path)

    def _restore_geometry(self) -> None:
        geo, state = self.settings.value("window/geometry"), self.settings.value("window/state")
        if geo is not None:
            self.restoreGeometry(geo)
        else:
            self.resize(1500, 980)
        # A layout saved before the docks changed is not restored (Qt would put a new dock
        # wherever it likes, e.g. the Interpretation dock under Measurements).
        if state is None or not self.restoreState(state, DOCK_LAYOUT_VERSION):
            self.resizeDocks([self.summary_dock], [480], QtCore.Qt.Orientation.Horizontal)
            self.resizeDocks([self.records], [190], QtCore.Qt.Orientation.Horizontal)
        self.summary_dock.setMinimumWidth(470)

    def _flush_nudges(self) -> None:
        """Nudges waiting for the reader's pause become their steps (before any other step)."""
        self.calipers.flush()
        self.selection.flush()

    @property
    def workflow(self) -> ReadingWorkflow | None:
        return self.adapter.workflow

    def show_error(self, err: BaseException | str) -> None:
        show_error(self, err)

    # --- opening --------------------------------------------------------------------------
    def open_dialog(self) -> None:
        start = str(self.records.folder or self.settings.value("files/last_dir", str(Path.home())))
        path, _ = QtWidgets.QFileDialog.getOpenFileName(
            self,
            "Open ECG record",
            start,
            "ECG records (*.hea *.edf *.bdf *.csv *.tsv *.txt *.xml *.dcm);;All files (*)",
        )
        if path:
            self.open_path(Path(path))

    def open_second_dialog(self) -> None:
        """File ▸ Open as second reader (blinded)…: the role is taken only if a file is chosen."""
        from reviewapp.core.workflow import SECOND_BLINDED

        previous = self.adapter.mode
        self.adapter.set_read_mode(SECOND_BLINDED, reopen=False)
        before = self.record
        self.open_dialog()
        if self.record is before:
            self.adapter.set_read_mode(previous, reopen=False)

    def open_folder_dialog(self) -> None:
        path = QtWidgets.QFileDialog.getExistingDirectory(
            self, "Open folder of records", str(self.records.folder or Path.home())
        )
        if path:
            self.open_path(Path(path))

    def open_path(self, path: Path, *, analyse_now: bool = False) -> bool:
        """Open a record file, or a folder (lists it and opens its first record). On failure
        the page, the highlighted row and the title stay on the record shown."""
        path = Path(path)
        try:
            if path.is_dir():
                listing = folder_listing(path)
                found = list(listing.records)
                self.records.show_folder(path, found, listing.include_subfolders)
                if not found:
                    raise ReviewError("no ECG records in this folder or its subfolders", path)
                path = found[0]
            from reviewapp.core.io import open_record

            record = open_record(path)
        except ReviewError as err:
            show_error(self, err)
            self.records.show_page(self.records.page_path)
            return False
        if self.adapter.ask_lock(record) == "cancel":
            # Open in another window and the reader cancelled: the page stays as it was.
            self.records.show_page(self.records.page_path)
            self.statusBar().showMessage(f"Not opened: {record.name} (open in another window).")
            return False
        self.settings.setValue("files/last_dir", str(path.parent))
        if not self.records.covers(path):
            self.records.show_folder(path.parent, list_records(path.parent))
        self.records.show_page(path)
        self.load_record(record, analyse_now=analyse_now)
        return True

    def load_record(self, record: Record, *, analyse_now: bool = False) -> None:
        """Draw the record at once; run the automatic analysis right after the first paint."""
        self.adapter.show_record(record)
        self.record = record
        self.view.show_record(record)
        self.summary.show_reading(None, record.subject, set())
        self.record_loaded.emit(record)
        if analyse_now:
            self.analyse()
        else:
            self.paper.call_after_paint(self.analyse)
            # Fallback when nothing paints (window hidden): analyse is a no-op if already done.
            QtCore.QTimer.singleShot(400, self.analyse)

    def analyse(self) -> None:
        rec, w = self.record, self.workflow
        if rec is None or (w is not None and w.analysis.record is rec):
            return
        from reviewapp.core.engine import analyse

        try:
            analysis = analyse(rec)
        except ReviewError as err:
            self.summary.status.setText(f"No automatic analysis: {err.problem}")
            show_error(self, err)
            return
        if self.record is rec:
            self.adapter.start(analysis)

    # --- the reading on screen --------------------------------------------------------------
    def _reading_started(self, w: ReadingWorkflow | None) -> None:
        self.paper.set_workflow(w)
        self.median.set_workflow(w)
        self.calipers.attach(w)
        if w is not None:
            self._show_values(w.reading)
            self.view.auto_median()
            self.analysis_ready.emit(w)

    def _show_values(self, reading: Reading) -> None:
        w = self.workflow
        if w is None or self.record is None:
            return
        live = reading is not w.committed_reading  # a drag or a nudge not yet recorded
        if live and self.median.show_values(reading):
            # The magnified beat shows the values beside the mark being moved; the dock
            # follows when the movement pauses (its relayout would slow every step).
            self._dock_timer.start()
            return
        self._dock_timer.stop()
        self._fill_dock()
        self.median.show_values(reading)

    def _fill_dock(self) -> None:
        w = self.workflow
        if w is None or self.record is None:
            return
        reading = w.reading
        # A drag's values (not yet a correction) keep the table's columns still.
        self.summary.hold_column_widths(reading is not w.committed_reading)
        fixed = {f for f in FIDUCIALS if w.is_corrected(MarkTarget("representative", f))}
        self.summary.show_reading(
            reading, self.record.subject, fixed, hide_automatic=w.hide_automatic
        )

    def _refresh_marks(self) -> None:
        self.paper.rebuild_marks()
        self.median.refresh_marks()

    def _page_short_px(self) -> float | None:
        g = self.paper.geom
        return None if g is None else g.width_mm * self.view.scale.px_per_mm - self.paper.vb.width()

    # --- help, drops, resizing, closing ----------------------------------------------------------
    def toggle_help(self) -> None:
        self.help_dock.setVisible(not self.help_dock.isVisible())

    def about(self) -> None:
        show_about(self)

    def dragEnterEvent(self, ev: QtGui.QDragEnterEvent) -> None:
        if ev.mimeData().hasUrls():
            ev.acceptProposedAction()

    def dropEvent(self, ev: QtGui.QDropEvent) -> None:
        urls = [u.toLocalFile() for u in ev.mimeData().urls() if u.isLocalFile()]
        if urls:
            ev.acceptProposedAction()
            self.open_path(Path(urls[0]))

    def resizeEvent(self, ev: QtGui.QResizeEvent) -> None:
        super().resizeEvent(ev)
        self.view.window_resized()

    def closeEvent(self, ev: QtGui.QCloseEvent) -> None:
        self.adapter.close()
        self.settings.setValue("window/geometry", self.saveGeometry())
        self.settings.setValue("window/state", self.saveState(DOCK_LAYOUT_VERSION))
        self.settings.sync()
        super().closeEvent(ev)
