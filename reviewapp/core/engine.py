"""The measurement pipeline: record -> beats -> fiducials (auto, then overrides) -> measurements.

``analyse`` does the expensive part once per record (conditioning, beat detection, grouping,
representative beat, delineation). ``Analysis.reading(overrides)`` applies reviewer overrides
and recomputes every measurement and finding; it re-detects nothing, so it is cheap enough to
run on every caliper or mark drag.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, replace

import numpy as np

from reviewapp.core.dsp.beats import classify_beats, representative_beat
from reviewapp.core.dsp.delineate import (
    delineate_beats,
    delineate_median_beat,
    representative_p_from_beats,
)
from reviewapp.core.dsp.filters import condition
from reviewapp.core.dsp.pacing import paced_beats
from reviewapp.core.dsp.qrs import detect_qrs
from reviewapp.core.fiducials import (
    FIDUCIALS,
    Beat,
    MarkedECG,
    MarkOverride,
    RepresentativeBeat,
    WaveMarks,
    match_beat,
)
from reviewapp.core.measure import Finding, Measurements, compute_measurements, evaluate_findings
from reviewapp.core.measure.findings import gated_reasons
from reviewapp.core.measure.types import ValueReason
from reviewapp.core.record import Record
from reviewapp.core.versions import ENGINE_VERSION


@dataclass(frozen=True, eq=False)
class Reading:
    """Measurements and findings for one record under one set of overrides."""

    marked: MarkedECG
    measurements: Measurements
    findings: tuple[Finding, ...]
    overrides: tuple[MarkOverride, ...]
    unmatched_overrides: tuple[MarkOverride, ...]  # beat overrides whose beat was not found
    # Why each value left out is left out: not measured, not comparable with its limits, or a
    # criterion not applied (``value_reasons``), for window, report and CLI alike.
    reasons: tuple[ValueReason, ...] = ()


@dataclass(frozen=True, eq=False)
class Analysis:
    """Automatic result for one record (no reviewer input)."""

    record: Record
    conditioned_mv: np.ndarray
    usable: tuple[bool, ...]
    beats: tuple[Beat, ...]
    beat_marks: tuple[WaveMarks, ...]
    beat_lead_marks: tuple[tuple[WaveMarks, ...], ...]
    representative: RepresentativeBeat | None
    notes: tuple[str, ...] = ()
    engine_version: str = ENGINE_VERSION

    @property
    def fs_hz(self) -> float:
        return self.record.fs_hz

    def marked(
        self, overrides: Iterable[MarkOverride] = ()
    ) -> tuple[MarkedECG, tuple[MarkOverride, ...]]:
        """Apply overrides to the automatic marks: (marked ECG, overrides that matched nothing).

        A correction of the representative beat's global boundary also moves that boundary on
        every dominant beat by the same amount (or removes it, when the reader says the wave
        is absent): each dominant beat's automatic marks are the median beat's marks carried
        over by template alignment, so the reader's correction of the source applies to them.
        A beat's own override always wins over the carried one.
        """
        names = self.record.lead_names
        beat_marks = list(self.beat_marks)
        beat_lead = [list(row) for row in self.beat_lead_marks]
        rep = self.representative
        rep_marks = rep.marks if rep is not None else None
        rep_lead = list(rep.lead_marks) if rep is not None else []
        unmatched: list[MarkOverride] = []
        beat_overrides: list[tuple[MarkOverride, int | None]] = []
        pinned: set[tuple[str, int | None, int, str]] = set()  # lead marks the reader set
        for ov in overrides:
            lead_i = None
            if ov.lead is not None:
                try:
                    lead_i = self.record.lead_index(ov.lead)
                except KeyError:
                    unmatched.append(ov)
                    continue
            if ov.scope == "beat":
                beat_overrides.append((ov, lead_i))
            elif rep is None or rep_marks is None:
                unmatched.append(ov)
            elif lead_i is None:
                rep_marks = rep_marks.with_mark(ov.fiducial, ov.sample)
            else:
                rep_lead[lead_i] = rep_lead[lead_i].with_mark(ov.fiducial, ov.sample)
                pinned.add(("representative", None, lead_i, ov.fiducial))
        if rep is not None and rep_marks is not None and rep_marks != rep.marks:
            beat_marks = _carry_representative(rep.marks, rep_marks, self.beats, beat_marks)
        for ov, lead_i in beat_overrides:
            bi = match_beat(self.beats, int(ov.beat_r or 0), self.fs_hz)
            if bi is None:
                unmatched.append(ov)
            elif lead_i is None:
                beat_marks[bi] = beat_marks[bi].with_mark(ov.fiducial, ov.sample)
            else:
                beat_lead[bi][lead_i] = beat_lead[bi][lead_i].with_mark(ov.fiducial, ov.sample)
                pinned.add(("beat", bi, lead_i, ov.fiducial))
        # A lead's own mark that was the automatic global mark follows the reader's global
        # correction (e.g. every lead's J point, and so its ST levels, follows a corrected
        # QRS end); a lead mark found on its own, or corrected for that lead, stays.
        if rep is not None and rep_marks is not None:
            _follow_global(
                rep.marks, rep_marks, rep.lead_marks, rep_lead, pinned, ("representative", None)
            )
            rep = replace(rep, marks=rep_marks, lead_marks=tuple(rep_lead))
        # Untouched beats still hold the very automatic marks object: skip them cheaply.
        for i, (auto_m, final_m) in enumerate(zip(self.beat_marks, beat_marks, strict=True)):
            if auto_m is not final_m and auto_m != final_m:
                key = ("beat", i)
                _follow_global(auto_m, final_m, self.beat_lead_marks[i], beat_lead[i], pinned, key)
        marked = MarkedECG(
            fs_hz=self.fs_hz,
            lead_names=names,
            usable=self.usable,
            conditioned_mv=self.conditioned_mv,
            beats=self.beats,
            beat_marks=tuple(beat_marks),
            beat_lead_marks=tuple(tuple(row) for row in beat_lead),
            representative=rep,
        )
        return marked, tuple(unmatched)

    def reading(self, overrides: Iterable[MarkOverride] = ()) -> Reading:
        """Measurements and findings after applying ``overrides``."""
        overrides = tuple(overrides)
        marked, unmatched = self.marked(overrides)
        measurements = compute_measurements(marked)
        findings = evaluate_findings(measurements, self.record.subject)
        return Reading(
            marked, measurements, findings, overrides, unmatched, value_reasons(measurements)
        )


def value_reasons(measurements: Measurements) -> tuple[ValueReason, ...]:
    """Every reason a value is left out, in one list: not measured (``unmeasured``), not
    comparable with its limits (``Measurements.reasons``) and criteria not applied
    (``findings.gated_reasons``)."""
    out = [ValueReason(q, "not_measured", r) for q, r in measurements.unmeasured]
    out += list(measurements.reasons)
    out += list(gated_reasons(measurements))
    return tuple(out)


def _follow_global(
    auto: WaveMarks,
    final: WaveMarks,
    auto_leads: tuple[WaveMarks, ...],
    leads: list[WaveMarks],
    pinned: set[tuple[str, int | None, int, str]],
    where: tuple[str, int | None],
) -> None:
    """In place on ``leads``: lead marks follow the reader's correction of the global mark,
    unless the reader set that lead's mark (``pinned``: (scope, beat index, lead, fid);
    ``where``: (scope, beat index) of these marks).

    A lead's QRS onset and end (its J point, where ST is read) come from the one multi-lead
    QRS boundary, so they move by the same amount as the corrected global mark (and go
    where the reader says the QRS is absent). P and T marks are each lead's own: only those
    equal to the automatic global mark take its final value.
    """
    for name in FIDUCIALS:
        a, f = auto.get(name), final.get(name)
        if a == f or a is None:
            continue
        shift = name in ("qrs_on", "qrs_off")
        for j, lead_auto in enumerate(auto_leads):
            v = lead_auto.get(name)
            if (*where, j, name) in pinned or v is None:
                continue
            if v == a:
                leads[j] = leads[j].with_mark(name, f)
            elif shift:
                leads[j] = leads[j].with_mark(name, None if f is None else v + (f - a))


def _carry_representative(
    auto: WaveMarks, final: WaveMarks, beats: tuple[Beat, ...], beat_marks: list[WaveMarks]
) -> list[WaveMarks]:
    """Dominant beats' global marks with the representative beat's corrections carried over."""
    changes: dict[str, int | None] = {}
    for name in FIDUCIALS:
        a, f = auto.get(name), final.get(name)
        if a == f:
            continue
        changes[name] = None if f is None else (None if a is None else f - a)
    if not changes:
        return beat_marks
    out = list(beat_marks)
    for i, (beat, m) in enumerate(zip(beats, beat_marks, strict=True)):
        if not beat.in_dominant_rhythm:
            continue
        for name, delta in changes.items():
            v = m.get(name)
            # A wave the reader added on the median beat is not invented on each beat.
            m = m.with_mark(name, None if (delta is None or v is None) else v + delta)
        out[i] = m
    return out


def analyse(record: Record, *, mains_hz: float | None = None) -> Analysis:
    """Run the automatic pipeline on a whole record (short records: resting ECG, minutes)."""
    fs = record.fs_hz
    raw = record.signal_mv
    usable_mask = np.array([not (lead.flat or lead.missing) for lead in record.leads], dtype=bool)
    finite = np.isfinite(raw)
    usable_mask &= finite.mean(axis=0) > 0.5
    conditioned = condition(np.where(finite, raw, 0.0).astype(np.float32), fs, mains_hz=mains_hz)
    notes: list[str] = []
    if not usable_mask.any():
        notes.append("no usable lead: every lead is flat, missing or invalid")
        r = np.zeros(0, dtype=np.int64)
    else:
        r = detect_qrs(conditioned, fs, usable_mask)
    if r.size == 0:
        notes.append("no beats found")
        return Analysis(
            record=record,
            conditioned_mv=conditioned,
            usable=tuple(bool(u) for u in usable_mask),
            beats=(),
            beat_marks=(),
            beat_lead_marks=(),
            representative=None,
            notes=tuple(notes),
        )
    beats = classify_beats(conditioned, fs, r, usable_mask)
    rep = representative_beat(conditioned, fs, beats, usable_mask)
    if rep is not None:
        m = delineate_median_beat(rep.waveform_mv, fs, rep.r_index, usable_mask, rep.rr_samples)
        rep = replace(rep, marks=m.marks, lead_marks=m.lead_marks, align_marks=m.align_marks)
    else:
        notes.append("no representative beat: too few dominant beats")
    beat_marks, beat_lead_marks = delineate_beats(conditioned, fs, beats, usable_mask, rep)
    if rep is not None:
        # Whether a P wave exists is decided across the beats (a P must repeat); the median
        # beat alone cannot tell atrial fibrillation's f-waves from a small P.
        rep = representative_p_from_beats(rep, beats, beat_marks)
        n_rep = rep.waveform_mv.shape[0]
        rep = replace(
            rep,
            marks=rep.marks.ordered(n_rep),
            lead_marks=tuple(m.ordered(n_rep) for m in rep.lead_marks),
            align_marks=None if rep.align_marks is None else rep.align_marks.ordered(n_rep),
        )
    # Out-of-order or edge-cut boundaries would give silently wrong intervals: drop them.
    n = record.n_samples
    beat_marks = tuple(m.ordered(n) for m in beat_marks)
    beat_lead_marks = tuple(tuple(m.ordered(n) for m in row) for row in beat_lead_marks)
    # Paced beats are told by the stimulus just before their own QRS onset, so after
    # delineation; labelling keeps every dominant beat in the dominant rhythm, so the median
    # beat and the carried marks above stay valid.
    beats = paced_beats(conditioned, fs, beats, beat_marks, usable_mask)
    return Analysis(
        record=record,
        conditioned_mv=conditioned,
        usable=tuple(bool(u) for u in usable_mask),
        beats=beats,
        beat_marks=beat_marks,
        beat_lead_marks=beat_lead_marks,
        representative=rep,
        notes=tuple(notes),
    )
