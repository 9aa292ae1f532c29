"""Builders of hand-made MarkedECG objects with known geometry (invented test data)."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from types import SimpleNamespace

import numpy as np
import pytest

from reviewapp.core.fiducials import Beat, BeatKind, MarkedECG, RepresentativeBeat, WaveMarks

FS = 500.0
N_WINDOW = 600
R_INDEX = 220
# Global marks of the hand-built representative beat (window samples at 500 Hz).
MARKS = WaveMarks(p_on=100, p_off=160, qrs_on=200, qrs_off=245, t_off=420, r_peak=R_INDEX)


def piecewise(knots: Sequence[tuple[int, float]], n: int = N_WINDOW) -> np.ndarray:
    """A waveform through (sample, mV) knots, linear in between, flat outside."""
    xs, ys = zip(*knots, strict=True)
    return np.interp(np.arange(n), xs, ys)


def make_marked(
    waves: Mapping[str, np.ndarray],
    *,
    marks: WaveMarks = MARKS,
    lead_marks: Mapping[str, WaveMarks] | None = None,
    beats_r: Sequence[int] = tuple(range(300, 300 + 10 * 400, 400)),
    kinds: Sequence[str] | None = None,
    usable: Mapping[str, bool] | None = None,
    fs_hz: float = FS,
) -> MarkedECG:
    """A MarkedECG whose representative beat holds ``waves`` (lead -> window waveform, mV)."""
    names = tuple(waves)
    wave = np.stack([np.asarray(waves[n], dtype=np.float32) for n in names], axis=1)
    lm = tuple((lead_marks or {}).get(n, WaveMarks()) for n in names)
    rep = RepresentativeBeat(wave, R_INDEX, len(beats_r), marks, lm)
    kinds = kinds or ["dominant"] * len(beats_r)
    beats = tuple(Beat(int(r), BeatKind(k)) for r, k in zip(beats_r, kinds, strict=True))
    beat_marks = tuple(marks.shifted(int(r) - R_INDEX) for r in beats_r)
    return MarkedECG(
        fs_hz=fs_hz,
        lead_names=names,
        usable=tuple((usable or {}).get(n, True) for n in names),
        conditioned_mv=np.zeros((max(beats_r) + N_WINDOW, len(names)), dtype=np.float32),
        beats=beats,
        beat_marks=beat_marks,
        beat_lead_marks=tuple(tuple(WaveMarks() for _ in names) for _ in beats_r),
        representative=rep,
    )


@pytest.fixture(scope="session")
def kit() -> SimpleNamespace:
    """The builders and constants above, for tests (conftest is not importable by name)."""
    return SimpleNamespace(
        FS=FS, N=N_WINDOW, R_INDEX=R_INDEX, MARKS=MARKS, piecewise=piecewise, marked=make_marked
    )
