"""Delineation against the exact ground truth of synthetic ECGs (reviewapp.core.synth).

The synthetic truth defines each boundary as the first/last non-zero sample of a compact-
support wave (see reviewapp.core.synth.truth). Readers of real ECGs mark boundaries where a
wave visibly leaves or rejoins the baseline; this engine is calibrated on such marks (QTDB,
LUDB: mean errors near zero, tests/dsp/test_delineate_accuracy.py), and its low-pass filtering
spreads an abrupt synthetic edge outward. Measured on noise-free 500 Hz synthetic beats the
marks therefore lie OUTSIDE the truth by a fixed amount: P onset -14 ms, P end +8 ms, QRS onset
-8 ms, QRS end +8 to +10 ms, T end +10 to +12 ms (i.e. 4-7 samples, not the 1 sample one would
like; at 125 Hz 1-2 samples). These tests hold that line and check what matters for noise: at 20 dB
SNR the marks stay put (spread across beats far inside the CSE tolerances).
"""

from __future__ import annotations

import numpy as np
import pytest

from reviewapp.core.engine import analyse
from reviewapp.core.fiducials import FIDUCIALS, BeatKind

synth = pytest.importorskip("reviewapp.core.synth.generator")
params_mod = pytest.importorskip("reviewapp.core.synth.params")

# CSE tolerances (CSE Working Party, Eur Heart J 6:815-825, 1985; as used by Martinez et al.,
# IEEE TBME 51(4):570-581, 2004), ms.
CSE_MS = {"p_on": 10.2, "p_off": 12.7, "qrs_on": 6.5, "qrs_off": 11.6, "t_off": 30.6}
# Noise-free bias measured at 500 Hz (ms, detected minus truth) and the guard around it.
BIAS_MS = {"p_on": -14.0, "p_off": 8.0, "qrs_on": -8.0, "qrs_off": 9.0, "t_off": 11.0}
GUARD_MS = 4.0


def _errors_ms(**kw: object) -> dict[str, np.ndarray]:
    syn = synth.generate(params_mod.SynthParams(**kw))
    an = analyse(syn.record)
    fs = syn.record.fs_hz
    det_r = np.array([b.r for b in an.beats])
    out: dict[str, list[float]] = {f: [] for f in FIDUCIALS}
    for bt in syn.truth.beats:
        if bt.kind is not BeatKind.DOMINANT:
            continue
        j = int(np.argmin(np.abs(det_r - bt.r)))
        assert abs(det_r[j] - bt.r) <= 0.15 * fs, "a synthetic beat was not detected"
        for f in FIDUCIALS:
            t, d = getattr(bt.marks, f), getattr(an.beat_marks[j], f)
            if t is not None:
                assert d is not None, f"{f} missing on beat at {bt.r}"
                out[f].append((d - t) * 1000.0 / fs)
    return {f: np.asarray(v) for f, v in out.items()}


@pytest.mark.parametrize("kw", [{}, {"qt_rate_adapt": True, "hr_bpm": 90}])
def test_noise_free_marks_have_a_fixed_small_outward_bias(kw: dict) -> None:
    err = _errors_ms(**kw)
    for f in FIDUCIALS:
        assert err[f].size >= 8
        assert np.all(np.abs(err[f] - BIAS_MS[f]) <= GUARD_MS), f"{f}: {err[f]}"


def test_noise_free_at_125_hz_within_two_samples() -> None:
    err = _errors_ms(fs_hz=125.0)
    for f in FIDUCIALS:
        assert np.all(np.abs(err[f]) <= 2 * 8.0 + 1e-9), f"{f}: {err[f]}"


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_20_db_noise_moves_marks_far_less_than_cse_tolerance(seed: int) -> None:
    # Muscle-like noise at 20 dB SNR plus baseline wander and mains (seed 3): the beat-to-beat
    # spread (SD) stays inside the CSE tolerance and the mean stays within 4 ms of the
    # noise-free bias; P end, QRS end and T end are then within CSE tolerance of the truth.
    kw: dict = {"emg_snr_db": 20.0, "seed": seed}
    if seed == 3:
        kw.update(baseline_wander_mv=0.2, mains_hz=50.0, mains_mv=0.05)
    err = _errors_ms(**kw)
    for f in FIDUCIALS:
        assert err[f].std() <= CSE_MS[f], f"{f}: SD {err[f].std():.1f} ms"
        assert abs(err[f].mean() - BIAS_MS[f]) <= GUARD_MS, f"{f}: mean {err[f].mean():.1f} ms"
    for f in ("p_off", "qrs_off", "t_off"):
        assert abs(err[f].mean()) <= CSE_MS[f], f"{f}: mean {err[f].mean():.1f} ms"


def test_atrial_fibrillation_has_no_p_wave() -> None:
    # Synthetic AF (no P waves by construction, fibrillatory waves 0.05 mV): no beat gets P.
    syn = synth.generate(params_mod.SynthParams(af=True, f_wave_mv=0.05, seed=4))
    an = analyse(syn.record)
    assert all(m.p_on is None and m.p_off is None for m in an.beat_marks)
    assert an.representative is None or an.representative.marks.p_on is None
