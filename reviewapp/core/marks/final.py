"""The final reading of a record: which marks stand, and where each global value came from.

One pure function, ``resolve_final(sidecar, analysis)``, used by ``reviewapp measure --final``,
``reviewapp study`` and the window's reading workflow alike. It reads nothing from disk: give
it the loaded sidecar (``store.load_sidecar`` or ``MarksStore.sidecar``; ``None`` when the
record has none; a blinded reader's ``MarksStore.view`` gives the final reading as far as that
reader may see it) and the engine's ``Analysis`` of the same record.

Precedence (the rule a core laboratory applies before it locks a study database)
-----------------------------------------------------------------------------------
1. **Adjudicated.** A signed-off adjudicator reading is laid over the reading chosen by rule 2
   to 4: each mark the adjudicator set is final; the marks they did not touch stay as that
   reading has them (an adjudicator settles the discrepant measurements, not the whole ECG).
   Several signed adjudications: the latest sign-off. An adjudication not yet signed is not
   applied (a signed reading is worth more than an unfinished decision); it is named in the
   notes.
2. **Signed before unsigned.** Among the first and second readers' readings, a signed-off one
   wins over one in progress.
3. **First reader before second.** Between two signed readings (a double read), the first
   reader's reading is final; the second reader's read checks it, and a difference beyond
   tolerance is flagged ("readers differ") and, until adjudicated, "no adjudication". The
   values are never averaged between readers: a final value must be one a named reader
   signed, recomputed from one consistent set of marks; an average of two readers' T ends is a
   mark nobody placed. Same role and status: the earlier sign-off (the primary read), then
   the reviewer id, so the choice never depends on file order.
4. **A reading in progress** (signed by nobody): its corrections are the best there is; they
   are reported as such and the record is flagged "not signed".
5. **Automatic.** No reading: the engine's marks (engine version named).

The automatic marks a reader saw are the ones stored in the sidecar. When a newer engine
places a global mark of the representative beat elsewhere, the stored mark is kept for a
record that was read (a signed value must not move with a software update), and a note says
so; a record nobody read takes the current engine's marks.

Provenance of each value
------------------------
Every global value depends on some marks of the representative beat (``VALUE_MARKS``: QT on
QRS onset and T end, PR on P onset and QRS onset...; heart rate and RR on the detected beats
only). Its ``ValueSource`` is ``adjudicated`` if the adjudicator set any of those marks, else
``reader`` if the chosen reader corrected any of them, else ``automatic`` (with the reader who
signed the reading as the one who accepted it). An adjudicated source also lists the readers
whose mark the adjudicator's equals.

Statements
----------
The final interpretation follows the same rule as a whole list (an interpretation is read
together, not merged statement by statement): a signed adjudication's own statements if it
has any (each ``adjudicated``, with the readers who stated the same listed in ``equal_to``),
else the chosen reading's (``reader``), else the engine's statements on the final marks
(``automatic``; never "accepted" by a reader who left no interpretation of their own).

Readers differ
--------------
Every pair of signed first/second readings is compared with ``compare_readings`` on the
intervals in ``tolerances_ms`` (default ``DEFAULT_STUDY_TOLERANCES_MS``: QT, QRS and PR 10 ms;
the usual starting point of core-lab adjudication rules, settable by the user; for scale, the
mean absolute QT difference between two central-laboratory readers was 7.7 ms in Salvi et al.,
Ann Noninvasive Electrocardiol 2014). An interval beyond tolerance, or present for one reader
and absent for the other, is a difference.

Example::

    sidecar = load_sidecar(sidecar_path_for(record), record_identity(record))
    final = resolve_final(sidecar, analyse(record))
    final.value("qt_ms").value, final.value("qt_ms").source.text
    # (462.0, 'adjudicated by adj1 (signed); equal to reader2')
"""

from __future__ import annotations

import os
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Literal

from reviewapp.core.fiducials import FIDUCIALS, MarkOverride
from reviewapp.core.marks.compare import DEFAULT_INTERVAL_TOLERANCES_MS, compare_readings
from reviewapp.core.marks.convert import overrides_for
from reviewapp.core.marks.model import AutomaticMarks, RecordIdentity, ReviewerReading, Sidecar

if TYPE_CHECKING:
    from reviewapp.core.engine import Analysis, Reading
    from reviewapp.core.record import Record

SourceKind = Literal["automatic", "reader", "adjudicated"]
RecordStatus = Literal["adjudicated", "signed_off", "in_progress", "unread"]

# Global values carried out as the final reading: (name, unit, marks of the representative
# beat it is computed from). Heart rate and RR come from the detected beats alone.
VALUE_MARKS: tuple[tuple[str, str, tuple[str, ...]], ...] = (
    ("hr_bpm", "bpm", ()),
    ("rr_ms", "ms", ()),
    ("p_ms", "ms", ("p_on", "p_off")),
    ("pr_ms", "ms", ("p_on", "qrs_on")),
    ("qrs_ms", "ms", ("qrs_on", "qrs_off")),
    ("qt_ms", "ms", ("qrs_on", "t_off")),
    ("qtc_bazett_ms", "ms", ("qrs_on", "t_off")),
    ("qtc_fridericia_ms", "ms", ("qrs_on", "t_off")),
    ("qtc_framingham_ms", "ms", ("qrs_on", "t_off")),
    ("qtc_hodges_ms", "ms", ("qrs_on", "t_off")),
    ("p_axis_deg", "deg", ("p_on", "p_off")),
    ("qrs_axis_deg", "deg", ("qrs_on", "qrs_off")),
    ("t_axis_deg", "deg", ("qrs_off", "t_off")),
)
VALUE_NAMES: tuple[str, ...] = tuple(v[0] for v in VALUE_MARKS)

# Intervals compared between two signed readers and their tolerances (ms); see the module
# docstring for where 10 ms comes from.
DEFAULT_STUDY_TOLERANCES_MS: Mapping[str, float] = dict(DEFAULT_INTERVAL_TOLERANCES_MS)
TOLERANCE_SOURCE = (
    "10 ms each unless the study sets its own; for scale, the mean absolute QT difference "
    "between two central-laboratory readers was 7.7 ms (Salvi et al., Ann Noninvasive "
    "Electrocardiol 2014)"
)

ROLE_WORDS = {"first": "first reader", "second": "second reader", "adjudicator": "adjudicator"}
_ROLE_RANK = {"first": 0, "second": 1}


@dataclass(frozen=True)
class ValueSource:
    """Where one final value came from.

    kind: "automatic" (the engine's marks), "reader" (a reader corrected a mark it depends on)
        or "adjudicated" (the adjudicator set a mark it depends on).
    engine_version: the engine that made the automatic marks underneath.
    reviewer/role/signed: the reader behind the value: who corrected or adjudicated it, or, for
        an automatic value, who signed the reading that accepted it (None if nobody did).
    marks: the marks the reader or adjudicator set that the value depends on.
    equal_to: for an adjudicated value, the readers whose marks the adjudicator's equal.
    """

    kind: SourceKind
    engine_version: str
    reviewer: str | None = None
    role: str | None = None
    signed: bool = False
    marks: tuple[str, ...] = ()
    equal_to: tuple[str, ...] = ()

    @property
    def text(self) -> str:
        """One line for tables and CSV, e.g. ``reader1 (first reader, signed)``."""
        signed = "signed" if self.signed else "not signed"
        if self.kind == "adjudicated":
            out = f"adjudicated by {self.reviewer} ({signed})"
            return out + (f"; equal to {', '.join(self.equal_to)}" if self.equal_to else "")
        if self.kind == "reader":
            return f"{self.reviewer} ({ROLE_WORDS.get(str(self.role), self.role)}, {signed})"
        out = f"automatic (engine {self.engine_version})"
        if self.reviewer is not None and self.signed:
            out += f", accepted by {self.reviewer} ({ROLE_WORDS.get(str(self.role), self.role)})"
        return out

    def to_dict(self) -> dict[str, object]:
        return {
            "kind": self.kind,
            "engine_version": self.engine_version,
            "reviewer": self.reviewer,
            "role": self.role,
            "signed": self.signed,
            "marks": list(self.marks),
            "equal_to": list(self.equal_to),
            "text": self.text,
        }


@dataclass(frozen=True)
class FinalValue:
    """One global value of the final reading, the automatic value beside it, and its source."""

    name: str
    unit: str
    value: float | None
    automatic: float | None
    source: ValueSource


@dataclass(frozen=True)
class FinalStatement:
    """One statement of the final interpretation and where it came from."""

    code: str
    text: str
    category: str
    source: ValueSource


@dataclass(frozen=True)
class ReaderSummary:
    reviewer: str
    role: str
    status: str
    signed_off_at: str | None
    n_overrides: int

    @property
    def text(self) -> str:
        return f"{self.reviewer} ({ROLE_WORDS.get(self.role, self.role)}, {self.status})"


@dataclass(frozen=True)
class Difference:
    """An interval on which two signed readers differ beyond tolerance (or in presence)."""

    item: str
    reviewer_a: str
    reviewer_b: str
    a_ms: float | None
    b_ms: float | None
    tolerance_ms: float | None

    @property
    def text(self) -> str:
        name = self.item.removesuffix("_ms").upper()
        if self.a_ms is None or self.b_ms is None:
            return f"{name} measured by only one of {self.reviewer_a}, {self.reviewer_b}"
        return (
            f"{name} {self.reviewer_a} {self.a_ms:.0f}, {self.reviewer_b} {self.b_ms:.0f} ms: "
            f"{abs(self.b_ms - self.a_ms):.0f} ms apart (tolerance {self.tolerance_ms:g} ms)"
        )


@dataclass(frozen=True, eq=False)
class FinalReading:
    """The final reading of one record (see the module docstring for the rule).

    reading / automatic_reading: the engine's measurements under the final marks and under the
        automatic marks (the stored ones, for a record that was read).
    status: "adjudicated", "signed_off", "in_progress" (a reading nobody signed) or "unread".
    basis: one sentence saying which readings the final marks come from.
    overrides: the engine overrides that give ``reading`` (``analysis.reading(overrides)``).
    """

    record: str
    values: tuple[FinalValue, ...]
    status: RecordStatus
    basis: str
    readers: tuple[ReaderSummary, ...]
    base_reviewer: str | None
    adjudicator: str | None
    differences: tuple[Difference, ...]
    tolerances_ms: Mapping[str, float]
    engine_version: str
    notes: tuple[str, ...]
    overrides: tuple[MarkOverride, ...]
    reading: Reading
    automatic_reading: Reading
    statements: tuple[FinalStatement, ...] = ()

    @property
    def not_signed(self) -> bool:
        return self.status in ("in_progress", "unread")

    @property
    def readers_differ(self) -> bool:
        return bool(self.differences)

    @property
    def no_adjudication(self) -> bool:
        """Readers differ beyond tolerance and no signed adjudication settles it."""
        return self.readers_differ and self.status != "adjudicated"

    def value(self, name: str) -> FinalValue:
        for v in self.values:
            if v.name == name:
                return v
        raise KeyError(name)


def _signed(r: ReviewerReading) -> bool:
    return r.status == "signed_off"


def _started(r: ReviewerReading) -> bool:
    return r.status != "unread" or bool(r.overrides)


def choose_base(readings: Iterable[ReviewerReading]) -> ReviewerReading | None:
    """The first/second reading the final marks start from (rules 2-4), or None."""
    pool = [r for r in readings if r.role in _ROLE_RANK and _started(r)]
    if not pool:
        return None
    return min(
        pool,
        key=lambda r: (
            not _signed(r),
            _ROLE_RANK[r.role],
            r.signed_off_at or "",
            r.reviewer,
        ),
    )


def choose_adjudication(readings: Iterable[ReviewerReading]) -> ReviewerReading | None:
    """The latest signed-off adjudicator reading (rule 1), or None."""
    signed = [r for r in readings if r.role == "adjudicator" and _signed(r)]
    return max(signed, key=lambda r: (r.signed_off_at or "", r.reviewer), default=None)


def _rep_global(reading: ReviewerReading | None) -> dict[str, float | None]:
    """A reading's global representative-beat overrides: fiducial -> new_s (None = absent)."""
    if reading is None:
        return {}
    return {
        o.fiducial: o.new_s
        for o in reading.overrides
        if o.scope == "representative" and o.lead is None
    }


def _stored_marks_kept(
    automatic: AutomaticMarks | None, analysis: Analysis
) -> tuple[list[MarkOverride], list[str]]:
    """Overrides that put back the stored automatic global marks where this engine differs."""
    rep = analysis.representative
    if automatic is None or automatic.representative is None or rep is None:
        return [], []
    fs = analysis.fs_hz
    out: list[MarkOverride] = []
    moved: list[str] = []
    for fid in FIDUCIALS:
        stored = automatic.representative.marks.get(fid)
        now = rep.marks.get(fid)
        stored_sample = None if stored is None else rep.r_index + round(stored * fs)
        if stored_sample != now:
            out.append(MarkOverride("representative", fid, stored_sample, None, None))
            moved.append(fid)
    return out, moved


def _mark_of(reading: ReviewerReading, fid: str, auto_s: float | None) -> float | None:
    ov = _rep_global(reading)
    return ov[fid] if fid in ov else auto_s


def _auto_rep_s(analysis: Analysis, automatic: AutomaticMarks | None, fid: str) -> float | None:
    if automatic is not None and automatic.representative is not None:
        return automatic.representative.marks.get(fid)
    rep = analysis.representative
    if rep is None:
        return None
    s = rep.marks.get(fid)
    return None if s is None else (s - rep.r_index) / analysis.fs_hz


def _differences(
    analysis: Analysis, readers: list[ReviewerReading], tolerances: Mapping[str, float]
) -> list[Difference]:
    signed = sorted(
        (r for r in readers if r.role in _ROLE_RANK and _signed(r)),
        key=lambda r: (_ROLE_RANK[r.role], r.signed_off_at or "", r.reviewer),
    )
    out: list[Difference] = []
    for i, a in enumerate(signed):
        for b in signed[i + 1 :]:
            cmp = compare_readings(analysis, a, b, tolerances)
            for row in cmp.rows:
                if row.kind == "interval" and row.item in tolerances and row.flagged:
                    out.append(
                        Difference(
                            row.item, a.reviewer, b.reviewer, row.a_ms, row.b_ms, row.tolerance_ms
                        )
                    )
    return out


def _interval(reading: Reading, name: str) -> float | None:
    v = getattr(reading.measurements.intervals, name, None)
    return None if v is None else float(v)


def resolve_final(
    sidecar: Sidecar | None,
    analysis: Analysis,
    *,
    tolerances_ms: Mapping[str, float] | None = None,
) -> FinalReading:
    """The final reading of the record ``analysis`` was made from (see the module docstring).

    Args:
        sidecar: the record's loaded sidecar, or None. With every reading (``store.sidecar``)
            this is the study's final reading; a blinded reader's ``store.view`` gives it as
            far as that reader may see.
        analysis: ``engine.analyse(record)`` of the same record.
        tolerances_ms: intervals compared between signed readers and their tolerances in ms
            (default ``DEFAULT_STUDY_TOLERANCES_MS``).

    Returns:
        FinalReading: values with provenance, status, readers, differences and notes.
    """
    tol = dict(DEFAULT_STUDY_TOLERANCES_MS if tolerances_ms is None else tolerances_ms)
    readings = list(sidecar.readings) if sidecar is not None else []
    automatic = sidecar.automatic if sidecar is not None else None
    base = choose_base(readings)
    adj = choose_adjudication(readings)
    notes: list[str] = []
    for r in readings:
        if r.role == "adjudicator" and not _signed(r) and _started(r):
            notes.append(f"adjudication by {r.reviewer} is not signed off and is not applied")
    rep = analysis.representative
    r_index = None if rep is None else rep.r_index
    fs = analysis.fs_hz
    read = base is not None or adj is not None
    kept: list[MarkOverride] = []
    if read:
        kept, moved = _stored_marks_kept(automatic, analysis)
        if moved:
            notes.append(
                f"automatic {', '.join(moved)} kept as stored with the reading (engine "
                f"{automatic.engine_version if automatic else '?'}); this engine "
                f"({analysis.engine_version}) places them elsewhere"
            )
    else:
        automatic = None  # nobody read it: the current engine's marks are the automatic ones
    engine_version = automatic.engine_version if automatic is not None else analysis.engine_version
    overrides: list[MarkOverride] = list(kept)
    if base is not None:
        overrides += overrides_for(base, fs, r_index)
    if adj is not None:
        overrides += overrides_for(adj, fs, r_index)
    final_reading = analysis.reading(overrides)
    if not overrides:
        auto_reading = final_reading
    else:
        auto_reading = analysis.reading(kept)
    if final_reading.unmatched_overrides:
        notes.append(
            f"{len(final_reading.unmatched_overrides)} beat mark(s) of the reading match no "
            "detected beat and are not applied"
        )

    base_marks = _rep_global(base)
    adj_marks = _rep_global(adj)
    others = [r for r in readings if r.role in _ROLE_RANK and _started(r)]
    values: list[FinalValue] = []
    for name, unit, deps in VALUE_MARKS:
        adj_deps = tuple(d for d in deps if d in adj_marks)
        base_deps = tuple(d for d in deps if d in base_marks)
        if adj is not None and adj_deps:
            equal = tuple(
                r.reviewer
                for r in others
                if all(
                    _same_s(_mark_of(r, d, _auto_rep_s(analysis, automatic, d)), adj_marks[d], fs)
                    for d in adj_deps
                )
            )
            src = ValueSource(
                "adjudicated", engine_version, adj.reviewer, adj.role, True, adj_deps, equal
            )
        elif base is not None and base_deps:
            src = ValueSource(
                "reader", engine_version, base.reviewer, base.role, _signed(base), base_deps
            )
        elif base is not None and _signed(base):
            src = ValueSource("automatic", engine_version, base.reviewer, base.role, True)
        else:
            src = ValueSource("automatic", engine_version)
        values.append(
            FinalValue(
                name, unit, _interval(final_reading, name), _interval(auto_reading, name), src
            )
        )

    statements = _final_statements(adj, base, others, final_reading, analysis, engine_version)
    if adj is not None:
        status: RecordStatus = "adjudicated"
        over = f" over {base.reviewer}'s {_state_words(base)} reading" if base else ""
        basis = f"adjudicated by {adj.reviewer}{over}"
    elif base is not None:
        status = "signed_off" if _signed(base) else "in_progress"
        basis = f"{base.reviewer}'s {_state_words(base)} reading ({ROLE_WORDS[base.role]})"
    else:
        status = "unread"
        basis = f"automatic marks (engine {engine_version}); no reading"
    return FinalReading(
        record=analysis.record.name,
        values=tuple(values),
        status=status,
        basis=basis,
        readers=tuple(
            ReaderSummary(r.reviewer, r.role, r.status, r.signed_off_at, len(r.overrides))
            for r in sorted(readings, key=lambda r: (_role_order(r.role), r.reviewer))
        ),
        base_reviewer=None if base is None else base.reviewer,
        adjudicator=None if adj is None else adj.reviewer,
        differences=tuple(_differences(analysis, readings, tol)),
        tolerances_ms=tol,
        engine_version=engine_version,
        notes=tuple(notes),
        overrides=tuple(overrides),
        reading=final_reading,
        automatic_reading=auto_reading,
        statements=statements,
    )


def _final_statements(
    adj: ReviewerReading | None,
    base: ReviewerReading | None,
    others: list[ReviewerReading],
    final_reading: Reading,
    analysis: Analysis,
    engine_version: str,
) -> tuple[FinalStatement, ...]:
    """The final interpretation (see "Statements" in the module docstring)."""
    from reviewapp.core.interpret import CATALOGUE, interpret

    def category(code: str) -> str:
        d = CATALOGUE.get(code)
        return "other" if d is None else d.category

    if adj is not None and adj.statements:
        out = []
        for x in adj.statements:
            equal = tuple(r.reviewer for r in others if any(y.key == x.key for y in r.statements))
            src = ValueSource(
                "adjudicated", engine_version, adj.reviewer, adj.role, True, (), equal
            )
            out.append(FinalStatement(x.code, x.text, category(x.code), src))
        return tuple(out)
    if base is not None and base.statements:
        src = ValueSource("reader", engine_version, base.reviewer, base.role, _signed(base))
        return tuple(FinalStatement(x.code, x.text, category(x.code), src) for x in base.statements)
    auto = interpret(final_reading, analysis.record.subject)
    src = ValueSource("automatic", engine_version)
    return tuple(FinalStatement(x.code, x.line, x.category, src) for x in auto.statements)


def _role_order(role: str) -> int:
    return {"first": 0, "second": 1, "adjudicator": 2}.get(role, 3)


def _state_words(r: ReviewerReading) -> str:
    return "signed" if _signed(r) else "unsigned"


def _same_s(a: float | None, b: float | None, fs_hz: float) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return abs(a - b) < 0.5 / fs_hz


def sidecar_for(record: Record, identity: RecordIdentity | None = None) -> Sidecar | None:
    """The record's sidecar beside it, or None when it has none (the one function here that
    reads a file). A sidecar made for another record or unreadable raises the store's error,
    so a wrong reading is never reported as final."""
    from reviewapp.core.marks.convert import record_identity, sidecar_path_for
    from reviewapp.core.marks.store import load_sidecar

    if record.source_path is None:
        return None
    path = sidecar_path_for(record)
    if not os.path.lexists(path):
        return None
    return load_sidecar(path, identity or record_identity(record))


# The comparison's intervals and the marks of the representative beat each is computed from
# (QT from QRS onset and T end...): the same dependencies as the final values'.
_ITEM_MARKS: dict[str, tuple[str, ...]] = {name: deps for name, _unit, deps in VALUE_MARKS}


@dataclass(frozen=True)
class AdjudicatedItem:
    """One comparison item an adjudication settles: its final value (ms), the adjudicator's
    marks it depends on, and the reader whose reading gives its other marks (None: the
    automatic marks)."""

    item: str
    value_ms: float | None
    marks: tuple[str, ...]
    base_reviewer: str | None


def adjudicated_items(
    analysis: Analysis,
    readings: Iterable[ReviewerReading],
    adjudication: ReviewerReading | None,
) -> dict[str, AdjudicatedItem]:
    """The comparison items (``compare_readings``' fiducials and intervals) that
    ``adjudication`` settles, with their final values; an item it did not touch is absent, so
    no reader's value is ever shown as final before someone adjudicates.

    A fiducial is settled when the adjudicator set it; an interval when they set one of the
    marks it is computed from (``VALUE_MARKS``). The value is the one ``resolve_final`` gives:
    the adjudicator's marks laid over the reading rule 2 to 4 choose (``choose_base``), the
    marks they did not touch as that reading has them. The adjudication may be one still in
    progress (the adjudicator's own window shows their picks as they make them);
    ``resolve_final`` applies only a signed one.

    Example: ``adjudicated_items(an, sidecar.readings, adj).get("qt_ms")`` is None until the
    adjudicator sets QRS onset or T end.
    """
    if adjudication is None:
        return {}
    settled = set(_rep_global(adjudication))
    if not settled:
        return {}
    base = choose_base(r for r in readings if r.reviewer != adjudication.reviewer)
    final = ReviewerReading(adjudication.reviewer, role=adjudication.role)
    for o in (*(() if base is None else base.overrides), *adjudication.overrides):
        final = final.with_override(o.key, o)
    out: dict[str, AdjudicatedItem] = {}
    for row in compare_readings(analysis, final, final).rows:
        deps = (row.item,) if row.kind == "fiducial" else _ITEM_MARKS.get(row.item, ())
        marks = tuple(d for d in deps if d in settled)
        if marks:
            out[row.item] = AdjudicatedItem(
                row.item, row.a_ms, marks, None if base is None else base.reviewer
            )
    return out
