"""Intervals from marks: global (representative beat), RR series, and beat by beat.

Every interval is a difference of two integer marks divided by the sampling rate, so moving one
mark by N samples changes each interval that uses it by exactly N / fs seconds.
"""

from __future__ import annotations

import operator
from dataclasses import dataclass

import numpy as np

from reviewapp.core.fiducials import Beat, BeatKind, WaveMarks
from reviewapp.core.measure.types import BeatIntervals


def span_ms(start: int | None, stop: int | None, fs_hz: float) -> float | None:
    """``(stop - start) / fs`` in ms; None if either mark is absent or they are out of order.

    >>> span_ms(100, 150, 500.0)
    100.0
    >>> span_ms(None, 150, 500.0) is None, span_ms(150, 100, 500.0) is None
    (True, True)
    """
    if start is None or stop is None or stop < start:
        return None
    return (stop - start) * 1000.0 / fs_hz


# Each global interval: (field, first mark, second mark).
INTERVAL_MARKS: tuple[tuple[str, str, str], ...] = (
    ("p_ms", "p_on", "p_off"),
    ("pr_ms", "p_on", "qrs_on"),
    ("qrs_ms", "qrs_on", "qrs_off"),
    ("qt_ms", "qrs_on", "t_off"),
)


def interval_reason(marks: WaveMarks, first: str, second: str) -> str:
    """Why an interval between two marks is not measurable (for ``Measurements.unmeasured``)."""
    a, b = marks.get(first), marks.get(second)
    if first.startswith("p") and (a is None or b is None):
        return "no P wave marked"
    missing = [n for n, v in ((first, a), (second, b)) if v is None]
    if missing:
        return "no " + " and no ".join(m.replace("_", " ") for m in missing) + " mark"
    return f"{second.replace('_', ' ')} is before {first.replace('_', ' ')}"


@dataclass(frozen=True)
class RRStats:
    mean_ms: float | None
    sd_ms: float | None
    n_intervals: int
    basis: str  # which intervals were used, for notes
    irregular: bool = False  # RR CV of the dominant morphology group > IRREGULAR_RR_CV
    cv: float | None = None  # that coefficient of variation (SD / mean), None if < 2 intervals


# RR coefficient of variation above which the rhythm counts as irregular (atrial
# fibrillation, frequent ectopy): common practice, no source. Regular sinus rhythm at rest
# rarely varies by more than a few per cent beat to beat; AF typically varies by 15-30 %.
IRREGULAR_RR_CV = 0.1

_LAST_RR: tuple[tuple[Beat, ...], float, bool, RRStats] | None = None


def rr_statistics(beats: tuple[Beat, ...], fs_hz: float, has_p: bool = True) -> RRStats:
    """``rr_from_beats`` remembered for the last beat tuple (marks drags do not change RR)."""
    global _LAST_RR
    last = _LAST_RR
    if last is not None and last[0] is beats and last[1] == fs_hz and last[2] == has_p:
        return last[3]
    stats = rr_from_beats(beats, fs_hz, has_p=has_p)
    _LAST_RR = (beats, fs_hz, has_p, stats)
    return stats


def dominant_group(beats: tuple[Beat, ...]) -> int | None:
    """Morphology group id holding the most dominant-rhythm beats (``Beat.in_dominant_rhythm``;
    None when no beat is).

    >>> dominant_group((Beat(0, group=1), Beat(5, group=1), Beat(9, BeatKind.PREMATURE, 0)))
    1
    """
    groups = [b.group for b in beats if b.in_dominant_rhythm]
    if not groups:
        return None
    ids, counts = np.unique(np.asarray(groups, dtype=np.int64), return_counts=True)
    return int(ids[int(np.argmax(counts))])


def rr_from_beats(beats: tuple[Beat, ...], fs_hz: float, *, has_p: bool = True) -> RRStats:
    """Mean and SD of the RR intervals that set the heart rate, and whether RR is irregular.

    Regular rhythm with P waves: an interval counts only when both of its beats are dominant
    (``Beat.in_dominant_rhythm``: a paced dominant rhythm counts as dominant): intervals that
    touch a premature beat (its coupling interval and the pause after it) would bias the rate
    that QTc corrects for. Where no interval joins two dominant beats (e.g. only occasional
    paced beats of changing shape), intervals between consecutive non-premature beats are used
    instead and ``basis`` says so.

    Irregular rhythm: the RR coefficient of variation over consecutive beats of the dominant
    morphology group is > ``IRREGULAR_RR_CV`` and, besides, either the representative beat has
    no P wave or the intervals between consecutive DOMINANT beats alone still vary by more than
    that (so one atrial premature beat in sinus rhythm, whose coupling interval and pause
    alone raise the group's CV, does not make the rhythm "irregular"; on LUDB sinus records 66
    and 78 it would). In atrial fibrillation "premature" only means
    "shorter than the local median", so leaving those beats out biases the rate low; the
    ventricular rate counts every QRS, so every interval between consecutive detected beats is
    used. Regular rhythm without a P wave in the representative beat (``has_p`` False): every
    interval between two consecutive beats of the dominant morphology group (``Beat.group``,
    any kind). Both common practice, no source. Checked against LUDB atrial-fibrillation
    records (tests/measure/test_rhythm_rate.py): restricting an irregular rhythm to the
    dominant group left out aberrant beats and gave 75 instead of 97 bpm on LUDB record 109.
    SD is the sample SD (ddof = 1), None for fewer than two intervals.

    >>> b = tuple(Beat(r) for r in (0, 500, 1000, 1500))
    >>> s = rr_from_beats(b, 500.0)
    >>> s.mean_ms, s.sd_ms, s.n_intervals, s.irregular
    (1000.0, 0.0, 3, False)
    >>> af = tuple(Beat(r, BeatKind.PREMATURE if r == 700 else BeatKind.DOMINANT)
    ...            for r in (0, 400, 700, 1200, 1500))
    >>> rr_from_beats(af, 500.0, has_p=False).mean_ms  # all four intervals: 3000 ms / 4
    750.0
    """
    if len(beats) < 2:
        return RRStats(None, None, 0, "fewer than two beats")
    r = np.fromiter((b.r for b in beats), dtype=np.int64, count=len(beats))
    kinds = [b.kind for b in beats]
    dominant = np.array([b.in_dominant_rhythm for b in beats])
    premature = np.array([k == BeatKind.PREMATURE for k in kinds])
    rr = np.diff(r) * 1000.0 / fs_hz
    dom_group = dominant_group(beats)
    in_group = np.zeros(len(beats), dtype=bool)
    if dom_group is not None:
        in_group = np.array([b.group == dom_group for b in beats])
    cv = _cv(rr[in_group[1:] & in_group[:-1]])
    cv_dominant = _cv(rr[dominant[1:] & dominant[:-1]])
    irregular = (
        cv is not None
        and cv > IRREGULAR_RR_CV
        and (not has_p or (cv_dominant is not None and cv_dominant > IRREGULAR_RR_CV))
    )
    if irregular:
        use = np.ones(rr.shape, dtype=bool)
        basis = "all intervals between consecutive beats (irregular rhythm)"
    elif not has_p and dom_group is not None:
        use = in_group[1:] & in_group[:-1]
        basis = "all intervals between consecutive dominant-group beats (no P wave)"
    else:
        use = dominant[1:] & dominant[:-1]
        basis = "dominant-to-dominant intervals"
        if not use.any():
            use = ~premature[1:] & ~premature[:-1]
            basis = "intervals between non-premature beats (no two consecutive dominant beats)"
    use &= rr > 0
    sel = rr[use]
    if sel.size == 0:
        return RRStats(None, None, 0, "no RR interval free of premature beats", irregular, cv)
    sd = float(np.std(sel, ddof=1)) if sel.size >= 2 else None
    return RRStats(float(np.mean(sel)), sd, int(sel.size), basis, irregular, cv)


def _cv(rr_ms: np.ndarray) -> float | None:
    """Coefficient of variation (sample SD / mean) of positive intervals; None if < 2."""
    rr_ms = rr_ms[rr_ms > 0]
    if rr_ms.size < 2:
        return None
    return float(np.std(rr_ms, ddof=1) / np.mean(rr_ms))


def _one_beat(beat: Beat, m: WaveMarks, prev_r: int | None, fs_hz: float) -> BeatIntervals:
    return BeatIntervals(
        r_s=beat.r / fs_hz,
        kind=beat.kind.value,
        rr_ms=span_ms(prev_r, beat.r, fs_hz),
        pr_ms=span_ms(m.p_on, m.qrs_on, fs_hz),
        qrs_ms=span_ms(m.qrs_on, m.qrs_off, fs_hz),
        qt_ms=span_ms(m.qrs_on, m.t_off, fs_hz),
    )


# Last call's inputs and results. Beats and marks are immutable, and a mark drag replaces only
# the dragged beat's WaveMarks object, so unchanged beats (same objects) reuse their result:
# a drag on a long record stays well under a millisecond instead of rebuilding every beat.
_LAST: tuple[tuple[Beat, ...], float, tuple[WaveMarks, ...], tuple[BeatIntervals, ...]] | None = (
    None
)


def beat_intervals(
    beats: tuple[Beat, ...], beat_marks: tuple[WaveMarks, ...], fs_hz: float
) -> tuple[BeatIntervals, ...]:
    """Per-beat RR (from the previous beat, any kind), PR, QRS and QT from each beat's marks."""
    global _LAST
    marks = tuple(beat_marks[: len(beats)])
    if len(marks) < len(beats):
        marks += (WaveMarks(),) * (len(beats) - len(marks))
    last = _LAST
    if last is not None and last[0] is beats and last[1] == fs_hz:
        old_marks, old = last[2], last[3]
        if all(map(operator.is_, old_marks, marks)):
            return old
        out = list(old)
        for i, (a, b) in enumerate(zip(old_marks, marks, strict=True)):
            if a is not b:
                out[i] = _one_beat(beats[i], b, beats[i - 1].r if i else None, fs_hz)
        result = tuple(out)
    else:
        result = tuple(
            _one_beat(beat, marks[i], beats[i - 1].r if i else None, fs_hz)
            for i, beat in enumerate(beats)
        )
    _LAST = (beats, fs_hz, marks, result)
    return result
