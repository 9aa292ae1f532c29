"""Two readers' interpretations statement by statement, in the comparison window: agree or
differ, and (for an adjudicator) the final statements taken from reader A or B.

Rows come from ``core.marks.compare.compare_statements`` (matched on the catalogue code, or on
the words of a free-text statement). A difference is said in words with a glyph and in bold,
never by colour alone. Taking a statement goes through the workflow's ``StatementEditor.adopt``
(saved, audited, undoable).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.interpret import CATALOGUE
from reviewapp.core.marks.compare import StatementRow, compare_statements
from reviewapp.core.workflow import Outcome, ReadingWorkflow

if TYPE_CHECKING:
    from reviewapp.core.marks.model import ReviewerReading

COLUMNS = ("Statement", "Reader A", "Reader B", "Verdict", "Final")
DIFFER = "▲"
ROLE = QtCore.Qt.ItemDataRole.UserRole


def row_label(row: StatementRow) -> str:
    d = CATALOGUE.get(row.code)
    if d is None or row.key.startswith("free: "):
        return "own words"
    return d.text


class StatementComparison(QtWidgets.QWidget):
    """The statements table and the adjudicator's "use A's / B's statement" buttons."""

    def __init__(
        self, workflow: ReadingWorkflow, tell: Callable[[Outcome], None] | None = None
    ) -> None:
        super().__init__()
        self.workflow = workflow
        self._tell = tell
        self.rows: tuple[StatementRow, ...] = ()
        self._readers: tuple[str, str] = ("", "")
        self.table = QtWidgets.QTableWidget(0, len(COLUMNS))
        self.table.setObjectName("statement_compare_table")
        self.table.setHorizontalHeaderLabels(list(COLUMNS))
        self.table.verticalHeader().hide()
        self.table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setWordWrap(True)
        hh = self.table.horizontalHeader()
        hh.setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.Stretch)
        self.summary = QtWidgets.QLabel("")
        self.summary.setWordWrap(True)
        self.use_a = QtWidgets.QPushButton("Use reader A's statement")
        self.use_b = QtWidgets.QPushButton("Use reader B's statement")
        self.use_a.clicked.connect(lambda: self.adopt("a"))
        self.use_b.clicked.connect(lambda: self.adopt("b"))
        self.result_label = QtWidgets.QLabel("")
        self.result_label.setWordWrap(True)
        buttons = QtWidgets.QHBoxLayout()
        buttons.addWidget(self.use_a)
        buttons.addWidget(self.use_b)
        buttons.addStretch(1)
        lay = QtWidgets.QVBoxLayout(self)
        lay.addWidget(self.table, 1)
        lay.addWidget(self.summary)
        lay.addLayout(buttons)
        lay.addWidget(self.result_label)
        self.table.itemSelectionChanged.connect(self._update_buttons)
        self._readings: dict[str, ReviewerReading] = {}
        self._can = False

    def show_readings(
        self,
        a: ReviewerReading,
        b: ReviewerReading,
        final: ReviewerReading | None,
        can_adjudicate: bool,
    ) -> None:
        self._readers = (a.reviewer, b.reviewer)
        self._readings = {a.reviewer: a, b.reviewer: b}
        self._can = can_adjudicate
        self.rows = compare_statements(a, b)
        finals = {x.key for x in final.statements} if final is not None else set()
        bold = QtGui.QFont(self.table.font())
        bold.setBold(True)
        self.table.setRowCount(len(self.rows))
        for i, row in enumerate(self.rows):
            verdict = row.verdict if row.agree else f"{DIFFER} {row.verdict}"
            cells = (
                row_label(row),
                row.text_a or "—",
                row.text_b or "—",
                verdict,
                "in final" if row.key in finals else "—",
            )
            for col, text in enumerate(cells):
                it = QtWidgets.QTableWidgetItem(text)
                it.setData(ROLE, row.key)
                it.setToolTip(text)
                if not row.agree:
                    it.setFont(bold)
                    it.setBackground(QtGui.QColor(255, 236, 200))
                    it.setForeground(QtGui.QColor(0, 0, 0))
                self.table.setItem(i, col, it)
        self.table.resizeRowsToContents()
        n_diff = sum(not r.agree for r in self.rows)
        self.summary.setText(
            f"Interpretation: {len(self.rows) - n_diff} statement(s) agree, {n_diff} differ "
            f"(A = {a.reviewer}, B = {b.reviewer}; matched on the catalogue statement, own "
            "words on their text)."
        )
        self._update_buttons()

    def clear(self, why: str) -> None:
        self.rows = ()
        self.table.setRowCount(0)
        self.summary.setText(why)
        self._update_buttons()

    def selected_row(self) -> StatementRow | None:
        items = self.table.selectedItems()
        if not items:
            return None
        key = items[0].data(ROLE)
        return next((r for r in self.rows if r.key == key), None)

    def select_key(self, key: str) -> None:
        for i, r in enumerate(self.rows):
            if r.key == key:
                self.table.selectRow(i)
                return

    def _update_buttons(self) -> None:
        row = self.selected_row()
        self.use_a.setEnabled(self._can and row is not None and row.text_a is not None)
        self.use_b.setEnabled(self._can and row is not None and row.text_b is not None)

    def adopt(self, which: str) -> bool:
        """Take the selected statement from reader A ("a") or B ("b") into the final
        interpretation (the adjudicator's)."""
        row = self.selected_row()
        if row is None:
            return False
        who = self._readers[0 if which == "a" else 1]
        reading = self._readings.get(who)
        x = (
            None
            if reading is None
            else next((y for y in reading.statements if y.key == row.key), None)
        )
        if x is None:
            return False
        out = self.workflow.statements.adopt(who, x.id)
        self.result_label.setText(out.message)
        if self._tell is not None:
            self._tell(out)
        return out.done
