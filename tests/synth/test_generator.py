"""Synthetic ECG generator: construction-exact truth checked against outside definitions.

Outside references used here:
- Einthoven's law and Goldberger's augmented-lead relations (III = II - I, aVR = -(I + II)/2,
  aVL = I - II/2, aVF = II - I/2): Malmivuo & Plonsey, Bioelectromagnetism, 1995, ch. 15.
- Frontal axis from leads I and aVF in Einthoven's triangle (I = |V| cos t, aVF = (sqrt(3)/2)
  |V| sin t), so t = atan2(2 aVF / sqrt(3), I), hexaxial reference: common practice (the
  convention restated in Mason et al., Circulation 2007;115:1306 - from memory).
- Fridericia's formula QT = QTc * RR^(1/3) (Fridericia 1920).
- SNR in dB = 10 log10(signal power / noise power): definition.
Everything is measured from the generated signal itself (runs of non-zero samples), not read
back from the generator's truth, except where the test compares the two.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import signal as sps

from reviewapp.core.fiducials import BeatKind
from reviewapp.core.synth import SynthParams, generate
from reviewapp.core.synth.leads import INDEPENDENT_LEADS


def _runs(active: np.ndarray) -> list[tuple[int, int]]:
    """Inclusive (start, stop) of each run of True."""
    a = np.concatenate([[False], active, [False]]).astype(np.int8)
    d = np.diff(a)
    starts = np.flatnonzero(d == 1)
    stops = np.flatnonzero(d == -1) - 1
    return list(zip(starts.tolist(), stops.tolist(), strict=True))


def _nonzero_runs(sig: np.ndarray) -> list[tuple[int, int]]:
    return _runs(np.any(sig != 0.0, axis=1))


def _lead(syn, name: str) -> np.ndarray:
    return np.asarray(syn.record.signal_mv[:, syn.record.lead_index(name)], dtype=np.float64)


@pytest.mark.parametrize(
    "params",
    [
        SynthParams(duration_s=4),
        SynthParams(
            duration_s=4, emg_snr_db=10, mains_hz=50, mains_mv=0.1, baseline_wander_mv=0.5, seed=3
        ),
        SynthParams(duration_s=4, af=True, f_wave_mv=0.1),
    ],
    ids=["clean", "noisy", "af"],
)
def test_einthoven_and_goldberger_hold(params: SynthParams) -> None:
    syn = generate(params)
    i, ii, iii = _lead(syn, "I"), _lead(syn, "II"), _lead(syn, "III")
    avr, avl, avf = _lead(syn, "aVR"), _lead(syn, "aVL"), _lead(syn, "aVF")
    tol = 2e-6  # float32 storage of mV values of a few mV
    assert np.max(np.abs(iii - (ii - i))) < tol
    assert np.max(np.abs(avr + (i + ii) / 2)) < tol
    assert np.max(np.abs(avl - (i - ii / 2))) < tol
    assert np.max(np.abs(avf - (ii - i / 2))) < tol
    assert np.max(np.abs(avr + avl + avf)) < tol  # Goldberger leads sum to zero
    assert np.ptp(i) > 0.1 and np.ptp(ii) > 0.1  # and the leads are not trivially zero


@pytest.mark.parametrize(
    "params",
    [
        SynthParams(),
        SynthParams(wide_qrs=True, qrs_ms=150, qt_ms=460, qrs_axis_deg=-20, t_axis_deg=150),
        SynthParams(ectopic_beats=(3, 6), hr_bpm=70),
        SynthParams(fs_hz=1000, hr_bpm=50, pr_ms=230),
        SynthParams(fs_hz=250, qrs_axis_deg=-45, p_axis_deg=30, t_axis_deg=-10),
    ],
    ids=["normal", "wide", "ectopic", "1000Hz", "250Hz"],
)
def test_waves_have_exact_compact_support(params: SynthParams) -> None:
    syn = generate(params)
    sig = syn.record.signal_mv
    truth = syn.truth
    support = np.zeros(sig.shape[0], dtype=bool)
    edges = []
    for b in truth.beats:
        m = b.marks
        waves = [(m.qrs_on, m.qrs_off), (b.t_on, m.t_off)]
        if m.p_on is not None:
            waves.append((m.p_on, m.p_off))
        for on, off in waves:
            support[on : off + 1] = True
        edges += [m.qrs_on, m.qrs_off, m.t_off] + ([m.p_on, m.p_off] if m.p_on is not None else [])
    # Outside every wave's support the signal is exactly the baseline, 0 mV, in every lead.
    assert np.all(sig[~support] == 0.0)
    # The measured runs of non-zero samples are exactly the constructed waves.
    measured = _nonzero_runs(sig)
    expected = _runs(support)
    assert measured == expected
    # At each fiducial edge the wave is visible in some lead above a 1 uV ADC step (1000/mV), so
    # a WFDB copy keeps the boundary.
    peak_abs = np.max(np.abs(sig[edges]), axis=1)
    assert np.all(peak_abs > 2e-3), peak_abs.min()


@pytest.mark.parametrize(
    ("fs", "pr", "p", "qrs", "qt"),
    [
        (500, 160, 100, 90, 400),
        (500, 248, 112, 104, 452),
        (1000, 201, 97, 87, 433),
        (250, 180, 96, 120, 480),
    ],
)
def test_realised_intervals_equal_parameters(
    fs: float, pr: float, p: float, qrs: float, qt: float
) -> None:
    syn = generate(SynthParams(fs_hz=fs, pr_ms=pr, p_ms=p, qrs_ms=qrs, qt_ms=qt, duration_s=5))
    runs = _nonzero_runs(syn.record.signal_mv)
    assert len(runs) % 3 == 0  # P, QRS, T per beat, separated by isoelectric segments
    one_sample_ms = 1000.0 / fs
    for k in range(0, len(runs), 3):
        (p_on, p_off), (q_on, q_off), (_t_on, t_off) = runs[k : k + 3]
        assert abs((q_on - p_on) * one_sample_ms - pr) <= one_sample_ms / 2 + 1e-9
        assert abs((p_off - p_on) * one_sample_ms - p) <= one_sample_ms / 2 + 1e-9
        assert abs((q_off - q_on) * one_sample_ms - qrs) <= one_sample_ms / 2 + 1e-9
        assert abs((t_off - q_on) * one_sample_ms - qt) <= one_sample_ms / 2 + 1e-9
        beat = syn.truth.beats[k // 3]
        assert (
            beat.marks.p_on,
            beat.marks.p_off,
            beat.marks.qrs_on,
            beat.marks.qrs_off,
            beat.marks.t_off,
        ) == (p_on, p_off, q_on, q_off, t_off)
        assert q_on <= beat.r <= q_off
    assert syn.truth.qt_ms == pytest.approx(qt, abs=one_sample_ms / 2)


@pytest.mark.parametrize("hr", [48.0, 60.0, 72.0, 95.0])
def test_rr_matches_heart_rate(hr: float) -> None:
    syn = generate(SynthParams(hr_bpm=hr, qt_ms=360, duration_s=10))
    runs = _nonzero_runs(syn.record.signal_mv)
    qrs_onsets = np.array([runs[k + 1][0] for k in range(0, len(runs), 3)])
    rr_ms = np.diff(qrs_onsets) * 1000.0 / syn.record.fs_hz
    one_sample_ms = 1000.0 / syn.record.fs_hz
    assert len(rr_ms) >= 6
    assert np.all(np.abs(rr_ms - 60000.0 / hr) <= one_sample_ms / 2 + 1e-9)
    assert syn.truth.hr_bpm == pytest.approx(hr, rel=0.002)


def test_atrial_fibrillation_has_no_p_and_irregular_rr() -> None:
    syn = generate(SynthParams(af=True, hr_bpm=85, duration_s=30, seed=11))
    truth = syn.truth
    assert truth.rhythm == "af" and truth.pr_ms is None and truth.p_axis_deg is None
    assert all(b.marks.p_on is None and b.marks.p_off is None for b in truth.beats)
    runs = _nonzero_runs(syn.record.signal_mv)
    assert len(runs) == 2 * len(truth.beats)  # only QRS and T per beat: nothing before QRS
    r = np.array([b.r for b in truth.beats])
    rr = np.diff(r) / syn.record.fs_hz
    cv = float(np.std(rr) / np.mean(rr))
    # Irregularly irregular: RR coefficient of variation well above sinus rhythm's few percent
    # (common practice, no source); generated with CV 0.2.
    assert 0.1 < cv < 0.35
    assert 60.0 / np.mean(rr) == pytest.approx(85, rel=0.15)
    sinus = generate(SynthParams(hr_bpm=85, duration_s=30, seed=11))
    rr_sinus = np.diff([b.r for b in sinus.truth.beats])
    assert np.std(rr_sinus) == 0.0


def test_af_fibrillatory_waves_fill_the_baseline() -> None:
    syn = generate(SynthParams(af=True, f_wave_mv=0.1, duration_s=5, seed=2))
    v1 = _lead(syn, "V1")
    f, pxx = sps.welch(v1, fs=syn.record.fs_hz, nperseg=1024)
    band = (f >= 4) & (f <= 9)
    assert f[np.argmax(np.where(band, pxx, 0))] == pytest.approx(6.0, abs=1.6)
    assert np.count_nonzero(v1 == 0.0) == 0


@pytest.mark.parametrize("axis", [-75.0, -30.0, 0.0, 45.0, 60.0, 90.0, 120.0, 170.0])
def test_frontal_qrs_axis_from_i_and_avf(axis: float) -> None:
    syn = generate(SynthParams(qrs_axis_deg=axis, duration_s=3))
    b = syn.truth.beats[0]
    lo, hi = b.marks.qrs_on, b.marks.qrs_off
    net_i = float(np.sum(_lead(syn, "I")[lo : hi + 1]))
    net_avf = float(np.sum(_lead(syn, "aVF")[lo : hi + 1]))
    measured = math.degrees(math.atan2(2.0 * net_avf / math.sqrt(3.0), net_i))
    diff = (measured - axis + 180.0) % 360.0 - 180.0
    assert abs(diff) < 0.5
    assert syn.truth.qrs_axis_deg == pytest.approx(measured, abs=0.01)


def test_p_and_t_axes_from_i_and_avf() -> None:
    syn = generate(SynthParams(p_axis_deg=20.0, t_axis_deg=-15.0, duration_s=3))
    b = syn.truth.beats[0]
    for lo, hi, want in ((b.marks.p_on, b.marks.p_off, 20.0), (b.t_on, b.marks.t_off, -15.0)):
        net_i = float(np.sum(_lead(syn, "I")[lo : hi + 1]))
        net_avf = float(np.sum(_lead(syn, "aVF")[lo : hi + 1]))
        got = math.degrees(math.atan2(2.0 * net_avf / math.sqrt(3.0), net_i))
        assert got == pytest.approx(want, abs=0.5)


@pytest.mark.parametrize("snr_db", [6.0, 15.0, 25.0])
def test_emg_noise_snr_realised(snr_db: float) -> None:
    clean = generate(SynthParams(duration_s=6, seed=5))
    noisy = generate(SynthParams(duration_s=6, seed=5, emg_snr_db=snr_db))
    x0, x1 = clean.record.signal_mv.astype(np.float64), noisy.record.signal_mv.astype(np.float64)
    assert np.array_equal(noisy.clean_mv, clean.clean_mv)  # noise does not change the ECG
    fs = noisy.record.fs_hz
    for name in INDEPENDENT_LEADS:
        j = noisy.record.lead_index(name)
        n = x1[:, j] - x0[:, j]
        realised = 10.0 * math.log10(np.mean(x0[:, j] ** 2) / np.mean(n**2))
        assert realised == pytest.approx(snr_db, abs=1.0), name
        # Broadband muscle-like noise: nearly all power above 15 Hz.
        f, pxx = sps.welch(n, fs=fs, nperseg=512)
        assert pxx[f >= 15].sum() / pxx.sum() > 0.9


def test_mains_and_wander_amplitudes() -> None:
    base = generate(SynthParams(duration_s=8, seed=1))
    noisy = generate(
        SynthParams(duration_s=8, seed=1, mains_hz=50.0, mains_mv=0.08, baseline_wander_mv=0.4)
    )
    j = noisy.record.lead_index("V2")
    n = noisy.record.signal_mv[:, j].astype(np.float64) - base.record.signal_mv[:, j]
    spectrum = np.abs(np.fft.rfft(n)) * 2.0 / n.size
    f = np.fft.rfftfreq(n.size, 1.0 / noisy.record.fs_hz)
    k50 = int(np.argmin(np.abs(f - 50.0)))
    assert spectrum[k50] == pytest.approx(0.08, rel=0.05)
    lowpass = sps.sosfiltfilt(sps.butter(2, 2.0, fs=noisy.record.fs_hz, output="sos"), n)
    assert 0.1 < np.max(np.abs(lowpass)) <= 0.4 + 1e-3


def test_premature_beat_is_wide_early_with_compensatory_pause() -> None:
    syn = generate(SynthParams(hr_bpm=60, ectopic_beats=(4,), duration_s=10))
    beats = syn.truth.beats
    kinds = [b.kind for b in beats]
    assert kinds[4] is BeatKind.PREMATURE and kinds.count(BeatKind.PREMATURE) == 1
    pvc = beats[4]
    assert pvc.marks.p_on is None
    assert (pvc.marks.qrs_off - pvc.marks.qrs_on) * 2 >= 140  # ms at 500 Hz
    on = [b.marks.qrs_on for b in beats]
    rr = 500
    assert on[4] - on[3] < 0.8 * rr
    assert on[5] - on[3] == 2 * rr  # full compensatory pause: sinus rhythm undisturbed


def test_qt_rate_adaptation_follows_fridericia() -> None:
    syn = generate(
        SynthParams(hr_bpm=70, rr_sd_ms=60, qt_ms=420, qt_rate_adapt=True, seed=4, duration_s=12)
    )
    fs = syn.record.fs_hz
    beats = syn.truth.beats
    for prev, b in itertools.pairwise(beats):
        rr_s = (b.marks.qrs_on - prev.marks.qrs_on) / fs
        qt_ms = (b.marks.t_off - b.marks.qrs_on) * 1000.0 / fs
        assert qt_ms == pytest.approx(420.0 * rr_s ** (1.0 / 3.0), abs=1000.0 / fs / 2 + 1e-9)


def test_generation_is_deterministic() -> None:
    p = SynthParams(af=True, f_wave_mv=0.05, emg_snr_db=20, baseline_wander_mv=0.2, seed=9)
    a, b = generate(p), generate(p)
    assert a.record.signal_mv.tobytes() == b.record.signal_mv.tobytes()
    c = generate(
        SynthParams(af=True, f_wave_mv=0.05, emg_snr_db=20, baseline_wander_mv=0.2, seed=10)
    )
    assert a.record.signal_mv.tobytes() != c.record.signal_mv.tobytes()


def test_lead_subset_and_frank_leads() -> None:
    syn = generate(SynthParams(lead_names=("II", "V5", "X", "Y", "Z"), duration_s=3))
    assert syn.record.lead_names == ("II", "V5", "X", "Y", "Z")
    full = generate(SynthParams(duration_s=3))
    np.testing.assert_array_equal(syn.record.signal_mv[:, 0], _lead(full, "II"))


@pytest.mark.parametrize(
    ("kwargs", "words"),
    [
        ({"pr_ms": 90, "p_ms": 100}, "pr_ms"),
        ({"hr_bpm": 150}, "runs into"),
        ({"qrs_ms": 100, "wide_qrs": True}, "wide_qrs"),
        ({"ectopic_beats": (0,)}, "ectopic_beats"),
        ({"ectopic_beats": (40,), "duration_s": 5}, "beyond"),
        ({"lead_names": ("I", "V7")}, "unknown lead"),
        ({"hr_bpm": -1}, "hr_bpm"),
    ],
)
def test_bad_parameters_are_refused_clearly(kwargs: dict, words: str) -> None:
    with pytest.raises(ValueError, match=words):
        generate(SynthParams(**kwargs))


def test_representative_marks_match_every_dominant_beat() -> None:
    syn = generate(SynthParams(ectopic_beats=(3,), duration_s=8))
    rep = syn.truth.representative_marks(r_index=300)
    assert rep.r_peak == 300
    for b in syn.truth.dominant:
        assert rep.shifted(b.r - 300) == b.marks
