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


_LAST_RR: tuple[tuple[Beat, ...], float, RRStats] | None = None


def rr_statistics(beats: tuple[Beat, ...], fs_hz: float) -> RRStats:
    """``rr_from_beats`` remembered for the last beat tuple (marks drags do not change RR)."""
    global _LAST_RR
    last = _LAST_RR
    if last is not None and last[0] is beats and last[1] == fs_hz:
        return last[2]
    stats = rr_from_beats(beats, fs_hz)
    _LAST_RR = (beats, fs_hz, stats)
    return stats


def rr_from_beats(beats: tuple[Beat, ...], fs_hz: float) -> RRStats:
    """Mean and SD of the RR intervals between consecutive DOMINANT beats.

    An interval counts only when both of its beats are dominant: intervals that touch a
    premature beat (its coupling interval and the pause after it) would bias the rate that QTc
    corrects for. Where no interval joins two dominant beats (e.g. a paced rhythm), intervals
    between consecutive non-premature beats are used instead and ``basis`` says so. SD is the
    sample SD (ddof = 1), None for fewer than two intervals.

    >>> b = tuple(Beat(r) for r in (0, 500, 1000, 1500))
    >>> s = rr_from_beats(b, 500.0)
    >>> s.mean_ms, s.sd_ms, s.n_intervals
    (1000.0, 0.0, 3)
    """
    if len(beats) < 2:
        return RRStats(None, None, 0, "fewer than two beats")
    r = np.fromiter((b.r for b in beats), dtype=np.int64, count=len(beats))
    kinds = [b.kind for b in beats]
    dominant = np.array([k == BeatKind.DOMINANT for k in kinds])
    premature = np.array([k == BeatKind.PREMATURE for k in kinds])
    rr = np.diff(r) * 1000.0 / fs_hz
    use = dominant[1:] & dominant[:-1]
    basis = "dominant-to-dominant intervals"
    if not use.any():
        use = ~premature[1:] & ~premature[:-1]
        basis = "intervals between non-premature beats (no two consecutive dominant beats)"
    use &= rr > 0
    sel = rr[use]
    if sel.size == 0:
        return RRStats(None, None, 0, "no RR interval free of premature beats")
    sd = float(np.std(sel, ddof=1)) if sel.size >= 2 else None
    return RRStats(float(np.mean(sel)), sd, int(sel.size), basis)


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
