"""P-wave boundary refinement and P-presence rules, checked against analytic signals.

The corner refinement (reviewapp.core.dsp.delineate_corner.hinge_corner) is checked on waves
whose boundary is known exactly by construction (a half-sine leaving a flat baseline: the
slope is discontinuous at one sample), seen through the same zero-phase 40 Hz Butterworth
low-pass (scipy.signal) the delineator uses. The P-coupling rule is checked on signals built
to the textbook definitions: a P wave keeps its PR while the RR changes; flutter waves march
at their own cycle length and the QRS follows every 2nd or 3rd one (varying conduction).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import butter, sosfiltfilt

from reviewapp.core.dsp.delineate import (
    P_COUPLING_MAX_RATIO,
    _p_coupled_to_previous_qrs,
    _zsegments,
)
from reviewapp.core.dsp.delineate_corner import hinge_corner
from reviewapp.core.dsp.delineate_p import P_CORNER_MAX_RATIO

FS = 500.0


def _lowpass(y: np.ndarray, fs: float = FS) -> np.ndarray:
    return sosfiltfilt(butter(2, 40.0, fs=fs, output="sos"), y, axis=-1)


def _half_sine(n: int, start: int, width: int, amp: float = 0.15) -> np.ndarray:
    """Zero up to and including ``start``, then amp * sin(pi (t - start) / width) up to
    ``start + width`` (zero again there): the join points are ``start`` and ``start + width``."""
    t = np.arange(n, dtype=np.float64)
    return amp * np.sin(np.pi * np.clip((t - start) / width, 0.0, 1.0))


@pytest.mark.parametrize("offset", [-8, -4, 0, 4])
def test_onset_corner_found_within_one_sample_through_40_hz_lowpass(offset: int) -> None:
    # Exact corner by construction: the last zero sample before the wave is 100.
    y = _lowpass(_half_sine(400, 100, 50))[None, :]
    join = hinge_corner(y, np.array([100 + offset]), 10, 10, np.array([1.0]), True)
    assert abs(int(join[0]) - 100) <= 1


@pytest.mark.parametrize("offset", [-4, 0, 4, 8])
def test_end_corner_found_within_one_sample_through_40_hz_lowpass(offset: int) -> None:
    # A negative wave ending at sample 150 (first zero sample after it): sign -1, end side.
    y = -_lowpass(_half_sine(400, 100, 50))[None, :]
    join = hinge_corner(y, np.array([150 + offset]), 10, 10, np.array([-1.0]), False)
    assert abs(int(join[0]) - 150) <= 1


def test_corner_fit_averages_noise() -> None:
    # White noise of 5 uV (3 % of the 0.15 mV wave) on each sample: over 40 noise draws the
    # corner stays within half a sample on average, spread below one sample.
    rng = np.random.default_rng(0)
    clean = _half_sine(400, 100, 50)
    rows = _lowpass(clean[None, :] + rng.normal(0.0, 0.005, (40, 400)))
    join = hinge_corner(rows, np.full(40, 94), 10, 10, np.ones(40), True)
    assert abs(join.mean() - 100) <= 0.5 and join.std() <= 1.0, (join.mean(), join.std())


def test_fitted_samples_stop_at_the_limit() -> None:
    # A large step (a QRS onset) 12 samples after the P end must not pull the end when the
    # fit is limited to the samples before it (without the limit: 155, 5 samples late).
    y = _lowpass(_half_sine(400, 100, 50))
    y[162:] += 1.0
    y = y[None, :]
    hi = np.array([161])
    free = hinge_corner(y, np.array([153]), 10, 10, np.array([1.0]), False)
    assert abs(int(free[0]) - 150) > 1
    join = hinge_corner(y, np.array([153]), 10, 10, np.array([1.0]), False, None, hi, None, hi)
    assert abs(int(join[0]) - 150) <= 1


def test_corner_ratio_separates_a_corner_from_a_smooth_bend() -> None:
    # A slope discontinuity is explained far better by the two-segment model than by a smooth
    # cubic; a Gaussian bump (infinitely smooth, no corner) is not.
    t = np.arange(400, dtype=np.float64)
    sharp = _lowpass(_half_sine(400, 100, 50))[None, :]
    smooth = _lowpass(0.15 * np.exp(-0.5 * ((t - 150.0) / 12.5) ** 2))[None, :]
    _, r_sharp = hinge_corner(sharp, np.array([96]), 10, 10, np.array([1.0]), True, with_ratio=True)
    _, r_smooth = hinge_corner(
        smooth, np.array([115]), 10, 10, np.array([1.0]), True, with_ratio=True
    )
    assert r_sharp[0] <= P_CORNER_MAX_RATIO < r_smooth[0], (r_sharp, r_smooth)


def _beats_signal(
    r: np.ndarray, waves: np.ndarray, n: int, width: int = 50
) -> tuple[np.ndarray, np.ndarray]:
    """Narrow QRS spikes at ``r`` and half-sine atrial waves starting at ``waves``; two leads."""
    x = np.zeros(n)
    for a in waves:
        if 0 <= a and a + width < n:
            x += _half_sine(n, int(a), width, 0.1)
    for rr in r:
        x[rr - 5 : rr + 6] += np.hanning(11)
    x2 = np.stack([x, 0.5 * x], axis=1)
    rng = np.random.default_rng(1)
    return (x2 + rng.normal(0.0, 0.005, x2.shape)).astype(np.float32), r


def _coupled(x: np.ndarray, r: np.ndarray) -> bool:
    dom = np.ones(r.size, dtype=bool)
    win = (-110, 70)  # P window: 30 ms before a P starting 160 ms before R, to its end
    z, ok = _zsegments(x, r[dom] + win[0], win[1])
    s = z[ok].sum(axis=0)
    return _p_coupled_to_previous_qrs(x, r, dom, win, s / np.linalg.norm(s))


def test_sinus_p_with_varying_rr_is_this_beats_p() -> None:
    # Sinus arrhythmia: RR 800-1100 ms, every P 160 ms (80 samples) before its own QRS.
    rr = np.array([400, 550, 420, 520, 440, 500, 410, 540, 430, 480, 520, 400])
    r = 300 + np.cumsum(rr)
    x, r = _beats_signal(r, r - 80, int(r[-1] + 300))
    assert not _coupled(x, r)


def test_flutter_waves_with_varying_conduction_are_not_p() -> None:
    # Atrial flutter: waves every 220 ms (110 samples, 270/min); the QRS follows every 2nd or
    # 3rd wave at a fixed delay, so the RR changes by whole flutter cycles.
    cycle, delay = 110, 80
    waves = np.arange(100, 100 + 40 * cycle, cycle)
    steps = [2, 3, 2, 2, 3, 2, 3, 3, 2, 2, 3, 2, 2, 3]
    idx = np.cumsum(steps) + 1
    r = waves[idx] + delay
    x, r = _beats_signal(r, waves, int(waves[-1] + 200))
    assert _coupled(x, r)


def test_coupling_limit_lies_above_a_shifted_half_sine() -> None:
    # Geometry behind P_COUPLING_MAX_RATIO: a half-sine bump shifted by half its width keeps
    # 1/pi ~ 0.32 of its autocorrelation (integral of sin x sin(x + pi/2) over [0, pi/2]
    # divided by integral of sin^2 x over [0, pi]); the limit must lie above that.
    x = np.linspace(0.0, np.pi, 20001)
    auto = np.trapezoid(np.sin(x) ** 2, x)
    xs = np.linspace(0.0, np.pi / 2, 10001)
    shifted = np.trapezoid(np.sin(xs) * np.sin(xs + np.pi / 2), xs)
    assert shifted / auto == pytest.approx(1.0 / np.pi, abs=1e-4)
    assert 1.0 / np.pi < P_COUPLING_MAX_RATIO < 0.5
