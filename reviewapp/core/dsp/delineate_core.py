"""Vectorised wave delineation of a block of beat windows (beats x samples x leads).

Every step works on whole (rows, samples) arrays -- one row per beat (global marks) or per
beat and lead -- with masks instead of Python loops. Durations are given in ms
(``DURATIONS_MS``) and converted for the sampling rate, so 125 Hz to 2 kHz work alike.

Methods:

- QRS onset/end (global): slope thresholds on the spatial velocity
  sqrt(sum_leads (dx/dt)^2) of the 40 Hz low-passed usable leads (the usual multi-lead QRS
  feature of vectorcardiographic boundary programs; common practice, no single source), with
  the decision rules of the wavelet delineator of Martinez JP, Almeida R, Olmos S, Rocha AP,
  Laguna P, "A wavelet-based ECG delineator: evaluation on standard databases", IEEE TBME
  51(4):570-581, 2004: find the first (last) significant slope lobe of the complex (above
  ``qrs_sig`` x its steepest slope), then walk outward until the slope stays below
  ``qrs_on_frac`` (``qrs_off_frac``) of that lobe's own peak for ``qrs_run`` (8 ms); the
  QRS end is averaged with the corner where the cumulative slope levels off (trapezium rule,
  below, on that curve). The search is confined to the span where a 20 ms moving average of
  the slope stays above 5 % of its peak, which keeps a steep P or T wave out of the complex.
  Where the 40 Hz low-pass has spread a sharp corner outward, the boundary is then moved to
  the corner of the conditioned input (coarse-to-fine, ``delineate_refine``; Mallat and
  Zhong, IEEE TPAMI 14(7):710-732, 1992). Each lead's QRS marks are the global ones (LUDB
  readers mark them so; see ``qrs_lead_global``). A pacing spike near the onset
  (``pacing_spikes``: far steeper and narrower than any QRS slope on the unfiltered input)
  moves the onset to 10 ms after the spike, where the LUDB readers mark paced QRS onsets
  (the 40 Hz low-pass would otherwise spread the spike and put the onset ~15 ms before it).
- T wave per lead: on the 20 Hz low-passed lead referred to its PR level, the T flanks are
  the steepest rising and falling slopes (30 ms smoothed) after QRS end + 80 ms, before the
  next beat's P unless that limit cuts the T itself (``lead_t_waves_before_next_p``) (the
  pair of opposite slope maxima Martinez 2004 uses at the T scale); the
  later significant flank returns to baseline, its sign gives the polarity, the extreme
  before it is the T peak. T end by the trapezium-area method of Vazquez-Seisdedos CR, Neto
  JE, Maranon Reyes EJ, Klautau A, Limao de Oliveira RC, "New approach for T-wave end
  detection on electrocardiogram: performance in noisy conditions", BioMed Eng OnLine 10:77,
  2011: from the steepest point x_m of that flank to x_r = x_m + 80 ms, the end is the x_i
  maximising A(x_i) = 0.5 |y(x_m) - y(x_i)| (|x_r - x_m| + |x_r - x_i|); the same area is
  then maximised on the conditioned input within -40/+8 ms of that end
  (``delineate_t.refine_t_end``: the 20 Hz copy rounds a sharp T end 10-12 ms outward).
- P wave per lead: in the 300 ms before QRS onset - 20 ms, with the straight line joining the
  window ends removed, the largest deflection is the P peak (present if >= 0.03 mV); onset
  and end by the same trapezium rule on each side (x_r 50 ms before / 25 ms after the
  steepest slopes within 60 ms of the peak); where the 40 Hz lead shows a true corner there,
  the mark moves to it (two-segment fit, ``delineate_corner``; see ``delineate_p``).
- Global P and T: multi-lead rules over the single-lead marks, after Laguna P, Jane R,
  Caminal P, "Automatic detection of wave boundaries in multilead ECG signals: validation
  with the CSE database", Comput Biomed Res 27(1):45-60, 1994 (the exact rule here is this
  module's own): only leads whose wave is at least 30 % of the largest one vote; P onset/end
  are the 40th/60th percentiles and T end the median of their marks (order statistics
  rounded up: for two leads, earliest onset and latest end). A global P needs a P in at
  least 30 % of the usable leads. Leads with a weak P, or whose own mark lies more than
  40 ms (P) / 80 ms (T) from the global one, take the global mark; a lead with a weak but
  present T (>= 0.04 mV) keeps its own T end (readers mark T end lead by lead).

Code: QRS in ``delineate_qrs``, P in ``delineate_p``, T in ``delineate_t``, shared array
operations in ``delineate_ops``, settings in ``delineate_params``.

The thresholds were set on the LUDB and QTDB records in shared/data; tests/dsp measure the
result against those readers' marks.
"""

from __future__ import annotations

from dataclasses import replace
from functools import lru_cache

import numpy as np
from scipy import signal

from reviewapp.core.dsp.delineate_global import confirmed_extreme, widen
from reviewapp.core.dsp.delineate_ops import masked_argmax, order_stat, range_mask, take
from reviewapp.core.dsp.delineate_p import LeadP, global_p, lead_p_waves
from reviewapp.core.dsp.delineate_params import (
    DURATIONS_MS,
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
)
from reviewapp.core.dsp.delineate_qrs import (
    pacing_spikes,
    qrs_bounds,
    qrs_bounds_thresholds,
    refine_qrs_bounds,
)
from reviewapp.core.dsp.delineate_t import (
    LeadT,
    global_t,
    lead_t_waves,
    lead_t_waves_before_next_p,
)
from reviewapp.core.dsp.filters import filter_plan

__all__ = [
    "DURATIONS_MS",
    "N_MARKS",
    "P_OFF",
    "P_ON",
    "P_PEAK",
    "QRS_OFF",
    "QRS_ON",
    "R_PEAK",
    "T_OFF",
    "T_PEAK",
    "BlockBounds",
    "DelineationParams",
    "delineate_block",
    "pacing_spikes",
    "prefilter",
    "qrs_bounds",
]


SLOW_HZ = 20.0  # low-pass for P and T (their content lies below ~15 Hz)
FAST_HZ = 40.0  # low-pass for QRS slopes


@lru_cache(maxsize=32)
def lowpass_sos(fs_hz: float, cutoff_hz: float, dtype: str = "float32") -> np.ndarray:
    """The delineator's low-pass (Butterworth order 2 at ``cutoff_hz``, at most 0.95 x
    Nyquist) as second-order sections, cached per rate; ``prefilter`` uses float32 (ample
    for boundaries), ``pacing`` float64."""
    wn = min(cutoff_hz / (fs_hz / 2.0), 0.95)
    return signal.butter(2, wn, btype="lowpass", output="sos").astype(dtype)


def prefilter(x_mv: np.ndarray, fs_hz: float) -> dict[str, np.ndarray]:
    """Zero-phase low-pass copies used by the delineator: 40 Hz for QRS, 20 Hz for P and T.

    Returns ``{"fast": ..., "slow": ..., "raw": x_mv}`` each shaped like ``x_mv``
    (n, n_leads), mV, float32 (ample for boundaries; three times faster to filter than
    float64); "raw" is the input itself, kept for pacing spikes (which the low-passes smear).
    """
    x = np.asarray(x_mv, dtype=np.float32)
    if x.shape[0] < 16:
        return {"fast": x.copy(), "slow": x.copy(), "raw": x}
    pad = min(x.shape[0] - 1, int(0.1 * fs_hz))
    fs = float(fs_hz)
    fast = signal.sosfiltfilt(lowpass_sos(fs, FAST_HZ), x, axis=0, padlen=pad)
    slow = signal.sosfiltfilt(lowpass_sos(fs, SLOW_HZ), x, axis=0, padlen=pad)
    return {
        "fast": fast.astype(np.float32, copy=False),
        "slow": slow.astype(np.float32, copy=False),
        "raw": x,
    }


def delineate_block(
    block: dict[str, np.ndarray], bounds: BlockBounds, usable: np.ndarray, p: DelineationParams
) -> tuple[np.ndarray, np.ndarray]:
    """Delineate B beat windows at once.

    Args:
        block: {"fast": (B, W, L), "slow": (B, W, L)} low-passed windows (see ``prefilter``).
        bounds: per-beat limits in window coordinates.
        usable: (L,) bool.
        p: parameters for this sampling rate.

    Returns:
        (global (B, 8), per-lead (B, L, 8), multi-lead (B, 8)) int64 window indices, -1 =
        absent; columns P_ON, P_OFF, QRS_ON, QRS_OFF, T_OFF, P_PEAK, R_PEAK, T_PEAK. The
        global marks follow the standard's definition (earliest onset, latest end over the
        leads: ``_standard_global``); the multi-lead marks are those found before that
        widening (spatial QRS, order statistics of the lead P and T marks), on which beats
        are aligned to the median beat.
    """
    fast = block["fast"]
    slow = block["slow"]
    nb, w, nl = fast.shape
    fs = p.fs_hz
    use = np.asarray(usable, dtype=bool)
    glob = np.full((nb, N_MARKS), -1, dtype=np.int64)
    lead = np.full((nb, nl, N_MARKS), -1, dtype=np.int64)
    if nb == 0 or not use.any():
        return glob, lead, glob.copy()
    ui = np.flatnonzero(use)
    nu = ui.size

    # --- QRS: global on spatial velocity, per lead on |dx/dt| -----------------------------
    d = np.gradient(fast[:, :, ui], axis=1) * fs  # (B, W, U) mV/s
    sv = np.sqrt(np.sum(d * d, axis=2))  # (B, W)
    r = bounds.r.astype(np.int64)
    g_on, g_off, thr_on, thr_off = qrs_bounds_thresholds(sv, r, bounds.lo, bounds.hi, p)
    spk = np.full(nb, -1, dtype=np.int64)
    if "raw" in block:
        # The 40 Hz low-pass spreads a sharp QRS corner outward: locate it on the input.
        g_on, g_off = refine_qrs_bounds(block["raw"][:, :, ui], g_on, g_off, r, thr_on, thr_off, fs)
        # A paced QRS starts at its stimulus: the low-passed spike would put the onset early.
        spk = pacing_spikes(block["raw"][:, :, ui], sv, g_on, g_off, p)
        g_on = np.where(spk >= 0, np.maximum(g_on, spk + p.spike_delay), g_on)
    glob[:, QRS_ON], glob[:, QRS_OFF], glob[:, R_PEAK] = g_on, g_off, r

    rep = lambda a: np.repeat(a, nu)  # noqa: E731 - per-beat value to per-(beat, lead) rows
    if p.qrs_lead_global:
        # LUDB readers' per-lead QRS marks sit on the global boundaries (measured: per-lead
        # slope thresholds gave +10/-11 ms bias there, the global marks about 0; at half the
        # fractions, within 12 ms of the global marks, LUDB QRS end SD 14.0 -> 13.5 ms, but a
        # lead's mark then moved 4-17 ms with the sampling rate: too fragile to keep).
        l_on, l_off = rep(g_on), rep(g_off)
    else:
        # Each lead's QRS lies within a few tens of ms of the global one; the bound keeps a
        # fast P or T wave in one lead from being taken for its QRS.
        fl = np.abs(d).transpose(0, 2, 1).reshape(nb * nu, w)
        l_on, l_off = qrs_bounds(
            fl,
            rep(r),
            rep(bounds.lo),
            rep(bounds.hi),
            p,
            on_min=rep(np.where(g_on >= 0, g_on - p.qrs_lead_slack, 0)),
            off_max=rep(np.where(g_off >= 0, g_off + p.qrs_lead_slack, w - 1)),
        )
    # A lead whose own boundary failed falls back to the global one.
    l_on = np.where(l_on < 0, rep(g_on), l_on)
    l_off = np.where(l_off < 0, rep(g_off), l_off)

    xs = slow[:, :, ui].transpose(0, 2, 1).reshape(nb * nu, w)
    xf = fast[:, :, ui].transpose(0, 2, 1).reshape(nb * nu, w)
    # Isoelectric level: the PR segment just before each lead's QRS onset.
    # Before a pacing spike: the PR level and the P search end ahead of its low-passed spread.
    pre_on = np.where(l_on >= 0, l_on, rep(r))
    pre_on = np.where(rep(spk) >= 0, np.minimum(pre_on, rep(spk) - p.p_gap), pre_on)
    on_c = np.clip(pre_on, 0, w - 1)
    k_iso = max(1, round(0.010 * fs))
    iso_mask = range_mask(w, on_c - k_iso, on_c)
    base = np.sum(np.where(iso_mask, xs, 0.0), axis=1) / np.maximum(iso_mask.sum(axis=1), 1)
    y = xs - base[:, None]

    # R peak per lead: largest deflection of the fast signal inside its own QRS.
    qm = range_mask(w, np.where(l_on >= 0, l_on, rep(r)), np.where(l_off >= 0, l_off, rep(r)))
    l_r = masked_argmax(np.abs(xf - base[:, None]), qm)

    # --- P wave ------------------------------------------------------------------------------
    # Boundaries refined on the 40 Hz copy (the 20 Hz one rounds the P corners).
    lp = lead_p_waves(y, pre_on, rep(bounds.p_lo), k_iso, p, y_fine=xf)

    # Where the RR is known, T must end before the next beat's P (same PR as this beat).
    p_on_b = order_stat(np.where(lp.ok, lp.on, -1).reshape(nb, nu), p.p_on_q)
    t_hi_b = bounds.t_hi.copy()
    if bounds.rr is not None:
        # Where the P search started after the previous beat's T (``p_after_t``) the P is
        # trusted: the T may end right at the next P (a long QT fuses with it).
        gap = 1 if bounds.p_after_t else p.p_gap
        next_p = r + bounds.rr - np.where(p_on_b >= 0, r - p_on_b, 0) - gap
        t_hi_b = np.where(bounds.rr > 0, np.minimum(t_hi_b, next_p), t_hi_b)

    # --- T wave ------------------------------------------------------------------------------
    off_c = np.where(l_off >= 0, l_off, rep(r))
    # The T end is refined on the conditioned input (the 20 Hz copy rounds its corner).
    t_fine = None
    if "raw" in block:
        t_fine = block["raw"][:, :, ui].transpose(0, 2, 1).reshape(nb * nu, w)
    # T ends before the next P where that limit does not cut the T itself (delineate_t).
    if bounds.p_after_t:
        lt = lead_t_waves(y, off_c, rep(t_hi_b), rep(r), p, y_fine=t_fine)
    else:
        lt = lead_t_waves_before_next_p(
            y, off_c, rep(bounds.t_hi), rep(t_hi_b), rep(r), p, y_fine=t_fine
        )

    # --- assemble per-lead ---------------------------------------------------------------------
    cols = np.full((nb * nu, N_MARKS), -1, dtype=np.int64)
    cols[:, QRS_ON], cols[:, QRS_OFF], cols[:, R_PEAK] = l_on, l_off, l_r
    cols[:, T_OFF] = np.where(lt.ok, lt.end, -1)
    cols[:, T_PEAK] = np.where(lt.ok, lt.peak, -1)
    cols[:, P_ON] = np.where(lp.ok, lp.on, -1)
    cols[:, P_OFF] = np.where(lp.ok, lp.off, -1)
    cols[:, P_PEAK] = np.where(lp.ok, lp.peak, -1)

    # --- global P and T by multi-lead rules -----------------------------------------------------
    lu = cols.reshape(nb, nu, N_MARKS)
    global_t(glob, lu, lt, p)
    global_p(glob, lu, lp, p)
    lead[:, ui, :] = lu
    _p_before_qrs(glob)
    core = glob.copy()
    if p.standard_global:
        raw = block["raw"][:, :, ui] if "raw" in block else None
        _standard_global(glob, d, raw, r, bounds, lp, lt, spk, p)
        # The latest lead's T end stays before the next P, like every lead's own.
        glob[:, T_OFF] = np.where(glob[:, T_OFF] > t_hi_b, core[:, T_OFF], glob[:, T_OFF])
        _p_before_qrs(glob)
    return glob, lead, core


def _p_before_qrs(glob: np.ndarray) -> None:
    """P must end before QRS onset (in place)."""
    bad_p = (glob[:, P_OFF] >= 0) & (glob[:, QRS_ON] >= 0) & (glob[:, P_OFF] > glob[:, QRS_ON])
    glob[bad_p, P_OFF] = glob[bad_p, QRS_ON]


def _standard_global(
    glob: np.ndarray,
    d: np.ndarray,
    raw: np.ndarray | None,
    r: np.ndarray,
    bounds: BlockBounds,
    lp: LeadP,
    lt: LeadT,
    spk: np.ndarray,
    p: DelineationParams,
) -> None:
    """Global marks widened to the earliest onset / latest end over the leads (in place on
    ``glob``), by the confirmed-extreme rule of ``delineate_global``.

    Candidates (window indices, per beat and usable lead):

    - QRS: each lead's own onset and end on that lead's 40 Hz slope |dx/dt|, with the rules of
      the spatial marks at lower fractions (``glob_qrs_on_frac`` / ``glob_qrs_off_frac`` of the
      lead's own first / last slope lobe), sought up to ``glob_qrs_slack`` outside the
      spatial marks (a right bundle branch block's terminal R' in V1 can end 60 ms after
      them) and moved to the corner of the less-filtered lead where there is one; a lead
      votes where its steepest QRS slope is at least ``glob_qrs_vote_frac`` of the largest
      lead's.
    - P onset / end and T end: each lead's own mark (before weak or stray leads took the
      global one); a lead votes where its wave is at least ``glob_p_vote_frac`` /
      ``glob_t_vote_frac`` of the largest lead's.

    QRS: only candidates outside the multi-lead mark vote, and only where the lead's own
    signal moves between its mark and the sample before the multi-lead one (after it, for
    an end: that mark's own sample already holds the QRS) by at least
    max(``glob_lead_min_mv``, ``glob_lead_noise_mult`` x the lead's noise SD)
    (``_moves_enough``): a low-pass spreads a corner outward and noise crosses a low slope
    threshold, but neither changes the lead's level there (noise-free synthetic QRS: exact;
    at 20 dB noise the same -8 / +9 ms as the spatial marks; without the test -18 / +18 ms).
    P and T: every voting lead's mark counts, and the P extreme needs ``glob_p_confirm``
    (two) other leads within ``glob_p_agree`` (with one, 20 dB noise moved the synthetic P
    onset 16 ms early).
    """
    nb, w, nu = d.shape
    rep = lambda a: np.repeat(a, nu)  # noqa: E731
    k = p.glob_min_votes
    g_on, g_off = glob[:, QRS_ON], glob[:, QRS_OFF]
    ok = (g_on >= 0) & (g_off > g_on)
    fl = np.abs(d).transpose(0, 2, 1).reshape(nb * nu, w)
    pl = replace(p, qrs_on_frac=p.glob_qrs_on_frac, qrs_off_frac=p.glob_qrs_off_frac)
    l_on, l_off, thr_on, thr_off = qrs_bounds_thresholds(
        fl,
        rep(r),
        rep(bounds.lo),
        rep(bounds.hi),
        pl,
        # Never into this beat's P wave: a lead's onset stays after its own P end.
        on_min=np.maximum(
            rep(np.where(ok, g_on - p.glob_qrs_slack, 0)), np.where(lp.ok, lp.off + 1, 0)
        ),
        off_max=rep(np.where(ok, g_off + p.glob_qrs_slack, w - 1)),
    )
    if raw is not None:
        raw_r = raw.transpose(0, 2, 1).reshape(nb * nu, w)
        # As for the spatial marks: the corner of the less-filtered lead where there is one.
        l_on, l_off = refine_qrs_bounds(
            raw_r[:, :, None], l_on, l_off, rep(r), thr_on, thr_off, p.fs_hz
        )
        moves = _moves_enough(raw_r, p)
        l_on = np.where(moves(l_on, rep(g_on), True), l_on, -1)
        l_off = np.where(moves(l_off, rep(g_off), False), l_off, -1)
    slope_mask = range_mask(w, rep(np.where(ok, g_on, r)), rep(np.where(ok, g_off, r)))
    slope = np.max(np.where(slope_mask, fl, 0.0), axis=1).reshape(nb, nu)
    q_vote = slope >= p.glob_qrs_vote_frac * slope.max(axis=1, keepdims=True)
    on = confirmed_extreme(l_on.reshape(nb, nu), q_vote, p.glob_qrs_agree, True, k)
    off = confirmed_extreme(l_off.reshape(nb, nu), q_vote, p.glob_qrs_agree, False, k)
    # A paced QRS starts at its stimulus (see delineate_block): never before it.
    on = np.where((spk >= 0) & (on >= 0), np.maximum(on, spk + p.spike_delay), on)
    glob[:, QRS_ON] = np.where(ok, widen(g_on, on, earliest=True), g_on)
    glob[:, QRS_OFF] = np.where(ok, widen(g_off, off, earliest=False), g_off)

    def lead_votes(amp_mv: np.ndarray, present: np.ndarray, frac: float) -> np.ndarray:
        amp = np.where(present, amp_mv, -1.0).reshape(nb, nu)
        return present.reshape(nb, nu) & (amp >= frac * amp.max(axis=1, keepdims=True))

    def widened(
        col: int, cand: np.ndarray, votes: np.ndarray, agree: int, confirm: int, on: bool
    ) -> None:
        g = glob[:, col]
        ext = confirmed_extreme(cand.reshape(nb, nu), votes, agree, on, k, confirm)
        glob[:, col] = np.where(g >= 0, widen(g, ext, earliest=on), -1)

    p_vote = lead_votes(lp.amp_mv, lp.ok, p.glob_p_vote_frac)
    widened(P_ON, lp.on, p_vote, p.glob_p_agree, p.glob_p_confirm, True)
    widened(P_OFF, lp.off, p_vote, p.glob_p_agree, p.glob_p_confirm, False)
    t_vote = lead_votes(lt.amp_mv, lt.ok, p.glob_t_vote_frac)
    widened(T_OFF, lt.end, t_vote, p.glob_t_agree, p.glob_t_confirm, False)


def _moves_enough(x: np.ndarray, p: DelineationParams):
    """A test ``moves(cand, mark, onset) -> (rows,) bool``: whether each row of ``x`` (rows,
    W; the conditioned leads, mV) moves by at least max(``glob_lead_min_mv``,
    ``glob_lead_noise_mult`` x its noise SD) between its candidate mark ``cand`` and the
    multi-lead ``mark``; True where ``cand`` is not outside ``mark`` (it widens nothing).

    Noise SD per row: 1.4826 x the median absolute first difference / sqrt(2) (white noise;
    the ECG's own slope is small sample to sample away from the QRS). Below its full-band
    design corner (sampling under ~470 Hz) the conditioning low-pass spreads a corner by
    about one period of its cutoff, further than readers see it at full bandwidth: the
    movement is then measured that far from the multi-lead mark.
    """
    noise = 1.4826 * np.median(np.abs(np.diff(x, axis=1)), axis=1) / np.sqrt(2.0)
    size = x.max(axis=1) - x.min(axis=1)
    need = np.maximum.reduce(
        [
            np.full(x.shape[0], p.glob_lead_min_mv),
            p.glob_lead_noise_mult * noise,
            p.glob_lead_size_frac * size,
        ]
    )
    lp_hz = filter_plan(p.fs_hz, None).lowpass_hz
    full_hz = filter_plan(1000.0, None).lowpass_hz
    spread = round(p.fs_hz / lp_hz) if lp_hz and full_hz and lp_hz < full_hz else 0
    w = x.shape[1]

    def moves(cand: np.ndarray, mark: np.ndarray, onset: bool) -> np.ndarray:
        b = mark - 1 - spread if onset else mark + 1 + spread
        outside = (cand >= 0) & (mark >= 0) & ((cand <= b) if onset else (cand >= b))
        lo, hi = np.minimum(cand, b), np.maximum(cand, b)
        ref = take(x, cand)[:, None]
        dev = np.where(range_mask(w, lo, hi), np.abs(x - ref), 0.0).max(axis=1)
        return outside & (dev >= need)

    return moves
