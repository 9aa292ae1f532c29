"""Coarse-to-fine boundary refinement: a QRS boundary found on a low-passed slope, moved to
the slope step of the less-filtered signal where that step is a genuine corner.

The QRS boundaries are found on the spatial velocity of 40 Hz low-passed leads
(``delineate_qrs.qrs_bounds``): robust to noise, but the low-pass spreads an abrupt onset or end
by its impulse response, so a sharp corner is marked 4-5 samples (8-10 ms at 500 Hz) outside
it. As in multiscale edge detection, where an edge found at a coarse scale is located at the
finest scale at which it still stands out (Mallat S, Zhong S, "Characterization of signals from
multiscale edges", IEEE TPAMI 14(7):710-732, 1992; the QRS boundary rules of Martinez JP et al.,
IEEE TBME 51(4):570-581, 2004 follow the same idea across wavelet scales), the boundary is looked
for again on the conditioned signal (only the recording's 150 Hz-class low-pass), with the same
slope threshold, inward of the coarse mark. The move is kept only where the fine signal shows a
corner: its slope outside the boundary is flat compared with the slope just inside. The corner
itself is placed at the half-height of that slope step: a zero-phase filter blurs a step
symmetrically, so the 50 % point of the blurred step is where the step was (common practice for
edge location, no single source).
"""

from __future__ import annotations

import numpy as np

from reviewapp.core.dsp.filters import filter_plan

# The boundary moves inward by at most this much (the 40 Hz spread is 8-10 ms).
FINE_REACH_MS = 14.0
# The fine slope must stay above the threshold this long inward (a noise spike is not a QRS).
FINE_RUN_MS = 4.0
# Corner test: the mean fine slope over this span outside the boundary ...
CORNER_OUT_MS = 16.0
# ... after skipping, next to it, this many periods of the conditioning low-pass's corner
# (filters.filter_plan: 187 Hz design corner, or 0.8 x Nyquist below about 470 Hz sampling). Its
# blur spans a fixed fraction of that period: 2 ms at 500 Hz, and at 250 and 125 Hz (corner 100
# and 50 Hz) one sample, where a skip in ms rounded to none and let the blur fail every corner.
CORNER_SKIP_PERIODS = 0.375
# ... is below CORNER_RATIO x the mean fine slope over this span inside it.
CORNER_IN_MS = 4.0
# Measured on median beats (outside / inside ratio at the fine threshold crossing):
# noise-free synthetic corners 0.01-0.07 at 125-2000 Hz; LUDB (500 Hz) 5th percentile 0.11. The
# limit sits between, so real onsets and ends keep their coarse mark (see
# delineate_qrs.CORNER_NOISE_MULT for why). Exceptions: QTDB sel306, sel310 and sele0124 show
# sharper corners than the synthetic ones (ratio 0.03) and their onsets move 8-13 ms to the
# corner, where their readers marked 8-12 ms earlier (QTDB QRS onset 1.6 +- 10.1 -> 2.1 +-
# 10.4 ms); no signal test told them from a synthetic corner, and a rule that worked only at
# 500 Hz would make the marks depend on the sampling rate.
CORNER_RATIO = 0.075
# The half-height point is sought this far either side of the fine threshold crossing.
STEP_SPAN_MS = 4.0
# Where the conditioning low-pass blurs the step beyond the fine threshold crossing (sampling
# under about 470 Hz, ``lowpass_spread``), the corner of a QRS end read at the step itself
# counts only below this ratio: as sharp as a wave of compact support (noise-free synthetic
# QRS end at 250 Hz: 0.011), sharper than real QRS ends at 250 Hz (QTDB, every median beat and
# beat window: 1st percentile 0.023, median 0.27). Split as for tuning (QTDB records in name
# order, odd positions set it, even positions held out): it moves 6 of 2,279 QRS-end rows on
# the first half, 2 of 985 on the held-out half; QTDB QRS end figures unchanged to 0.01 ms.
CORNER_RATIO_BLURRED = 0.02


def lowpass_spread(fs_hz: float) -> int:
    """Samples by which the conditioning low-pass spreads a sharp corner beyond the fine
    scale the refinement assumes: one period of its design corner where that corner lies
    below its full-band value (sampling under about 470 Hz; 100 Hz at 250 Hz sampling: 2.5
    samples, rounded), else 0 (``filters.filter_plan``).

    >>> lowpass_spread(250.0), lowpass_spread(500.0)
    (2, 0)
    """
    lp_hz = filter_plan(fs_hz, None).lowpass_hz
    full_hz = filter_plan(1000.0, None).lowpass_hz
    return round(fs_hz / lp_hz) if lp_hz and full_hz and lp_hz < full_hz else 0


def step_speed(x: np.ndarray, fs_hz: float) -> np.ndarray:
    """(M, W - 1) multi-lead slope magnitude between neighbouring samples, mV/s:
    ``s[:, t] = |x[:, t + 1] - x[:, t]| * fs`` (Euclidean over leads). Used one-sided: as the
    backward difference at t + 1 for an onset, the forward difference at t for an end, so the
    first (last) sample off the baseline is the first (last) with a non-zero value (a central
    difference would leak one sample outward)."""
    dx = np.diff(np.asarray(x, dtype=np.float32), axis=1)
    return np.sqrt(np.sum(dx * dx, axis=2)) * np.float32(fs_hz)


def _one_sided(s: np.ndarray, onset: bool) -> np.ndarray:
    m, w1 = s.shape
    g = np.zeros((m, w1 + 1), dtype=np.float64)
    if onset:
        g[:, 1:] = s
    else:
        g[:, :-1] = s
    return g


def _window_mean(cg: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Mean of the row values over [a, b) from their cumulative sum ``cg`` (M, W + 1)."""
    w = cg.shape[1] - 1
    a = np.clip(a, 0, w)
    b = np.clip(b, 0, w)
    tot = np.take_along_axis(cg, b[:, None], 1)[:, 0] - np.take_along_axis(cg, a[:, None], 1)[:, 0]
    return tot / np.maximum(b - a, 1)


def refine_boundary(
    x: np.ndarray,
    cand: np.ndarray,
    peak: np.ndarray,
    thr: np.ndarray,
    fs_hz: float,
    onset: bool,
    noise_mult: float = 0.0,
    speed: np.ndarray | None = None,
) -> np.ndarray:
    """Coarse-to-fine refinement of a QRS onset or end (see the module docstring).

    Args:
        x: (M, W, U) conditioned signal windows, mV (the leads the coarse feature used).
        cand: (M,) coarse boundary, -1 = none (kept).
        peak: (M,) a sample inside the wave (R); the boundary never moves past it.
        thr: (M,) slope threshold of the coarse boundary, mV/s (same criterion, finer scale).
        fs_hz: sampling rate, Hz.
        onset: True for an onset (wave after), False for an end (wave before).
        noise_mult: thresholds and the corner test allow this many times the window's median
            fine slope as noise (0: a strict corner; 1.5 lets a corner in 20 dB noise count).
        speed: ``step_speed(x, fs_hz)`` if already computed (onset and end share it).

    Returns:
        (M,) boundary indices: the corner where one is found, else the candidate. An onset is
        the first sample off the baseline; an end is the first sample back on it (the support
        edge, one past the last sample of the wave).

    Example: a ramp starting after sample 50, blurred by a zero-phase low-pass, with a coarse
    mark 5 samples early; the first sample off the baseline is 51.

        >>> import numpy as np
        >>> from scipy import signal
        >>> y = np.maximum(np.arange(200.0) - 50, 0) * 0.01
        >>> yb = signal.filtfilt(*signal.butter(2, 0.75), y)
        >>> x = np.stack([yb, -0.5 * yb], axis=1)[None]
        >>> int(refine_boundary(x, np.array([46]), np.array([120]), np.array([0.5]), 500.0,
        ...                     onset=True)[0])
        51
    """
    m, w, _u = x.shape
    cand = np.asarray(cand, dtype=np.int64)
    peak = np.asarray(peak, dtype=np.int64)
    ms = fs_hz / 1000.0
    run = max(1, round(FINE_RUN_MS * ms))
    reach = max(1, round(FINE_REACH_MS * ms))
    n_out = max(2, round(CORNER_OUT_MS * ms))
    n_in = max(1, round(CORNER_IN_MS * ms))
    half = max(1, round(STEP_SPAN_MS * ms))
    lp = filter_plan(fs_hz, None).lowpass_hz
    skip = round(CORNER_SKIP_PERIODS * fs_hz / lp) if lp else 0
    g = _one_sided(step_speed(x, fs_hz) if speed is None else speed, onset)
    noise = noise_mult * np.median(g, axis=1) if noise_mult > 0 else np.zeros(m)
    thr = np.maximum(np.asarray(thr, dtype=np.float64), noise)
    idx = np.arange(w)[None, :]
    above = (g > thr[:, None]).astype(np.int32)
    cs = np.concatenate([np.zeros((m, 1), np.int32), np.cumsum(above, axis=1)], axis=1)
    j = np.arange(w)
    if onset:
        # first sample inward of the candidate from which the slope stays above threshold
        j1 = np.minimum(j + run, w)
        stay = (cs[:, j1] - cs[:, j]) == (j1 - j)[None, :]
        span = (idx >= cand[:, None]) & (idx <= np.minimum(cand + reach, peak)[:, None])
        hit = np.argmax(span & stay, axis=1)
    else:
        j0 = np.maximum(j - run + 1, 0)
        stay = (cs[:, j + 1] - cs[:, j0]) == (j + 1 - j0)[None, :]
        span = (idx <= cand[:, None]) & (idx >= np.maximum(cand - reach, peak)[:, None])
        hit = w - 1 - np.argmax((span & stay)[:, ::-1], axis=1)
    found = (span & stay).any(axis=1) & (cand >= 0) & (peak >= 0)
    cg = np.concatenate([np.zeros((m, 1)), np.cumsum(g, axis=1)], axis=1)
    at, ratio = _corner_step(g, cg, hit, hit, onset, skip, n_out, n_in, half, noise)
    out = np.where(found & (ratio < CORNER_RATIO), at, cand)
    blur = lowpass_spread(fs_hz)
    if blur and not onset:
        # Below the full-band low-pass the fine threshold crossing can lie in the blurred
        # tail of the step (a 250 Hz QRS end's tail stays above the threshold two samples
        # past the wave, so the crossing's own slope is small and the test above fails):
        # follow the slope inward while it still rises, at most ``blur`` samples, to the
        # step itself. A corner read there counts only when it is as sharp as a wave of
        # compact support (``CORNER_RATIO_BLURRED``). Ends only: a synthetic onset at 250 Hz
        # is crossed at its step already (exact), and on QTDB the same test moved a few
        # sharp onsets inward, away from readers who mark them before the corner (QRS
        # onset 2.1 +- 10.4 -> 2.7 +- 10.9 ms; see delineate_qrs.CORNER_NOISE_MULT).
        top = hit.copy()
        inward = 1 if onset else -1
        for _ in range(blur):
            nxt = np.clip(top + inward, 0, w - 1)
            rises = np.take_along_axis(g, nxt[:, None], 1) > np.take_along_axis(g, top[:, None], 1)
            top = np.where(rises[:, 0], nxt, top)
        at_b, ratio_b = _corner_step(g, cg, hit, top, onset, skip, n_out, n_in, half, noise)
        sharp = found & (ratio >= CORNER_RATIO) & (ratio_b < CORNER_RATIO_BLURRED)
        out = np.where(sharp, at_b, out)
    return out


def _corner_step(
    g: np.ndarray,
    cg: np.ndarray,
    hit: np.ndarray,
    top: np.ndarray,
    onset: bool,
    skip: int,
    n_out: int,
    n_in: int,
    half: int,
    noise: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """The corner test and the half-height point of the slope step at a fine threshold
    crossing ``hit`` whose step lies at ``top`` (``hit`` itself, or further in where the
    crossing lies in the low-pass's blurred tail). Returns (boundary, outside / inside slope
    ratio less the noise allowance); see ``refine_boundary``."""
    w = g.shape[1]
    idx = np.arange(w)[None, :]
    if onset:
        outside = _window_mean(cg, hit - skip - n_out, hit - skip)
        inside = _window_mean(cg, top, top + n_in)
        near = (idx >= hit[:, None]) & (idx <= (top + half)[:, None])
    else:
        outside = _window_mean(cg, hit + 1 + skip, hit + 1 + skip + n_out)
        inside = _window_mean(cg, top + 1 - n_in, top + 1)
        near = (idx <= hit[:, None]) & (idx >= (top - half)[:, None])
    ratio = (outside - noise) / np.maximum(inside, 1e-12)
    level = 0.5 * (outside + np.max(np.where(near, g, 0.0), axis=1))
    if onset:
        step = (
            (idx >= (hit - half)[:, None]) & (idx <= (top + n_in)[:, None]) & (g >= level[:, None])
        )
        at = np.where(step.any(axis=1), np.argmax(step, axis=1), hit)
    else:
        step = (
            (idx <= (hit + half)[:, None]) & (idx >= (top - n_in)[:, None]) & (g >= level[:, None])
        )
        at = np.where(step.any(axis=1), w - 1 - np.argmax(step[:, ::-1], axis=1), hit)
        # ``at`` is the last sample still on the wave; the end itself (the J point, where ST
        # levels are read) is the next one, where the wave has rejoined the baseline: read at
        # ``at`` a sharp S wave's last sample would count as ST depression.
        at = np.minimum(at + 1, w - 1)
    return at, ratio
