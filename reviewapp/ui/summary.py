"""Summary dock: the reading's measurements beside their normal limits.

Each value out of its limits is flagged in words and by a glyph (▲ above, ▼ below), never by
colour alone; the tooltip names the limit's source and how the value was computed (which marks,
which formula). Values are always the current ``Reading``'s, recomputed from the marks.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.fiducials import FIDUCIAL_LABELS, FIDUCIALS
from reviewapp.core.measure import Finding, NormalRange, limit_text, normal_range
from reviewapp.core.measure.findings import LABELS, judged

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
ABOVE, BELOW = "▲", "▼"
_RIGHT = QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter


def range_text(r: NormalRange | None) -> str:
    """The normal range as every output writes it (``limit_text.range_text``)."""
    return limit_text.range_text(r, missing="—")


def flag_for(
    quantity: str,
    value: float | None,
    rng: NormalRange | None,
    findings: tuple[Finding, ...],
    lead: str | None = None,
) -> tuple[str, str]:
    """(short flag text with glyph, long explanation) — empty strings when within limits."""
    if value is None:
        return "", ""
    for f in findings:
        if f.quantity == quantity and f.lead == lead:
            glyph = ABOVE if f.direction == "above" else BELOW
            return f"{glyph} {limit_text.flag_text(f.direction)}", f.text
    direction = limit_text.direction_of(rng, value)
    if rng is not None and direction:
        glyph = ABOVE if direction == "above" else BELOW
        label = LABELS.get(quantity, quantity) + (f" in {lead}" if lead else "")
        why = limit_text.finding_text(label, limit_text.shown(value, rng.unit), rng, direction)
        return f"{glyph} {limit_text.flag_text(direction)}", why
    return "", ""


def finding_line(f: Finding) -> str:
    """A finding in words with its glyph (▲ above, ▼ below), e.g. '▲ QTc Bazett 456 ms ...'."""
    return f"{ABOVE if f.direction == 'above' else BELOW} {f.text}"


class SummaryPanel(QtWidgets.QWidget):
    """Global values table, and per-lead amplitudes/ST levels on demand."""

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self.table = QtWidgets.QTableWidget(len(GLOBAL_ROWS), 4)
        self.table.setHorizontalHeaderLabels(["", "Value", "Normal", "Flag"])
        self.table.verticalHeader().hide()
        self.table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        self.table.setFocusPolicy(QtCore.Qt.FocusPolicy.NoFocus)
        hh = self.table.horizontalHeader()
        hh.setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.ResizeToContents)
        hh.setStretchLastSection(True)
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
        self._lead_hidden: set[str] = set()  # per-lead columns hidden (marks not yet set)
        self.caliper_label = QtWidgets.QLabel("")
        self.caliper_label.setWordWrap(True)
        self.status = QtWidgets.QLabel("")
        self.status.setWordWrap(True)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(6, 6, 6, 6)
        lay.addWidget(self.status)
        self.table.setSizeAdjustPolicy(
            QtWidgets.QAbstractScrollArea.SizeAdjustPolicy.AdjustToContents
        )
        self.table.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.table.setSizePolicy(
            QtWidgets.QSizePolicy.Policy.Preferred, QtWidgets.QSizePolicy.Policy.Maximum
        )
        lay.addWidget(self.table)
        self.findings_label = QtWidgets.QLabel("Findings")
        fb = self.findings_label.font()
        fb.setBold(True)
        self.findings_label.setFont(fb)
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
        lay.addWidget(self.findings_label)
        lay.addWidget(self.findings)
        lay.addWidget(self.per_lead_button)
        lay.addWidget(self.leads_table, 2)
        lay.addWidget(self.caliper_label)
        lay.addStretch(1)
        f = self.table.font()
        f.setPointSizeF(max(f.pointSizeF(), 10.5))
        self.table.setFont(f)
        self._values: dict[str, str] = {}
        self._findings_shown: list[tuple[str, str]] | None = None

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

    def show_reading(
        self,
        reading: Reading | None,
        subject: SubjectFacts,
        corrected: set[str],
        *,
        hide_automatic: bool = False,
    ) -> None:
        """Fill the tables. ``corrected``: global fiducials of the median beat the reader moved.
        ``hide_automatic`` (blinded read without the automatic values): an interval is shown
        only once the reader has set both of its marks."""
        self._values.clear()
        if reading is None:
            self.status.setText("Analysing…")
            self.table.clearContents()
            self.leads_table.setRowCount(0)
            self._show_findings(())
            return
        iv = reading.measurements.intervals
        n_flags = 0
        bold = QtGui.QFont(self.table.font())
        bold.setBold(True)
        for row, (key, label, unit, _dec, how) in enumerate(GLOBAL_ROWS):
            v = getattr(iv, key, None)
            rng = normal_range(key, subject)
            hidden = hide_automatic and waits_for_marks(key, corrected)
            flag, why = ("", "") if hidden else flag_for(key, v, rng, reading.findings)
            if not judged(reading.measurements, key):
                flag, why = "", "Not judged against this limit: paced rhythm."
            text = limit_text.value_text(v, unit)
            if hidden:
                text = "set marks"
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
            if v is None:
                reason = dict(reading.measurements.unmeasured).get(key)
                tip.append(f"Not measured{': ' + reason if reason else ''}.")
            if why:
                tip.append(why)
            tip_text = "\n".join(tip)
            cells = [label + (" ✎" if moved else ""), text, range_text(rng), flag]
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
                if item.font().bold() != bool(flag):
                    item.setFont(bold if flag else self.table.font())
            n_flags += bool(flag)
        shown = tuple(
            f
            for f in reading.findings
            if not (hide_automatic and waits_for_marks(f.quantity, corrected))
        )
        extra = len([f for f in shown if f.lead is not None])
        self.status.setText(
            f"{n_flags} value{'s' if n_flags != 1 else ''} outside limits"
            + (
                f"; {extra} per-lead finding{'s' if extra != 1 else ''} (see per-lead table)"
                if extra
                else ""
            )
            + (
                f"; {len(corrected)} mark{'s' if len(corrected) != 1 else ''} corrected"
                if corrected
                else ""
            )
            + ". Hover a row for its source."
        )
        self._show_findings(shown)
        self._last = (reading, subject)
        hide = {k for k, _ in LEAD_COLUMNS if waits_for_marks(k, corrected)}
        self._lead_hidden = hide if hide_automatic else set()
        if self.leads_table.isVisible():
            self._fill_leads(reading, subject)

    def _show_findings(self, findings: tuple[Finding, ...]) -> None:
        texts = [(finding_line(f), f"Source: {f.source}") for f in findings]
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
        self.findings_label.setText(f"Findings ({len(texts)})" if texts else "Findings")

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
                flag, why = flag_for(key, v, rng, reading.findings, lead=lm.lead)
                text = "—" if v is None else limit_text.number_text(v, "mV", signed=True)
                if key in self._lead_hidden:  # blinded, automatic marks hidden: not yet set
                    flag, why, text = "", "", "set marks"
                item = QtWidgets.QTableWidgetItem(f"{text} {flag.split(' ')[0]}" if flag else text)
                tip = f"{lm.lead} {_label}: {text} mV (from the isoelectric level at QRS onset)"
                if key in self._lead_hidden:
                    tip = f"{lm.lead} {_label}: shown once the marks it is measured from are set"
                if rng is not None:
                    tip += f"\nNormal limits: {range_text(rng)}. Source: {rng.source}"
                if why:
                    tip += f"\n{why}"
                item.setToolTip(tip)
                item.setTextAlignment(
                    QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter
                )
                self.leads_table.setItem(r, c, item)

    def show_calipers(self, lines: list[str]) -> None:
        self.caliper_label.setText("Calipers:\n" + "\n".join(lines) if lines else "")
