"""Intervals, RR/HR and mark drags; RR/HR checked against wfdb on real annotated records."""

from __future__ import annotations

import numpy as np
import pytest

from reviewapp.core.fiducials import Beat, BeatKind, MarkOverride, WaveMarks
from reviewapp.core.measure import compute_measurements
from reviewapp.core.measure.intervals import rr_statistics
from reviewapp.core.measure.qtc import QTC_FORMULAS


def test_global_intervals_from_marks(kit):
    waves = {"II": kit.piecewise([(0, 0), (200, 0), (220, 1.0), (245, 0), (599, 0)])}
    marks = WaveMarks(p_on=100, p_off=150, qrs_on=180, qrs_off=230, t_off=400)
    iv = compute_measurements(kit.marked(waves, marks=marks)).intervals
    # Definitions (brief / common practice): P = p_off - p_on, PR = qrs_on - p_on,
    # QRS = qrs_off - qrs_on, QT = t_off - qrs_on; 500 Hz -> 2 ms per sample.
    assert (iv.p_ms, iv.pr_ms, iv.qrs_ms, iv.qt_ms) == (100.0, 160.0, 100.0, 440.0)
    assert iv.rr_ms == pytest.approx(800.0) and iv.hr_bpm == pytest.approx(75.0)


@pytest.mark.parametrize("n", [-7, -1, 3, 12])
def test_dragging_qrs_onset_changes_qrs_and_qt_by_n_over_fs(kit, n):
    waves = {"II": kit.piecewise([(0, 0), (200, 0), (220, 1.0), (245, 0), (599, 0)])}
    base = compute_measurements(kit.marked(waves)).intervals
    moved = kit.MARKS.with_mark("qrs_on", kit.MARKS.qrs_on + n)
    after = compute_measurements(kit.marked(waves, marks=moved)).intervals
    step_ms = n * 1000.0 / kit.FS
    assert after.qrs_ms - base.qrs_ms == pytest.approx(-step_ms, abs=1e-9)
    assert after.qt_ms - base.qt_ms == pytest.approx(-step_ms, abs=1e-9)
    assert after.pr_ms - base.pr_ms == pytest.approx(step_ms, abs=1e-9)
    for name, f in QTC_FORMULAS.items():
        assert getattr(after, f"qtc_{name}_ms") == pytest.approx(f(after.qt_ms, after.rr_ms))


def test_rr_excludes_intervals_touching_premature_beats():
    fs = 250.0
    r = [0, 250, 500, 650, 1000, 1250]  # beat 3 premature: 150-sample coupling, 350 pause
    kinds = [BeatKind.DOMINANT] * 6
    kinds[3] = BeatKind.PREMATURE
    st = rr_statistics(tuple(Beat(x, k) for x, k in zip(r, kinds, strict=True)), fs)
    # Kept: 0-250, 250-500, 1000-1250 (each 1000 ms); dropped: 500-650 and 650-1000.
    assert st.n_intervals == 3 and st.mean_ms == pytest.approx(1000.0)
    assert st.sd_ms == pytest.approx(0.0)


def test_rr_paced_rhythm_falls_back_to_non_premature():
    beats = tuple(Beat(x, BeatKind.PACED) for x in (0, 200, 400, 600))
    st = rr_statistics(beats, 200.0)
    assert st.mean_ms == pytest.approx(1000.0) and "non-premature" in st.basis


def test_no_beats_gives_nulls_with_reasons(kit):
    marked = kit.marked({"II": np.zeros(kit.N)})
    from dataclasses import replace

    empty = replace(marked, beats=(), beat_marks=(), beat_lead_marks=(), representative=None)
    m = compute_measurements(empty)
    assert m.intervals.hr_bpm is None and m.intervals.qt_ms is None
    assert m.intervals.qrs_axis_deg is None and m.beats == () and m.leads == ()
    reasons = dict(m.unmeasured)
    assert "no representative beat" in reasons["qt_ms"] and reasons["hr_bpm"]


def test_rr_matches_wfdb_mean_hr_on_mitbih_100(shared_data):
    wfdb = pytest.importorskip("wfdb")
    from wfdb import processing

    ann = wfdb.rdann(str(shared_data / "mitdb" / "100"), "atr")
    fs = 360.0
    sym = np.array(ann.symbol)
    beat_mask = np.isin(sym, ["N", "A", "V"])  # '+' is a rhythm label, not a beat
    samples, sym = ann.sample[beat_mask], sym[beat_mask]
    kinds = [BeatKind.DOMINANT if s == "N" else BeatKind.PREMATURE for s in sym]
    st = rr_statistics(tuple(Beat(int(x), k) for x, k in zip(samples, kinds, strict=True)), fs)
    # Reference: intervals whose both ends are expert-labelled normal (N) beats, averaged by
    # wfdb.processing.calc_mean_hr (HR = 60 / mean RR).
    rr = np.diff(samples)
    both_n = (sym[1:] == "N") & (sym[:-1] == "N")
    ref_hr = processing.calc_mean_hr(rr[both_n], fs=fs)
    assert 60000.0 / st.mean_ms == pytest.approx(ref_hr, rel=1e-9)
    assert st.sd_ms == pytest.approx(np.std(rr[both_n] / fs * 1000.0, ddof=1), rel=1e-9)
    assert st.n_intervals == int(both_n.sum())


@pytest.fixture(scope="module")
def ludb1(shared_data):
    from reviewapp.core.engine import analyse
    from reviewapp.core.io import open_record

    return analyse(open_record(shared_data / "ludb" / "1.hea"))


def test_engine_heart_rate_matches_ludb_reference_peaks(ludb1, shared_data):
    wfdb = pytest.importorskip("wfdb")
    from wfdb import processing

    ann = wfdb.rdann(str(shared_data / "ludb" / "1"), "ii")
    peaks = ann.sample[np.array(ann.symbol) == "N"]  # cardiologist-marked QRS peaks, lead II
    ref_hr = processing.calc_mean_hr(np.diff(peaks), fs=500)
    hr = ludb1.reading().measurements.intervals.hr_bpm
    # Whole pipeline (detection + dominant-beat RR) within 1 bpm of the expert peaks.
    assert hr == pytest.approx(ref_hr, abs=1.0)


def test_engine_override_drag_on_real_record(ludb1):
    base = ludb1.reading()
    rep = base.marked.representative
    fs = ludb1.fs_hz
    for n in (-4, 6):
        ov = MarkOverride("representative", "qrs_on", rep.marks.qrs_on + n)
        iv = ludb1.reading([ov]).measurements.intervals
        assert iv.qrs_ms - base.measurements.intervals.qrs_ms == pytest.approx(-n * 1000 / fs)
        assert iv.qt_ms - base.measurements.intervals.qt_ms == pytest.approx(-n * 1000 / fs)
        assert iv.qtc_fridericia_ms == pytest.approx(QTC_FORMULAS["fridericia"](iv.qt_ms, iv.rr_ms))
        assert iv.rr_ms == base.measurements.intervals.rr_ms  # marks only: RR unchanged


def test_beat_override_changes_only_that_beat(ludb1):
    fs = ludb1.fs_hz
    base = ludb1.reading().measurements.beats
    k = 3
    qrs_on = ludb1.beat_marks[k].qrs_on
    ov = MarkOverride("beat", "qrs_on", qrs_on - 5, beat_r=ludb1.beats[k].r)
    moved = ludb1.reading([ov]).measurements.beats
    assert moved[k].qrs_ms - base[k].qrs_ms == pytest.approx(5 * 1000 / fs)
    assert moved[k].qt_ms - base[k].qt_ms == pytest.approx(5 * 1000 / fs)
    assert all(a == b for i, (a, b) in enumerate(zip(base, moved, strict=True)) if i != k)
    assert ludb1.reading().measurements.beats == base  # override removed: back to automatic
