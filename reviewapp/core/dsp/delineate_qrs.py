"""QRS onset and end on a multi-lead slope feature, and pacing spikes before a QRS.

See ``delineate_core`` for the method and its sources (Martinez et al., IEEE TBME 51(4):570-581,
2004 decision rules on the spatial velocity; Vazquez-Seisdedos et al., BioMed Eng OnLine
10:77, 2011 trapezium corner for the QRS end), then the corner refinement of
``delineate_refine``.

Where the error against the readers comes from (measured on the records in shared/data,
global marks, QRS onset / end SD in ms): QTDB q1c 10.0 / 14.3, of which the readers' own beat-
to-beat scatter within a record (their marks move 4-12 ms SD relative to R while this engine's
move 1-4 ms) is 7.7 / 9.1, the spread of per-record mean errors 6.2 / 11.2 (e.g. a slurred
terminal S the readers include: sel34, sele0509 -35..-40 ms; others they cut earlier). LUDB
per lead 10.3 / 14.0: within a record 8.8 / 12.5, mostly the readers' lead-to-lead spread (7.4
/ 9.6 ms; two thirds of it a fixed offset per lead and record), between records 5.4 / 6.2. So
with one mark per beat the CSE tolerance (6.5 / 11.6) cannot be reached on these references:
the readers' own scatter exceeds it.
"""

from __future__ import annotations

import numpy as np
from scipy import ndimage

from reviewapp.core.dsp.delineate_ops import (
    first_true,
    last_true,
    masked_argmax,
    range_mask,
    run_below,
    take,
    trapezium_boundary,
)
from reviewapp.core.dsp.delineate_params import DelineationParams
from reviewapp.core.dsp.delineate_refine import refine_boundary, step_speed
from reviewapp.core.dsp.filters import filter_plan

# The noise level of the slope after a QRS end is taken as at most this many times the
# window's median slope (mostly baseline and slow waves; about its noise level): QTDB QRS end
# +3.1 +- 14.3 -> +1.5 +- 14.0 ms, LUDB per lead +0.9 +- 14.0 -> -0.3 +- 13.9 ms.
ARC_NOISE_MEDIANS = 2.0


def qrs_bounds(
    f: np.ndarray,
    r: np.ndarray,
    lo: np.ndarray,
    hi: np.ndarray,
    p: DelineationParams,
    on_min: np.ndarray | None = None,
    off_max: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """QRS onset and end on a non-negative slope feature ``f`` (M, W) around R ``r`` (M,).

    ``on_min``/``off_max`` optionally narrow the search (per-lead marks near the global ones).
    Returns (onset, end) indices, -1 where not found.
    """
    on, off, _, _ = qrs_bounds_thresholds(f, r, lo, hi, p, on_min, off_max)
    return on, off


def qrs_bounds_thresholds(
    f: np.ndarray,
    r: np.ndarray,
    lo: np.ndarray,
    hi: np.ndarray,
    p: DelineationParams,
    on_min: np.ndarray | None = None,
    off_max: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """``qrs_bounds`` plus the onset and end slope thresholds it used (M,), units of ``f``."""
    if on_min is not None:
        lo = np.maximum(lo, on_min)
    if off_max is not None:
        hi = np.minimum(hi, off_max)
    # The noise floor is the whole window's median slope; nothing else reads beyond the QRS
    # end's search limit (plus the run and envelope lengths), so the rest of the window (the
    # T wave) is left out of the array work.
    med = np.median(f, axis=1)
    if f.shape[0]:
        reach = int(np.max(np.minimum(hi, r + p.qrs_off_limit))) + max(p.qrs_run, p.qrs_env) + 2
        f = f[:, : max(1, min(f.shape[1], reach))]
    _m, w = f.shape
    c_lo = np.maximum(lo, r - p.qrs_half_search)
    c_hi = np.minimum(hi, r + p.qrs_half_search)
    fmax = np.max(np.where(range_mask(w, c_lo, c_hi), f, 0.0), axis=1)
    floor = p.noise_mult * med
    sig = p.qrs_sig * fmax
    on_lo = np.maximum(lo, r - p.qrs_on_search)
    off_lim = np.minimum(hi, r + p.qrs_off_limit)
    # The complex ends where its smoothed slope envelope first drops near zero on either side
    # of its peak; searching only inside that span keeps a steep P or T wave out of the QRS.
    env = ndimage.uniform_filter1d(f, size=p.qrs_env, axis=1, mode="nearest")
    env_pk = masked_argmax(env, range_mask(w, c_lo, c_hi))
    low = env < (p.qrs_env_frac * take(env, env_pk))[:, None]
    e_on = last_true(range_mask(w, on_lo, env_pk) & low)
    e_off = first_true(range_mask(w, env_pk, off_lim) & low)
    on_lo = np.where(e_on >= 0, np.maximum(on_lo, e_on - p.qrs_env // 2), on_lo)
    hi = np.where(e_off >= 0, np.minimum(hi, e_off + p.qrs_env // 2), hi)
    # First significant slope lobe; the onset threshold is relative to that lobe's own peak
    # (Martinez 2004: threshold on the first modulus maximum, not the largest one), so a small
    # initial q wave is not cut off by a threshold set by the tall R.
    i0 = first_true(range_mask(w, on_lo, r) & (f > sig[:, None]))
    i0 = np.where(i0 < 0, r, i0)
    falling = np.zeros_like(f, dtype=bool)
    falling[:, :-1] = f[:, 1:] < f[:, :-1]
    pk0 = first_true(range_mask(w, i0, r) & falling)
    pk0 = np.where(pk0 < 0, i0, pk0)
    thr_on = np.maximum(p.qrs_on_frac * take(f, pk0), floor)
    # A boundary needs the slope to stay low for qrs_run samples (outward), so a turning
    # point inside the complex (slope momentarily zero at a Q, R or S peak) does not count.
    on = last_true(range_mask(w, on_lo, i0) & run_below(f, thr_on, p.qrs_run, forward=False))
    off_sig_hi = np.minimum(hi, r + p.qrs_off_search)
    i1 = last_true(range_mask(w, r, off_sig_hi) & (f > (p.qrs_sig_off * fmax)[:, None]))
    i1 = np.where(i1 < 0, r, i1)
    rising = np.zeros_like(f, dtype=bool)
    rising[:, 1:] = f[:, :-1] < f[:, 1:]
    pk1 = last_true(range_mask(w, r, i1) & rising)
    pk1 = np.where(pk1 < 0, i1, pk1)
    thr_off = np.maximum(p.qrs_off_frac * take(f, pk1), floor)
    off_hi = np.minimum(hi, off_lim)
    off = first_true(range_mask(w, i1, off_hi) & run_below(f, thr_off, p.qrs_run, forward=True))
    # No sample below threshold inside the envelope span: the span's edge is the boundary.
    on = np.where((on < 0) & (e_on >= 0), on_lo, on)
    off = np.where((off < 0) & (e_off >= 0), hi, off)
    if p.qrs_end_corner_w > 0:
        # QRS end also as the corner where the cumulative slope (the arc length of the
        # multi-lead trajectory) levels off into the ST segment: the trapezium rule
        # (Vazquez-Seisdedos 2011) applied to that curve from the last significant slope.
        # A slurred return to baseline moves the corner, not the threshold crossing; the two
        # are averaged (measured on QTDB/LUDB: SD 0.4-0.7 ms lower than either alone).
        # The curve is the cumulative slope less the noise level of the slope (its mean
        # over the second half of the corner window, at most ARC_NOISE_MEDIANS x the
        # window's median slope): noise keeps the curve rising after the QRS and drags the
        # trapezium corner outward (synthetic QRS in 20 dB muscle noise, 500 Hz: corner
        # +8..+9 samples past the last non-zero one, +5 noise-free; +3..+4 with the noise
        # level removed). A steeper tail is the ST segment's own slope and stays (removing
        # it moved LUDB QRS ends 1.8 ms earlier, 8 ms on LUDB record 1 at 125 Hz).
        xr = np.minimum(off_lim, i1 + p.qrs_corner_xr)
        if p.qrs_arc_noise:
            tail = range_mask(w, i1 + p.qrs_corner_xr // 2, xr)
            base = np.sum(np.where(tail, f, 0.0), axis=1) / np.maximum(tail.sum(axis=1), 1)
            base = np.minimum(base, ARC_NOISE_MEDIANS * med)
            arc = np.cumsum(f - base[:, None], axis=1)
        else:
            arc = np.cumsum(f, axis=1)
        corner = trapezium_boundary(arc, i1, xr)
        w_c = p.qrs_end_corner_w
        both = (corner >= 0) & (off >= 0)
        off = np.where(both, np.round(w_c * corner + (1.0 - w_c) * off), off).astype(np.int64)
    bad = fmax <= 0
    return np.where(bad, -1, on), np.where(bad, -1, off), thr_on, thr_off


def pacing_spikes(
    raw: np.ndarray, sv: np.ndarray, on: np.ndarray, off: np.ndarray, p: DelineationParams
) -> np.ndarray:
    """Index of a pacing spike near each QRS onset, -1 where none.

    A pacing stimulus is far steeper and narrower than any QRS slope: on the input signal
    (before the delineator's 40 Hz low-pass, which spreads a spike over ~15 ms either side),
    its spatial velocity peaks above ``spike_ratio`` x the QRS's steepest low-passed slope
    and stays above half that peak for at most ``spike_width``. Measured on the LUDB median
    beats: paced records 3.1-13.9 x (width <= 4 ms at 500 Hz), all others <= 1.8 x (common
    practice to look for the stimulus artefact, no single source for the numbers).

    Args:
        raw: (M, W, U) input windows, mV (usable leads).
        sv: (M, W) spatial velocity of the low-passed windows, mV/s.
        on, off: (M,) QRS onset and end found on ``sv``.
        p: parameters.
    """
    _m, w = sv.shape
    fs = p.fs_hz
    dr = np.diff(raw, axis=1, prepend=raw[:, :1]) * fs
    svr = np.sqrt(np.sum(dr * dr, axis=2))  # (M, W) mV/s
    ok = (on >= 0) & (off > on)
    k = masked_argmax(svr, range_mask(w, on - p.spike_before, on + p.spike_after) & ok[:, None])
    peak = take(svr, k)
    qmax = np.max(np.where(range_mask(w, on, off), sv, 0.0), axis=1)
    near = range_mask(w, k - p.spike_width, k + p.spike_width)
    width = np.sum(near & (svr > 0.5 * peak[:, None]), axis=1)
    spike = (k >= 0) & (peak > p.spike_ratio * qmax) & (width <= p.spike_width)
    return np.where(spike, k, -1)


# Noise allowance of the fine-scale corner test (x the window's median fine slope). 0: only a
# strict corner moves a boundary (noise-free synthetic waves: exact; QTDB/LUDB: QRS onset/end
# mean and SD within 0.1 ms of the coarse marks'). A noise-tolerant test (1.5)
# also places corners in 20 dB noise exactly, but moves many real boundaries where the readers
# did not put them: QTDB readers mark a sharp QRS onset 8-12 ms BEFORE its corner (seen on
# sel306, sel307, sel310, sele0124: onset mean +1.5 -> +9.5 ms), and QRS ends moved 4-15 ms
# inward in 41 of 70 QTDB records, half of them away from the readers (SD 14.3 -> 14.8 ms).
CORNER_NOISE_MULT = 0.0
# The refinement looks at most this far outside the coarse boundaries (its reach, skip and
# outside span together: delineate_refine).
REFINE_MARGIN_MS = 60.0


# Coarse-to-fine needs a finer scale: the conditioning low-pass (filters.filter_plan: 187 Hz,
# or 0.8 x Nyquist at low rates) must pass at least twice the 40 Hz of the coarse copy. At
# 125 Hz sampling it is 50 Hz, no finer than the coarse copy: there a "corner" is the coarse
# mark's own blur (LUDB record 1 resampled to 125 Hz: QRS onset moved 3 samples into the QRS).
FINE_MIN_LOWPASS_HZ = 80.0


def refine_qrs_bounds(
    raw: np.ndarray,
    on: np.ndarray,
    off: np.ndarray,
    r: np.ndarray,
    thr_on: np.ndarray,
    thr_off: np.ndarray,
    fs_hz: float,
) -> tuple[np.ndarray, np.ndarray]:
    """QRS onset and end moved from the 40 Hz slope marks to the corner of the less-filtered
    leads where there is one (``delineate_refine.refine_boundary``, coarse-to-fine).

    Args:
        raw: (M, W, U) conditioned windows, mV (usable leads).
        on, off: (M,) coarse QRS onset and end (-1 none); r: (M,) R.
        thr_on, thr_off: (M,) the coarse slope thresholds, mV/s (``qrs_bounds_thresholds``).
        fs_hz: sampling rate, Hz.

    Returns:
        (onset, end) indices; unchanged where no corner is found, and at rates where the
        conditioned leads are no finer than the 40 Hz copy (see ``FINE_MIN_LOWPASS_HZ``).
    """
    ok = (on >= 0) & (off > on)
    lp = filter_plan(fs_hz, None).lowpass_hz
    if not ok.any() or (lp is not None and lp < FINE_MIN_LOWPASS_HZ):
        return on, off
    # Only the samples around the boundaries matter: work on that span of the windows.
    margin = round(REFINE_MARGIN_MS * fs_hz / 1000.0)
    a = max(0, int(on[ok].min()) - margin)
    b = min(raw.shape[1], int(off[ok].max()) + margin + 1)
    x = raw[:, a:b]
    sp = step_speed(x, fs_hz)
    nm = CORNER_NOISE_MULT
    c_on, c_off, c_r = np.where(ok, on - a, -1), np.where(ok, off - a, -1), r - a
    on2 = refine_boundary(x, c_on, c_r, thr_on, fs_hz, onset=True, noise_mult=nm, speed=sp) + a
    off2 = refine_boundary(x, c_off, c_r, thr_off, fs_hz, onset=False, noise_mult=nm, speed=sp) + a
    on2 = np.where(ok & (on2 < r), on2, on)
    off2 = np.where(ok & (off2 > r), off2, off)
    return on2, off2
