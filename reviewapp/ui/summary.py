"""Summary dock: the reading's measurements beside their normal limits, and their reasons.

Each value out of its limits is flagged in words and by a glyph (▲ above, ▼ below), never by
colour alone; the tooltip names the limit's source and how the value was computed (which marks,
which formula). Flags come from the reading's findings only (the global table and the per-lead
grid alike), so no cell is flagged by a rule of its own. A value with a reason (not measured,
not comparable with its limits, a criterion not applied, less reliable) says it in its cell,
in the words of ``reason_text``; the list under the table gives each reason's full text with
its source. Values are always the current ``Reading``'s, recomputed from the marks.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.fiducials import FIDUCIAL_LABELS, FIDUCIALS
from reviewapp.core.measure import Finding, NormalRange, ValueReason, limit_text, normal_range
from reviewapp.core.measure import reason_text as rt
from reviewapp.core.measure.findings import finding_for_value

if TYPE_CHECKING:
    from reviewapp.core.engine import Reading
    from reviewapp.core.record import SubjectFacts

# (field, label, unit, decimals, how it is computed)
GLOBAL_ROWS: tuple[tuple[str, str, str, int, str], ...] = (
    (
        "hr_bpm",
        "Heart rate",
        "bpm",
        0,
        "60000 / mean RR of consecutive dominant beats (every beat in an irregular rhythm)",
    ),
    (
        "ventricular_rate_bpm",
        "Ventricular rate",
        "bpm",
        0,
        "every QRS, premature beats included: (beats − 1) × 60 / time from first to last R",
    ),
    ("rr_ms", "RR", "ms", 0, "mean RR of consecutive dominant beats (the RR used for QTc)"),
    ("p_ms", "P", "ms", 0, "P end − P onset of the median beat (global marks, all leads)"),
    ("pr_ms", "PR", "ms", 0, "QRS onset − P onset of the median beat (global marks)"),
    ("qrs_ms", "QRS", "ms", 0, "QRS end − QRS onset of the median beat (global marks)"),
    ("qt_ms", "QT", "ms", 0, "T end − QRS onset of the median beat (global marks)"),
    ("qtc_bazett_ms", "QTc Bazett", "ms", 0, "QT / √(RR in s) — Bazett, Heart 7:353, 1920"),
    (
        "qtc_fridericia_ms",
        "QTc Fridericia",
        "ms",
        0,
        "QT / ∛(RR in s) — Fridericia, Acta Med Scand 53:469, 1920",
    ),
    (
        "qtc_framingham_ms",
        "QTc Framingham",
        "ms",
        0,
        "QT + 154 ms × (1 − RR in s) — Sagie et al., Am J Cardiol 70:797, 1992",
    ),
    ("qtc_hodges_ms", "QTc Hodges", "ms", 0, "QT + 1.75 ms × (HR − 60) — Hodges et al., 1983"),
    # Beside the QTc when it is not comparable with its limits (wide or paced QRS).
    (
        "jt_ms",
        "JT",
        "ms",
        0,
        "QT − QRS duration: QRS end (J point) to T end — Rautaharju et al., Circulation 2009",
    ),
    ("jtc_bazett_ms", "JTc Bazett", "ms", 0, "JT / √(RR in s) — Bazett, Heart 7:353, 1920"),
    (
        "qt_bogossian_ms",
        "QT adjusted",
        "ms",
        0,
        "QT − 0.485 × QRS duration — Bogossian et al., Heart Rhythm 2014",
    ),
    ("p_axis_deg", "P axis", "°", 0, "frontal-plane axis from P areas in I and aVF"),
    ("qrs_axis_deg", "QRS axis", "°", 0, "frontal-plane axis from QRS areas in I and aVF"),
    ("t_axis_deg", "T axis", "°", 0, "frontal-plane axis from T areas in I and aVF"),
)
# The marks each interval depends on, to say in the tooltip which of them the reader corrected.
USES_MARKS: dict[str, tuple[str, ...]] = {
    "p_ms": ("p_on", "p_off"),
    "pr_ms": ("p_on", "qrs_on"),
    "qrs_ms": ("qrs_on", "qrs_off"),
    "qt_ms": ("qrs_on", "t_off"),
    "qtc_bazett_ms": ("qrs_on", "t_off"),
    "qtc_fridericia_ms": ("qrs_on", "t_off"),
    "qtc_framingham_ms": ("qrs_on", "t_off"),
    "qtc_hodges_ms": ("qrs_on", "t_off"),
    "jt_ms": ("qrs_on", "qrs_off", "t_off"),
    "jtc_bazett_ms": ("qrs_on", "qrs_off", "t_off"),
    "qt_bogossian_ms": ("qrs_on", "qrs_off", "t_off"),
    "p_axis_deg": ("p_on", "p_off"),
    "qrs_axis_deg": ("qrs_on", "qrs_off"),
    "t_axis_deg": ("qrs_off", "t_off"),
}
# The same for the per-lead values (amplitudes from the isoelectric level before QRS onset,
# ST levels at and after each lead's J point).
LEAD_USES_MARKS: dict[str, tuple[str, ...]] = {
    "p_mv": ("p_on", "p_off", "qrs_on"),
    "q_mv": ("qrs_on", "qrs_off"),
    "r_mv": ("qrs_on", "qrs_off"),
    "s_mv": ("qrs_on", "qrs_off"),
    "t_mv": ("qrs_on", "qrs_off", "t_off"),
    "st_j_mv": ("qrs_on", "qrs_off"),
    "st_j60_mv": ("qrs_on", "qrs_off"),
    "st_j80_mv": ("qrs_on", "qrs_off"),
    "q_ms": ("qrs_on", "qrs_off"),
    "sokolow_lyon_mv": ("qrs_on", "qrs_off"),
    "cornell_mv": ("qrs_on", "qrs_off"),
    "qtc_ms": ("qrs_on", "t_off"),  # the finding that merges the QTc formulas
}
# Values from R peaks alone: shown in a blinded read even with the automatic marks hidden.
MARK_FREE = frozenset({"hr_bpm", "ventricular_rate_bpm", "rr_ms", "rr_sd_ms"})


def waits_for_marks(quantity: str, corrected: set[str]) -> bool:
    """Whether ``quantity`` depends on a mark the reader has not set (a blinded read with the
    automatic marks hidden shows it only once they are). Fails closed: a quantity missing from
    USES_MARKS, LEAD_USES_MARKS and MARK_FREE waits for every mark."""
    if quantity in MARK_FREE:
        return False
    marks = USES_MARKS.get(quantity) or LEAD_USES_MARKS.get(quantity) or FIDUCIALS
    return any(m not in corrected for m in marks)


# A lead's group of values ("V1.st", "V1.qrs") stands for one of its fields.
_GROUP_FIELD = {"st": "st_j_mv", "qrs": "r_mv"}


def reason_waits_for_marks(reason: ValueReason, corrected: set[str]) -> bool:
    """Whether a reason, like its value, waits for the reader's marks in a blinded read with
    the automatic marks hidden (the same rule, ``waits_for_marks``): the marks of the value it
    concerns, and for a value not comparable or a criterion not applied, those of the QRS
    duration that decides it. A whole lead or any name not in the tables waits for every mark."""
    _, sep, field = reason.quantity.partition(".")
    value = _GROUP_FIELD.get(field, field) if sep else reason.quantity
    if waits_for_marks(value, corrected):
        return True
    return reason.kind in ("not_comparable", "gated") and waits_for_marks("qrs_ms", corrected)


def unset_marks_text(corrected: set[str]) -> str:
    """What a blinded reader with the automatic marks hidden still has to set."""
    missing = [FIDUCIAL_LABELS[m] for m in FIDUCIALS if m not in corrected]
    return (
        "Values and findings wait for your marks: set "
        + ", ".join(missing)
        + " on the median beat (each value appears once the marks it is measured from are set)."
    )


# Rows shown only beside a QTc that is not comparable with its limits.
WIDE_QRS_ROWS = frozenset({"jt_ms", "jtc_bazett_ms", "qt_bogossian_ms"})
LEAD_COLUMNS: tuple[tuple[str, str], ...] = (
    ("p_mv", "P"),
    ("q_mv", "Q"),
    ("r_mv", "R"),
    ("s_mv", "S"),
    ("t_mv", "T"),
    ("st_j_mv", "ST J"),
    ("st_j60_mv", "ST J+60"),
    ("st_j80_mv", "ST J+80"),
)
# The finding a per-lead cell carries: its own quantity, except the Q wave (a Q-wave finding
# is on its duration; the grid shows its depth).
LEAD_FINDING = {"q_mv": "q_ms"}
ABOVE, BELOW = "▲", "▼"
_RIGHT = QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter


def range_text(r: NormalRange | None) -> str:
    """The normal range as every output writes it (``limit_text.range_text``)."""
    return limit_text.range_text(r, missing="—")


def finding_of(
    quantity: str,
    value: float | None,
    rng: NormalRange | None,
    findings: tuple[Finding, ...],
    lead: str | None = None,
) -> Finding | None:
    """The finding that flags this value (``findings.finding_for_value``; a per-lead Q
    column carries its lead's Q-wave finding)."""
    own = LEAD_FINDING.get(quantity, quantity) if lead is not None else quantity
    return finding_for_value(own, value, rng, findings, lead)


def flag_for(
    quantity: str,
    value: float | None,
    rng: NormalRange | None,
    findings: tuple[Finding, ...],
    lead: str | None = None,
) -> tuple[str, str]:
    """(short flag text with glyph, the finding's sentence) — empty strings when no finding
    flags the value."""
    f = finding_of(quantity, value, rng, findings, lead)
    if f is None:
        return "", ""
    glyph = ABOVE if f.direction == "above" else BELOW
    return f"{glyph} {limit_text.flag_text(f.direction)}", f.text


def finding_line(f: Finding) -> str:
    """A finding in words with its glyph (▲ above, ▼ below), e.g. '▲ QTc Bazett 456 ms ...'."""
    return f"{ABOVE if f.direction == 'above' else BELOW} {f.text}"


def _bold_label(text: str) -> QtWidgets.QLabel:
    label = QtWidgets.QLabel(text)
    font = label.font()
    font.setBold(True)
    label.setFont(font)
    return label


MIN_WIDTH_PX = 470  # the dock's own minimum width (main_window)


class SummaryPanel(QtWidgets.QWidget):
    """Global values table, the reasons and cautions, findings, and per-lead amplitudes and ST
    levels on demand; everything in one scrolling column, so nothing is cut when the dock is
    short."""

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self.table = QtWidgets.QTableWidget(len(GLOBAL_ROWS), 4)
        self.table.setHorizontalHeaderLabels(["", "Value", "Normal", "Flag / reason"])
        self.table.verticalHeader().hide()
        self.table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        self.table.setFocusPolicy(QtCore.Qt.FocusPolicy.NoFocus)
        self.table.setWordWrap(True)
        self._row_texts: list[str] = []
        hh = self.table.horizontalHeader()
        hh.setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.ResizeToContents)
        hh.setStretchLastSection(True)
        # A long reason wraps onto a second line at the width the column ends up with.
        hh.sectionResized.connect(lambda *_: self.table.resizeRowsToContents())
        for row, (key, *_rest) in enumerate(GLOBAL_ROWS):
            self.table.setRowHidden(row, key in WIDE_QRS_ROWS)
        self.per_lead_button = QtWidgets.QToolButton()
        self.per_lead_button.setText("Per-lead amplitudes and ST levels")
        self.per_lead_button.setCheckable(True)
        self.per_lead_button.setToolButtonStyle(QtCore.Qt.ToolButtonStyle.ToolButtonTextOnly)
        self.leads_table = QtWidgets.QTableWidget(0, len(LEAD_COLUMNS) + 1)
        self.leads_table.setHorizontalHeaderLabels(["Lead", *[c for _, c in LEAD_COLUMNS]])
        self.leads_table.verticalHeader().hide()
        self.leads_table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.leads_table.horizontalHeader().setSectionResizeMode(
            QtWidgets.QHeaderView.ResizeMode.ResizeToContents
        )
        self.leads_table.setVisible(False)
        self.per_lead_button.toggled.connect(self._show_leads)
        self._last: tuple[Reading, SubjectFacts] | None = None
        self._reasons: tuple[ValueReason, ...] = ()  # the reasons shown (blinded: not waiting)
        self._lead_hidden: set[str] = set()  # per-lead columns hidden (marks not yet set)
        self.caliper_label = QtWidgets.QLabel("")
        self.caliper_label.setWordWrap(True)
        self.status = QtWidgets.QLabel("")
        self.status.setWordWrap(True)
        # The reasons and cautions: each reason's full text once, with its source.
        self.reasons_label = _bold_label("Reasons and cautions")
        self.reasons_box = QtWidgets.QWidget()
        self.reasons_box.setObjectName("reasons_box")
        self.reasons_layout = QtWidgets.QVBoxLayout(self.reasons_box)
        self.reasons_layout.setContentsMargins(0, 0, 0, 0)
        self.reasons_layout.setSpacing(3)
        self._reason_labels: list[QtWidgets.QLabel] = []
        self._reasons_shown: list[tuple[str, str]] | None = None
        self.findings_label = _bold_label("Findings")
        # Each finding in words with its glyph; the tooltip names the limit's source.
        self.findings = QtWidgets.QListWidget()
        self.findings.setObjectName("findings_list")
        self.findings.setWordWrap(True)
        self.findings.setFocusPolicy(QtCore.Qt.FocusPolicy.NoFocus)
        self.findings.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        self.findings.setMaximumHeight(130)
        ff = QtGui.QFont(self.findings.font())
        ff.setPointSizeF(max(ff.pointSizeF(), 10.0))
        self.findings.setFont(ff)
        self.table.setSizeAdjustPolicy(
            QtWidgets.QAbstractScrollArea.SizeAdjustPolicy.AdjustToContents
        )
        self.table.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.table.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.table.setSizePolicy(
            QtWidgets.QSizePolicy.Policy.Preferred, QtWidgets.QSizePolicy.Policy.Maximum
        )
        # The per-lead grid shows every lead at once (the column scrolls, not the grid).
        self.leads_table.setSizeAdjustPolicy(
            QtWidgets.QAbstractScrollArea.SizeAdjustPolicy.AdjustToContents
        )
        self.leads_table.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        inner = QtWidgets.QWidget()
        inner.setObjectName("summary_column")
        lay = QtWidgets.QVBoxLayout(inner)
        lay.setContentsMargins(6, 6, 6, 6)
        lay.addWidget(self.status)
        lay.addWidget(self.table)
        lay.addWidget(self.reasons_label)
        lay.addWidget(self.reasons_box)
        lay.addWidget(self.findings_label)
        lay.addWidget(self.findings)
        lay.addWidget(self.per_lead_button)
        lay.addWidget(self.leads_table)
        lay.addWidget(self.caliper_label)
        lay.addStretch(1)
        self.column_scroll = QtWidgets.QScrollArea()
        self.column_scroll.setWidgetResizable(True)
        self.column_scroll.setFrameShape(QtWidgets.QFrame.Shape.NoFrame)
        self.column_scroll.setHorizontalScrollBarPolicy(
            QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff
        )
        self.column_scroll.setWidget(inner)
        self._column = inner
        outer = QtWidgets.QVBoxLayout(self)
        outer.setContentsMargins(0, 0, 0, 0)
        outer.addWidget(self.column_scroll)
        # Wide enough for a value, its range and a reason of a few words side by side.
        self.setMinimumWidth(MIN_WIDTH_PX)
        f = self.table.font()
        f.setPointSizeF(max(f.pointSizeF(), 10.5))
        self.table.setFont(f)
        self._values: dict[str, str] = {}
        self._findings_shown: list[tuple[str, str]] | None = None
        self._show_reasons(())

    def sizeHint(self) -> QtCore.QSize:
        """The whole column: the dock asks for room to show it without scrolling."""
        inner = self._column.sizeHint()
        return QtCore.QSize(max(inner.width(), MIN_WIDTH_PX), inner.height())

    def hold_column_widths(self, hold: bool) -> None:
        """While a mark is dragged the values table keeps its column widths: fitting the
        columns to their contents on every step of the drag costs more than the values."""
        mode = (
            QtWidgets.QHeaderView.ResizeMode.Interactive
            if hold
            else QtWidgets.QHeaderView.ResizeMode.ResizeToContents
        )
        hh = self.table.horizontalHeader()
        for col in range(self.table.columnCount() - 1):  # the last one stretches
            if hh.sectionResizeMode(col) != mode:
                hh.setSectionResizeMode(col, mode)

    def value_text(self, quantity: str) -> str:
        """The text shown for ``quantity`` (tests read what the reader reads)."""
        return self._values.get(quantity, "")

    def row_of(self, quantity: str) -> int:
        """The global table's row of ``quantity``."""
        return [k for k, *_ in GLOBAL_ROWS].index(quantity)

    def show_reading(
        self,
        reading: Reading | None,
        subject: SubjectFacts,
        corrected: set[str],
        *,
        hide_automatic: bool = False,
    ) -> None:
        """Fill the tables. ``corrected``: global fiducials of the median beat the reader moved.
        ``hide_automatic`` (blinded read without the automatic values): an interval, a reason
        and a finding are shown only once the reader has set the marks they depend on."""
        self._values.clear()
        if reading is None:
            self.status.setText("Analysing…")
            self.table.clearContents()
            self.leads_table.setRowCount(0)
            self._show_reasons(())
            self._show_findings((), "")
            return
        iv = reading.measurements.intervals
        reasons = tuple(getattr(reading, "reasons", ()))
        if hide_automatic:
            reasons = tuple(r for r in reasons if not reason_waits_for_marks(r, corrected))
        self._reasons = reasons
        # JT, JTc and the QRS-adjusted QT beside a QTc that is not comparable with its limits.
        beside_qtc = any(
            r.kind == "not_comparable" and r.quantity.startswith("qtc_") for r in reasons
        )
        n_flags = 0
        in_cells: set[str] = set()  # quantities whose reason a visible cell states
        normal = QtGui.QFont(self.table.font())
        bold = QtGui.QFont(normal)
        bold.setBold(True)
        small = QtGui.QFont(normal)  # a reason is read after its value: a size smaller
        small.setPointSizeF(normal.pointSizeF() - 1.0)
        for row, (key, label, unit, _dec, how) in enumerate(GLOBAL_ROWS):
            hide_row = key in WIDE_QRS_ROWS and not beside_qtc
            if self.table.isRowHidden(row) != hide_row:
                self.table.setRowHidden(row, hide_row)
            if hide_row:
                continue
            in_cells.add(key)
            v = getattr(iv, key, None)
            rng = normal_range(key, subject)
            hidden = hide_automatic and waits_for_marks(key, corrected)
            mine = rt.for_quantity(reasons, key)
            # Not comparable with its limits, or a criterion not applied: no flag, no range.
            judged = not any(r.kind in ("not_comparable", "gated") for r in mine)
            flag, why = (
                ("", "") if hidden or not judged else flag_for(key, v, rng, reading.findings)
            )
            # Each reason on its own line (the column is narrow; rows grow to fit).
            instead_of_range, note = (
                ("", "") if hidden else rt.cell_parts(mine, sep="\n", caution_word_only=True)
            )
            if v is None and not hidden and not note:
                note = "not measured"
            text = "set marks" if hidden else limit_text.value_text(v, unit)
            self._values[key] = text
            moved = [FIDUCIAL_LABELS[m] for m in USES_MARKS.get(key, ()) if m in corrected]
            tip = [f"How computed: {how}."]
            if key in USES_MARKS:
                marks = ", ".join(FIDUCIAL_LABELS[m] for m in USES_MARKS[key])
                tip.append(
                    f"Marks used: {marks}"
                    + (
                        f" (corrected by the reader: {', '.join(moved)})"
                        if moved
                        else " (automatic)"
                    )
                )
            if rng is not None:
                who = getattr(rng, "applies_to", "")
                tip.append(
                    f"Normal limits{f' ({who})' if who else ''}: {range_text(rng)}. "
                    f"Source: {rng.source}"
                )
            else:
                tip.append("No normal limit in the table for this value.")
            if why:
                tip.append(why)
            tip += [r.text + "." for r in mine]
            tip_text = "\n".join(tip)
            shown_range = range_text(rng) if judged else instead_of_range
            cells = [
                label + (" ✎" if moved else ""),
                text,
                shown_range,
                "\n".join(t for t in (flag, note) if t),
            ]
            for col, t in enumerate(cells):
                # Update items in place: this runs on every step of a mark drag.
                item = self.table.item(row, col)
                if item is None:
                    item = QtWidgets.QTableWidgetItem()
                    if col == 1:
                        item.setTextAlignment(_RIGHT)
                    self.table.setItem(row, col, item)
                if item.text() != t:
                    item.setText(t)
                if item.toolTip() != tip_text:
                    item.setToolTip(tip_text)
                # Bold: the flagged value and its flag; a reason a size smaller.
                if col == 2:
                    want = normal if judged else small
                elif col == 3:
                    want = bold if flag else small
                else:
                    want = bold if flag else normal
                if item.font() != want:
                    item.setFont(want)
            n_flags += bool(flag)
        items = (self.table.item(r, 3) for r in range(len(GLOBAL_ROWS)))
        texts = [item.text() for item in items if item is not None]
        if self._row_texts != texts:
            self._row_texts = texts
            self.table.resizeRowsToContents()  # a long reason wraps onto a second line
            self.updateGeometry()  # rows shown or hidden, taller or shorter: a new size
        shown = tuple(
            f
            for f in reading.findings
            if not (hide_automatic and waits_for_marks(f.quantity, corrected))
        )
        waiting = (
            unset_marks_text(corrected) if hide_automatic and set(FIDUCIALS) - corrected else ""
        )
        statements = rt.statements(reasons, shown=in_cells)
        extra = len([f for f in shown if f.lead is not None])
        self.status.setText(
            f"{n_flags} value{'s' if n_flags != 1 else ''} outside limits"
            + (" among those shown (the others wait for your marks)" if waiting else "")
            + (
                f"; {extra} per-lead finding{'s' if extra != 1 else ''} (see per-lead table)"
                if extra
                else ""
            )
            + (
                f"; {len(statements)} reason{'s' if len(statements) != 1 else ''} and "
                "cautions below"
                if statements
                else ""
            )
            + (
                f"; {len(corrected)} mark{'s' if len(corrected) != 1 else ''} corrected"
                if corrected
                else ""
            )
            + ". Hover a row for its source."
        )
        self._show_reasons(statements)
        self._show_findings(shown, waiting)
        self._last = (reading, subject)
        hide = {k for k, _ in LEAD_COLUMNS if waits_for_marks(k, corrected)}
        self._lead_hidden = hide if hide_automatic else set()
        if self.leads_table.isVisible():
            self._fill_leads(reading, subject)

    def _show_reasons(self, statements: tuple[rt.Statement, ...]) -> None:
        texts = [(s.text, rt.KIND_WORDS.get(s.kind, s.kind)) for s in statements]
        if texts == self._reasons_shown:
            return  # unchanged (most steps of a mark drag): no relayout of the dock
        self._reasons_shown = texts
        for label in self._reason_labels:
            self.reasons_layout.removeWidget(label)
            # Hidden now: deleteLater waits for the event loop, and until then the old text
            # would be painted under the new (a grab or a nested loop shows both).
            label.hide()
            label.deleteLater()
        self._reason_labels = []
        for text, kind in texts:
            label = QtWidgets.QLabel(f"• {text}")
            label.setWordWrap(True)
            label.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
            label.setToolTip(f"Kind: {kind}")
            self.reasons_layout.addWidget(label)
            self._reason_labels.append(label)
        self.reasons_label.setText(f"Reasons and cautions ({len(texts)})")
        self.reasons_label.setVisible(bool(texts))
        self.reasons_box.setVisible(bool(texts))

    def reason_texts(self) -> list[str]:
        """The reasons and cautions as the reader reads them (without the bullet)."""
        return [label.text().removeprefix("• ") for label in self._reason_labels]

    def _show_findings(self, findings: tuple[Finding, ...], waiting: str) -> None:
        texts = [(finding_line(f), f"Source: {f.source}") for f in findings]
        if waiting:
            texts.insert(0, (waiting, "A blinded read with the automatic marks hidden."))
        if texts == self._findings_shown:
            return  # unchanged (most steps of a mark drag): no relayout of the dock
        self._findings_shown = texts
        self.findings.clear()
        for text, tip in texts:
            item = QtWidgets.QListWidgetItem(text)
            item.setToolTip(tip)
            self.findings.addItem(item)
        if not texts:
            self.findings.addItem(QtWidgets.QListWidgetItem("No value outside its limits."))
        n = len(findings)
        self.findings_label.setText(f"Findings ({n})" if n else "Findings")

    def finding_texts(self) -> list[str]:
        return [self.findings.item(i).text() for i in range(self.findings.count())]

    def _show_leads(self, on: bool) -> None:
        self.leads_table.setVisible(on)
        if on and self._last is not None:
            self._fill_leads(*self._last)

    def _fill_leads(self, reading: Reading, subject: SubjectFacts) -> None:
        leads = reading.measurements.leads
        self.leads_table.setRowCount(len(leads))
        for r, lm in enumerate(leads):
            self.leads_table.setItem(r, 0, QtWidgets.QTableWidgetItem(lm.lead))
            for c, (key, _label) in enumerate(LEAD_COLUMNS, start=1):
                v = getattr(lm, key, None)
                rng = normal_range(key, subject, lead=lm.lead) if key.startswith("st_") else None
                # The flag is the findings list's, the same finding (two contiguous leads,
                # backed by J+60): never a cell's own comparison with its range.
                flag, why = flag_for(key, v, rng, reading.findings, lead=lm.lead)
                mine = rt.for_lead_value(self._reasons, lm.lead, key)
                text = "—" if v is None else limit_text.number_text(v, "mV", signed=True)
                if key in self._lead_hidden:  # blinded, automatic marks hidden: not yet set
                    flag, why, text, mine = "", "", "set marks", ()
                item = QtWidgets.QTableWidgetItem(f"{text} {flag.split(' ')[0]}" if flag else text)
                tip = f"{lm.lead} {_label}: {text} mV (from the isoelectric level at QRS onset)"
                if key in self._lead_hidden:
                    tip = f"{lm.lead} {_label}: shown once the marks it is measured from are set"
                elif v is None:
                    tip = f"{lm.lead} {_label}: not measured"
                if rng is not None:
                    tip += f"\nNormal limits: {range_text(rng)}. Source: {rng.source}"
                if why:
                    tip += f"\n{why}"
                for reason in mine:
                    tip += f"\n{reason.text}."
                item.setToolTip(tip)
                item.setTextAlignment(
                    QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter
                )
                self.leads_table.setItem(r, c, item)

    def show_calipers(self, lines: list[str]) -> None:
        self.caliper_label.setText("Calipers:\n" + "\n".join(lines) if lines else "")
