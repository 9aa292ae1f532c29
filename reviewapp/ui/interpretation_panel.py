"""The "Interpretation" dock: the reader's interpretation statements and the automatic ones.

A thin view over the reading workflow's ``StatementEditor`` (core/workflow/editors.py): the
reader's list (their order; add from the searchable catalogue, in their own words, or by
taking over the automatic statements; edit, remove, move), and below it the engine's
statements, each with the criteria it used, the measured values that met them and the
published source (in the tooltip and in the box under the list). In a blinded read that
hides the automatic marks the automatic statements are not shown and cannot be taken over.

``InterpretationView`` binds the panel to the window: the actions declared in ui/actions.py
call its methods, which run the editor and let the window say what happened.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.workflow import Outcome, ReadingWorkflow, WorkflowChange

if TYPE_CHECKING:
    # The statement engine and its catalogue are imported where a statement is shown or
    # picked (after the automatic analysis), not at launch.
    from reviewapp.core.interpret import Interpretation, Statement
    from reviewapp.core.interpret.catalogue import StatementDef
    from reviewapp.core.marks.model import ReaderStatement

ROLE = QtCore.Qt.ItemDataRole.UserRole
FOLLOW_PAUSE_MS = 120  # a drag's pause after which the automatic statements follow
ORIGIN_WORDS = {
    "automatic": "taken over from the automatic statements",
    "catalogue": "picked from the catalogue",
    "free_text": "in the reader's own words",
    "reader": "adopted from {who}'s reading",
}


def statement_tooltip(x: Statement) -> str:
    """Criteria, measured values, qualifiers and source of an automatic statement."""
    from reviewapp.core.interpret import CATEGORY_NAMES

    lines = [
        f"{x.line}",
        f"{CATEGORY_NAMES.get(x.category, x.category)}",
        f"Criteria: {x.criteria}",
    ]
    if x.values:
        lines.append(f"Measured: {x.values_text}")
    lines += [f"Note: {q}" for q in x.qualifiers]
    lines.append(f"Source: {x.source}")
    return "\n".join(lines)


def reader_tooltip(x: ReaderStatement) -> str:
    """Where the reader's statement came from, and the catalogue's criteria and source."""
    from reviewapp.core.interpret import CATALOGUE, CATEGORY_NAMES, FREE_TEXT

    origin = ORIGIN_WORDS.get(x.origin, x.origin).format(who=x.from_reader or "another reader")
    lines = [x.text, f"Statement {origin}"]
    d = CATALOGUE.get(x.code)
    if d is not None and x.code != FREE_TEXT:
        lines.append(f"Catalogue: {d.text} ({CATEGORY_NAMES.get(d.category, d.category)})")
        if d.automatic:
            lines.append(f"Criteria: {d.criteria}")
        lines.append(f"Source: {d.source}")
    return "\n".join(lines)


class StatementPickerDialog(QtWidgets.QDialog):
    """Pick a catalogue statement: type to search (words of the term, its category or its
    usual abbreviations), choose, adjust the text if needed, Add."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("Add statement from the catalogue")
        self.setObjectName("statement_picker")
        self.search_edit = QtWidgets.QLineEdit()
        self.search_edit.setObjectName("statement_search")
        self.search_edit.setPlaceholderText("Search: e.g. bundle, AF, LVH, QTc, pre-excitation")
        self.list = QtWidgets.QListWidget()
        self.list.setObjectName("catalogue_list")
        self.text_edit = QtWidgets.QLineEdit()
        self.text_edit.setObjectName("statement_text")
        self.detail = QtWidgets.QLabel("")
        self.detail.setWordWrap(True)
        self.detail.setObjectName("catalogue_detail")
        self.buttons = QtWidgets.QDialogButtonBox()
        self.add_button = self.buttons.addButton(
            "Add", QtWidgets.QDialogButtonBox.ButtonRole.AcceptRole
        )
        self.buttons.addButton(QtWidgets.QDialogButtonBox.StandardButton.Cancel)
        self.buttons.accepted.connect(self.accept)
        self.buttons.rejected.connect(self.reject)
        lay = QtWidgets.QVBoxLayout(self)
        lay.addWidget(self.search_edit)
        lay.addWidget(self.list, 1)
        lay.addWidget(QtWidgets.QLabel("Text of the statement (edit if needed):"))
        lay.addWidget(self.text_edit)
        lay.addWidget(self.detail)
        lay.addWidget(self.buttons)
        self.search_edit.textChanged.connect(self.fill)
        self.list.currentItemChanged.connect(lambda *_: self._selected())
        self.list.itemDoubleClicked.connect(lambda _it: self.accept())
        self.resize(560, 520)
        self.fill("")

    def fill(self, query: str) -> None:
        """The catalogue entries matching ``query``, under their category headings."""
        from reviewapp.core.interpret import CATEGORY_NAMES, ENTRIES, FREE_TEXT, search

        self.list.clear()
        last = None
        for d in search(query, [e for e in ENTRIES if e.code != FREE_TEXT]):
            if d.category != last:
                head = QtWidgets.QListWidgetItem(CATEGORY_NAMES.get(d.category, d.category))
                head.setFlags(QtCore.Qt.ItemFlag.NoItemFlags)
                f = head.font()
                f.setBold(True)
                head.setFont(f)
                self.list.addItem(head)
                last = d.category
            it = QtWidgets.QListWidgetItem("    " + d.text)
            it.setData(ROLE, d.code)
            it.setToolTip(f"Criteria: {d.criteria}\nSource: {d.source}")
            self.list.addItem(it)
        first = next(
            (self.list.item(i) for i in range(self.list.count()) if self.list.item(i).data(ROLE)),
            None,
        )
        if first is not None:
            self.list.setCurrentItem(first)
        self._selected()

    def chosen(self) -> StatementDef | None:
        from reviewapp.core.interpret import CATALOGUE

        it = self.list.currentItem()
        code = None if it is None else it.data(ROLE)
        return None if code is None else CATALOGUE.get(code)

    def _selected(self) -> None:
        d = self.chosen()
        self.add_button.setEnabled(d is not None)
        self.text_edit.setText("" if d is None else d.text)
        self.detail.setText("" if d is None else f"Criteria: {d.criteria}\nSource: {d.source}")

    def result_statement(self) -> tuple[str, str] | None:
        d = self.chosen()
        return None if d is None else (d.code, self.text_edit.text().strip() or d.text)


class InterpretationPanel(QtWidgets.QWidget):
    """The reader's statements (editable list) and the automatic statements (read only)."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.mine = QtWidgets.QListWidget()
        self.mine.setObjectName("statement_list")
        self.mine.setWordWrap(True)
        self.mine_label = QtWidgets.QLabel("Your interpretation")
        f = self.mine_label.font()
        f.setBold(True)
        self.mine_label.setFont(f)
        self.add_button = QtWidgets.QPushButton("Add…")
        self.add_button.setToolTip("Add a statement from the catalogue (searchable)")
        self.free_button = QtWidgets.QPushButton("Own words…")
        self.auto_button = QtWidgets.QPushButton("From automatic")
        self.auto_button.setToolTip("Start from the automatic statements (added at the end)")
        self.edit_button = QtWidgets.QPushButton("Edit…")
        self.remove_button = QtWidgets.QPushButton("Remove")
        self.up_button = QtWidgets.QPushButton("▲")
        self.up_button.setToolTip("Move the statement up")
        self.down_button = QtWidgets.QPushButton("▼")
        self.down_button.setToolTip("Move the statement down")
        for b in (self.up_button, self.down_button):
            b.setMaximumWidth(32)
        self.auto_label = QtWidgets.QLabel("Automatic statements")
        self.auto_label.setObjectName("automatic_label")
        self.auto_label.setWordWrap(True)
        self.automatic = QtWidgets.QListWidget()
        self.automatic.setObjectName("automatic_statements")
        self.automatic.setWordWrap(True)
        self.detail = QtWidgets.QPlainTextEdit()
        self.detail.setObjectName("automatic_detail")
        self.detail.setReadOnly(True)
        self.detail.setMaximumHeight(140)
        top = QtWidgets.QHBoxLayout()
        top.addWidget(self.mine_label, 1)
        for b in (self.add_button, self.free_button):
            top.addWidget(b)
        edits = QtWidgets.QHBoxLayout()
        edits.addWidget(self.auto_button)
        edits.addStretch(1)
        for b in (self.edit_button, self.remove_button, self.up_button, self.down_button):
            edits.addWidget(b)
        upper = QtWidgets.QWidget()
        ul = QtWidgets.QVBoxLayout(upper)
        ul.setContentsMargins(0, 0, 0, 0)
        ul.addLayout(top)
        ul.addWidget(self.mine, 1)
        ul.addLayout(edits)
        lower = QtWidgets.QWidget()
        ll = QtWidgets.QVBoxLayout(lower)
        ll.setContentsMargins(0, 0, 0, 0)
        ll.addWidget(self.auto_label)
        ll.addWidget(self.automatic, 1)
        ll.addWidget(self.detail)
        self.split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Vertical)
        self.split.addWidget(upper)
        self.split.addWidget(lower)
        # Scrolls rather than asking for height: the dock shares the window with the others
        # and a small window must still open.
        self.scroller = QtWidgets.QScrollArea()
        self.scroller.setWidgetResizable(True)
        self.scroller.setFrameShape(QtWidgets.QFrame.Shape.NoFrame)
        self.scroller.setWidget(self.split)
        self.split.setMinimumHeight(300)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(6, 4, 6, 4)
        lay.addWidget(self.scroller)
        self.automatic.currentItemChanged.connect(lambda *_: self._show_detail())
        self.mine.currentItemChanged.connect(lambda *_: self.update_buttons())
        self._statements: tuple[Statement, ...] = ()
        self._writable = False
        self.show_mine((), writable=False)
        self.show_automatic(None, hidden=False)

    # --- the reader's list ---------------------------------------------------------------
    def show_mine(self, statements: tuple[ReaderStatement, ...], *, writable: bool) -> None:
        keep = self.selected_id()
        self._writable = writable
        self.mine.clear()
        for x in statements:
            it = QtWidgets.QListWidgetItem(x.text)
            it.setData(ROLE, x.id)
            it.setToolTip(reader_tooltip(x))
            self.mine.addItem(it)
            if x.id == keep:
                self.mine.setCurrentItem(it)
        self.mine_label.setText(f"Your interpretation ({len(statements)})")
        self.update_buttons()

    def selected_id(self) -> str | None:
        it = self.mine.currentItem()
        return None if it is None else it.data(ROLE)

    def select(self, statement_id: str) -> None:
        for i in range(self.mine.count()):
            if self.mine.item(i).data(ROLE) == statement_id:
                self.mine.setCurrentRow(i)
                return

    def mine_texts(self) -> list[str]:
        return [self.mine.item(i).text() for i in range(self.mine.count())]

    def update_buttons(self) -> None:
        has = self.selected_id() is not None
        row = self.mine.currentRow()
        for b in (self.add_button, self.free_button):
            b.setEnabled(self._writable)
        self.auto_button.setEnabled(self._writable and bool(self._statements))
        self.edit_button.setEnabled(self._writable and has)
        self.remove_button.setEnabled(self._writable and has)
        self.up_button.setEnabled(self._writable and has and row > 0)
        self.down_button.setEnabled(self._writable and has and row < self.mine.count() - 1)

    # --- the automatic statements ---------------------------------------------------------
    def show_automatic(self, interpretation: Interpretation | None, *, hidden: bool) -> None:
        """The engine's statements (None: no analysis yet); ``hidden``: a blinded read that
        hides the automatic marks shows none of them."""
        current = self.automatic.currentRow()
        self.automatic.clear()
        self._statements = ()
        if hidden:
            self.auto_label.setText(
                "Automatic statements hidden: blinded read with the automatic marks hidden."
            )
            self.detail.setPlainText("")
            self.update_buttons()
            return
        if interpretation is None:
            self.auto_label.setText("Automatic statements: no analysis yet.")
            self.detail.setPlainText("")
            self.update_buttons()
            return
        self._statements = interpretation.statements
        self.auto_label.setText(
            f"Automatic statements ({len(self._statements)}); select one for its criteria, "
            "values and source:"
        )
        for x in self._statements:
            it = QtWidgets.QListWidgetItem(x.line)
            it.setToolTip(statement_tooltip(x))
            it.setData(ROLE, x.code)
            if x.category == "lead_check":
                it.setText("⚠ " + x.line)
                f = it.font()
                f.setBold(True)
                it.setFont(f)
            self.automatic.addItem(it)
        for r in interpretation.reasons:
            it = QtWidgets.QListWidgetItem(f"not stated: {r.text}")
            it.setToolTip(r.text)
            it.setFlags(QtCore.Qt.ItemFlag.ItemIsEnabled)
            f = it.font()
            f.setItalic(True)
            it.setFont(f)
            it.setForeground(QtGui.QBrush(QtGui.QColor(110, 110, 110)))
            self.automatic.addItem(it)
        if self._statements:
            self.automatic.setCurrentRow(min(max(current, 0), len(self._statements) - 1))
        self._show_detail()
        self.update_buttons()

    def automatic_lines(self) -> list[str]:
        return [x.line for x in self._statements]

    def _show_detail(self) -> None:
        row = self.automatic.currentRow()
        if not 0 <= row < len(self._statements):
            self.detail.setPlainText("")
            return
        self.detail.setPlainText(statement_tooltip(self._statements[row]))


class InterpretationView(QtCore.QObject):
    """The panel bound to the window's reading: the interpretation actions' handlers.

    ``workflow()`` gives the reading on screen (None: none), ``tell(outcome)`` lets the window
    say what an action did, ``before_step()`` flushes pending caliper edits first.
    """

    def __init__(
        self,
        window: QtWidgets.QWidget,
        panel: InterpretationPanel,
        workflow: Callable[[], ReadingWorkflow | None],
        tell: Callable[[Outcome], None],
        started: QtCore.SignalInstance,
        values_changed: QtCore.SignalInstance,
    ) -> None:
        super().__init__(window)
        self.window = window
        self.panel = panel
        self._workflow = workflow
        self._tell = tell
        self._unsubscribe: Callable[[], None] | None = None
        self.picker: StatementPickerDialog | None = None
        started.connect(self._started)
        # The automatic statements follow the values: at once for a correction, and when the
        # movement pauses for a drag or a nudge not yet recorded (rebuilding the lists and
        # their criteria on every step would slow the drag by several ms).
        self._pause = QtCore.QTimer(self)
        self._pause.setSingleShot(True)
        self._pause.setInterval(FOLLOW_PAUSE_MS)
        self._pause.timeout.connect(self.refresh_automatic)
        values_changed.connect(self._values_changed)
        p = panel
        p.add_button.clicked.connect(lambda: self.add_from_catalogue())
        p.free_button.clicked.connect(lambda: self.add_own_words())
        p.auto_button.clicked.connect(lambda: self.use_automatic())
        p.edit_button.clicked.connect(lambda: self.edit_selected())
        p.remove_button.clicked.connect(lambda: self.remove_selected())
        p.up_button.clicked.connect(lambda: self.move(-1))
        p.down_button.clicked.connect(lambda: self.move(+1))
        p.mine.itemDoubleClicked.connect(lambda _it: self.edit_selected())

    # --- following the reading ------------------------------------------------------------
    def _started(self, w: ReadingWorkflow | None) -> None:
        if self._unsubscribe is not None:
            self._unsubscribe()
            self._unsubscribe = None
        if w is not None:
            self._unsubscribe = w.subscribe(self._changed)
        self.refresh()

    def _changed(self, ch: WorkflowChange) -> None:
        if ch.stored:
            self.refresh_mine()

    def _values_changed(self, reading: object) -> None:
        w = self._workflow()
        if w is not None and reading is not w.committed_reading:
            self._pause.start()
            return
        self._pause.stop()
        self.refresh_automatic()

    def refresh(self) -> None:
        self.refresh_mine()
        self.refresh_automatic()

    def refresh_mine(self) -> None:
        w = self._workflow()
        st = None if w is None else w.store
        writable = st is not None and (not st.read_only or not w.identified)  # type: ignore[union-attr]
        self.panel.show_mine(() if st is None else st.reading.statements, writable=writable)

    def refresh_automatic(self) -> None:
        w = self._workflow()
        if w is None:
            self.panel.show_automatic(None, hidden=False)
            return
        self.panel.show_automatic(w.automatic_interpretation(), hidden=w.hide_automatic)

    # --- the actions ---------------------------------------------------------------------------
    def _run(self, act: Callable[[ReadingWorkflow], Outcome]) -> Outcome | None:
        w = self._workflow()
        if w is None:
            self._tell(Outcome.unchanged("Open a record first."))
            return None
        out = act(w)
        self._tell(out)
        return out

    def add_from_catalogue(self) -> None:
        """Edit ▸ Interpretation ▸ Add statement from catalogue…"""
        if self._workflow() is None:
            self._tell(Outcome.unchanged("Open a record first."))
            return
        dlg = StatementPickerDialog(self.window)
        self.picker = dlg
        try:
            if dlg.exec() != QtWidgets.QDialog.DialogCode.Accepted:
                return
            chosen = dlg.result_statement()
        finally:
            self.picker = None
        if chosen is not None:
            code, text = chosen
            self._run(lambda w: w.statements.add(code, text))

    def add_own_words(self) -> None:
        """Edit ▸ Interpretation ▸ Add statement in own words…"""
        if self._workflow() is None:
            self._tell(Outcome.unchanged("Open a record first."))
            return
        text, ok = QtWidgets.QInputDialog.getMultiLineText(
            self.window, "Add statement", "Statement in your own words:"
        )
        if ok:
            self._run(lambda w: w.statements.add_free_text(text))

    def use_automatic(self) -> None:
        """Edit ▸ Interpretation ▸ Start from automatic statements."""
        self._run(lambda w: w.statements.start_from_automatic())

    def edit_selected(self) -> None:
        w = self._workflow()
        sid = self.panel.selected_id()
        st = None if w is None else w.store
        old = None if st is None or sid is None else st.reading.statement(sid)
        if old is None:
            self._tell(Outcome.unchanged("Select one of your statements first."))
            return
        text, ok = QtWidgets.QInputDialog.getMultiLineText(
            self.window, "Edit statement", "Statement:", old.text
        )
        if ok:
            self._run(lambda w: w.statements.edit(old.id, text))

    def remove_selected(self) -> None:
        sid = self.panel.selected_id()
        if sid is None:
            self._tell(Outcome.unchanged("Select one of your statements first."))
            return
        self._run(lambda w: w.statements.delete(sid))

    def move(self, delta: int) -> None:
        sid = self.panel.selected_id()
        if sid is None:
            self._tell(Outcome.unchanged("Select one of your statements first."))
            return
        out = self._run(lambda w: w.statements.move(sid, delta))
        if out is not None:
            self.panel.select(sid)
