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

import numpy as np

from reviewapp.core.dsp.beats import REP_POST_RR, REP_POST_S
from reviewapp.core.dsp.delineate_align import ALIGN_SPEC, align_lags
from reviewapp.core.dsp.delineate_core import (
    N_MARKS,
    P_OFF,
    P_ON,
    P_PEAK,
    QRS_ON,
    R_PEAK,
    T_OFF,
    T_PEAK,
    BlockBounds,
    DelineationParams,
    delineate_block,
    prefilter,
)
from reviewapp.core.fiducials import Beat, BeatKind, RepresentativeBeat, WaveMarks

_MARK_ORDER = ("p_on", "p_off", "qrs_on", "qrs_off", "t_off", "p_peak", "r_peak", "t_peak")


def _marks_from_row(row: np.ndarray, offset: int = 0) -> WaveMarks:
    vals = {n: (None if v < 0 else int(v) + offset) for n, v in zip(_MARK_ORDER, row, strict=True)}
    return WaveMarks(**vals)


def _rep_rr_samples(n: int, r_index: int, fs_hz: float) -> int:
    """The RR the representative window was cut for, where its length tells (else -1).

    beats.representative_beat ends the window at R + min(REP_POST_S, REP_POST_RR x RR); a
    window shorter than REP_POST_S therefore gives RR = post / REP_POST_RR.
    """
    post = n - 1 - r_index
    if post < round(REP_POST_S * fs_hz) - 1:
        return round(post / REP_POST_RR)
    return -1


def delineate_representative(
    waveform_mv: np.ndarray, fs_hz: float, r_index: int, usable: np.ndarray
) -> tuple[WaveMarks, tuple[WaveMarks, ...]]:
    """Global and per-lead wave boundaries of the representative (median) beat.

    Args:
        waveform_mv: (n_window, n_leads) median beat in mV.
        fs_hz: sampling rate in Hz.
        r_index: index of the R fiducial point in the window.
        usable: (n_leads,) bool; unusable leads get all-None marks and do not vote.

    Returns:
        (global marks, per-lead marks), indices into the window; absent waves are None.

    Example:
        >>> import numpy as np
        >>> fs = 500.0
        >>> t = np.arange(600) / fs
        >>> qrs = np.exp(-0.5 * ((t - 0.4) / 0.012) ** 2)
        >>> tw = 0.3 * np.exp(-0.5 * ((t - 0.7) / 0.04) ** 2)
        >>> w = np.stack([qrs + tw, 0.5 * (qrs + tw)], axis=1).astype(np.float32)
        >>> marks, leads = delineate_representative(w, fs, 200, np.array([True, True]))
        >>> 160 < marks.qrs_on < 200 < marks.qrs_off < 240, marks.t_off > 350
        (True, True)
    """
    wave = np.asarray(waveform_mv, dtype=np.float32)
    n, n_leads = wave.shape
    usable = np.asarray(usable, dtype=bool)
    if n == 0 or not usable.any() or not 0 <= r_index < n:
        empty = WaveMarks()
        return empty, tuple(empty for _ in range(n_leads))
    params = DelineationParams.for_fs(fs_hz)
    filt = prefilter(wave, fs_hz)
    block = {k: v[None] for k, v in filt.items()}
    bounds = BlockBounds(
        r=np.array([r_index]),
        lo=np.array([0]),
        hi=np.array([n - 1]),
        p_lo=np.array([0]),
        t_hi=np.array([n - 1]),
        rr=np.array([_rep_rr_samples(n, r_index, fs_hz)]),
    )
    glob, lead = delineate_block(block, bounds, usable, params)
    return _marks_from_row(glob[0]), tuple(_marks_from_row(lead[0, j]) for j in range(n_leads))


# Below this correlation with the median beat, a beat is delineated on its own.
ALIGN_MIN_CORR = 0.5
# Peaks follow the lag of a boundary of the same wave.
_PEAK_FOLLOWS = {P_PEAK: P_ON, R_PEAK: QRS_ON, T_PEAK: T_OFF}


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
    is_dom = np.array([b.kind == BeatKind.DOMINANT for b in beats])
    dom = np.flatnonzero(is_dom)
    matched = np.zeros((nb, 5), dtype=bool)
    if dom.size == 0:
        return glob, lead, matched
    ui = np.flatnonzero(usable)
    rep_f = prefilter(np.asarray(rep.waveform_mv)[:, ui], fs_hz)
    rep_g = np.array([-1 if v is None else v for v in _mark_values(rep.marks)], dtype=np.int64)
    rep_l = np.array(
        [[-1 if v is None else v for v in _mark_values(m)] for m in rep.lead_marks], dtype=np.int64
    ).reshape(-1, N_MARKS)
    stride = max(1, round(fs_hz / 500.0))  # lag resolution <= 2 ms up to 2 kHz

    def to_s(ms: float) -> int:
        return max(1, round(ms * fs_hz / 1000.0))

    lag_of = np.zeros((dom.size, N_MARKS), dtype=np.int64)
    for col, (before_ms, after_ms, lag_ms, key) in enumerate(ALIGN_SPEC):
        m = int(rep_g[col])
        if m < 0:
            continue
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
    P within 45 % of the preceding RR. Where the median beat has no P wave (e.g. atrial
    fibrillation: no organised P survives the median), no beat gets one either.

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
        is_dom = np.array([b.kind == BeatKind.DOMINANT for b in beats])
        matched[np.ix_(is_dom, absent)] = True
    own = ~matched.all(axis=1)
    if own.any():
        g_own, l_own = _delineate_own(filt, fs_hz, r, np.flatnonzero(own), usable, params)
        # Per boundary: the matched median-beat mark where there is one, else the beat's own.
        take = ~matched[own]  # (n_own, 5)
        cols = np.zeros((take.shape[0], N_MARKS), dtype=bool)
        cols[:, :5] = take
        for pk, col in _PEAK_FOLLOWS.items():
            cols[:, pk] = take[:, col]
        glob[own] = np.where(cols, g_own, glob[own])
        lead[own] = np.where(cols[:, None, :], l_own, lead[own])
    # Rhythm-level P decision: follow the representative beat when there is one.
    if _rep_p_present(rep) is False:
        glob[:, [P_ON, P_OFF, P_PEAK]] = -1
        lead[:, :, [P_ON, P_OFF, P_PEAK]] = -1
    g_marks = tuple(_marks_from_row(row) for row in glob)
    l_marks = tuple(
        tuple(_marks_from_row(lead[b, j]) for j in range(n_leads)) for b in range(len(r))
    )
    return g_marks, l_marks


def _delineate_own(
    filt: dict[str, np.ndarray],
    fs_hz: float,
    r_all: np.ndarray,
    sel: np.ndarray,
    usable: np.ndarray,
    params: DelineationParams,
) -> tuple[np.ndarray, np.ndarray]:
    """Delineate beats ``sel`` on their own signal; record indices, -1 absent."""
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
    glob, lead = delineate_block(block, bounds, usable, params)
    shift = (r - pre)[:, None]
    glob = np.where(glob >= 0, glob + shift, -1)
    lead = np.where(lead >= 0, lead + shift[:, :, None], -1)
    return glob, lead
