"""Delineation against the exact ground truth of synthetic ECGs (reviewapp.core.synth).

The synthetic truth defines each boundary as the first/last non-zero sample of a compact-
support wave whose edges are linear (a slope discontinuity; reviewapp.core.synth.lobes, truth).
The limb leads are Einthoven-triangle projections of the generating dipole, the chest leads
Dower's transform of it (reviewapp.core.synth.leads). The engine finds boundaries on 20/40 Hz
low-passed copies, which round such a corner outward by 4-7 samples, and then moves each mark
to the corner of a less-filtered copy where one is clearly there (P: two-segment fit,
delineate_corner; QRS: coarse-to-fine, delineate_refine; T end: trapezium area on the
conditioned input, delineate_t.refine_t_end).

Measured, noise-free, detected minus truth (the generator's default shapes, chest QRS of
physiological size, 1.4-1.6 mV peak to peak): P onset 0 samples at 250 and 500 Hz, -1 at 1 kHz,
-2 at 2 kHz; QRS onset 0 at 250-2000 Hz; QRS end +1 sample, the support edge (the first sample
back on the baseline: the J point, where ST is read), at 250-2000 Hz; T end +1 at 250 and 500
Hz, +2 at 1 kHz, +3 at 2 kHz. At 125 Hz the conditioned signal is no finer than the 40 Hz
copy, so QRS marks are not refined: -2 / +2 samples. At 20 dB SNR (seeds 1-7): P onset -2..0
ms, P end 0..+4, QRS onset -8..-6, QRS end +8..+10, T end +6..+16 ms. Not met: with a larger
QRS (generator amplitude 1.4 instead of 1.3) the QRS end reads 3 samples late at 500 Hz, and
11 on a wide QRS whose last lobe is long and shallow (the corner refinement misses the end of
a large, slowly ending QRS). The QRS corner test refuses a noisy corner, so the QRS marks stay
near the 40 Hz slope boundary: QRS end within its 11.6 ms tolerance, QRS onset 1.5 ms beyond
its 6.5 ms (a noise-tolerant corner test was exact here but moved the QTDB/LUDB onsets 8 ms
away from the cardiologists, who mark a sharp onset before its corner: the readers' marks win;
see delineate_qrs).

Before these guards ran on the Einthoven limb leads they ran on a legacy projection (Dower's
limb rows, not an equilateral triangle); on the Einthoven leads the engine then gave QRS end
+14 ms at 20 dB (noise dragged the QRS end's arc-length corner; delineate_qrs.ARC_NOISE_MEDIANS),
P onset -16 / -14 ms (seeds 2, 3: leads whose P corner test the noise failed kept their
trapezium marks 14-16 ms early and widened the global P; delineate_core._beside_corner) and
QRS end +16 ms at 250 Hz (the fine threshold crossing lay in the conditioning low-pass's blurred
tail; delineate_refine.CORNER_RATIO_BLURRED).
"""

from __future__ import annotations

import numpy as np
import pytest

from reviewapp.core.engine import analyse
from reviewapp.core.fiducials import FIDUCIALS, BeatKind
from reviewapp.core.synth import generator as synth
from reviewapp.core.synth import params as params_mod

# CSE tolerances (CSE Working Party, Eur Heart J 6:815-825, 1985; as used by Martinez et al.,
# IEEE TBME 51(4):570-581, 2004), ms.
CSE_MS = {"p_on": 10.2, "p_off": 12.7, "qrs_on": 6.5, "qrs_off": 11.6, "t_off": 30.6}
# Noise-free bias measured at 500 Hz (ms, detected minus truth) and the guard around it.
BIAS_MS = {"p_on": 0.0, "p_off": 0.0, "qrs_on": 0.0, "qrs_off": 2.0, "t_off": 2.0}
# t_off: +2 ms = one sample at 500 Hz, i.e. the support edge (the zero sample after the last
# non-zero one, where the linear T edge meets the baseline); before the fine-signal T end
# refinement (delineate_t.refine_t_end) +10 to +12 ms.
# p_on/p_off: 0 ms (the exact first/last non-zero sample) since the corner refinement
# (delineate_corner.hinge_corner via delineate_p); before it -14 ms / +8 ms.
# qrs_on: 0 ms (the exact first non-zero sample), qrs_off: +2 ms (the support edge, the J point)
# since the coarse-to-fine corner refinement (delineate_refine via delineate_qrs); before it
# -8 ms / +8 to +10 ms.
GUARD_MS = 4.0
# At 20 dB the QRS corner test (delineate_refine) does not accept a noisy corner, so the QRS
# marks stay near the 40 Hz slope boundary: measured -8 ms / +8 to +10 ms (a noise-tolerant
# corner test was exact here but moved real QTDB/LUDB onsets 8 ms away from the readers; see
# delineate_qrs.CORNER_NOISE_MULT).
# T end: the global T end is the latest lead T end confirmed by a second lead (the standard's
# definition, AHA/ACCF/HRS 2007 Part I; delineate_core._standard_global); in 20 dB noise the
# latest noisy lead ends lie later than the median lead's: measured +12 to +14 ms (seeds 1-3),
# +2 ms before the global marks followed that definition (still within the CSE 30.6 ms).
# P end: 0 to +2 ms (seeds 1-3) for the same reason (the latest P mark over the leads).
NOISY_BIAS_MS = {**BIAS_MS, "qrs_on": -8.0, "qrs_off": 9.0, "p_off": 2.0, "t_off": 12.0}


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
        assert abs(err[f].mean() - NOISY_BIAS_MS[f]) <= GUARD_MS, (
            f"{f}: mean {err[f].mean():.1f} ms"
        )
    for f in ("p_off", "qrs_off", "t_off"):
        assert abs(err[f].mean()) <= CSE_MS[f], f"{f}: mean {err[f].mean():.1f} ms"


def test_atrial_fibrillation_has_no_p_wave() -> None:
    # Synthetic AF (no P waves by construction, fibrillatory waves 0.05 mV): no beat gets P.
    syn = synth.generate(params_mod.SynthParams(af=True, f_wave_mv=0.05, seed=4))
    an = analyse(syn.record)
    assert all(m.p_on is None and m.p_off is None for m in an.beat_marks)
    assert an.representative is None or an.representative.marks.p_on is None


@pytest.mark.parametrize(
    "kw",
    [{}, {"qt_rate_adapt": True, "hr_bpm": 90}, {"fs_hz": 250.0}, {"fs_hz": 1000.0}],
)
def test_noise_free_t_end_within_one_sample_of_the_support_edge(kw: dict) -> None:
    # Truth (reviewapp.core.synth.truth): t_off is the last non-zero sample; its linear edge
    # meets the baseline at the next sample (the support edge, lobes.py "t" shape). Every
    # dominant beat's T end must lie within one sample of that edge: truth + 0..2 samples.
    err = _errors_ms(**kw)["t_off"]
    fs = float(kw.get("fs_hz", 500.0))
    one = 1000.0 / fs
    assert err.size >= 8
    assert np.all(np.abs(err - one) <= one + 1e-9), f"t_off: {err} ms (one sample {one} ms)"


@pytest.mark.parametrize("seed", [4, 5, 6, 7])
def test_20_db_t_end_within_cse(seed: int) -> None:
    # CSE tolerance for T end, 30.6 ms (CSE Working Party 1985): mean and SD of the dominant
    # beats' T end error at 20 dB muscle-like noise. Measured +10 to +16 ms, SD 0 (the beats
    # carry the median beat's mark); +2 to +6 ms while the global T end was the median lead's,
    # before it followed the standard's latest end over the leads (AHA/ACCF/HRS 2007 Part I),
    # which noise moves later.
    err = _errors_ms(emg_snr_db=20.0, seed=seed)["t_off"]
    assert abs(err.mean()) <= 20.0, f"t_off mean {err.mean():.1f} ms"
    assert err.std() <= CSE_MS["t_off"], f"t_off SD {err.std():.1f} ms"


@pytest.mark.parametrize(
    "kw",
    [
        {},
        {"qt_rate_adapt": True, "hr_bpm": 90},
        {"hr_bpm": 110, "qt_ms": 330.0, "pr_ms": 150.0},
        {"p_amp_mv": 0.08},
        {"fs_hz": 250.0},
        {"fs_hz": 1000.0},
    ],
)
def test_noise_free_p_within_one_sample(kw: dict) -> None:
    # Truth (reviewapp.core.synth.truth): p_on / p_off are the first / last non-zero samples
    # of the P lobes, whose "sine" edges are linear (a slope discontinuity, lobes.py). Every
    # dominant beat's P onset and end must lie within one sample of them. Measured: 0 samples
    # at 250 and 500 Hz, 0-1 at 1 kHz.
    err = _errors_ms(**kw)
    one = 1000.0 / float(kw.get("fs_hz", 500.0))
    for f in ("p_on", "p_off"):
        assert err[f].size >= 8
        assert np.all(np.abs(err[f]) <= one + 1e-9), f"{f}: {err[f]} ms (one sample {one} ms)"


@pytest.mark.parametrize("seed", [4, 5, 6, 7])
def test_20_db_p_within_cse(seed: int) -> None:
    # CSE tolerances (CSE Working Party 1985): P onset 10.2 ms, P end 12.7 ms, for the mean and
    # the SD of the dominant beats' errors at 20 dB muscle-like noise. Measured: means -2 to
    # +4 ms, SD 0 (the beats carry the median beat's marks).
    err = _errors_ms(emg_snr_db=20.0, seed=seed)
    for f in ("p_on", "p_off"):
        assert abs(err[f].mean()) <= CSE_MS[f], f"{f} mean {err[f].mean():.1f} ms"
        assert err[f].std() <= CSE_MS[f], f"{f} SD {err[f].std():.1f} ms"


@pytest.mark.parametrize(
    "kw",
    [
        {},
        {"qt_rate_adapt": True, "hr_bpm": 90},
        {"wide_qrs": True, "qrs_ms": 130.0},
        {"fs_hz": 1000.0},
        {"fs_hz": 2000.0},
        {"fs_hz": 250.0},
    ],
)
def test_noise_free_qrs_within_one_sample(kw: dict) -> None:
    # Truth (reviewapp.core.synth.truth): qrs_on / qrs_off are the first / last non-zero samples
    # of the QRS lobes, whose "sine" edges are linear (a slope discontinuity, lobes.py). The
    # onset must lie within one sample of the first non-zero sample; the end is placed on the
    # support edge, the first sample back on the baseline (the J point, where ST is read), and
    # must lie within one sample of that edge (truth + 0..2 samples). Measured: onset 0 samples
    # at 250 and 500 Hz (narrow and wide QRS), 0-1 at 1 kHz, -1..0 at 2 kHz; end +1 at 250
    # and 500 Hz (wide QRS too), +1..+2 at 1 kHz, 0..+1 at 2 kHz.
    # Wide QRS: the onset may lie 2 samples early since the global onset is the earliest
    # lead's (AHA/ACCF/HRS 2007 Part I): the conditioning low-pass spreads a steep start over
    # the samples before it (delineate_core); measured 0.
    err = _errors_ms(**kw)
    one = 1000.0 / float(kw.get("fs_hz", 500.0))
    on_tol = 2 * one if kw.get("wide_qrs") else one
    assert err["qrs_on"].size >= 8 and err["qrs_off"].size >= 8
    assert np.all(np.abs(err["qrs_on"]) <= on_tol + 1e-9), f"qrs_on: {err['qrs_on']} ms"
    assert np.all(np.abs(err["qrs_off"] - one) <= one + 1e-9), f"qrs_off: {err['qrs_off']} ms"
