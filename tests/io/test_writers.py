"""WFDB record and annotation writers, checked with wfdb-python and LUDB's own annotations."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import wfdb

from reviewapp.core.fiducials import Beat, BeatKind, WaveMarks
from reviewapp.core.io import open_record
from reviewapp.core.io.writers import read_wfdb_annotations, write_wfdb, write_wfdb_annotations
from reviewapp.core.record import record_from_array


def test_write_wfdb_keeps_digital_values(shared_data: Path, tmp_path: Path) -> None:
    rec = open_record(shared_data / "ludb" / "1.hea")
    hea = write_wfdb(rec, tmp_path, name="copy")
    # Reference: wfdb.rdrecord digital samples of the original and of the copy.
    orig = wfdb.rdrecord(str(shared_data / "ludb" / "1"), physical=False)
    copy = wfdb.rdrecord(str(hea.with_suffix("")), physical=False)
    np.testing.assert_array_equal(copy.d_signal, orig.d_signal)
    assert copy.adc_gain == orig.adc_gain and copy.baseline == orig.baseline
    back = open_record(hea)
    np.testing.assert_allclose(back.signal_mv, rec.signal_mv, atol=1e-6)


def test_write_wfdb_from_float_record(shared_data: Path, tmp_path: Path) -> None:
    src = wfdb.rdrecord(str(shared_data / "mitdb" / "100"), sampto=3600)
    rec = record_from_array(src.p_signal, 360, ["MLII", "V5"], name="m")
    hea = write_wfdb(rec, tmp_path)
    back = open_record(hea)
    # wfdb chooses the gain to fill the 16-bit range: error <= half a digital step.
    ref = wfdb.rdrecord(str(hea.with_suffix("")))
    step = 1 / np.array(ref.adc_gain)
    assert np.all(np.abs(back.signal_mv - src.p_signal) <= step / 2 + 1e-6)


def test_ludb_annotations_read_as_wfdb_rdann(shared_data: Path) -> None:
    folder = shared_data / "ludb"
    beats = read_wfdb_annotations(folder, "1", extension="ii")
    # Reference: wfdb.rdann of LUDB 1, lead II: every QRS peak 'N' is one beat, and the
    # '(' / ')' next to each peak are its onset / offset (LUDB convention, README).
    ann = wfdb.rdann(str(folder / "1"), "ii")
    sym = np.array(ann.symbol)
    n_idx = np.flatnonzero(sym == "N")
    assert [b["r_peak"] for b in beats] == [int(ann.sample[i]) for i in n_idx]
    for b, i in zip(beats, n_idx, strict=True):
        if sym[i - 1] == "(":
            assert b["qrs_on"] == ann.sample[i - 1]
        if i + 1 < len(sym) and sym[i + 1] == ")":
            assert b["qrs_off"] == ann.sample[i + 1]
    t_peaks = set(int(s) for s in ann.sample[sym == "t"])
    assert {b["t_peak"] for b in beats if b["t_peak"] is not None} <= t_peaks
    assert sum(b["p_peak"] is not None for b in beats) >= len(beats) - 2


def test_annotation_round_trip(shared_data: Path, tmp_path: Path) -> None:
    ludb = read_wfdb_annotations(shared_data / "ludb", "1", extension="ii")
    marks = [
        WaveMarks(
            p_on=b["p_on"],
            p_peak=b["p_peak"],
            p_off=b["p_off"],
            qrs_on=b["qrs_on"],
            r_peak=b["r_peak"],
            qrs_off=b["qrs_off"],
            t_peak=b["t_peak"],
            t_off=b["t_off"],
        )
        for b in ludb
    ]
    # A beat without P peak but with P boundaries, and a premature beat.
    marks[1] = marks[1].with_mark("p_peak", None)
    kinds = [BeatKind.PREMATURE if k == 2 else BeatKind.DOMINANT for k in range(len(marks))]
    beats = [Beat(r=m.r_peak or 0, kind=kd) for m, kd in zip(marks, kinds, strict=True)]
    out = write_wfdb_annotations(tmp_path, "1", 500.0, marks, beats=beats)
    assert out.name == "1.rvw"
    back = read_wfdb_annotations(tmp_path, "1")
    keys = ("p_on", "p_peak", "p_off", "qrs_on", "r_peak", "qrs_off", "t_peak", "t_off")
    for m, b in zip(marks, back, strict=True):
        assert {k: m.get(k) for k in keys} == {k: b[k] for k in keys}
    assert back[2]["note"] == "premature" and back[0]["note"] == ""
    # Reference: wfdb.rdann reads our file and finds LUDB's symbols only.
    ann = wfdb.rdann(str(tmp_path / "1"), "rvw")
    assert set(ann.symbol) <= {"(", ")", "p", "N", "t"} and ann.fs == 500


def test_annotation_writer_rejects_bad_input(tmp_path: Path) -> None:
    from reviewapp.core.errors import RecordError

    with pytest.raises(RecordError, match="no marks"):
        write_wfdb_annotations(tmp_path, "x", 500.0, [WaveMarks()])
    with pytest.raises(RecordError, match="negative"):
        write_wfdb_annotations(tmp_path, "x", 500.0, [WaveMarks(qrs_on=-3, r_peak=2)])
    with pytest.raises(RecordError, match=r"x\.rvw"):
        read_wfdb_annotations(tmp_path, "x")
