"""T end: the fine-signal refinement on analytic T waves, and the median beat's QT on QTDB.

References outside the project:
- The trapezium-area rule (Vazquez-Seisdedos CR et al., "New approach for T-wave end detection
  on electrocardiogram: performance in noisy conditions", BioMed Eng OnLine 10:77, 2011): the
  area A(x_i) = 0.5 |y(x_m) - y(x_i)| (|x_r - x_m| + |x_r - x_i|) of a wave whose return flank
  is steepest at its end peaks where the flank meets the baseline.
- The tangent method (Lepeschkin E, Surawicz B, "The measurement of the Q-T interval of the
  electrocardiogram", Circulation 6:378-388, 1952): T end where the tangent at the steepest
  point of the T's descending limb crosses the isoelectric line. Computed here independently
  with numpy on the analytic T lobe.
- QTDB q1c cardiologist marks (Laguna P et al., Computers in Cardiology 24:673-676, 1997).
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

import numpy as np
import pytest

from reviewapp.core.dsp.delineate_core import prefilter
from reviewapp.core.dsp.delineate_params import N_MARKS, T_OFF, DelineationParams
from reviewapp.core.dsp.delineate_t import (
    T_FINE_AFTER_MS,
    LeadT,
    global_t,
    lead_t_waves,
    refine_t_end,
)
from reviewapp.core.synth.lobes import lobe_shape

# tests run with --import-mode=importlib: make the sibling helper module importable.
sys.path.insert(0, str(Path(__file__).resolve().parent))


def _t_beat(fs: float, polarity: float = 1.0) -> tuple[np.ndarray, int, int, int]:
    """One lead, 800 ms after R: a 0.4 mV T lobe ("t" shape: linear end) over 200..420 ms.

    Returns (signal (W,), R index, QRS end index, support edge = first zero sample after T).
    """
    w = round(0.8 * fs) + 1
    y = np.zeros(w)
    a, b = round(0.20 * fs), round(0.42 * fs)  # zero edges of the T support
    y[a + 1 : b] = polarity * 0.4 * lobe_shape("t", b - a, peak_frac=0.6)
    return y, 0, round(0.06 * fs), b


def _tangent_end(y: np.ndarray) -> float:
    """Lepeschkin-Surawicz tangent end on the analytic, noise-free descending limb."""
    dy = np.gradient(y)
    k = int(np.argmin(dy))  # steepest descent (upright T)
    # the tangent at k: y(k) + dy(k) (t - k) = 0; use the one-sided slope at the edge sample
    slope = y[k + 1] - y[k] if k + 1 < y.size else dy[k]
    return k - y[k] / slope


def test_tangent_of_the_analytic_t_lobe_meets_the_support_edge() -> None:
    # The reference itself: the synthetic T lobe ends on a linear edge whose tangent (the
    # steepest descent, Lepeschkin-Surawicz) meets the baseline at the support edge.
    y, _, _, edge = _t_beat(500.0)
    assert abs(_tangent_end(y) - edge) <= 0.5


def test_refine_t_end_finds_a_linear_edge_exactly() -> None:
    # Trapezium-area rule on a straight ramp to the baseline: the maximum is at the ramp end
    # (Vazquez-Seisdedos 2011, Fig. 2 geometry). The coarse guess is 6 samples late.
    y = np.r_[np.linspace(0.5, 0.0, 61), np.zeros(60)][None, :]
    out = refine_t_end(y, np.array([5]), np.array([100]), np.array([66]), 500.0)
    assert int(out[0]) == 60


def test_refine_t_end_keeps_absent_marks_and_its_reach() -> None:
    y = np.r_[np.linspace(0.5, 0.0, 61), np.zeros(60)][None, :].repeat(2, axis=0)
    out = refine_t_end(y, np.array([5, 5]), np.array([100, 100]), np.array([-1, 40]), 500.0)
    assert int(out[0]) == -1
    # the coarse end 40 is 20 samples early: the end may move at most T_FINE_AFTER_MS later
    assert int(out[1]) == 40 + round(T_FINE_AFTER_MS * 500.0 / 1000.0)


@pytest.mark.parametrize("fs", [250.0, 500.0, 1000.0])
@pytest.mark.parametrize("polarity", [1.0, -1.0])
def test_lead_t_end_within_one_sample_of_the_tangent_end(fs: float, polarity: float) -> None:
    y, r, qrs_off, edge = _t_beat(fs, polarity)
    p = DelineationParams.for_fs(fs)
    slow = prefilter(y[:, None].astype(np.float32), fs)["slow"][:, 0].astype(np.float64)
    args = (np.array([qrs_off]), np.array([y.size - 1]), np.array([r]), p)
    coarse = lead_t_waves(slow[None, :], *args)
    fine = lead_t_waves(slow[None, :], *args, y_fine=y[None, :])
    tangent = _tangent_end(polarity * y)
    assert bool(fine.ok[0]) and bool(coarse.ok[0])
    assert abs(int(fine.end[0]) - tangent) <= 1.0, (fine.end, tangent)
    # without the refinement the 20 Hz copy puts the end several samples late (why it exists)
    assert int(coarse.end[0]) - edge >= 2


def test_lead_t_end_refinement_is_stable_in_noise() -> None:
    # White noise of 10 uV RMS (a median beat of ~10 beats at 20 dB muscle noise) on the fine
    # signal: the refined end stays within CSE tolerance (30.6 ms; CSE Working Party, Eur
    # Heart J 6:815-825, 1985) of the tangent end, over many noise draws.
    fs = 500.0
    y, r, qrs_off, _ = _t_beat(fs)
    p = DelineationParams.for_fs(fs)
    rng = np.random.default_rng(7)
    n = 50
    noisy = y[None, :] + rng.normal(0.0, 0.010, (n, y.size))
    slow = prefilter(noisy.T.astype(np.float32), fs)["slow"].T.astype(np.float64)
    lt = lead_t_waves(
        slow,
        np.full(n, qrs_off),
        np.full(n, y.size - 1),
        np.full(n, r),
        p,
        y_fine=noisy,
    )
    err_ms = (lt.end - _tangent_end(y)) * 1000.0 / fs
    assert lt.ok.all()
    assert abs(err_ms.mean()) <= 10.0 and err_ms.std() <= 30.6, (err_ms.mean(), err_ms.std())


def test_global_t_weak_leads_keep_their_own_end() -> None:
    # LUDB readers mark T end lead by lead (Kalyakulina et al., IEEE Access 8:186181, 2020);
    # their per-lead ends differ by a median 17 ms SD across the leads of one beat (measured
    # on the 140 LUDB records). A weak T lead (below t_strong_frac of the largest, no vote)
    # keeps its own end; a lead straying > t_lead_slack, or without a T, takes the global end.
    p = DelineationParams.for_fs(500.0)
    ends = np.array([[300, 310, 320, 330, 500]])  # lead 4 strays 190 ms
    amp = np.array([1.0, 0.9, 0.1, 0.5, 0.6])  # lead 2 is weak (does not vote)
    ok = np.array([True, True, True, False, True])  # lead 3 found no T
    lu = np.full((1, 5, N_MARKS), -1, dtype=np.int64)
    lu[0, :, T_OFF] = np.where(ok, ends[0], -1)
    glob = np.full((1, N_MARKS), -1, dtype=np.int64)
    lt = LeadT(end=ends[0], peak=ends[0] - 60, amp_mv=amp, ok=ok)
    global_t(glob, lu, lt, p)
    g = int(glob[0, T_OFF])
    assert g == 310  # median of the voting leads 300, 310, 500 (order statistic)
    assert list(lu[0, :, T_OFF]) == [300, 310, 320, g, g]


# Median-beat QT (t_off - qrs_on of Analysis.representative) against the q1c reader's mean QT
# per record. Measured on the 68 QTDB records with a median-beat QT: error mean 1.8 +- 37.1 ms,
# median |error| 11.5 ms, 12 records beyond 30 ms (T/U fusion sel45, sel36, sele0114,
# sel14172; biphasic or flat T sel48, sel223, sel51, sel104), which set the SD. Before this
# module's changes of 2026-12-02 (same QRS onset): 0.7 +- 38.5, median 12.0, 13 beyond 30 ms.
QT_MEAN_MAX_MS = 4.0
QT_SD_MAX_MS = 39.0
QT_MEDIAN_ABS_MAX_MS = 15.0


@pytest.mark.slow
def test_median_beat_qt_against_qtdb_readers(shared_data: Path) -> None:
    from reference_marks import qtdb_record_names, qtdb_window

    from reviewapp.core.engine import analyse
    from reviewapp.core.record import record_from_array

    errs = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for name in qtdb_record_names(shared_data / "qtdb"):
            x, fs, leads, _, ref = qtdb_window(shared_data / "qtdb", name)
            ok = (ref.marks[:, 4] >= 0) & (ref.marks[:, 2] >= 0)
            if not ok.any():
                continue
            an = analyse(record_from_array(x, fs, leads, name=name, derive_limb_leads=False))
            rep = an.representative
            if rep is None or rep.marks.t_off is None or rep.marks.qrs_on is None:
                continue
            qt_ref = float(np.mean(ref.marks[ok, 4] - ref.marks[ok, 2])) * 1000.0 / fs
            errs.append((rep.marks.t_off - rep.marks.qrs_on) * 1000.0 / fs - qt_ref)
    e = np.asarray(errs)
    assert e.size >= 60, f"only {e.size} records with a median-beat QT"
    assert abs(e.mean()) <= QT_MEAN_MAX_MS, f"QT error mean {e.mean():.1f} ms"
    assert e.std() <= QT_SD_MAX_MS, f"QT error SD {e.std():.1f} ms"
    assert np.median(np.abs(e)) <= QT_MEDIAN_ABS_MAX_MS, f"median |QT error| {np.median(np.abs(e))}"


def test_fast_rate_t_end_is_not_cut_by_a_doubtful_next_p_limit() -> None:
    # Synthetic 100 bpm with QT 400 ms (reviewapp.core.synth; exact truth = last non-zero
    # sample): the median-beat window starts inside the previous T, which the P search can take
    # for this beat's P; the next-P limit from that PR would cut the T 50 ms early. The T end
    # must stay within one sample of the support edge (truth + 1 sample).
    from reviewapp.core.engine import analyse
    from reviewapp.core.fiducials import BeatKind
    from reviewapp.core.synth.generator import generate
    from reviewapp.core.synth.params import SynthParams

    syn = generate(SynthParams(hr_bpm=100))
    an = analyse(syn.record)
    det_r = np.array([b.r for b in an.beats])
    errs = []
    for bt in syn.truth.beats:
        if bt.kind is not BeatKind.DOMINANT:
            continue
        j = int(np.argmin(np.abs(det_r - bt.r)))
        assert an.beat_marks[j].t_off is not None
        errs.append(an.beat_marks[j].t_off - bt.marks.t_off)
    e = np.asarray(errs)
    assert e.size >= 8 and np.all(np.abs(e - 1) <= 1), f"T end error {e} samples"


@pytest.mark.parametrize(("hr_bpm", "qt_ms"), [(35.0, 700.0), (40.0, 640.0)])
def test_slow_rate_long_qt_is_measured_on_the_median_beat(hr_bpm: float, qt_ms: float) -> None:
    # A long QT at a slow rate (QT 600-700 ms occurs with drug-induced QT prolongation; common
    # practice, no source) must fit in the median-beat window: synthetic truth QT = qt_ms
    # (reviewapp.core.synth, exact), the T end lands one sample past the last non-zero sample.
    from reviewapp.core.engine import analyse
    from reviewapp.core.synth.generator import generate
    from reviewapp.core.synth.params import SynthParams

    # Dower-projected limb leads, as this guard was set on (see test_delineate_synthetic).
    syn = generate(SynthParams(hr_bpm=hr_bpm, qt_ms=qt_ms, seed=1, limb_leads="dower"))
    qt = analyse(syn.record).reading().measurements.intervals.qt_ms
    assert qt is not None, "the median-beat window cut the T wave off"
    assert abs(qt - qt_ms) <= 2 * 1000.0 / syn.record.fs_hz


def test_bradycardic_qtdb_record_gets_a_median_beat_qt(shared_data: Path) -> None:
    # QTDB sel33 (RR about 1.7 s): the q1c readers end T about 700 ms after R, beyond a
    # 650 ms median-beat window. Reference: the readers' mean QT over their marked beats.
    from reference_marks import qtdb_window

    from reviewapp.core.engine import analyse
    from reviewapp.core.record import record_from_array

    x, fs, leads, _, ref = qtdb_window(shared_data / "qtdb", "sel33")
    ok = (ref.marks[:, 4] >= 0) & (ref.marks[:, 2] >= 0)
    qt_ref = float(np.mean(ref.marks[ok, 4] - ref.marks[ok, 2])) * 1000.0 / fs
    an = analyse(record_from_array(x, fs, leads, name="sel33", derive_limb_leads=False))
    qt = an.reading().measurements.intervals.qt_ms
    assert qt is not None
    print(f"sel33 QT {qt:.0f} ms, readers {qt_ref:.0f} ms")
    # Measured 732 vs 770 ms (-38 ms, the engine ends this flat T at its knee); the limit is
    # twice the CSE T end tolerance (30.6 ms, CSE Working Party 1985).
    assert abs(qt - qt_ref) <= 2 * 30.6
