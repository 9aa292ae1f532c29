"""Wave delineation: P onset/end, QRS onset/end and T end of the median beat and of every beat.

The engine calls two functions:

- ``delineate_representative(waveform_mv, fs_hz, r_index, usable)`` on the median beat;
- ``delineate_beats(conditioned_mv, fs_hz, beats, usable, rep)`` on every detected beat.

Both cut beat windows into one (beats, samples, leads) block and delineate the whole block at
once with numpy (``delineate_core.delineate_block``), so the cost does not grow with Python
loops over samples. Each lead gets its own marks; the global (all-lead) marks come from a
multi-lead feature for QRS and from multi-lead rules over the lead marks for P and T (see
``delineate_core``).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import NamedTuple

import numpy as np

from reviewapp.core.dsp.delineate_align import ALIGN_SPEC, align_lags
from reviewapp.core.dsp.delineate_core import (
    N_MARKS,
    P_OFF,
    P_ON,
    P_PEAK,
    QRS_OFF,
    QRS_ON,
    R_PEAK,
    T_OFF,
    T_PEAK,
    BlockBounds,
    DelineationParams,
    delineate_block,
    prefilter,
)
from reviewapp.core.fiducials import Beat, RepresentativeBeat, WaveMarks

_MARK_ORDER = ("p_on", "p_off", "qrs_on", "qrs_off", "t_off", "p_peak", "r_peak", "t_peak")


def _marks_from_row(row: np.ndarray | list[int], offset: int = 0) -> WaveMarks:
    vals = row.tolist() if isinstance(row, np.ndarray) else row
    return WaveMarks(*[None if v < 0 else v + offset for v in vals])


def delineate_representative(
    waveform_mv: np.ndarray,
    fs_hz: float,
    r_index: int,
    usable: np.ndarray,
    rr_samples: int | None = None,
) -> tuple[WaveMarks, tuple[WaveMarks, ...]]:
    """(global marks, per-lead marks) of the median beat: ``delineate_median_beat`` without
    the alignment marks."""
    m = delineate_median_beat(waveform_mv, fs_hz, r_index, usable, rr_samples)
    return m.marks, m.lead_marks


@dataclass(frozen=True)
class MedianBeatMarks:
    """The median beat's marks: global (the standard's earliest onset / latest end over the
    leads), each lead's own, and the multi-lead marks beats are aligned on (window indices)."""

    marks: WaveMarks
    lead_marks: tuple[WaveMarks, ...]
    align_marks: WaveMarks


def delineate_median_beat(
    waveform_mv: np.ndarray,
    fs_hz: float,
    r_index: int,
    usable: np.ndarray,
    rr_samples: int | None = None,
) -> MedianBeatMarks:
    """Global and per-lead wave boundaries of the representative (median) beat.

    Args:
        waveform_mv: (n_window, n_leads) median beat in mV.
        fs_hz: sampling rate in Hz.
        r_index: index of the R fiducial point in the window.
        usable: (n_leads,) bool; unusable leads get all-None marks and do not vote.
        rr_samples: the RR the window was cut for (``RepresentativeBeat.rr_samples``); with
            it the T end is kept before the next beat's P (this beat's PR one RR on) and the
            P is sought only after the previous beat's T (this beat's T end one RR back), so
            a long QT's T is never taken for the next beat's P. None: neither limit.

    Returns:
        ``MedianBeatMarks``, indices into the window; absent waves are None.

    Example:
        >>> import numpy as np
        >>> fs = 500.0
        >>> t = np.arange(600) / fs
        >>> qrs = np.exp(-0.5 * ((t - 0.4) / 0.012) ** 2)
        >>> tw = 0.3 * np.exp(-0.5 * ((t - 0.7) / 0.04) ** 2)
        >>> w = np.stack([qrs + tw, 0.5 * (qrs + tw)], axis=1).astype(np.float32)
        >>> m = delineate_median_beat(w, fs, 200, np.array([True, True]))
        >>> 160 < m.marks.qrs_on < 200 < m.marks.qrs_off < 240, m.marks.t_off > 350
        (True, True)
    """
    wave = np.asarray(waveform_mv, dtype=np.float32)
    n, n_leads = wave.shape
    usable = np.asarray(usable, dtype=bool)
    if n == 0 or not usable.any() or not 0 <= r_index < n:
        empty = WaveMarks()
        return MedianBeatMarks(empty, tuple(empty for _ in range(n_leads)), empty)
    params = DelineationParams.for_fs(fs_hz)
    rr = -1 if rr_samples is None else int(rr_samples)
    # First on the classic window, R + min(900 ms, 0.65 RR): a T usually ends within it and
    # the previous T mostly lies before the P search.
    post = round(min(_CLASSIC_POST_S * fs_hz, _T_SOFT_RR * rr)) if rr > 0 else n - 1 - r_index
    n1 = min(n, r_index + post + 1)
    rr1 = rr if rr > 0 and post < round(_CLASSIC_POST_S * fs_hz) else -1
    glob, lead, core, slow = _delineate_one(wave[:n1], fs_hz, r_index, usable, params, rr1, 0)
    if rr > 0 and core[0, QRS_ON] >= 0 and core[0, T_OFF] >= 0:
        q_on, q_off, t_end = (int(v) for v in core[0, [QRS_ON, QRS_OFF, T_OFF]])
        k = round(_T_PINNED_S * fs_hz)
        # A long QT: the T has not ended by the classic window's end, or the P found lies
        # inside the previous beat's T (this beat's T end one RR back). Then once more on
        # the whole window (to the next beat's P), the P sought after the previous T's main
        # lobe and the T end allowed up to the next P.
        unfinished = n1 < n and t_end >= n1 - 1 - k
        lobe = _t_lobe_end(slow[:, usable], q_on, q_off, t_end, fs_hz)
        if n1 < n and (unfinished or lobe < 0 or lobe >= n1 - 2):
            # The lobe runs past the classic window: follow it on the whole window.
            whole = prefilter(wave, fs_hz)["slow"]
            lobe = _t_lobe_end(whole[:, usable], q_on, q_off, t_end, fs_hz)
        p_lo = max(0, lobe - rr) if lobe >= 0 else 0
        p_in_t = 0 <= int(glob[0, P_ON]) < p_lo - round(_P_IN_T_S * fs_hz)
        if unfinished or p_in_t:
            glob, lead, core, _ = _delineate_one(wave, fs_hz, r_index, usable, params, rr, p_lo)
    return MedianBeatMarks(
        _marks_from_row(glob[0]),
        tuple(_marks_from_row(lead[0, j]) for j in range(n_leads)),
        _marks_from_row(core[0]),
    )


def _delineate_one(
    wave: np.ndarray,
    fs_hz: float,
    r_index: int,
    usable: np.ndarray,
    params: DelineationParams,
    rr: int,
    p_lo: int,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """``delineate_block`` on one median-beat window; ``p_lo`` > 0: the P search starts there,
    after the previous beat's T (``BlockBounds.p_after_t``). Also returns the window's 20 Hz
    copy (``prefilter``'s "slow")."""
    n = wave.shape[0]
    filt = prefilter(wave, fs_hz)
    bounds = BlockBounds(
        r=np.array([r_index]),
        lo=np.array([0]),
        hi=np.array([n - 1]),
        p_lo=np.array([p_lo]),
        t_hi=np.array([n - 1]),
        rr=np.array([rr]),
        p_after_t=p_lo > 0,
    )
    glob, lead, core = delineate_block(
        {k: v[None] for k, v in filt.items()}, bounds, usable, params
    )
    return glob, lead, core, filt["slow"]


def _t_lobe_end(slow: np.ndarray, qrs_on: int, qrs_off: int, t_end: int, fs_hz: float) -> int:
    """Where the T wave's main lobe has fallen back near the baseline, window index (-1: none).

    Found without the P wave, so it can bound the P search of a long QT whose previous T runs
    into this beat's P window (a first T end ``t_end``, found under a next-P limit set by
    such a false P, stops short of the true end): per lead, the largest deflection from the
    PR level between QRS end + ``_T_LOBE_START_MS`` and ``t_end`` + ``_T_LOBE_AFTER_MS``;
    the lobe ends at the first sample after it below ``_T_LOBE_FRAC`` of that deflection or
    where the deflection grows again (a P or U wave fused with the T). The median over the
    leads whose deflection is at least a third of the largest (this module's own rule;
    common practice to read the T where it is clear).
    """
    n = slow.shape[0]
    k = max(1, round(0.010 * fs_hz))
    a = qrs_off + round(_T_LOBE_START_MS * fs_hz / 1000.0)
    b = min(n - 2, t_end + round(_T_LOBE_AFTER_MS * fs_hz / 1000.0))
    if qrs_on < 1 or not 0 <= a < b:
        return -1
    level = slow[max(0, qrs_on - k) : qrs_on].mean(axis=0)
    y = np.abs(slow - level[None, :])
    pk = a + np.argmax(y[a : b + 1], axis=0)
    amp = y[pk, np.arange(y.shape[1])]
    if not (amp > 0).any():
        return -1
    ends = []
    for j in np.flatnonzero(amp >= amp.max() / 3.0):
        seg = y[pk[j] :, j]
        stop = (seg[:-1] < _T_LOBE_FRAC * amp[j]) | (np.diff(seg) > 0)
        hit = np.flatnonzero(stop)
        if hit.size:
            ends.append(int(pk[j]) + int(hit[0]))
    return int(np.median(ends)) if ends else -1


def _anchor(rep: RepresentativeBeat) -> WaveMarks:
    """The marks beats are aligned on and P windows are cut around (see ``align_marks``)."""
    return rep.align_marks if rep.align_marks is not None else rep.marks


# The classic median-beat window, R + min(_CLASSIC_POST_S, _T_SOFT_RR x RR): a T usually ends
# within it (first delineation); a T end within _T_PINNED_S of its end is not over.
_CLASSIC_POST_S = 0.90
_T_SOFT_RR = 0.65
_T_PINNED_S = 0.006
# A P counts as inside the previous beat's T when it starts this long before that T's end.
_P_IN_T_S = 0.010
# The T wave's main lobe (``_t_lobe_end``): its peak sought from this long after QRS end to
# this long after a first T end (ms); the lobe ends where the deflection falls below this
# fraction of its peak.
_T_LOBE_START_MS = 80.0
_T_LOBE_AFTER_MS = 60.0
_T_LOBE_FRAC = 0.05
# Below this correlation with the median beat, a beat is delineated on its own.
ALIGN_MIN_CORR = 0.5
# Peaks follow the lag of a boundary of the same wave.
_PEAK_FOLLOWS = {P_PEAK: P_ON, R_PEAK: QRS_ON, T_PEAK: T_OFF}
_P_COLS = np.array([P_ON, P_OFF, P_PEAK])  # the columns a beat without P clears


def _marks_from_rep(
    filt: dict[str, np.ndarray],
    fs_hz: float,
    r: np.ndarray,
    beats: tuple[Beat, ...],
    usable: np.ndarray,
    rep: RepresentativeBeat,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Representative-beat boundaries carried to the dominant beats by local matching.

    Returns (global (B, 8), per-lead (B, L, 8)) record indices (-1 absent) and a (B, 5) bool
    ``matched`` per boundary column (dominant beat, boundary present on the median beat,
    local match with correlation >= ALIGN_MIN_CORR).
    """
    nb, nl = r.size, len(usable)
    glob = np.full((nb, N_MARKS), -1, dtype=np.int64)
    lead = np.full((nb, nl, N_MARKS), -1, dtype=np.int64)
    is_dom = np.array([b.in_dominant_rhythm for b in beats])
    dom = np.flatnonzero(is_dom)
    matched = np.zeros((nb, 5), dtype=bool)
    if dom.size == 0:
        return glob, lead, matched
    ui = np.flatnonzero(usable)
    rep_f = prefilter(np.asarray(rep.waveform_mv)[:, ui], fs_hz)
    rep_g = np.array([-1 if v is None else v for v in _mark_values(rep.marks)], dtype=np.int64)
    anchor = np.array([-1 if v is None else v for v in _mark_values(_anchor(rep))])
    rep_l = np.array(
        [[-1 if v is None else v for v in _mark_values(m)] for m in rep.lead_marks], dtype=np.int64
    ).reshape(-1, N_MARKS)
    stride = max(1, round(fs_hz / 500.0))  # lag resolution <= 2 ms up to 2 kHz

    def to_s(ms: float) -> int:
        return max(1, round(ms * fs_hz / 1000.0))

    lag_of = np.zeros((dom.size, N_MARKS), dtype=np.int64)
    for col, (before_ms, after_ms, lag_ms, key) in enumerate(ALIGN_SPEC):
        if rep_g[col] < 0:
            continue
        # Matched around the multi-lead mark (where the wave is in most leads), not around
        # the widened global one (the earliest / latest lead, often on a flat stretch).
        m = int(anchor[col]) if anchor[col] >= 0 else int(rep_g[col])
        expected = r[dom] + (m - rep.r_index)
        lags, corr = align_lags(
            filt[key][:, ui],
            rep_f[key],
            expected,
            m,
            to_s(before_ms),
            to_s(after_ms),
            to_s(lag_ms),
            stride,
        )
        matched[dom, col] = corr >= ALIGN_MIN_CORR
        lag_of[:, col] = lags
    for pk, col in _PEAK_FOLLOWS.items():
        lag_of[:, pk] = lag_of[:, col]
    base = (r[dom] - rep.r_index)[:, None] + lag_of  # (D, 8)
    glob[dom] = np.where(rep_g[None, :] >= 0, base + rep_g[None, :], -1)
    if rep_l.shape[0] == nl:
        lead[dom] = np.where(rep_l[None] >= 0, base[:, None, :] + rep_l[None], -1)
        lead[:, ~usable, :] = -1  # unusable leads get no marks whatever the median beat says
    return glob, lead, matched


def _mark_values(m: WaveMarks) -> list[int | None]:
    return [getattr(m, name) for name in _MARK_ORDER]


# P presence across beats (measured on LUDB/QTDB, this module's own rule): mean pairwise
# correlation of the dominant beats' P-window segments (all usable leads, each lead's
# segment detrended). LUDB sinus records: 0.53-0.99 (all but one >= 0.8); LUDB atrial
# fibrillation / flutter with a median-beat P: 0.04-0.17 (two records 0.58, 0.75); QTDB
# Holter records with reference P down to 0.40 (noise), without: 0.43-0.56. A PR that
# changes from beat to beat (dissociated P, Wenckebach) also lowers it: P is then dropped.
P_MIN_BEAT_CORR = 0.5
# A clear P (at least P_CLEAR_MV in its largest lead) needs only this much repetition.
P_MIN_BEAT_CORR_CLEAR = 0.35
P_CLEAR_MV = 0.08
# A beat of another QRS shape than the dominant ones keeps its own P only if that P matches
# the dominant beats' mean P this well (a P-like bump before a ventricular beat is not its
# P; measured on MIT-BIH 100: its ventricular beat is cleared, its 33 atrial beats kept).
P_ODD_MIN_CORR = 0.6
# P coupling (``_p_coupled_to_previous_qrs``): on beats whose preceding RR differs from the
# median by at least P_COUPLING_MIN_SHIFT x the P window, the P-window match with the mean P
# aligned on the preceding QRS must stay below P_COUPLING_MAX_RATIO x the match aligned on
# the beat's own QRS. Geometry: a half-sine bump shifted by half its width keeps 0.32 of its
# autocorrelation (integral of sin x sin(x + pi/2) over the overlap / integral of sin^2 x),
# less once detrended or shifted further. Measured on the records where the test decides
# (>= 3 informative beats): sinus rhythm -0.89..0.31 (19 LUDB, 33 QTDB records), LUDB atrial
# flutter with varying conduction 0.53, atrial fibrillation 0.55-1.48; the limit lies
# between (this module's own rule; the limit is set on those records).
P_COUPLING_MAX_RATIO = 0.42
P_COUPLING_MIN_SHIFT = 0.5
P_COUPLING_MIN_BEATS = 3
_P_PRE_MS = 30.0  # the P window starts this long before the P onset (takes in the baseline)


def _zsegments(slow: np.ndarray, start: np.ndarray, length: int) -> tuple[np.ndarray, np.ndarray]:
    """Unit-norm, per-lead linearly detrended segments (B, length*L) and a fit mask (B,)."""
    n = slow.shape[0]
    ok = (start >= 0) & (start + length <= n)
    idx = np.clip(start[:, None] + np.arange(length)[None, :], 0, n - 1)
    seg = slow[idx].astype(np.float64)  # (B, S, L)
    t = np.linspace(-1.0, 1.0, length)[None, :, None]
    seg = seg - seg.mean(axis=1, keepdims=True)
    seg = seg - t * (seg * t).sum(axis=1, keepdims=True) / max(float((t * t).sum()), 1e-12)
    z = seg.reshape(len(seg), -1)
    z = z / np.maximum(np.linalg.norm(z, axis=1, keepdims=True), 1e-12)
    return z, ok


class _PWindow(NamedTuple):
    """The median beat's P window: start relative to R and length (samples), and the P onset
    and end it was cut around (median-beat sample indices)."""

    start: int
    length: int
    p_on: int
    p_off: int


def _rep_p_window(fs_hz: float, rep: RepresentativeBeat) -> _PWindow | None:
    """P window relative to R on the median beat, or None."""
    m = _anchor(rep)
    if m.p_on is None or m.p_off is None:
        return None
    a = m.p_on - round(_P_PRE_MS * fs_hz / 1000.0) - rep.r_index
    length = m.p_off - rep.r_index - a + 1
    return _PWindow(a, length, m.p_on, m.p_off) if length >= 4 else None


def _p_repeats(
    slow: np.ndarray,
    fs_hz: float,
    r: np.ndarray,
    beats: tuple[Beat, ...],
    usable: np.ndarray,
    rep: RepresentativeBeat,
) -> tuple[bool, np.ndarray | None]:
    """Whether the dominant beats repeat the median beat's P (same shape at the same PR).

    Returns (decision, unit-norm mean P-window segment of the dominant beats or None).
    """
    win = _rep_p_window(fs_hz, rep)
    dom = np.array([b.in_dominant_rhythm for b in beats])
    if win is None or dom.sum() < 3:
        return True, None  # too little to judge: keep the median beat's decision
    ui = np.flatnonzero(usable)
    z, ok = _zsegments(slow[:, ui], r[dom] + win.start, win.length)
    z = z[ok]
    nz = len(z)
    if nz < 3:
        return True, None
    corr = _mean_pair_corr(z)
    s = z.sum(axis=0)
    tmpl = s / max(float(np.linalg.norm(s)), 1e-12)
    if _p_coupled_to_previous_qrs(slow[:, ui], r, dom, (win.start, win.length), tmpl):
        return False, tmpl
    if corr >= P_MIN_BEAT_CORR:
        return True, tmpl
    if corr < P_MIN_BEAT_CORR_CLEAR:
        return False, tmpl
    rep_slow = prefilter(np.asarray(rep.waveform_mv)[:, ui], fs_hz)["slow"]
    seg = rep_slow[win.p_on : win.p_off + 1]
    amp = float(np.abs(seg - np.linspace(seg[0], seg[-1], len(seg))).max()) if len(seg) else 0.0
    return amp >= P_CLEAR_MV, tmpl


def _mean_pair_corr(z: np.ndarray) -> float:
    """Mean pairwise correlation of unit-norm rows ``z`` (0 for fewer than two rows)."""
    n = len(z)
    s = z.sum(axis=0)
    return float((s @ s - n) / (n * (n - 1))) if n >= 2 else 0.0


def _p_coupled_to_previous_qrs(
    slow: np.ndarray, r: np.ndarray, dom: np.ndarray, win: tuple[int, int], tmpl: np.ndarray
) -> bool:
    """Whether the P-window wave follows the PRECEDING QRS as firmly as its own one.

    A P wave starts the beat it belongs to: its PR stays put while the RR changes. Beats
    whose preceding RR differs from the median RR by at least half the P window are the
    informative ones: aligned on their own QRS their P-window segment matches the dominant
    beats' mean P (``tmpl``); aligned on the preceding QRS (at the median RR after it) it
    must match clearly worse. A wave that matches as well either way marches at its own
    rate, unrelated to the QRS -- flutter waves with varying conduction (the RR then changes
    by whole flutter cycles, so either alignment lands on a flutter wave) -- or belongs to
    the previous beat (its T or U wave). Returns True for "not this beat's P"; False where
    fewer than P_COUPLING_MIN_BEATS beats are informative (no decision).
    """
    a, length = win
    idx = np.flatnonzero(dom[1:])  # beat idx + 1 is of the dominant rhythm
    rr = np.diff(r)
    rr_dom = rr[dom[1:] & dom[:-1]]
    if idx.size < P_COUPLING_MIN_BEATS or rr_dom.size < 2:
        return False
    med = int(np.median(rr_dom))
    idx = idx[np.abs(rr[idx] - med) >= P_COUPLING_MIN_SHIFT * length]
    if idx.size < P_COUPLING_MIN_BEATS:
        return False
    z_own, ok_o = _zsegments(slow, r[idx + 1] + a, length)
    z_prev, ok_p = _zsegments(slow, r[idx] + med + a, length)
    ok = ok_o & ok_p
    if ok.sum() < P_COUPLING_MIN_BEATS:
        return False
    c_own = float(np.mean(z_own[ok] @ tmpl))
    c_prev = float(np.mean(z_prev[ok] @ tmpl))
    return c_prev > P_COUPLING_MAX_RATIO * c_own


def _odd_beats_without_p(
    slow: np.ndarray,
    fs_hz: float,
    beats: tuple[Beat, ...],
    usable: np.ndarray,
    rep: RepresentativeBeat,
    glob: np.ndarray,
    tmpl: np.ndarray | None,
) -> np.ndarray:
    """(B,) bool: non-dominant beats of another QRS shape than the dominant ones whose own P
    does not match the dominant beats' P (e.g. a bump before a ventricular ectopic beat)."""
    nb = len(beats)
    out = np.zeros(nb, dtype=bool)
    dom_groups = [b.group for b in beats if b.in_dominant_rhythm]
    win = _rep_p_window(fs_hz, rep)
    if not dom_groups or win is None:
        return out
    main = np.bincount(np.maximum(dom_groups, 0)).argmax()
    odd = np.array([not b.in_dominant_rhythm and b.group != main for b in beats])
    odd &= glob[:, P_ON] >= 0
    if not odd.any():
        return out
    if tmpl is None:  # too few dominant beats to judge: trust the beat's own P
        return out
    ui = np.flatnonzero(usable)
    pre = win.p_on - rep.r_index - win.start  # samples from window start to P onset
    z, ok = _zsegments(slow[:, ui], glob[odd, P_ON] - pre, win.length)
    out[np.flatnonzero(odd)] = ~ok | (z @ tmpl < P_ODD_MIN_CORR)
    return out


def representative_p_from_beats(
    rep: RepresentativeBeat, beats: tuple[Beat, ...], beat_marks: tuple[WaveMarks, ...]
) -> RepresentativeBeat:
    """The representative beat with its P marks removed where ``delineate_beats`` found the
    dominant beats carry no repeating P (rhythm-level decision, e.g. atrial fibrillation).

    ``delineate_representative`` sees only the median beat, which can hold an averaged P out
    of fibrillation waves; ``delineate_beats`` decides P presence over the beats and clears
    every beat's P. Call this with its output so the median beat agrees with the beats.

    >>> from reviewapp.core.fiducials import Beat, RepresentativeBeat, WaveMarks
    >>> import numpy as np
    >>> rep = RepresentativeBeat(np.zeros((10, 1), np.float32), 5, 3, WaveMarks(1, 3, 4, 6, 9))
    >>> out = representative_p_from_beats(rep, (Beat(100),), (WaveMarks(None, None, 99, 101),))
    >>> out.marks.p_on, out.marks.p_off, out.marks.qrs_on, out.marks.t_off
    (None, None, 4, 9)
    """
    dom = [m for b, m in zip(beats, beat_marks, strict=True) if b.in_dominant_rhythm]
    if not dom or any(m.p_on is not None for m in dom) or rep.marks.p_on is None:
        return rep
    no_p = {"p_on": None, "p_off": None, "p_peak": None}
    return replace(
        rep,
        marks=replace(rep.marks, **no_p),
        lead_marks=tuple(replace(m, **no_p) for m in rep.lead_marks),
        align_marks=None if rep.align_marks is None else replace(rep.align_marks, **no_p),
    )


def _rep_p_present(rep: RepresentativeBeat | None) -> bool | None:
    if rep is None:
        return None
    return rep.marks.p_on is not None or rep.marks.p_off is not None


def delineate_beats(
    conditioned_mv: np.ndarray,
    fs_hz: float,
    beats: tuple[Beat, ...],
    usable: np.ndarray,
    rep: RepresentativeBeat | None,
) -> tuple[tuple[WaveMarks, ...], tuple[tuple[WaveMarks, ...], ...]]:
    """Global and per-lead wave boundaries of every beat (record sample indices).

    Dominant beats take the median beat's boundaries, each moved by the lag that best matches
    the beat's own signal around that boundary (``delineate_align``: +-12..60 ms); the
    median beat is far less noisy than one beat, so its marks are steadier, while the lag
    lets each beat follow its own QT. A boundary whose local match is poor (correlation
    < ALIGN_MIN_CORR), and every boundary of premature, paced or unclassified beats, is
    delineated on the beat's own signal (``delineate_core``) in a window from 450 ms before
    to 800 ms after its R, clipped to the neighbours: T is searched before the next beat's P,
    P within 45 % of the preceding RR. P presence is a rhythm-level decision: where the
    median beat has no P wave, or the dominant beats do not repeat its P (mean pairwise
    correlation of their P-window segments below P_MIN_BEAT_CORR: atrial fibrillation,
    dissociated P waves), or the wave follows the preceding QRS as well as its own one where
    the RR varies (``_p_coupled_to_previous_qrs``: flutter waves, T/U waves), no beat gets
    one; a non-dominant beat of another QRS shape (e.g. a ventricular ectopic beat) keeps its
    own P only if that P matches the dominant beats' P.
    ``representative_p_from_beats`` carries the decision back to the median beat.

    Args:
        conditioned_mv: (n_samples, n_leads) conditioned signal in mV.
        fs_hz: sampling rate in Hz.
        beats: detected beats (R sample indices), in time order.
        usable: (n_leads,) bool.
        rep: the representative beat with its marks, or None.

    Returns:
        (global marks per beat, per-lead marks [beat][lead]); record indices, None = absent.
    """
    x = np.asarray(conditioned_mv, dtype=np.float32)
    n, n_leads = x.shape
    usable = np.asarray(usable, dtype=bool)
    if not beats:
        return (), ()
    if n == 0 or not usable.any():
        empty = WaveMarks()
        return tuple(empty for _ in beats), tuple(
            tuple(empty for _ in range(n_leads)) for _ in beats
        )
    params = DelineationParams.for_fs(fs_hz)
    r = np.array([b.r for b in beats], dtype=np.int64)
    filt = prefilter(x, fs_hz)
    glob = np.full((len(r), N_MARKS), -1, dtype=np.int64)
    lead = np.full((len(r), n_leads, N_MARKS), -1, dtype=np.int64)
    matched = np.zeros((len(r), 5), dtype=bool)
    if rep is not None:
        glob, lead, matched = _marks_from_rep(filt, fs_hz, r, beats, usable, rep)
        # A boundary absent on the median beat stays absent on its dominant beats.
        absent = np.array([v is None for v in _mark_values(rep.marks)[:5]])
        is_dom = np.array([b.in_dominant_rhythm for b in beats])
        matched[np.ix_(is_dom, absent)] = True
    own = ~matched.all(axis=1)
    if own.any():
        # Per boundary: the matched median-beat mark where there is one, else the beat's own.
        take = ~matched[own]  # (n_own, 5)
        # The global QRS is widened only where a beat's own QRS or P end is used.
        need_qrs = bool(take[:, [P_OFF, QRS_ON, QRS_OFF]].any())
        g_own, l_own = _delineate_own(filt, fs_hz, r, np.flatnonzero(own), usable, params, need_qrs)
        cols = np.zeros((take.shape[0], N_MARKS), dtype=bool)
        cols[:, :5] = take
        for pk, col in _PEAK_FOLLOWS.items():
            cols[:, pk] = take[:, col]
        glob[own] = np.where(cols, g_own, glob[own])
        lead[own] = np.where(cols[:, None, :], l_own, lead[own])
    # Rhythm-level P decision: the median beat must have a P and the dominant beats must
    # repeat it (an averaged P out of fibrillation waves or dissociated P waves does not).
    p_p, p_tmpl = _rep_p_present(rep), None
    if p_p is not False and rep is not None:
        p_p, p_tmpl = _p_repeats(filt["slow"], fs_hz, r, beats, usable, rep)
    if p_p is False:
        glob[:, _P_COLS] = -1
        lead[:, :, _P_COLS] = -1
    elif rep is not None and own.any():
        odd = _odd_beats_without_p(filt["slow"], fs_hz, beats, usable, rep, glob, p_tmpl)
        glob[np.ix_(odd, _P_COLS)] = -1
        lead[np.ix_(odd, np.arange(n_leads), _P_COLS)] = -1
    # Python ints once for the whole block (per-element numpy scalars are slow here).
    g_marks = tuple(_marks_from_row(row) for row in glob.tolist())
    l_marks = tuple(tuple(_marks_from_row(row) for row in beat) for beat in lead.tolist())
    return g_marks, l_marks


def _delineate_own(
    filt: dict[str, np.ndarray],
    fs_hz: float,
    r_all: np.ndarray,
    sel: np.ndarray,
    usable: np.ndarray,
    params: DelineationParams,
    widen_qrs: bool = True,
) -> tuple[np.ndarray, np.ndarray]:
    """Delineate beats ``sel`` on their own signal; record indices, -1 absent (the global QRS
    widened to the standard's extremes with ``widen_qrs``, see ``delineate_block``)."""
    n = filt["fast"].shape[0]
    pre = round(0.45 * fs_hz)
    post = round(0.80 * fs_hz)
    rr_prev_all = np.diff(r_all, prepend=r_all[0] - round(fs_hz))
    rr_next_all = np.diff(r_all, append=r_all[-1] + round(fs_hz))
    r = r_all[sel]
    rr_prev = np.where(rr_prev_all[sel] <= 0, int(fs_hz), rr_prev_all[sel])
    rr_next = np.where(rr_next_all[sel] <= 0, int(fs_hz), rr_next_all[sel])
    # Windows r-pre .. r+post; samples outside the record are edge-padded and masked by bounds.
    idx_c = np.clip(r[:, None] + np.arange(-pre, post + 1)[None, :], 0, n - 1)
    block = {k: v[idx_c] for k, v in filt.items()}  # (B, W, L)
    lo = np.maximum(0, pre - r)  # first in-record sample
    hi = np.minimum(pre + post, pre + (n - 1 - r))
    # T must end before the next beat's P: leave min(300 ms, 35 % RR) before the next R.
    gap = np.minimum(int(0.30 * fs_hz), (0.35 * rr_next).astype(int))
    t_hi = np.minimum(hi, pre + rr_next - gap)
    # P of this beat starts after the previous beat's T: search at most 45 % of the RR back.
    p_lo = np.maximum(lo, pre - (0.45 * rr_prev).astype(int))
    bounds = BlockBounds(r=np.full(len(r), pre), lo=lo, hi=hi, p_lo=p_lo, t_hi=t_hi, rr=rr_next)
    glob, lead, _ = delineate_block(block, bounds, usable, params, widen_qrs)
    shift = (r - pre)[:, None]
    glob = np.where(glob >= 0, glob + shift, -1)
    lead = np.where(lead >= 0, lead + shift[:, :, None], -1)
    return glob, lead
