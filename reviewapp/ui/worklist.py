"""The worklist: a folder's records with reading status and cached values, sortable and filterable.

The folder is scanned on a QThreadPool worker (listing 10,000 records reads 10,000 sidecars),
rows arrive in chunks while a progress bar runs, and the window stays responsive. Values shown
are the sidecar's listing cache (derived from marks by the batch step, never truth); stale
values (another engine version) are shown in grey italics. Opening a record never moves the
list: ``refresh_record`` updates one row in place after the window saves.

Keyboard: Enter opens the selected record; N / Shift+N go to the next / previous unread record
and open it.
"""

from __future__ import annotations

import math
import threading
import time
from pathlib import Path

from PySide6.QtCore import (
    QAbstractTableModel,
    QEvent,
    QModelIndex,
    QObject,
    QPersistentModelIndex,
    QRunnable,
    QSortFilterProxyModel,
    Qt,
    QThreadPool,
    Signal,
)
from PySide6.QtGui import QColor, QFont, QFontMetrics, QGuiApplication, QKeyEvent, QPalette
from PySide6.QtWidgets import (
    QAbstractItemView,
    QCheckBox,
    QDoubleSpinBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QProgressBar,
    QSizePolicy,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from reviewapp.batch.listing import ListingRow, listing_row
from reviewapp.core.io.folder_listing import FolderListing, has_own_records, list_folder

COLUMNS: tuple[tuple[str, str], ...] = (
    ("name", "Record"),
    ("subject", "Subject"),
    ("timepoint", "Timepoint"),
    ("status", "Status"),
    ("reviewer", "Reviewer"),
    ("hr_bpm", "HR (bpm)"),
    ("pr_ms", "PR (ms)"),
    ("qrs_ms", "QRS (ms)"),
    ("qt_ms", "QT (ms)"),
    ("qtc", "QTc (ms)"),
    ("flags", "Flags"),
    ("folder", "Folder"),
)
NUMERIC = {"hr_bpm", "pr_ms", "qrs_ms", "qt_ms", "qtc"}
# Shown when the list opens: a dock narrow enough to leave the paper at true size beside the
# reading panels. The other columns come back from the header's right-click menu.
COMPACT_COLUMNS = ("name", "subject", "timepoint", "status", "qtc", "flags")
STATUS_TEXT = {"unread": "unread", "in_progress": "in progress", "signed_off": "signed off"}
SUBJECT_KEYS = ("subject", "timepoint")
# Blanked for a blinded second reader: values, flags and the other reader's id.
BLINDED_KEYS = NUMERIC | {"flags", "reviewer"}
SortKeyRole = Qt.ItemDataRole.UserRole + 1
PathRole = Qt.ItemDataRole.UserRole + 2
RowRole = Qt.ItemDataRole.UserRole + 3


class WorklistModel(QAbstractTableModel):
    """The rows of one listed folder."""

    def __init__(self, parent: QObject | None = None, qtc_formula: str = "fridericia") -> None:
        super().__init__(parent)
        self._rows: list[ListingRow] = []
        self._index: dict[Path, int] = {}
        self._subjects: dict[Path, dict[str, str]] = {}
        self.qtc_formula = qtc_formula
        # A blinded second reader must not see another reader's values, flags or id here,
        # and sees their own reading status (``own_reviewer``), not the record's overall one.
        self.blinded = False
        self.own_reviewer: str | None = None

    # --- Qt model API
    def rowCount(self, parent: QModelIndex | QPersistentModelIndex = QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(self._rows)

    def columnCount(self, parent: QModelIndex | QPersistentModelIndex = QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(COLUMNS)

    def headerData(
        self, section: int, orientation: Qt.Orientation, role: int = Qt.ItemDataRole.DisplayRole
    ):  # type: ignore[override]
        if orientation == Qt.Orientation.Horizontal and role == Qt.ItemDataRole.DisplayRole:
            key, title = COLUMNS[section]
            if key == "qtc":
                return "QTcB (ms)" if self.qtc_formula == "bazett" else "QTcF (ms)"
            return title
        return None

    def data(
        self, index: QModelIndex | QPersistentModelIndex, role: int = Qt.ItemDataRole.DisplayRole
    ):  # type: ignore[override]
        if not index.isValid():
            return None
        row = self._rows[index.row()]
        key = COLUMNS[index.column()][0]
        if role == Qt.ItemDataRole.DisplayRole:
            return self._display(row, key)
        if role == SortKeyRole:
            return self._sort_key(row, key)
        if role == PathRole:
            return str(row.path)
        if role == RowRole:
            return row
        if role == Qt.ItemDataRole.TextAlignmentRole and key in NUMERIC:
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        if role == Qt.ItemDataRole.ToolTipRole:
            return str(row.path) if self.blinded else self._tooltip(row)
        if role == Qt.ItemDataRole.ForegroundRole:
            if row.problem or (key == "flags" and row.flagged and not self.blinded):
                return _alert_colour()
            if key in NUMERIC and row.stale:
                return QColor(130, 130, 130)
        if role == Qt.ItemDataRole.FontRole:
            if key in NUMERIC and row.stale:
                f = QFont()
                f.setItalic(True)
                return f
            if key == "status" and self.status_of(row) == "unread":
                f = QFont()
                f.setBold(True)
                return f
        return None

    def status_of(self, row: ListingRow) -> str:
        """The status this list shows for ``row``: the blinded reader's own, else overall."""
        return row.status_for(self.own_reviewer) if self.blinded else row.status

    def _value(self, row: ListingRow, key: str) -> float | None:
        if key == "qtc":
            return row.qtc_ms(self.qtc_formula)
        return getattr(row, key)

    def _display(self, row: ListingRow, key: str) -> str:
        if self.blinded and key in BLINDED_KEYS:
            return ""
        if key in NUMERIC:
            v = self._value(row, key)
            return "" if v is None else f"{v:.0f}"
        if key == "status":
            status = self.status_of(row)
            return STATUS_TEXT.get(status, status)
        if key in SUBJECT_KEYS:
            return self._subjects.get(row.path, {}).get(key, "")
        if key == "reviewer":
            return row.reviewer or ""
        if key == "flags":
            if row.problem:
                return "sidecar unreadable"
            return "; ".join(row.flags)
        return str(getattr(row, key))

    def _sort_key(self, row: ListingRow, key: str) -> object:
        if self.blinded and key in BLINDED_KEYS:
            return math.nan if key in NUMERIC else ""
        if key in NUMERIC:
            v = self._value(row, key)
            return math.nan if v is None else float(v)
        if key == "status":
            status = self.status_of(row)
            order = ("unread", "in_progress", "signed_off")
            return order.index(status) if status in order else 3
        if key == "flags":
            return len(row.flags)
        if key == "folder":
            # The folder's own records first, then each subfolder's together, by name.
            return (row.folder.lower(), row.name.lower())
        return self._display(row, key).lower()

    @staticmethod
    def _tooltip(row: ListingRow) -> str:
        lines = [str(row.path)]
        if row.problem:
            lines.append(f"Sidecar problem: {row.problem}")
        if row.stale:
            lines.append("Values cached by another engine version; recomputed when opened.")
        elif row.has_values:
            lines.append("Values cached by the batch step; recomputed when opened.")
        else:
            lines.append("No cached values yet (run the batch step or open the record).")
        lines += row.flags
        return "\n".join(lines)

    # --- our API
    def clear(self) -> None:
        self.beginResetModel()
        self._rows = []
        self._index = {}
        self._subjects = {}
        self.endResetModel()

    def subject_of(self, path: Path) -> dict[str, str]:
        """Subject id and timepoint read from the record's header (empty when unknown)."""
        return dict(self._subjects.get(Path(path), {}))

    def append_rows(
        self, rows: list[ListingRow], subjects: dict[Path, dict[str, str]] | None = None
    ) -> None:
        if subjects:
            self._subjects.update(subjects)
        if not rows:
            return
        first = len(self._rows)
        self.beginInsertRows(QModelIndex(), first, first + len(rows) - 1)
        for i, r in enumerate(rows):
            self._index[r.path] = first + i
        self._rows.extend(rows)
        self.endInsertRows()

    def update_row(self, row: ListingRow) -> bool:
        """Replace the row of ``row.path`` in place (selection and scroll stay)."""
        i = self._index.get(row.path)
        if i is None:
            return False
        self._rows[i] = row
        self.dataChanged.emit(self.index(i, 0), self.index(i, len(COLUMNS) - 1))
        return True

    def row_at(self, i: int) -> ListingRow:
        return self._rows[i]

    def row_of(self, path: Path) -> int | None:
        return self._index.get(Path(path))

    def set_blinded(self, on: bool, reviewer: str | None = None) -> None:
        self.beginResetModel()
        self.blinded = on
        self.own_reviewer = reviewer
        self.endResetModel()

    def set_qtc_formula(self, formula: str) -> None:
        self.qtc_formula = formula
        col = [k for k, _ in COLUMNS].index("qtc")
        self.headerDataChanged.emit(Qt.Orientation.Horizontal, col, col)
        if self._rows:
            self.dataChanged.emit(self.index(0, col), self.index(len(self._rows) - 1, col))


class WorklistFilter(QSortFilterProxyModel):
    """Unread only, flagged only, QTc above a value; empty values sort last either way."""

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.unread_only = False
        self.flagged_only = False
        self.qtc_above_ms: float | None = None
        self.setSortRole(SortKeyRole)
        self.setDynamicSortFilter(True)

    def set_filters(
        self, *, unread_only: bool, flagged_only: bool, qtc_above_ms: float | None
    ) -> None:
        # Qt 6.10: begin/endFilterChange replace the deprecated invalidateFilter.
        self.beginFilterChange()
        self.unread_only = unread_only
        self.flagged_only = flagged_only
        self.qtc_above_ms = qtc_above_ms
        self.endFilterChange()

    def filterAcceptsRow(
        self, source_row: int, source_parent: QModelIndex | QPersistentModelIndex
    ) -> bool:
        model = self.sourceModel()
        assert isinstance(model, WorklistModel)
        row = model.row_at(source_row)
        if self.unread_only and model.status_of(row) != "unread":
            return False
        if model.blinded:
            return True  # value filters would reveal the values
        if self.flagged_only and not row.flagged:
            return False
        if self.qtc_above_ms is not None:
            q = row.qtc_ms(model.qtc_formula)
            if q is None or q <= self.qtc_above_ms:
                return False
        return True

    def lessThan(
        self, left: QModelIndex | QPersistentModelIndex, right: QModelIndex | QPersistentModelIndex
    ) -> bool:
        a = left.data(SortKeyRole)
        b = right.data(SortKeyRole)
        a_none = isinstance(a, float) and math.isnan(a)
        b_none = isinstance(b, float) and math.isnan(b)
        if a_none or b_none:
            # Qt reverses lessThan for descending order; keep empty values at the bottom.
            desc = self.sortOrder() == Qt.SortOrder.DescendingOrder
            if a_none and b_none:
                return False
            return (not a_none) != desc
        try:
            return a < b  # type: ignore[operator]
        except TypeError:
            return str(a) < str(b)


class _ScanSignals(QObject):
    rows = Signal(int, list, object)  # generation, rows, {path: subject facts}
    progress = Signal(int, int, int)  # generation, done, total (total 0 = still searching)
    finished = Signal(int, int)  # generation, n rows
    failed = Signal(int, str)


class _ScanTask(QRunnable):
    """Lists ``root`` off the GUI thread, emitting rows in chunks."""

    CHUNK_S = 0.1
    CHUNK_ROWS = 500

    def __init__(
        self,
        root: Path,
        generation: int,
        engine_version: str | None,
        include_subfolders: bool | None = None,
    ) -> None:
        super().__init__()
        self.setAutoDelete(False)
        self.root = root
        self.generation = generation
        self.engine_version = engine_version
        self.include_subfolders = include_subfolders
        self.listing: FolderListing | None = None  # what was listed (set before finished)
        self.signals = _ScanSignals()
        self.cancelled = threading.Event()
        self.thread_id: int | None = None

    def run(self) -> None:
        from reviewapp.core.errors import ReviewError

        self.thread_id = threading.get_ident()
        gen = self.generation
        try:
            self.signals.progress.emit(gen, 0, 0)
            listing = list_folder(self.root, self.include_subfolders, keep=is_listable)
            self.listing = listing
            paths = list(listing.records)
            total = len(paths)
            self.signals.progress.emit(gen, 0, total)
            chunk: list[ListingRow] = []
            subjects: dict[Path, dict[str, str]] = {}
            last = time.monotonic()
            for i, p in enumerate(paths):
                if self.cancelled.is_set():
                    return
                chunk.append(listing_row(p, self.root, self.engine_version))
                facts = header_subject(p)
                if facts:
                    subjects[p] = facts
                now = time.monotonic()
                if len(chunk) >= self.CHUNK_ROWS or now - last >= self.CHUNK_S:
                    self.signals.rows.emit(gen, chunk, subjects)
                    self.signals.progress.emit(gen, i + 1, total)
                    chunk, subjects, last = [], {}, now
            if chunk:
                self.signals.rows.emit(gen, chunk, subjects)
            self.signals.progress.emit(gen, total, total)
            self.signals.finished.emit(gen, total)
        except ReviewError as err:
            self.signals.failed.emit(gen, str(err))
        except Exception as err:  # shown in the widget, never a crash of the window
            self.signals.failed.emit(gen, f"{self.root}: cannot list the folder: {err}")


class WorklistWidget(QWidget):
    """A folder's records; emits ``recordActivated(Path)`` when one is opened."""

    recordActivated = Signal(Path)
    scanFinished = Signal(int)

    def __init__(self, parent: QWidget | None = None, *, qtc_formula: str = "fridericia") -> None:
        super().__init__(parent)
        self.model = WorklistModel(self, qtc_formula)
        self.proxy = WorklistFilter(self)
        self.proxy.setSourceModel(self.model)
        self.root: Path | None = None
        # Whether the records in subfolders of ``root`` are listed, and what the last listing
        # held and left out (core.io.folder_listing: a folder with records of its own lists
        # those, a folder of folders everything below it).
        self.include_subfolders = False
        self.listing: FolderListing | None = None
        self._generation = 0
        self._task: _ScanTask | None = None
        self._pool = QThreadPool.globalInstance()
        self.last_scan_thread_id: int | None = None  # thread the last listing ran on
        self._engine_version = _engine_version()

        self.table = QTableView(self)
        self.table.setModel(self.proxy)
        self.table.setSortingEnabled(True)
        self.table.sortByColumn(0, Qt.SortOrder.AscendingOrder)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setAlternatingRowColors(True)
        self.table.verticalHeader().setVisible(False)
        self.table.verticalHeader().setDefaultSectionSize(20)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        header.setStretchLastSection(True)
        header.setMinimumSectionSize(24)
        header.setContextMenuPolicy(Qt.ContextMenuPolicy.CustomContextMenu)
        header.customContextMenuRequested.connect(self._column_menu)
        self.set_compact(True)
        # Status next to the record name, so it stays in sight when the dock is narrow (the
        # model's column order is unchanged).
        keys = [k for k, _t in COLUMNS]
        header.moveSection(header.visualIndex(keys.index("status")), 1)
        # The folder (shown when records come from subfolders) right after them: the grouping
        # key stays in sight on a slightly wider dock.
        header.moveSection(header.visualIndex(keys.index("folder")), 2)
        self.table.activated.connect(self._on_activated)

        self.unread_box = QCheckBox("Unread only", self)
        self.flagged_box = QCheckBox("Flagged only", self)
        self.qtc_box = QCheckBox("QTc above", self)
        self.qtc_spin = QDoubleSpinBox(self)
        self.qtc_spin.setRange(200.0, 800.0)
        self.qtc_spin.setDecimals(0)
        self.qtc_spin.setSingleStep(10.0)
        self.qtc_spin.setSuffix(" ms")
        # Common practice, no source: 450 ms is the usual starting threshold for QTc review.
        self.qtc_spin.setValue(450.0)
        for w in (self.unread_box, self.flagged_box, self.qtc_box):
            w.toggled.connect(self._apply_filters)
        self.qtc_spin.valueChanged.connect(self._apply_filters)
        self.subfolders_box = QCheckBox("Subfolders", self)
        self.subfolders_box.setToolTip(
            "Also list the records in the subfolders of this folder (a Folder column then "
            "says where each one is)"
        )
        self.subfolders_box.toggled.connect(self._subfolders_toggled)
        self.count_label = QLabel("", self)
        self.progress = QProgressBar(self)
        self.progress.setMaximumHeight(14)
        self.progress.setTextVisible(True)
        self.progress.hide()

        # Two short rows, not one long one: the dock stays narrow beside the paper.
        bar = QHBoxLayout()
        bar.addWidget(self.unread_box)
        bar.addWidget(self.flagged_box)
        bar.addStretch(1)
        bar2 = QHBoxLayout()
        bar2.addWidget(self.qtc_box)
        bar2.addWidget(self.qtc_spin)
        bar2.addStretch(1)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(2, 2, 2, 2)
        layout.addLayout(bar)
        layout.addLayout(bar2)
        # Its own row, shown only when the folder has subfolders with records: the dock stays
        # as narrow as before.
        layout.addWidget(self.subfolders_box, 0, Qt.AlignmentFlag.AlignLeft)
        self.subfolders_box.hide()
        # The count on a line of its own: its text grows with the folder and must not widen
        # the dock.
        self.count_label.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Preferred)
        self.count_label.setWordWrap(True)  # "...; 75 more in subfolder study" on a narrow dock
        layout.addWidget(self.count_label)
        layout.addWidget(self.progress)
        layout.addWidget(self.table, 1)

        # Keys are taken on the table itself (an event filter, before its type-ahead search):
        # N = next unread, Shift+N = previous unread. The window may also call the methods.
        self.table.installEventFilter(self)

    def set_compact(self, compact: bool) -> None:
        """Show only COMPACT_COLUMNS (True) or every column (False)."""
        from_subfolders = self.listing is not None and self.listing.from_subfolders
        for i, (key, _title) in enumerate(COLUMNS):
            keep = key in COMPACT_COLUMNS or (key == "folder" and from_subfolders)
            self.table.setColumnHidden(i, compact and not keep)

    def set_blinded(self, on: bool, reviewer: str | None = None) -> None:
        """Blinded second reading: the list keeps names and subjects, shows ``reviewer``'s own
        reading status (not the record's overall status, which would tell whether the first
        reader has signed), no values, flags or reviewer id, and the value filters are off."""
        current = self.current_path()
        self.model.set_blinded(on, reviewer)
        for w in (self.flagged_box, self.qtc_box, self.qtc_spin):
            w.setEnabled(not on)
        self.proxy.invalidate()
        self._update_count()
        if current is not None:
            self.select_path(current)

    def preferred_width(self) -> int:
        """Width (px) that shows every visible column without scrolling."""
        header = self.table.horizontalHeader()
        cols = sum(
            header.sectionSize(i) for i in range(len(COLUMNS)) if not header.isSectionHidden(i)
        )
        return (
            cols
            + 2 * self.table.frameWidth()
            + self.table.verticalScrollBar().sizeHint().width()
            + 6
        )

    def visible_columns(self) -> list[str]:
        return [k for i, (k, _t) in enumerate(COLUMNS) if not self.table.isColumnHidden(i)]

    def _column_menu(self, pos) -> None:  # type: ignore[no-untyped-def]
        from PySide6.QtWidgets import QMenu

        menu = QMenu(self)
        for i, (key, title) in enumerate(COLUMNS):
            act = menu.addAction(title)
            act.setCheckable(True)
            act.setChecked(not self.table.isColumnHidden(i))
            act.setEnabled(key != "name")
            act.toggled.connect(lambda on, i=i: self.table.setColumnHidden(i, not on))
        menu.addSeparator()
        menu.addAction("Fewer columns", lambda: self.set_compact(True))
        menu.addAction("All columns", lambda: self.set_compact(False))
        menu.popup(self.table.horizontalHeader().mapToGlobal(pos))

    def eventFilter(self, obj: QObject, event: QEvent) -> bool:
        if obj is self.table and event.type() == QEvent.Type.KeyPress:
            assert isinstance(event, QKeyEvent)
            mods = event.modifiers() & ~Qt.KeyboardModifier.KeypadModifier
            if event.key() == Qt.Key.Key_N and mods == Qt.KeyboardModifier.NoModifier:
                self.select_next_unread()
                return True
            if event.key() == Qt.Key.Key_N and mods == Qt.KeyboardModifier.ShiftModifier:
                self.select_previous_unread()
                return True
        return super().eventFilter(obj, event)

    # --- folder listing
    def open_folder(self, folder: str | Path, include_subfolders: bool | None = None) -> None:
        """List ``folder`` in the background (the previous listing is replaced): its own
        records, or every record below it with ``include_subfolders``; None decides as
        ``core.io.folder_listing`` does (subfolders only for a folder with no records of its
        own)."""
        from reviewapp.core.errors import ReviewError

        self.cancel_scan()
        self.root = Path(folder)
        if include_subfolders is None:
            try:
                include_subfolders = not has_own_records(self.root, keep=is_listable)
            except ReviewError:
                include_subfolders = True  # the scan reports the folder's problem
        self.include_subfolders = include_subfolders
        self.listing = None
        # Records from subfolders are grouped by folder (the root's own first); the reader
        # can sort by any other column.
        keys = [k for k, _t in COLUMNS]
        sort_key = "folder" if include_subfolders else "name"
        self.table.sortByColumn(keys.index(sort_key), Qt.SortOrder.AscendingOrder)
        self.subfolders_box.blockSignals(True)
        self.subfolders_box.setChecked(include_subfolders)
        self.subfolders_box.blockSignals(False)
        self._generation += 1
        self.model.clear()
        self.progress.setRange(0, 0)
        self.progress.setFormat("searching for records ...")
        self.progress.show()
        task = _ScanTask(self.root, self._generation, self._engine_version, include_subfolders)
        task.signals.rows.connect(self._on_rows)
        task.signals.progress.connect(self._on_progress)
        task.signals.finished.connect(self._on_finished)
        task.signals.failed.connect(self._on_failed)
        self._task = task
        self._pool.start(task)

    def _subfolders_toggled(self, on: bool) -> None:
        if self.root is not None:
            self.open_folder(self.root, include_subfolders=on)

    def covers(self, path: Path) -> bool:
        """Whether ``path`` belongs to the folder listed (the list then stays as it is when
        that record opens)."""
        if self.root is None:
            return False
        return FolderListing(self.root, self.include_subfolders, ()).covers(Path(path))

    def cancel_scan(self) -> None:
        if self._task is not None:
            self._task.cancelled.set()
            self._task = None

    def is_scanning(self) -> bool:
        return self._task is not None

    def _on_rows(self, generation: int, rows: list, subjects: object) -> None:
        if generation != self._generation:
            return
        first = self.model.rowCount() == 0
        self.model.append_rows(rows, subjects if isinstance(subjects, dict) else None)
        if first:
            self._fit_columns()
        self._update_count()

    def _fit_columns(self) -> None:
        # Width from the first rows' contents (not the header default of 100 px a column).
        header = self.table.horizontalHeader()
        header.setResizeContentsPrecision(200)
        self.table.resizeColumnsToContents()
        # Status changes as the reader works ("unread" -> "in progress"): room for the longest
        # word now, so it is never cut to "in ..." later. Bold, as unread rows are drawn.
        f = QFont(self.table.font())
        f.setBold(True)
        widest = max(QFontMetrics(f).horizontalAdvance(t) for t in STATUS_TEXT.values())
        col = [k for k, _t in COLUMNS].index("status")
        header.resizeSection(col, max(header.sectionSize(col), widest + 14))

    def _on_progress(self, generation: int, done: int, total: int) -> None:
        if generation != self._generation:
            return
        if total == 0:
            self.progress.setRange(0, 0)
            return
        self.progress.setRange(0, total)
        self.progress.setValue(done)
        self.progress.setFormat("listing %v of %m records")

    def _on_finished(self, generation: int, n: int) -> None:
        if generation != self._generation:
            return
        task = self._task
        self.last_scan_thread_id = task.thread_id if task is not None else None
        self.listing = task.listing if task is not None else None
        self._task = None
        self.progress.hide()
        # Records from subfolders: the Folder column says where each one is.
        folder_col = [k for k, _t in COLUMNS].index("folder")
        self.table.setColumnHidden(
            folder_col, self.listing is None or not self.listing.from_subfolders
        )
        self.subfolders_box.setVisible(
            self.listing is not None
            and (bool(self.listing.elsewhere) or self.listing.from_subfolders)
        )
        self._fit_columns()
        self._update_count()
        self.scanFinished.emit(n)

    def _on_failed(self, generation: int, message: str) -> None:
        if generation != self._generation:
            return
        self._task = None
        self.progress.hide()
        self.count_label.setText(message)
        self.scanFinished.emit(-1)

    def _update_count(self) -> None:
        shown, total = self.proxy.rowCount(), self.model.rowCount()
        unread = sum(
            1 for i in range(total) if self.model.status_of(self.model.row_at(i)) == "unread"
        )
        text = f"{total} records, {unread} unread"
        if shown != total:
            text += f" ({shown} shown)"
        text += elsewhere_text(self.listing)
        self.count_label.setText(text)
        self.count_label.setToolTip(text)

    # --- filters
    def _apply_filters(self) -> None:
        self.proxy.set_filters(
            unread_only=self.unread_box.isChecked(),
            flagged_only=self.flagged_box.isChecked(),
            qtc_above_ms=self.qtc_spin.value() if self.qtc_box.isChecked() else None,
        )
        self._update_count()

    def set_filters(
        self,
        *,
        unread_only: bool = False,
        flagged_only: bool = False,
        qtc_above_ms: float | None = None,
    ) -> None:
        """Set the filter controls (and so the filter) programmatically."""
        for box in (self.unread_box, self.flagged_box, self.qtc_box, self.qtc_spin):
            box.blockSignals(True)
        self.unread_box.setChecked(unread_only)
        self.flagged_box.setChecked(flagged_only)
        self.qtc_box.setChecked(qtc_above_ms is not None)
        if qtc_above_ms is not None:
            self.qtc_spin.setValue(qtc_above_ms)
        for box in (self.unread_box, self.flagged_box, self.qtc_box, self.qtc_spin):
            box.blockSignals(False)
        self._apply_filters()

    # --- navigation
    def current_path(self) -> Path | None:
        idx = self.table.currentIndex()
        if not idx.isValid():
            return None
        return Path(idx.siblingAtColumn(0).data(PathRole))

    def visible_paths(self) -> list[Path]:
        return [Path(self.proxy.index(r, 0).data(PathRole)) for r in range(self.proxy.rowCount())]

    def select_path(self, path: Path) -> bool:
        i = self.model.row_of(Path(path))
        if i is None:
            return False
        pidx = self.proxy.mapFromSource(self.model.index(i, 0))
        if not pidx.isValid():
            return False
        self._select_proxy_row(pidx.row())
        return True

    def _select_proxy_row(self, r: int) -> None:
        idx = self.proxy.index(r, 0)
        self.table.setCurrentIndex(idx)
        self.table.selectRow(r)
        self.table.scrollTo(idx, QAbstractItemView.ScrollHint.EnsureVisible)

    def _step_unread(self, step: int, activate: bool) -> Path | None:
        n = self.proxy.rowCount()
        if n == 0:
            return None
        cur = self.table.currentIndex()
        start = cur.row() if cur.isValid() else (-1 if step > 0 else n)
        r = start + step
        while 0 <= r < n:
            row = self.proxy.index(r, 0).data(RowRole)
            if self.model.status_of(row) == "unread":
                self._select_proxy_row(r)
                if activate:
                    self.recordActivated.emit(row.path)
                return row.path
            r += step
        return None

    def select_next_unread(self, activate: bool = True) -> Path | None:
        """Move to (and open) the next unread record below the current one."""
        return self._step_unread(+1, activate)

    def select_previous_unread(self, activate: bool = True) -> Path | None:
        return self._step_unread(-1, activate)

    def _on_activated(self, index: QModelIndex) -> None:
        path = index.siblingAtColumn(0).data(PathRole)
        if path:
            self.recordActivated.emit(Path(path))

    def refresh_record(self, path: str | Path) -> None:
        """Re-read one record's sidecar (after the window saved); the list keeps its place."""
        path = Path(path)
        if self.model.row_of(path) is None:
            return
        self.model.update_row(listing_row(path, self.root, self._engine_version))
        self._update_count()

    def closeEvent(self, event) -> None:  # type: ignore[no-untyped-def]
        self.cancel_scan()
        super().closeEvent(event)


def elsewhere_text(listing: FolderListing | None) -> str:
    """What the list leaves out, for the count line: "; 75 more in subfolder study"."""
    if listing is None or not listing.elsewhere:
        return ""
    names = [name for name, _n in listing.elsewhere]
    shown = ", ".join(names[:3]) + (f" and {len(names) - 3} more" if len(names) > 3 else "")
    word = "subfolder" if len(names) == 1 else "subfolders"
    return f"; {listing.n_elsewhere} more in {word} {shown}"


def _alert_colour() -> QColor:
    """Dark red on a light list, light red on a dark one (dark red on near-black is
    unreadable)."""
    base = QGuiApplication.palette().color(QPalette.ColorRole.Base)
    return QColor(170, 0, 0) if base.lightness() >= 128 else QColor(255, 130, 120)


def is_listable(path: Path) -> bool:
    """Whether a path the record finder returned is an ECG record the window can open.

    The finder is being tightened in reviewapp.core.io; the list checks again cheaply (header
    row of a CSV, root element of an XML) so tables beside the records, such as a study's
    ``worklist.csv``, never appear as records."""
    suffix = path.suffix.lower()
    try:
        if suffix in (".csv", ".tsv", ".txt"):
            from reviewapp.core.io.csv_format import looks_like_ecg_csv

            return looks_like_ecg_csv(path)
        if suffix == ".xml":
            with path.open("rb") as fh:
                return b"AnnotatedECG" in fh.read(4096)
    except (OSError, ImportError):
        return False
    return True


def header_subject(path: Path) -> dict[str, str]:
    """Subject id and timepoint from a WFDB header's comment lines (``# subject: S-001``,
    ``# timepoint: pre-dose``); reads at most 8 kB of the header and never the signal."""
    if path.suffix.lower() != ".hea":
        return {}
    try:
        with path.open("r", encoding="utf-8", errors="replace") as fh:
            text = fh.read(8192)
    except OSError:
        return {}
    out: dict[str, str] = {}
    for line in text.splitlines():
        line = line.strip()
        if not line.startswith("#") or ":" not in line:
            continue
        key, _, value = line.lstrip("#").partition(":")
        key = key.strip().lower()
        if key in SUBJECT_KEYS and value.strip() and key not in out:
            out[key] = value.strip()[:60]
    return out


def _engine_version() -> str | None:
    try:
        from reviewapp.core.versions import ENGINE_VERSION
    except ImportError:
        return None
    return ENGINE_VERSION
