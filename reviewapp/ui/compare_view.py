"""Tools ▸ Compare readings: two readers' values side by side, differences flagged beyond a
tolerance, and (for an adjudicator) the final value picked from reader A, reader B or set.

Values come from ``reviewapp.core.marks.compare_readings`` (fiducials of the median beat in ms
from its R; intervals recomputed from each reader's marks). A difference beyond tolerance is
said in words with a glyph and in bold, never by colour alone. Every final value goes through
the marks store's adjudication commands (audited, undoable in the window).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.fiducials import FIDUCIAL_LABELS
from reviewapp.core.workflow import Outcome, ReadingWorkflow, WorkflowChange
from reviewapp.ui.statement_compare import StatementComparison

if TYPE_CHECKING:
    from reviewapp.core.marks import Comparison, ComparisonRow
    from reviewapp.core.marks.final import AdjudicatedItem
    from reviewapp.core.marks.model import ReviewerReading

ITEM_LABELS = {
    "pr_ms": "PR",
    "p_ms": "P duration",
    "qrs_ms": "QRS",
    "qt_ms": "QT",
    "qtc_bazett_ms": "QTc Bazett",
    "qtc_fridericia_ms": "QTc Fridericia",
}
# An interval is adjudicated by adopting both of its end marks; QTc follows QT.
ADOPTS = {"qtc_bazett_ms": "qt_ms", "qtc_fridericia_ms": "qt_ms"}
COLUMNS = ("Item", "Reader A", "Reader B", "B − A", "Tolerance", "Verdict", "Final")
FINAL_COLUMN = COLUMNS.index("Final")
BEYOND = "▲"


def item_label(row: ComparisonRow) -> str:
    if row.kind == "fiducial":
        return f"{FIDUCIAL_LABELS.get(row.item, row.item)} (ms from R)"
    return ITEM_LABELS.get(row.item, row.item)


def verdict_text(row: ComparisonRow) -> str:
    if row.presence_differs:
        return f"{BEYOND} only one reader has a value"
    if row.beyond_tolerance:
        return f"{BEYOND} differs by more than {row.tolerance_ms:g} ms"
    if row.diff_ms is None:
        return "—"
    return "within tolerance" if row.tolerance_ms is not None else "no tolerance set"


def final_words(adjudication: ReviewerReading | None, n_settled: int) -> str:
    """What the Final column holds, in one sentence."""
    if adjudication is None or n_settled == 0:
        return "Final: empty until an adjudicator settles a value."
    state = "signed" if adjudication.status == "signed_off" else "not signed yet"
    return (
        f"Final: {n_settled} value{'s' if n_settled != 1 else ''} adjudicated by "
        f"{adjudication.reviewer} ({state}); the rest stay empty."
    )


def final_tip(
    row: ComparisonRow, settled: AdjudicatedItem | None, adjudication: ReviewerReading | None
) -> str:
    if settled is None or adjudication is None:
        return f"{item_label(row)}: not adjudicated; no final value yet."
    marks = ", ".join(FIDUCIAL_LABELS.get(m, m) for m in settled.marks)
    state = "signed" if adjudication.status == "signed_off" else "not signed yet"
    rest = (
        "the automatic marks"
        if settled.base_reviewer is None
        else f"{settled.base_reviewer}'s reading"
    )
    return (
        f"{item_label(row)}: {_ms(settled.value_ms)}, adjudicated by {adjudication.reviewer} "
        f"({state}): {marks} set by the adjudicator, the other marks as in {rest}."
    )


def _ms(v: float | None, signed: bool = False) -> str:
    if v is None:
        return "—"
    return f"{v:+.0f} ms" if signed else f"{v:.0f} ms"


class CompareDialog(QtWidgets.QDialog):
    """Non-modal comparison window on one reading workflow. ``tell`` hears the outcome of each
    final value recorded (the window shows it, and offers to reconcile a changed file)."""

    def __init__(
        self,
        workflow: ReadingWorkflow,
        parent: QtWidgets.QWidget | None = None,
        tell: Callable[[Outcome], None] | None = None,
    ) -> None:
        super().__init__(parent)
        self.setObjectName("compare_dialog")
        self.setWindowTitle("Compare readings")
        self.workflow = workflow
        self._tell = tell
        self.comparison: Comparison | None = None
        self.a_box = QtWidgets.QComboBox()
        self.b_box = QtWidgets.QComboBox()
        self.a_box.setObjectName("reader_a")
        self.b_box.setObjectName("reader_b")
        self.tol: dict[str, QtWidgets.QDoubleSpinBox] = {}
        tol_row = QtWidgets.QHBoxLayout()
        tol_row.addWidget(QtWidgets.QLabel("Reader A"))
        tol_row.addWidget(self.a_box)
        tol_row.addWidget(QtWidgets.QLabel("Reader B"))
        tol_row.addWidget(self.b_box)
        tol_row.addSpacing(16)
        tol_row.addWidget(QtWidgets.QLabel("Tolerance:"))
        # Common practice, no source: 10 ms agreement between readers on QT, QRS and PR is
        # the usual starting point of core-lab adjudication rules; the reader sets their own.
        for key, label in (("qt_ms", "QT/QTc"), ("qrs_ms", "QRS"), ("pr_ms", "PR")):
            box = QtWidgets.QDoubleSpinBox()
            box.setObjectName(f"tol_{key}")
            box.setRange(0.0, 200.0)
            box.setDecimals(0)
            box.setSuffix(" ms")
            box.setValue(10.0)
            box.setKeyboardTracking(False)
            box.valueChanged.connect(lambda _v: self.refresh())
            self.tol[key] = box
            tol_row.addWidget(QtWidgets.QLabel(label))
            tol_row.addWidget(box)
        tol_row.addStretch(1)
        self.table = QtWidgets.QTableWidget(0, len(COLUMNS))
        self.table.setObjectName("compare_table")
        self.table.setHorizontalHeaderLabels(list(COLUMNS))
        self.table.verticalHeader().hide()
        self.table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.SingleSelection)
        hh = self.table.horizontalHeader()
        hh.setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.ResizeToContents)
        hh.setStretchLastSection(True)
        self.summary = QtWidgets.QLabel("")
        self.summary.setWordWrap(True)
        self.use_a = QtWidgets.QPushButton("Use reader A's value")
        self.use_b = QtWidgets.QPushButton("Use reader B's value")
        self.set_value = QtWidgets.QPushButton("Set value…")
        self.use_a.clicked.connect(lambda: self.adjudicate("a"))
        self.use_b.clicked.connect(lambda: self.adjudicate("b"))
        self.set_value.clicked.connect(self._set_dialog)
        self.adj_note = QtWidgets.QLabel("")
        self.adj_note.setWordWrap(True)
        # What the last final value did ("No change: ..." when it was the value already).
        self.result_label = QtWidgets.QLabel("")
        self.result_label.setObjectName("compare_result")
        self.result_label.setWordWrap(True)
        buttons = QtWidgets.QHBoxLayout()
        for b in (self.use_a, self.use_b, self.set_value):
            buttons.addWidget(b)
        buttons.addWidget(self.adj_note, 1)
        close = QtWidgets.QDialogButtonBox(QtWidgets.QDialogButtonBox.StandardButton.Close)
        close.rejected.connect(self.close)
        values = QtWidgets.QWidget()
        vl = QtWidgets.QVBoxLayout(values)
        vl.setContentsMargins(0, 0, 0, 0)
        vl.addLayout(tol_row)
        vl.addWidget(self.table, 1)
        vl.addWidget(self.summary)
        vl.addLayout(buttons)
        vl.addWidget(self.result_label)
        # The readers' interpretations, statement by statement (ui/statement_compare.py).
        self.statements = StatementComparison(workflow, tell)
        self.tabs = QtWidgets.QTabWidget()
        self.tabs.addTab(values, "Values")
        self.tabs.addTab(self.statements, "Interpretation")
        lay = QtWidgets.QVBoxLayout(self)
        lay.addWidget(self.tabs, 1)
        lay.addWidget(close)
        self.a_box.activated.connect(lambda _i: self.refresh())
        self.b_box.activated.connect(lambda _i: self.refresh())
        self.table.itemSelectionChanged.connect(self._update_buttons)
        self.resize(900, 560)
        self._unsubscribe = workflow.subscribe(self._workflow_changed)
        self.fill_readers()

    def _workflow_changed(self, change: WorkflowChange) -> None:
        if change.stored:
            self.fill_readers()

    def closeEvent(self, ev: QtGui.QCloseEvent) -> None:
        self._unsubscribe()
        super().closeEvent(ev)

    # --- data --------------------------------------------------------------------------
    def _readings(self) -> dict[str, ReviewerReading]:
        w = self.workflow
        return w.readings() if w.can_compare else {}

    def fill_readers(self) -> None:
        """List the readers (adjudicators excluded); A = the first reader, B = the second."""
        readings = {k: r for k, r in self._readings().items() if r.role != "adjudicator"}
        order = sorted(
            readings, key=lambda k: ({"first": 0, "second": 1}.get(readings[k].role, 2), k)
        )
        for box, default in ((self.a_box, 0), (self.b_box, 1)):
            keep = box.currentData()
            box.clear()
            for k in order:
                box.addItem(f"{k} ({readings[k].role})", k)
            i = box.findData(keep) if keep else -1
            box.setCurrentIndex(i if i >= 0 else min(default, box.count() - 1))
        self.refresh()

    def tolerances_ms(self) -> dict[str, float]:
        qt = self.tol["qt_ms"].value()
        return {
            "qt_ms": qt,
            "qtc_bazett_ms": qt,
            "qtc_fridericia_ms": qt,
            "qrs_ms": self.tol["qrs_ms"].value(),
            "pr_ms": self.tol["pr_ms"].value(),
        }

    def _final_reading(self) -> ReviewerReading | None:
        """The adjudication the Final column shows: the adjudicator's own, as they make it, in
        their window; elsewhere the latest signed one (``resolve_final`` applies no other)."""
        from reviewapp.core.marks.final import choose_adjudication

        st = self.workflow.store
        if st is None:
            return None
        if st.role == "adjudicator":
            return st.reading
        return choose_adjudication(self._readings().values())

    def refresh(self) -> None:
        from reviewapp.core.marks import compare_readings
        from reviewapp.core.marks.final import adjudicated_items

        readings = self._readings()
        a, b = self.a_box.currentData(), self.b_box.currentData()
        self.comparison = None
        self.table.setRowCount(0)
        if a not in readings or b not in readings or a == b:
            self.summary.setText(
                "Needs two readings of this record (a first and a second reader)."
                if len(readings) < 2
                else "Choose two different readers."
            )
            self.statements.clear(self.summary.text())
            self._update_buttons()
            return
        tol = self.tolerances_ms()
        analysis = self.workflow.analysis
        comp = compare_readings(analysis, readings[a], readings[b], tol)
        final = self._final_reading()
        picked = self.statements.selected_row()
        key = None if picked is None else picked.key
        self.statements.show_readings(readings[a], readings[b], final, self._can_adjudicate())
        if key is not None:
            self.statements.select_key(key)
        # Only what an adjudicator settled is final: every other cell of the column is empty.
        finals = adjudicated_items(analysis, readings.values(), final)
        self.comparison = comp
        bold = QtGui.QFont(self.table.font())
        bold.setBold(True)
        self.table.setRowCount(len(comp.rows))
        for i, row in enumerate(comp.rows):
            cells = (
                item_label(row),
                _ms(row.a_ms) + ("" if row.source_a != "automatic" else " (auto)"),
                _ms(row.b_ms) + ("" if row.source_b != "automatic" else " (auto)"),
                _ms(row.diff_ms, signed=True),
                "—" if row.tolerance_ms is None else f"± {row.tolerance_ms:g} ms",
                verdict_text(row),
                "" if row.item not in finals else _ms(finals[row.item].value_ms),
            )
            for col, text in enumerate(cells):
                it = QtWidgets.QTableWidgetItem(text)
                it.setData(QtCore.Qt.ItemDataRole.UserRole, row.item)
                if col in (1, 2, 3, 6):
                    it.setTextAlignment(
                        QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter
                    )
                if row.flagged:
                    it.setFont(bold)
                    it.setBackground(QtGui.QColor(255, 236, 200))
                    it.setForeground(QtGui.QColor(0, 0, 0))
                it.setToolTip(
                    final_tip(row, finals.get(row.item), final)
                    if col == FINAL_COLUMN
                    else f"{item_label(row)}: {a} {_ms(row.a_ms)} ({row.source_a}), "
                    f"{b} {_ms(row.b_ms)} ({row.source_b})"
                )
                self.table.setItem(i, col, it)
        n = len(comp.flagged)
        self.summary.setText(
            f"{n} item{'s' if n != 1 else ''} beyond tolerance or present for one reader only "
            f"(A = {a}, B = {b}; fiducials of the median beat, intervals recomputed from each "
            "reader's marks; '(auto)' = the reader kept the automatic mark). "
            + final_words(final, len(finals))
        )
        self._update_buttons()

    # --- adjudication ------------------------------------------------------------------
    def selected_row(self) -> ComparisonRow | None:
        if self.comparison is None:
            return None
        items = self.table.selectedItems()
        if not items:
            return None
        return self.comparison.row(items[0].data(QtCore.Qt.ItemDataRole.UserRole))

    def select_item(self, item: str) -> None:
        for r in range(self.table.rowCount()):
            cell = self.table.item(r, 0)
            if cell is not None and cell.data(QtCore.Qt.ItemDataRole.UserRole) == item:
                self.table.selectRow(r)
                return

    def _can_adjudicate(self) -> bool:
        st = self.workflow.store
        return st is not None and st.role == "adjudicator" and not st.read_only

    def _update_buttons(self) -> None:
        row = self.selected_row()
        can = self._can_adjudicate()
        from reviewapp.core.marks import INTERVAL_ENDS

        pickable = row is not None and (
            row.kind == "fiducial" or ADOPTS.get(row.item, row.item) in INTERVAL_ENDS
        )
        self.use_a.setEnabled(can and pickable)
        self.use_b.setEnabled(can and pickable)
        self.set_value.setEnabled(can and row is not None and row.kind == "fiducial")
        self.adj_note.setText(
            "Final values are recorded in the marks file's audit trail."
            if can
            else "To record final values, open the record as adjudicator "
            "(File ▸ Reading role ▸ Adjudicator) under an id that is not one of the readers'."
        )

    def adjudicate(self, which: str, value_ms: float | None = None) -> bool:
        """Record the final value of the selected item: reader A's ("a"), B's ("b"), or
        ("set") ``value_ms`` (fiducials only, ms from R)."""
        row = self.selected_row()
        if row is None or self.comparison is None:
            return False
        who = self.comparison.reviewer_a if which == "a" else self.comparison.reviewer_b
        decisions = self.workflow.decisions
        if row.kind == "fiducial":
            if which == "set":
                v_ms, source = value_ms, "set"
            else:
                v_ms, source = (row.a_ms if which == "a" else row.b_ms), who
            out = decisions.adjudicate_fiducial(
                row.item, None if v_ms is None else v_ms / 1000.0, source
            )
        else:
            interval = ADOPTS.get(row.item, row.item)
            out = decisions.adopt_interval(interval, ITEM_LABELS.get(interval, interval), who)
        self.result_label.setText(out.message)
        if self._tell is not None:
            self._tell(out)
        self.refresh()
        self.select_item(row.item)
        return out.done

    def _set_dialog(self) -> None:
        row = self.selected_row()
        if row is None:
            return
        start = row.a_ms if row.a_ms is not None else (row.b_ms or 0.0)
        v, ok = QtWidgets.QInputDialog.getDouble(
            self,
            "Set final value",
            f"{item_label(row)}:",
            start,
            -2000.0,
            2000.0,
            0,
        )
        if ok:
            self.adjudicate("set", v)
