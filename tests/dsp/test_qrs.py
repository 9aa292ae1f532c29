"""QRS detection against expert beat annotations of open PhysioNet databases.

Matching: a detection matches a reference beat within 150 ms, one to one
(wfdb.processing.compare_annotations, ANSI/AAMI EC57 style). Reference beats are the beat
annotation symbols of the WFDB/MIT format (PhysioNet "Annotation codes" table):
N L R B A a J S V r F e j n E / f Q ? -- rhythm, noise and comment labels are not beats.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from reviewapp.core.dsp.filters import condition
from reviewapp.core.dsp.qrs import detect_qrs, detection_feature

wfdb = pytest.importorskip("wfdb")
from wfdb import processing  # noqa: E402

BEAT_SYMBOLS = frozenset("NLRBAaJSVrFejnE/fQ?")
MATCH_S = 0.150

# QTDB selection: MIT-BIH arrhythmia (sel1xx/2xx incl. paced sel102), MIT-BIH ST change
# (sel3xx), supraventricular (sel8xx), normal sinus (sel16xxx), long-term ST (sel14xxx),
# European ST-T (sele0xxx), sudden death (sel3x/4x). First 3 minutes each.
QTDB_RECORDS = (
    "sel100",
    "sel102",
    "sel104",
    "sel114",
    "sel123",
    "sel221",
    "sel232",
    "sel301",
    "sel808",
    "sel14157",
    "sel16265",
    "sel16420",
    "sele0106",
    "sele0129",
    "sele0604",
    "sel30",
    "sel45",
)
QTDB_SECONDS = 180


def _compare(ref: np.ndarray, test: np.ndarray, fs: float) -> tuple[int, int, int]:
    cmp = processing.compare_annotations(
        np.asarray(ref, dtype=np.int64), np.asarray(test, dtype=np.int64), int(MATCH_S * fs)
    )
    return int(cmp.tp), int(cmp.fn), int(cmp.fp)


def _beats(ann) -> np.ndarray:
    return np.array(
        [s for s, sym in zip(ann.sample, ann.symbol, strict=True) if sym in BEAT_SYMBOLS],
        dtype=np.int64,
    )


def _detect(x: np.ndarray, fs: float) -> np.ndarray:
    x = np.nan_to_num(np.asarray(x, dtype=np.float32))
    c = condition(x, fs)
    return detect_qrs(c, fs, np.ones(x.shape[1], dtype=bool))


def _se_ppv(tp: int, fn: int, fp: int) -> tuple[float, float]:
    return tp / max(1, tp + fn), tp / max(1, tp + fp)


def test_mitdb_100_whole_record(shared_data: Path) -> None:
    # MIT-BIH Arrhythmia Database record 100, 30 min, both leads, against its .atr reference
    # (Moody & Mark 2001). Target from the brief: Se and PPV >= 99.8 %.
    path = str(shared_data / "mitdb" / "100")
    rec = wfdb.rdrecord(path)
    ref = _beats(wfdb.rdann(path, "atr"))
    assert ref.size > 2000
    r = _detect(rec.p_signal, rec.fs)
    se, ppv = _se_ppv(*_compare(ref, r, rec.fs))
    print(f"MIT-BIH 100: {ref.size} reference beats, Se {se:.4%}, PPV {ppv:.4%}")
    assert se >= 0.998 and ppv >= 0.998
    assert np.all(np.diff(r) > 0) and r.dtype == np.int64


def test_qtdb_selection(shared_data: Path) -> None:
    # QT Database (Laguna et al. 1997) beat labels: .atr where present, else .man (manual
    # labels covering part of the record: detections outside the labelled span are ignored).
    # Measured when written: Se 100.00 %, PPV 99.91 % over these records; the floors hold
    # that level with a margin of a few beats.
    tot = np.zeros(3, dtype=np.int64)
    worst: list[str] = []
    for name in QTDB_RECORDS:
        path = shared_data / "qtdb" / name
        if not path.with_suffix(".hea").exists():
            continue
        ext = "atr" if path.with_suffix(".atr").exists() else "man"
        rec = wfdb.rdrecord(str(path), sampto=int(QTDB_SECONDS * 250))
        fs = rec.fs
        ref = _beats(wfdb.rdann(str(path), ext, sampto=int(QTDB_SECONDS * fs)))
        if ref.size == 0:
            continue
        r = _detect(rec.p_signal, fs)
        if ext == "man":
            r = r[(r >= ref[0] - MATCH_S * fs) & (r <= ref[-1] + MATCH_S * fs)]
        counts = _compare(ref, r, fs)
        tot += counts
        if counts[1] or counts[2]:
            worst.append(f"{name}: fn {counts[1]} fp {counts[2]}")
    assert tot[0] > 3000, "too few QTDB records found"
    se, ppv = _se_ppv(*tot)
    print(f"QTDB ({len(QTDB_RECORDS)} records, {QTDB_SECONDS} s): Se {se:.4%} PPV {ppv:.4%}", worst)
    assert se >= 0.999 and ppv >= 0.997, worst


def test_ludb_lead_i_beats(shared_data: Path) -> None:
    # LUDB (Kalyakulina et al. 2020): cardiologists marked every QRS ('N' peak label) in
    # lead I (.i files), except usually the first and last beat of the 10 s: detections
    # outside the span of the marks (+-150 ms) are not counted. Every record in the folder
    # (sinus rhythm, AF, flutter, bundle branch blocks, extrasystoles, paced rhythms).
    # Target: Se and PPV >= 99 %; measured when written: Se 99.92 %, PPV 99.77 %.
    tot = np.zeros(3, dtype=np.int64)
    n_records = 0
    for hea in sorted((shared_data / "ludb").glob("*.hea")):
        path = hea.with_suffix("")
        n_records += 1
        rec = wfdb.rdrecord(str(path))
        ann = wfdb.rdann(str(path), "i")
        ref = np.array(
            [s for s, sym in zip(ann.sample, ann.symbol, strict=True) if sym == "N"], np.int64
        )
        r = _detect(rec.p_signal, rec.fs)
        r = r[(r >= ref[0] - MATCH_S * rec.fs) & (r <= ref[-1] + MATCH_S * rec.fs)]
        tot += _compare(ref, r, rec.fs)
    assert tot[0] > 500, "too few LUDB records found"
    se, ppv = _se_ppv(*tot)
    print(f"LUDB ({n_records} records): Se {se:.4%} PPV {ppv:.4%}")
    assert se >= 0.995 and ppv >= 0.995


@pytest.mark.parametrize("fs_new", [125, 250, 1000, 2000])
def test_resampled_mitdb_100(shared_data: Path, fs_new: int) -> None:
    # The same 3 minutes of MIT-BIH 100 resampled with scipy.signal.resample_poly: detection
    # must not depend on the sampling rate. The first and last 0.5 s are left out (the
    # resampler's own edge transient). R position error stays under 10 ms on average.
    from scipy.signal import resample_poly

    path = str(shared_data / "mitdb" / "100")
    rec = wfdb.rdrecord(path, sampto=360 * 180)
    ref = _beats(wfdb.rdann(path, "atr", sampto=360 * 180))
    y = resample_poly(rec.p_signal, fs_new, 360, axis=0)
    r = _detect(y, float(fs_new))
    ref_new = np.round(ref * fs_new / 360).astype(np.int64)
    lo, hi = int(0.5 * fs_new), y.shape[0] - int(0.5 * fs_new)
    ref_new = ref_new[(ref_new >= lo) & (ref_new < hi)]
    r = r[(r >= lo) & (r < hi)]
    cmp = processing.compare_annotations(ref_new, r, int(MATCH_S * fs_new))
    assert cmp.sensitivity >= 0.998 and cmp.positive_predictivity >= 0.998
    err_ms = (cmp.matched_test_sample - cmp.matched_ref_sample) / fs_new * 1000
    assert abs(float(np.mean(err_ms))) < 10.0


def test_polarity_and_noise_lead(shared_data: Path) -> None:
    # Inverting every lead leaves the detections unchanged (the features are squared), and a
    # lead of pure noise added to MIT-BIH 100 does not spoil detection against .atr.
    path = str(shared_data / "mitdb" / "100")
    rec = wfdb.rdrecord(path, sampto=360 * 120)
    ref = _beats(wfdb.rdann(path, "atr", sampto=360 * 120))
    fs = rec.fs
    c = condition(rec.p_signal.astype(np.float32), fs)
    both = np.ones(2, dtype=bool)
    np.testing.assert_array_equal(detect_qrs(c, fs, both), detect_qrs(-c, fs, both))
    rng = np.random.default_rng(1)
    noise = rng.normal(0, 0.3, (c.shape[0], 1)).astype(np.float32)
    c3 = np.hstack([c, condition(noise, fs)])
    r = detect_qrs(c3, fs, np.ones(3, dtype=bool))
    se, ppv = _se_ppv(*_compare(ref, r, fs))
    assert se >= 0.995 and ppv >= 0.995
    # Unusable leads are ignored entirely.
    r_masked = detect_qrs(c3, fs, np.array([True, True, False]))
    np.testing.assert_array_equal(r_masked, detect_qrs(c, fs, both))


def test_degenerate_inputs() -> None:
    fs = 500.0
    flat = np.zeros((5000, 3), dtype=np.float32)
    assert detect_qrs(flat, fs, np.ones(3, bool)).size == 0
    assert detect_qrs(flat[:10], fs, np.ones(3, bool)).dtype == np.int64
    assert detect_qrs(flat, fs, np.zeros(3, bool)).size == 0
    feat, fs_d = detection_feature(flat, fs, np.ones(3, bool))
    assert feat.shape == (int(5000 * fs_d / fs),)


def _ludb_ref(path: Path) -> np.ndarray:
    ann = wfdb.rdann(str(path), "i")
    return np.array(
        [s for s, sym in zip(ann.sample, ann.symbol, strict=True) if sym == "N"], np.int64
    )


def test_ludb_paced_records_no_spike_beats(shared_data: Path) -> None:
    # Paced records per ludb.csv ("Cardiac pacing" column, Kalyakulina et al. 2020): pacing
    # spikes must not be counted as separate beats. Measured when written: 61 of 61 beats,
    # 1 extra detection (record 45, an atrial pacing spike with its paced P wave).
    import csv

    table = shared_data / "ludb" / "ludb.csv"
    with table.open(newline="") as fh:
        paced = [row["ID"] for row in csv.DictReader(fh) if "pacing" in row["Cardiac pacing"]]
    tot = np.zeros(3, dtype=np.int64)
    for rid in paced:
        path = shared_data / "ludb" / rid
        if not path.with_suffix(".hea").exists():
            continue
        rec = wfdb.rdrecord(str(path))
        ref = _ludb_ref(path)
        r = _detect(rec.p_signal, rec.fs)
        r = r[(r >= ref[0] - MATCH_S * rec.fs) & (r <= ref[-1] + MATCH_S * rec.fs)]
        tot += _compare(ref, r, rec.fs)
    assert tot[0] >= 40, "too few paced LUDB records found"
    assert tot[1] == 0 and tot[2] <= 2


def test_short_snippets(shared_data: Path) -> None:
    # 3-second pieces of LUDB records (the shortest strips a reader may load): every marked
    # QRS inside the piece is found, nothing else inside the marked span.
    tot = np.zeros(3, dtype=np.int64)
    heads = sorted((shared_data / "ludb").glob("*.hea"), key=lambda p: int(p.stem))[:8]
    for hea in heads:
        path = hea.with_suffix("")
        rec = wfdb.rdrecord(str(path))
        fs = rec.fs
        ref_all = _ludb_ref(path)
        for start in (0, int(3.5 * fs), int(7 * fs)):
            stop = start + int(3 * fs)
            ref = ref_all[(ref_all >= start) & (ref_all < stop)] - start
            if ref.size == 0:
                continue
            r = _detect(rec.p_signal[start:stop], fs)
            r = r[(r >= ref[0] - MATCH_S * fs) & (r <= ref[-1] + MATCH_S * fs)]
            tot += _compare(ref, r, fs)
    assert tot[0] >= 30
    assert tot[1] == 0 and tot[2] == 0


def test_baseline_wander_and_noise(shared_data: Path) -> None:
    # MIT-BIH 100 (first 3 min) with added 0.3 Hz, 1 mV baseline wander and 50 uV white
    # noise: detection against .atr keeps Se and PPV >= 99.5 %.
    path = str(shared_data / "mitdb" / "100")
    rec = wfdb.rdrecord(path, sampto=360 * 180)
    ref = _beats(wfdb.rdann(path, "atr", sampto=360 * 180))
    fs = rec.fs
    t = np.arange(rec.p_signal.shape[0]) / fs
    rng = np.random.default_rng(7)
    wander = np.sin(2 * np.pi * 0.3 * t)[:, None] * np.array([[1.0, -0.7]])
    x = rec.p_signal + wander + rng.normal(0, 0.05, rec.p_signal.shape)
    se, ppv = _se_ppv(*_compare(ref, _detect(x, fs), fs))
    assert se >= 0.995 and ppv >= 0.995


def test_docstring_examples() -> None:
    import doctest

    from reviewapp.core.dsp import filters, qrs

    for module in (filters, qrs):
        result = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE)
        assert result.attempted > 0 and result.failed == 0
