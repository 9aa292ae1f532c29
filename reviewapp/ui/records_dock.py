"""The records dock: the folder's records (the worklist with status and cached values when it
is available, else a plain list). A click or an arrow key on a row asks to open that record;
the row highlighted is always the record on the page (``show_page``)."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtWidgets

if TYPE_CHECKING:
    from reviewapp.core.io.folder_listing import FolderListing
    from reviewapp.ui.worklist import WorklistWidget


def list_records(folder: Path) -> list[Path]:
    """Record files directly in ``folder`` (the readers' own rule: one entry per WFDB record,
    no sidecars, no CSV/XML that is not an ECG)."""
    from reviewapp.core.io import find_records

    try:
        from reviewapp.ui.worklist import is_listable
    except ImportError:  # the worklist needs the batch package; the plain list does not
        return find_records(folder, recursive=False)
    return [p for p in find_records(folder, recursive=False) if is_listable(p)]


def folder_listing(folder: Path, include_subfolders: bool | None = None) -> FolderListing:
    """What the records dock lists for ``folder`` (core.io.folder_listing, with the list's own
    check of each path where the worklist is available)."""
    from reviewapp.core.io.folder_listing import list_folder

    try:
        from reviewapp.ui.worklist import is_listable
    except ImportError:
        return list_folder(folder, include_subfolders)
    return list_folder(folder, include_subfolders, keep=is_listable)


def _make_worklist() -> WorklistWidget | None:
    try:
        from reviewapp.ui.worklist import WorklistWidget
    except ImportError:
        return None
    return WorklistWidget()


class RecordsDock(QtWidgets.QDockWidget):
    """Emits ``open_requested(Path)`` when the reader picks a record other than the page's."""

    open_requested = QtCore.Signal(object)

    def __init__(self, parent: QtWidgets.QWidget, short_px: Callable[[], float | None]) -> None:
        super().__init__("Records", parent)
        self.setObjectName("dock_records")
        # How many px the page at true size lacks beside the dock (< 0: room to spare).
        self._short_px = short_px
        self.folder: Path | None = None
        self.page_path: Path | None = None  # the record on the page
        self._fit_pending = False
        self.worklist = _make_worklist()
        self.records_list: QtWidgets.QListWidget | None = None
        if self.worklist is not None:
            wl = self.worklist
            wl.recordActivated.connect(self._picked)
            wl.table.selectionModel().currentRowChanged.connect(
                lambda cur, _prev: self._picked(wl.current_path()) if cur.isValid() else None
            )
            wl.scanFinished.connect(self._listed)
            self.setWidget(wl)
        else:
            lst = QtWidgets.QListWidget()
            lst.currentItemChanged.connect(
                lambda it, _prev: (
                    None
                    if it is None
                    else self._picked(Path(it.data(QtCore.Qt.ItemDataRole.UserRole)))
                )
            )
            self.records_list = lst
            self.setWidget(lst)

    def _picked(self, path: Path | None) -> None:
        if path is not None and path != self.page_path:
            self.open_requested.emit(path)

    def show_folder(
        self, folder: Path, records: list[Path], include_subfolders: bool | None = None
    ) -> None:
        """List the folder: the worklist (status, cached values, flags) when available, with
        or without its subfolders (None: core.io.folder_listing's rule)."""
        self.folder = folder
        self.setWindowTitle(f"Records — {folder.name}")
        was_visible = self.isVisible()
        self.setVisible(len(records) > 1)
        if self.isVisible() and not was_visible:
            # Once the dock has its first layout (and again once the rows are in, which widen
            # the table), narrow it so the page keeps its true size.
            self._fit_pending = True
            QtCore.QTimer.singleShot(0, self.fit_width)
        if self.worklist is not None:
            self.worklist.open_folder(folder, include_subfolders)
            return
        assert self.records_list is not None
        self.records_list.blockSignals(True)
        self.records_list.clear()
        for p in records:
            it = QtWidgets.QListWidgetItem(p.stem if p.suffix.lower() == ".hea" else p.name)
            it.setData(QtCore.Qt.ItemDataRole.UserRole, str(p))
            it.setToolTip(str(p))
            self.records_list.addItem(it)
        self.records_list.blockSignals(False)
        self.show_page(self.page_path)

    def _listed(self, _n: int) -> None:
        self.show_page(self.page_path)
        if self._fit_pending:
            self._fit_pending = False
            QtCore.QTimer.singleShot(0, self.fit_width)

    def show_page(self, path: Path | None) -> None:
        """Highlight the record on the page (and remember it as the page's)."""
        self.page_path = path
        if path is None:
            return
        if self.worklist is not None:
            self.worklist.select_path(path)
            return
        assert self.records_list is not None
        for i in range(self.records_list.count()):
            it = self.records_list.item(i)
            if Path(it.data(QtCore.Qt.ItemDataRole.UserRole)) == path:
                self.records_list.setCurrentItem(it)

    def covers(self, path: Path) -> bool:
        """Whether the record at ``path`` is in the folder listed, so opening it keeps the
        list (a record of a listed subfolder does not re-list its own folder)."""
        if self.folder is None:
            return False
        if self.worklist is not None:
            return self.worklist.covers(path)
        return Path(path).parent == self.folder

    def highlighted(self) -> Path | None:
        if self.worklist is not None:
            return self.worklist.current_path()
        assert self.records_list is not None
        it = self.records_list.currentItem()
        return None if it is None else Path(it.data(QtCore.Qt.ItemDataRole.UserRole))

    def fit_width(self) -> None:
        """Narrow the dock (down to 180 px) until the page fits at true size beside it; the
        reader can widen it again (the page then scrolls sideways)."""
        short = self._short_px()
        if short is None or not self.isVisible():
            return
        width = self.width()
        want = max(180, int(width - short - 2))
        if self.worklist is not None and short < 0:
            want = min(want, max(width, self.worklist.preferred_width()))
        window = self.parent()
        if want != width and isinstance(window, QtWidgets.QMainWindow):
            window.resizeDocks([self], [want], QtCore.Qt.Orientation.Horizontal)

    def next_unread(self, step: int) -> None:
        if self.worklist is not None:
            if step > 0:
                self.worklist.select_next_unread()
            else:
                self.worklist.select_previous_unread()

    def set_blinded(self, on: bool, reader: str | None) -> None:
        if self.worklist is not None:
            self.worklist.set_blinded(on, reader)

    def refresh_record(self, path: Path) -> None:
        if self.worklist is not None:
            wl = self.worklist
            QtCore.QTimer.singleShot(0, lambda: wl.refresh_record(path))
