"""QRS boundaries: the coarse-to-fine corner step (delineate_refine) and the thresholds it
shares with the coarse QRS boundaries (delineate_qrs).

Whole-database accuracy against the readers is in test_delineate_accuracy.py (slow) and the
synthetic ground truth in test_delineate_synthetic.py; these tests pin the parts.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from reviewapp.core.dsp.delineate_params import DelineationParams
from reviewapp.core.dsp.delineate_qrs import qrs_bounds, qrs_bounds_thresholds
from reviewapp.core.dsp.delineate_refine import refine_boundary

FS = 500.0


def _blurred_corner_block(start: int, onset: bool, cut: float = 0.75) -> np.ndarray:
    """(1, 300, 3) leads with a ramp leaving (onset) or reaching (end) a flat baseline at a
    known sample, blurred by a zero-phase Butterworth low-pass (scipy.signal.filtfilt)."""
    t = np.arange(300.0)
    ramp = np.maximum(t - start, 0.0) if onset else np.maximum(start - t, 0.0)
    y = np.minimum(ramp * 0.02, 1.0)
    yb = signal.filtfilt(*signal.butter(2, cut), y)
    return np.stack([yb, -0.6 * yb, 0.3 * yb], axis=1)[None]


@pytest.mark.parametrize("corner", [100, 137])
def test_corner_step_finds_the_exact_first_and_last_sample(corner: int) -> None:
    # A ramp that leaves the baseline after sample `corner` has its first non-zero sample at
    # corner + 1 (the onset); a ramp that reaches it at `corner` is back on the baseline at
    # `corner` (the end, where ST is read; its last non-zero sample is corner - 1).
    # A zero-phase blur (scipy filtfilt) is symmetric, so the step of the one-sided slope keeps
    # its place. Coarse marks 5 samples outside, as the 40 Hz low-pass leaves them.
    x = _blurred_corner_block(corner, onset=True)
    on = refine_boundary(x, np.array([corner - 4]), np.array([250]), np.array([0.5]), FS, True)
    assert int(on[0]) == corner + 1
    x = _blurred_corner_block(corner, onset=False)
    off = refine_boundary(x, np.array([corner + 4]), np.array([10]), np.array([0.5]), FS, False)
    assert int(off[0]) == corner


def test_corner_step_leaves_a_smooth_onset_and_a_noisy_one_alone() -> None:
    # No slope discontinuity (a Gaussian flank) or a corner buried in noise: the coarse mark
    # stays (only a clean corner moves it; see delineate_qrs.CORNER_NOISE_MULT).
    t = np.arange(300.0)
    g = np.exp(-0.5 * ((t - 150.0) / 15.0) ** 2)
    x = np.stack([g, 0.5 * g], axis=1)[None]
    out = refine_boundary(x, np.array([110]), np.array([150]), np.array([0.5]), FS, True)
    assert int(out[0]) == 110
    rng = np.random.default_rng(0)
    xn = _blurred_corner_block(100, onset=True) + rng.normal(0.0, 0.01, (1, 300, 3))
    out = refine_boundary(xn, np.array([96]), np.array([250]), np.array([0.5]), FS, True)
    assert int(out[0]) == 96


def test_thresholds_variant_gives_the_same_bounds() -> None:
    t = np.arange(400) / FS
    f = np.abs(np.gradient(np.exp(-0.5 * ((t - 0.4) / 0.012) ** 2))) * FS
    f = np.tile(f, (3, 1))
    p = DelineationParams.for_fs(FS)
    r = np.full(3, 200)
    lo, hi = np.zeros(3, np.int64), np.full(3, 399)
    on, off = qrs_bounds(f, r, lo, hi, p)
    on2, off2, thr_on, thr_off = qrs_bounds_thresholds(f, r, lo, hi, p)
    assert np.array_equal(on, on2) and np.array_equal(off, off2)
    assert np.all(thr_on > 0) and np.all(thr_off > 0)
    assert np.all(f[np.arange(3), on] <= thr_on + 1e-9)
