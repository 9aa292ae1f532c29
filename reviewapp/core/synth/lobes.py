"""Compact-support wave lobes: the building blocks of every synthetic wave.

A wave (P, QRS, T) occupies a closed range of samples ``[on, off]`` in which it is non-zero; its
continuous support is one sample wider on each side, ``[on - 1, off + 1]``, where it is exactly
zero. A wave is a sum of lobes, each a fixed 3-D heart-vector direction times a scalar bump laid
over a fraction of the wave's support. Lobe edges fall on whole samples, and samples outside a
lobe are never written, so "exactly zero outside the support" holds in floating point, not just
approximately.

Shapes (``u`` is the position within the lobe, 0..1):

- ``"sine"``: ``sin(pi * u)``. The edges are linear (a slope discontinuity at the boundary), so
  the first and last non-zero samples carry ``A * sin(pi / N)`` for an N-sample support, e.g.
  9 uV for a 0.15 mV, 100 ms P wave at 500 Hz: well above a 1 uV ADC step. A Hann edge would be
  quadratic, ``A * sin(pi / N)**2``, about 0.5 uV there: numerically invisible after
  quantisation, which is why it is not used at a fiducial edge.
- ``"t"``: asymmetric T-wave lobe: a Hann (quadratic) rise to the peak at fraction ``peak`` and a
  quarter-sine fall whose slope is steepest at the end. The T end therefore has a linear edge, and
  the tangent to the steepest descending slope meets the baseline exactly at the last non-zero
  sample + 1 (the support edge). The T onset is quadratic (it is not a fiducial).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

Shape = Literal["sine", "t"]


@dataclass(frozen=True)
class Lobe:
    """One lobe of a wave template.

    start_frac, stop_frac: where the lobe lies within the wave's support (0 = the zero sample
        before the first non-zero sample, 1 = the zero sample after the last).
    vector: heart-vector direction and size (x left, y inferior, z posterior; mV of dipole).
    shape: "sine" or "t" (see module docstring).
    peak_frac: for "t", the position of the peak within the lobe.
    """

    start_frac: float
    stop_frac: float
    vector: tuple[float, float, float]
    shape: Shape = "sine"
    peak_frac: float = 0.6


def lobe_shape(shape: Shape, n_support: int, peak_frac: float = 0.6) -> np.ndarray:
    """Values of a lobe at its ``n_support - 1`` interior samples (all strictly positive).

    ``n_support`` is the distance in samples between the two zero edges (>= 2).

    >>> np.round(lobe_shape("sine", 4), 3)
    array([0.707, 1.   , 0.707])
    """
    if n_support < 2:
        raise ValueError(f"a lobe needs a support of at least 2 samples, got {n_support}")
    k = np.arange(1, n_support, dtype=np.float64)
    u = k / n_support
    if shape == "sine":
        return np.sin(np.pi * u)
    if shape == "t":
        pk = float(np.clip(peak_frac, 0.05, 0.95))
        rise = np.sin(0.5 * np.pi * np.minimum(u / pk, 1.0)) ** 2
        fall = np.sin(0.5 * np.pi * np.minimum((1.0 - u) / (1.0 - pk), 1.0))
        return np.where(u <= pk, rise, fall)
    raise ValueError(f"unknown lobe shape {shape!r}")


def lobe_span(lobe: Lobe, on: int, off: int) -> tuple[int, int]:
    """Sample positions of the two zero edges of ``lobe`` for a wave non-zero on ``[on, off]``."""
    edge0 = on - 1
    n = off - on + 2
    a = edge0 + round(lobe.start_frac * n)
    b = edge0 + round(lobe.stop_frac * n)
    return a, b


def render_wave(
    heart: np.ndarray, lobes: tuple[Lobe, ...], on: int, off: int, rotation: np.ndarray
) -> None:
    """Add a wave (non-zero exactly on ``[on, off]``) into ``heart`` (n_samples, 3) in place.

    ``rotation`` (3x3) turns the template's vectors into the beat's heart-vector frame. The
    first lobe must start at fraction 0 and some lobe must end at fraction 1, so the wave's
    first and last non-zero samples are ``on`` and ``off``.
    """
    for lobe in lobes:
        a, b = lobe_span(lobe, on, off)
        vec = rotation @ np.asarray(lobe.vector, dtype=np.float64)
        heart[a + 1 : b] += lobe_shape(lobe.shape, b - a, lobe.peak_frac)[:, None] * vec[None, :]


def wave_area_vector(lobes: tuple[Lobe, ...], n_nonzero: int, rotation: np.ndarray) -> np.ndarray:
    """Sum over samples of the rendered heart vector of one wave (3,), in mV * samples."""
    total = np.zeros(3)
    for lobe in lobes:
        a, b = lobe_span(lobe, 1, n_nonzero)
        total += lobe_shape(lobe.shape, b - a, lobe.peak_frac).sum() * (
            rotation @ np.asarray(lobe.vector, dtype=np.float64)
        )
    return total
