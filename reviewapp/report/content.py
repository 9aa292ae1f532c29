"""What goes on the report page, computed from signal + marks (no Qt).

Values are recomputed here from the record, the automatic analysis and the reviewer's
overrides; nothing measured is read from the sidecar.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from reviewapp.core.fiducials import FIDUCIALS, Beat, MarkOverride, WaveMarks
from reviewapp.core.measure import limit_text
from reviewapp.core.measure import reason_text as rt
from reviewapp.core.measure.findings import finding_for_value
from reviewapp.core.measure.types import NormalRange, ValueReason
from reviewapp.core.record import Record


def _unit(quantity: str) -> str:
    for suffix, unit in (("_ms", "ms"), ("_bpm", "bpm"), ("_deg", "deg"), ("_mv", "mV")):
        if quantity.endswith(suffix):
            return unit
    return ""


def _global_quantities() -> tuple[tuple[str, str, str], ...]:
    """(quantity, label, unit) of every global value, in the order of ``reviewapp measure``'s
    CSV columns (one definition of the columns for both exports)."""
    from dataclasses import fields

    from reviewapp.core.measure.findings import LABELS
    from reviewapp.core.measure.output import CSV_COLUMNS
    from reviewapp.core.measure.types import GlobalIntervals

    interval_fields = {f.name for f in fields(GlobalIntervals)}
    out = []
    for col in CSV_COLUMNS:
        if col in interval_fields or col in VOLTAGE_QUANTITIES:
            out.append((col, LABELS.get(col, col), _unit(col)))
    return tuple(out)


VOLTAGE_QUANTITIES = ("sokolow_lyon_mv", "cornell_mv")
# Every global quantity, in order: (field of GlobalIntervals or Measurements, label, unit).
QUANTITIES: tuple[tuple[str, str, str], ...] = _global_quantities()
# Header comment keys (``key: value`` in the record's comments) printed with the subject facts.
STUDY_KEYS = ("timepoint", "time point", "visit", "study")


def study_facts(comments: Iterable[str]) -> dict[str, str]:
    """``key: value`` facts of a QT study from header comments (time point, visit, study).

    >>> study_facts(["timepoint: post-dose 2 h", "age: 28"])
    {'timepoint': 'post-dose 2 h'}
    """
    out: dict[str, str] = {}
    for line in comments:
        key, sep, value = str(line).partition(":")
        key = key.strip().lower().lstrip("#").strip()
        if sep and key in STUDY_KEYS and value.strip():
            out.setdefault("timepoint" if key == "time point" else key, value.strip())
    return out


@dataclass(frozen=True)
class MeasurementRow:
    """One global value with its normal range and flag ("" when within range or no range)."""

    quantity: str
    label: str
    value: float | None
    unit: str
    low: float | None = None
    high: float | None = None
    flag: str = ""
    range_source: str = ""
    normal: NormalRange | None = None
    # Why the value is not measured, not compared with its range (not comparable, a criterion
    # not applied) or less reliable: the engine's reasons for this quantity, most important
    # first (``reason_text``).
    reasons: tuple[ValueReason, ...] = ()

    @property
    def range_text(self) -> str:
        return limit_text.range_text(self.normal)

    @property
    def judged(self) -> bool:
        """Compared with its normal range (not "not comparable", no criterion left out)."""
        return not any(r.kind in ("not_comparable", "gated") for r in self.reasons)

    @property
    def reason_cell(self) -> str:
        """The few words beside the value: its most important reason."""
        return rt.cell_text(self.reasons)


@dataclass(frozen=True)
class MarkPair:
    """One boundary: the automatic position and the final one (sample indices, None = absent)."""

    fiducial: str
    auto: int | None
    final: int | None

    @property
    def corrected(self) -> bool:
        return self.auto != self.final


@dataclass(frozen=True, eq=False)
class ReportContent:
    """Everything the page draws; built by ``build_report_content``."""

    record: Record
    signal_mv: np.ndarray  # conditioned signal the marks were set on, (n, n_leads) mV
    status: str
    reviewer: str | None
    signed_off_at: str | None
    rows: tuple[MeasurementRow, ...]
    other_findings: tuple[str, ...]
    rep_waveform_mv: np.ndarray | None  # (n_window, n_leads)
    rep_r_index: int | None
    rep_marks: tuple[MarkPair, ...]
    beat_r: tuple[int, ...]
    beat_marks: tuple[tuple[MarkPair, ...], ...]
    final_beat_marks: tuple[WaveMarks, ...]  # effective global marks of each beat
    beats: tuple[Beat, ...]
    engine_version: str
    n_overrides: int
    notes: tuple[str, ...] = ()
    # Every reason of the reading (value not measured, not comparable, criterion not applied,
    # caution), for the CSV; and the numbered reason notes the page prints with their sources
    # (each once; per-lead values are not on the page, so neither are their not-measured
    # causes).
    reasons: tuple[ValueReason, ...] = ()
    reason_statements: tuple[rt.Statement, ...] = ()
    # The interpretation (report/interpretation_block.py): the engine's statements with their
    # criteria, why statements were not made, and the reader's own statements (the reading
    # printed; ``core.marks.model.ReaderStatement``).
    statements: tuple[Any, ...] = ()
    statement_reasons: tuple[Any, ...] = ()
    reader_statements: tuple[Any, ...] = ()
    # Which reading the page prints: the reader's role ("first", "second", "adjudicator"),
    # one sentence naming the reading (the record's final reading, or one reader's own), the
    # final reading's short flags ("readers differ", "no adjudication", "not signed") and its
    # details (each difference, each note of ``resolve_final``, the readers).
    role: str | None = None
    printed: str = ""
    final_flags: tuple[str, ...] = ()
    final_details: tuple[str, ...] = ()

    @property
    def fs_hz(self) -> float:
        return self.record.fs_hz

    @property
    def n_corrected(self) -> int:
        """How many boundaries the reviewer corrected (a median-beat correction counts once,
        though it also moves that boundary on every dominant beat)."""
        return self.n_overrides


def _pairs(auto: WaveMarks, final: WaveMarks) -> tuple[MarkPair, ...]:
    return tuple(MarkPair(f, auto.get(f), final.get(f)) for f in FIDUCIALS)


def _normal_range(quantity: str, subject: Any) -> Any:
    """The measurement module's normal range for ``quantity`` (None if it has none)."""
    try:
        from reviewapp.core.measure import normal_range
    except ImportError:
        return None
    try:
        return normal_range(quantity, subject)
    except (KeyError, ValueError):
        return None


def measurement_rows(
    reading: Any, subject: Any
) -> tuple[tuple[MeasurementRow, ...], tuple[str, ...]]:
    """Global rows with ranges, flags and reasons, plus the text of every other finding.

    A row is flagged by its finding only (``findings.finding_for_value``); a value not
    comparable with its range, or whose criterion is not applied, is never flagged.
    """
    ms = reading.measurements
    iv = ms.intervals
    reasons = tuple(getattr(reading, "reasons", ()))
    findings = tuple(reading.findings)
    used: set[int] = set()
    rows = []
    for quantity, label, unit in QUANTITIES:
        value = getattr(ms if quantity in VOLTAGE_QUANTITIES else iv, quantity)
        nr = _normal_range(quantity, subject)
        mine = rt.for_quantity(reasons, quantity)
        flag = ""
        if not any(r.kind in ("not_comparable", "gated") for r in mine):
            f = finding_for_value(quantity, value, nr, findings)
            if f is not None:
                flag = limit_text.flag_text(f.direction)
                used.update(i for i, g in enumerate(findings) if g is f)
        rows.append(
            MeasurementRow(
                quantity=quantity,
                label=label,
                value=None if value is None else float(value),
                unit=unit,
                low=None if nr is None else nr.low,
                high=None if nr is None else nr.high,
                flag=flag,
                range_source="" if nr is None else nr.source,
                normal=nr,
                reasons=mine,
            )
        )
    others = tuple(f.text for i, f in enumerate(findings) if i not in used)
    return tuple(rows), others


def build_report_content(
    analysis: Any,
    overrides: Iterable[MarkOverride] = (),
    *,
    status: str = "unread",
    reviewer: str | None = None,
    signed_off_at: str | None = None,
    reader_statements: Iterable[Any] = (),
    role: str | None = None,
    printed: str = "",
    final_flags: Iterable[str] = (),
    final_details: Iterable[str] = (),
    n_corrected: int | None = None,
) -> ReportContent:
    """Recompute the reading under ``overrides`` and collect what the page shows.
    ``n_corrected``: the reader's corrections among ``overrides`` (default: all of them)."""
    from reviewapp.core.interpret import interpret

    overrides = tuple(overrides)
    reading = analysis.reading(overrides)
    interpretation = interpret(reading, analysis.record.subject)
    marked = reading.marked
    rows, others = measurement_rows(reading, analysis.record.subject)
    rep_auto = analysis.representative
    rep_final = marked.representative
    rep_marks: tuple[MarkPair, ...] = ()
    if rep_auto is not None and rep_final is not None:
        rep_marks = _pairs(rep_auto.marks, rep_final.marks)
    beat_marks = tuple(
        _pairs(a, f) for a, f in zip(analysis.beat_marks, marked.beat_marks, strict=True)
    )
    notes = tuple(analysis.notes)
    reasons = tuple(reading.reasons)
    if reading.unmatched_overrides:
        notes += (f"{len(reading.unmatched_overrides)} reviewer mark(s) could not be placed",)
    return ReportContent(
        record=analysis.record,
        signal_mv=np.asarray(analysis.conditioned_mv, dtype=np.float32),
        status=status,
        reviewer=reviewer,
        signed_off_at=signed_off_at,
        rows=rows,
        other_findings=others,
        rep_waveform_mv=None if rep_final is None else rep_final.waveform_mv,
        rep_r_index=None if rep_final is None else rep_final.r_index,
        rep_marks=rep_marks,
        beat_r=tuple(b.r for b in analysis.beats),
        beat_marks=beat_marks,
        final_beat_marks=tuple(marked.beat_marks),
        beats=tuple(analysis.beats),
        engine_version=analysis.engine_version,
        n_overrides=len(overrides) if n_corrected is None else n_corrected,
        notes=notes,
        reasons=reasons,
        reason_statements=rt.statements(reasons, measured_too=False),
        statements=interpretation.statements,
        statement_reasons=interpretation.reasons,
        reader_statements=tuple(reader_statements),
        role=role,
        printed=printed,
        final_flags=tuple(final_flags),
        final_details=tuple(final_details),
    )


STATUS_WORDS = {
    "adjudicated": "adjudicated",
    "signed_off": "signed off",
    "in_progress": "in progress (not signed off)",
    "unread": "unread: automated marks only, not verified by a reader",
}


def reader_words(content: ReportContent) -> str:
    """The reader named on the page with their role, e.g. "reader1 (first reader)"."""
    if not content.reviewer:
        return ""
    role = role_words(content.role)
    return f"{content.reviewer} ({role})" if role else content.reviewer


def printed_words(content: ReportContent) -> str:
    """Which reading is printed, its flags and their details, in sentences (page 2)."""
    out = f"Printed: {content.printed}." if content.printed else ""
    if content.final_flags:
        out += " ⚠ " + ", ".join(content.final_flags).capitalize() + "."
    if content.final_details:
        out += " " + "; ".join(content.final_details) + "."
    return out.strip()


def role_words(role: str | None) -> str:
    """'first reader', 'second reader', 'adjudicator' ('' for none)."""
    from reviewapp.core.marks.final import ROLE_WORDS

    return "" if role is None else ROLE_WORDS.get(role, role)


def own_reading_words(reviewer: str | None, role: str | None, where: str) -> str:
    """The sentence naming one reader's own reading, e.g. "reader2's own reading (second
    reader), not the record's final reading"."""
    if reviewer is None:
        return "automatic marks only; no reader's reading"
    return f"{reviewer}'s own reading ({role_words(role) or 'reader'}){where}"


def final_report_content(analysis: Any, sidecar: Any) -> ReportContent:
    """The page for the record's final reading (``core.marks.final.resolve_final``: a signed
    adjudication over the chosen reading, else signed before unsigned, first before second),
    with its flags and notes; the reader named is the adjudicator, else the reader whose
    reading it is."""
    from reviewapp.core.marks.final import resolve_final

    final = resolve_final(sidecar, analysis)
    readings = {} if sidecar is None else {r.reviewer: r for r in sidecar.readings}
    name = final.adjudicator or final.base_reviewer
    shown = readings.get(name) if name is not None else None
    base = readings.get(final.base_reviewer) if final.base_reviewer else None
    corrected = {
        o.key for r in (base, readings.get(final.adjudicator or "")) if r for o in r.overrides
    }
    flags = []
    if final.not_signed:
        flags.append("not signed")
    if final.readers_differ:
        flags.append("readers differ" + (", adjudicated" if final.status == "adjudicated" else ""))
    if final.no_adjudication:
        flags.append("no adjudication")
    details = [d.text for d in final.differences] + list(final.notes)
    if final.readers:
        states = {
            r.reviewer: STATUS_WORDS.get(r.status, r.status).split(":")[0] for r in final.readers
        }
        details.append(
            "readers: "
            + ", ".join(
                f"{r.reviewer} ({role_words(r.role)}, {states[r.reviewer]})" for r in final.readers
            )
        )
    # The reader's interpretation printed is the one the final reading takes its statements
    # from (the adjudicator's, else the chosen reading's), as ``resolve_final`` decides.
    kinds = {x.source.kind for x in final.statements}
    stated = shown if "adjudicated" in kinds else base if "reader" in kinds else None
    return build_report_content(
        analysis,
        final.overrides,
        status=final.status,
        reviewer=name,
        signed_off_at=None if shown is None else shown.signed_off_at,
        reader_statements=() if stated is None else stated.statements,
        role=None if shown is None else shown.role,
        printed="final reading: " + final.basis,
        final_flags=flags,
        final_details=details,
        n_corrected=len(corrected),
    )


def load_report_content(path: Path, reviewer: str | None = None) -> ReportContent:
    """Open ``path``, analyse it and print its reading: ``reviewer``'s own when one is named,
    else the record's final reading (``final_report_content``); no marks file = automatic
    marks only."""
    from reviewapp.batch.sidecar_adapter import reading_for_report
    from reviewapp.core.engine import analyse
    from reviewapp.core.io import open_record
    from reviewapp.core.marks.final import sidecar_for

    record = open_record(path)
    analysis = analyse(record)
    if reviewer is None:
        sidecar = sidecar_for(record)
        if sidecar is not None and sidecar.readings:
            return final_report_content(analysis, sidecar)
    chosen = reading_for_report(record, analysis, reviewer)
    return build_report_content(
        analysis,
        chosen.overrides,
        status=chosen.status,
        reviewer=chosen.reviewer,
        signed_off_at=chosen.signed_off_at,
        reader_statements=chosen.statements,
        role=chosen.role,
        printed=own_reading_words(
            chosen.reviewer, chosen.role, ", chosen for this report; not the final reading"
        ),
    )
