"""Wave delineation: method pieces, contract (lead sets, sampling rates, unusable leads, absent
P) and per-beat behaviour, checked on open reference records and published definitions."""

from __future__ import annotations

import csv
import sys
import warnings
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from scipy import signal

from reviewapp.core.dsp.delineate import delineate_beats, delineate_representative
from reviewapp.core.dsp.delineate_align import align_lags
from reviewapp.core.dsp.delineate_ops import trapezium_boundary
from reviewapp.core.engine import analyse
from reviewapp.core.fiducials import FIDUCIALS, WaveMarks
from reviewapp.core.record import record_from_array

# tests run with --import-mode=importlib: make the sibling helper module importable.
sys.path.insert(0, str(Path(__file__).resolve().parent))
from reference_marks import LUDB_LEAD_NAMES, load_ludb_lead, ludb_signal, match_beats

warnings.filterwarnings("ignore", module="wfdb")


def _ludb(shared_data: Path, name: str) -> tuple[np.ndarray, float]:
    return ludb_signal(shared_data / "ludb", name)


def _analyse(x: np.ndarray, fs: float, names=LUDB_LEAD_NAMES):
    return analyse(record_from_array(x, fs, names, derive_limb_leads=False))


# --- method pieces ------------------------------------------------------------------------------


def test_trapezium_area_boundary_of_a_ramp() -> None:
    # Vazquez-Seisdedos et al., BioMed Eng OnLine 10:77, 2011: for a wave flank that reaches
    # the baseline linearly and stays there, the trapezium area is largest exactly at the
    # corner (A(x_i) = 0.5 |y_m - y_i| (2 x_r - x_i - x_m) is maximal where y stops changing).
    ramp_end = np.array([17, 40, 63])
    w = 120
    t = np.arange(w)[None, :]
    y = np.clip((ramp_end[:, None] - t) / 15.0, 0.0, None)  # falls linearly to 0 at ramp_end
    xm = ramp_end - 10
    out = trapezium_boundary(y, xm, xm + 40)
    np.testing.assert_array_equal(out, ramp_end)
    # Mirror image (an onset, x_r before x_m) gives the mirrored corner.
    out_on = trapezium_boundary(y[:, ::-1], w - 1 - xm, w - 1 - (xm + 40))
    np.testing.assert_array_equal(out_on, w - 1 - ramp_end)


def test_align_lags_recovers_a_known_shift_of_a_real_beat(shared_data: Path) -> None:
    # A real T wave (LUDB record 1) moved by a known number of samples is found at that lag.
    x, fs = _ludb(shared_data, "1")
    an = _analyse(x, fs)
    rep = an.representative
    t_end = rep.marks.t_off
    assert t_end is not None
    rec = np.roll(rep.waveform_mv, 7, axis=0).astype(np.float64)
    lags, corr = align_lags(
        rec, rep.waveform_mv.astype(np.float64), np.array([t_end]), t_end, 60, 20, 30
    )
    assert int(lags[0]) == 7 and corr[0] > 0.999


# --- contract -----------------------------------------------------------------------------------


def test_representative_marks_are_ordered_and_per_lead(shared_data: Path) -> None:
    x, fs = _ludb(shared_data, "1")
    an = _analyse(x, fs)
    rep = an.representative
    m = rep.marks
    assert m.p_on < m.p_peak < m.p_off <= m.qrs_on < m.r_peak < m.qrs_off < m.t_peak < m.t_off
    assert len(rep.lead_marks) == 12
    assert len(an.beat_marks) == len(an.beats) == len(an.beat_lead_marks)
    assert all(len(row) == 12 for row in an.beat_lead_marks)


def test_unusable_lead_gets_no_marks_and_does_not_vote(shared_data: Path) -> None:
    x, fs = _ludb(shared_data, "1")
    an = _analyse(x, fs)
    usable = np.ones(12, dtype=bool)
    usable[7] = False
    rep = an.representative
    g, leads = delineate_representative(rep.waveform_mv, fs, rep.r_index, usable)
    assert leads[7] == WaveMarks()
    # A flat lead does not move the global marks.
    flat = rep.waveform_mv.copy()
    flat[:, 7] = 0.0
    g_flat, _ = delineate_representative(flat, fs, rep.r_index, usable)
    assert g_flat == g
    bm, blm = delineate_beats(an.conditioned_mv, fs, an.beats, usable, replace(rep, marks=g))
    assert all(row[7] == WaveMarks() for row in blm)
    n = an.conditioned_mv.shape[0]
    inner = [k for k, b in enumerate(an.beats) if 0.5 * fs < b.r < n - 0.8 * fs]
    assert all(bm[k].qrs_on is not None and bm[k].t_off is not None for k in inner)


def test_no_usable_lead_gives_empty_marks() -> None:
    w = np.zeros((500, 3), dtype=np.float32)
    g, leads = delineate_representative(w, 500.0, 200, np.zeros(3, dtype=bool))
    assert g == WaveMarks() and leads == (WaveMarks(),) * 3


def _lead_ii_errors_ms(shared_data: Path, x: np.ndarray, fs: float, fs_new: int) -> np.ndarray:
    """Median lead-II error (ms) per fiducial vs the LUDB marks of record 1, at ``fs_new``."""
    g = np.gcd(int(fs_new), int(fs))
    y = x
    if fs_new != fs:
        y = signal.resample_poly(x.astype(np.float64), fs_new // g, int(fs) // g, axis=0)
    an = _analyse(y.astype(np.float32), float(fs_new))
    ref = load_ludb_lead(shared_data / "ludb" / "1", "ii")
    det_r = np.round(np.array([b.r for b in an.beats]) / fs_new * fs).astype(np.int64)
    m = match_beats(det_r, ref.r, fs)
    ok = m >= 0
    assert ok.sum() == len(ref.r)
    col = an.record.lead_index("II")
    det = np.array([an.beat_lead_marks[b][col].as_array() for b in m[ok]], dtype=float)
    det_s = np.where(det >= 0, det / fs_new, np.nan)
    ref_s = np.where(ref.marks[ok] >= 0, ref.marks[ok] / fs, np.nan)
    return np.nanmedian((det_s - ref_s) * 1000.0, axis=0)


@pytest.mark.parametrize("fs_new", [125, 250, 1000, 2000])
def test_sampling_rates_125_to_2000_hz(shared_data: Path, fs_new: int) -> None:
    # LUDB record 1 (500 Hz) resampled with scipy.signal.resample_poly: against the
    # cardiologists' lead-II marks, every rate stays within 20 ms (T end: 30.6 ms, the CSE
    # tolerance; median error per fiducial)
    # and within 1.5 sample periods (at least 4 ms) of what the native 500 Hz record gives.
    x, fs = _ludb(shared_data, "1")
    native = _lead_ii_errors_ms(shared_data, x, fs, int(fs))
    resampled = _lead_ii_errors_ms(shared_data, x, fs, fs_new)
    allow = max(4.0, 1.5 * 1000.0 / fs_new)
    for k, fid in enumerate(FIDUCIALS):
        limit = 30.6 if fid == "t_off" else 20.0
        assert abs(resampled[k]) <= limit, f"{fs_new} Hz {fid}: {resampled[k]:.1f} ms vs LUDB"
        assert abs(resampled[k] - native[k]) <= allow + 1e-9, (
            f"{fs_new} Hz {fid}: {resampled[k]:.1f} ms vs {native[k]:.1f} ms at 500 Hz"
        )


def test_fifteen_lead_record_at_1000_hz(shared_data: Path) -> None:
    # PTB s0010_re: 12 standard + 3 Frank leads at 1000 Hz. Every beat gets QRS and T marks in
    # order and each of the 15 leads its own marks; adding the Frank leads to the 12 standard
    # ones moves the global QRS marks of the median beat by at most 6 ms.
    import wfdb

    sig = wfdb.rdrecord(str(shared_data / "ptbdb" / "s0010_re"))
    x = np.asarray(sig.p_signal, dtype=np.float32)
    fs = float(sig.fs)
    an = analyse(record_from_array(x, fs, sig.sig_name, derive_limb_leads=False))
    assert x.shape[1] == 15 and len(an.beats) >= 30
    inner = [k for k, b in enumerate(an.beats) if 0.5 * fs < b.r < x.shape[0] - 0.8 * fs]
    for k in inner:
        bm, row = an.beat_marks[k], an.beat_lead_marks[k]
        assert len(row) == 15
        assert bm.qrs_on < bm.r_peak < bm.qrs_off < bm.t_off
    rep = an.representative
    only12 = np.array([True] * 12 + [False] * 3)
    g12, leads12 = delineate_representative(rep.waveform_mv, fs, rep.r_index, only12)
    assert leads12[12:] == (WaveMarks(),) * 3
    assert abs(g12.qrs_on - rep.marks.qrs_on) <= 0.006 * fs
    assert abs(g12.qrs_off - rep.marks.qrs_off) <= 0.006 * fs


def _ludb_rhythms(shared_data: Path) -> dict[str, str]:
    with open(shared_data / "ludb" / "ludb.csv", newline="") as f:
        return {row["ID"]: row["Rhythms"] for row in csv.DictReader(f)}


def test_no_p_wave_in_most_atrial_fibrillation_records(shared_data: Path) -> None:
    # LUDB diagnoses (ludb.csv): records in atrial fibrillation have no P annotations; an
    # organised P must not be invented. Measured: 10 of 11 AF records get no P at all (the
    # beats must repeat the median beat's P; before that rule: 8 of 11).
    rhythms = _ludb_rhythms(shared_data)
    af = [k for k, v in rhythms.items() if v.strip().lower().startswith("atrial fibrillation")]
    af = [k for k in af if (shared_data / "ludb" / f"{k}.hea").exists()]
    assert len(af) >= 5
    no_p = 0
    for name in af:
        x, fs = _ludb(shared_data, name)
        an = _analyse(x, fs)
        frac_p = np.mean([m.p_on is not None for m in an.beat_marks])
        no_p += frac_p < 0.2
    assert no_p >= 0.85 * len(af), f"P found in {len(af) - no_p} of {len(af)} AF records"


def test_p_wave_found_in_sinus_rhythm(shared_data: Path) -> None:
    # LUDB sinus-rhythm records have P annotations on (nearly) every beat.
    rhythms = _ludb_rhythms(shared_data)
    sinus = [k for k, v in rhythms.items() if v.strip() == "Sinus rhythm"][:25]
    with_p = 0
    for name in sinus:
        x, fs = _ludb(shared_data, name)
        an = _analyse(x, fs)
        with_p += np.mean([m.p_on is not None for m in an.beat_marks]) > 0.8
    assert with_p >= 0.8 * len(sinus)


# --- per-beat marks follow each beat's own signal --------------------------------------------


def test_beat_t_end_follows_a_moved_t_wave(shared_data: Path) -> None:
    # Real LUDB beats (record 1); the ST-T of one beat is delayed by 20 ms (signal shifted
    # between its QRS end and the next P). Its T end moves by 20 ms (+-4 ms); the others stay
    # within 6 ms (the median beat they follow changes a little with the edited beat).
    x, fs = _ludb(shared_data, "1")
    an = _analyse(x, fs)
    k = len(an.beats) // 2
    a = an.beat_marks[k].qrs_off + int(0.02 * fs)
    b = an.beat_marks[k + 1].p_on - int(0.01 * fs)
    d = int(0.02 * fs)
    y = x.copy()
    y[a + d : b] = x[a : b - d]
    y[a : a + d] = x[a]
    an2 = _analyse(y, fs)
    moved = an2.beat_marks[k].t_off - an.beat_marks[k].t_off
    assert abs(moved - d) <= 0.004 * fs
    for j in (k - 2, k - 1, k + 2):
        assert abs(an2.beat_marks[j].t_off - an.beat_marks[j].t_off) <= 0.006 * fs
