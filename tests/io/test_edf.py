"""EDF/EDF+ reader: real records written with pyedflib (reference writer) and read back."""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

import numpy as np
import pyedflib
import pytest
import wfdb
from pyedflib import highlevel

from reviewapp.core.errors import RecordError
from reviewapp.core.io import open_record


def _header(label: str, dim: str, fs: float, lo: float, hi: float) -> dict:
    return highlevel.make_signal_header(
        label,
        dimension=dim,
        sample_frequency=fs,
        physical_min=lo,
        physical_max=hi,
        digital_min=-32768,
        digital_max=32767,
    )


def _resolution(lo: float, hi: float) -> float:
    # EDF stores 16-bit integers mapped linearly onto [physical_min, physical_max]
    # (EDF specification, Kemp et al. 1992): one digital step is (hi - lo) / 65535.
    return (hi - lo) / 65535


def test_edf_plus_round_trip_ludb_uv(shared_data: Path, tmp_path: Path) -> None:
    src = wfdb.rdrecord(str(shared_data / "ludb" / "1"))  # 12 leads, 500 Hz, mV
    signals_uv = [src.p_signal[:, i] * 1000.0 for i in range(12)]
    lo, hi = -10000.0, 10000.0
    headers = [
        _header(f"ECG {n.upper() if n[0] != 'a' else n}", "uV", 500, lo, hi) for n in src.sig_name
    ]
    path = tmp_path / "ludb1.edf"
    start = datetime(2020, 5, 17, 9, 30, 0)
    highlevel.write_edf(
        str(path),
        signals_uv,
        headers,
        header={
            "startdate": start,
            "sex": "Female",
            "patientcode": "P1",
            "birthdate": datetime(1969, 1, 2),
        },
    )
    rec = open_record(path)
    assert rec.source_format == "EDF" and rec.fs_hz == 500 and rec.n_samples == 5000
    assert rec.lead_names == (
        "I",
        "II",
        "III",
        "aVR",
        "aVL",
        "aVF",
        "V1",
        "V2",
        "V3",
        "V4",
        "V5",
        "V6",
    )
    tol_mv = _resolution(lo, hi) / 1000.0  # uV -> mV
    np.testing.assert_allclose(rec.signal_mv, src.p_signal, rtol=0, atol=tol_mv)
    np.testing.assert_allclose(rec.window(1234, 2345), src.p_signal[1234:2345], atol=tol_mv)
    assert rec.subject.sex == "female" and rec.subject.acquired_at == start
    assert rec.subject.age_years == 51 and rec.subject.subject_id == "P1"


def test_edf_mixed_rates_annotations_and_other_signals(shared_data: Path, tmp_path: Path) -> None:
    src = wfdb.rdrecord(str(shared_data / "mitdb" / "100"), sampto=360 * 20)
    sigs = [
        np.ascontiguousarray(x)
        for x in (
            src.p_signal[:, 0],
            src.p_signal[:, 1],
            src.p_signal[::2, 0] * 0 + 37.0,
            src.p_signal[::3, 1],
        )
    ]
    headers = [
        _header("MLII", "mV", 360, -6, 6),
        _header("V5", "mV", 360, -6, 6),
        _header("Temp", "degC", 180, 30, 45),
        _header("V1", "mV", 120, -6, 6),
    ]
    path = tmp_path / "mit.edf"
    with pyedflib.EdfWriter(str(path), 4, file_type=pyedflib.FILETYPE_EDFPLUS) as w:
        w.setSignalHeaders(headers)
        w.writeSamples(sigs)
        w.writeAnnotation(1.0, -1, "beat")
    rec = open_record(path)
    assert rec.lead_names == ("MLII", "V5") and rec.fs_hz == 360
    np.testing.assert_allclose(rec.signal_mv, src.p_signal, atol=_resolution(-6, 6))
    notes = " ".join(rec.notes)
    assert "Temp (degC)" in notes and "V1 (120 Hz)" in notes


def test_edf_garbage_and_truncated(shared_data: Path, tmp_path: Path) -> None:
    src = wfdb.rdrecord(str(shared_data / "ludb" / "1"), channels=[0])
    path = tmp_path / "x.edf"
    highlevel.write_edf(str(path), [src.p_signal[:, 0]], [_header("I", "mV", 500, -5, 5)])
    data = path.read_bytes()
    (tmp_path / "cut.edf").write_bytes(data[: len(data) // 2])
    with pytest.raises(RecordError, match=r"cut\.edf"):
        open_record(tmp_path / "cut.edf")
    (tmp_path / "junk.edf").write_bytes(b"\x00\xff" * 400)
    with pytest.raises(RecordError, match=r"junk\.edf"):
        open_record(tmp_path / "junk.edf")


def test_edf_plus_discontinuous_is_refused_clearly(tmp_path: Path) -> None:
    header = _header("ECG I", "mV", 250, -5, 5)
    highlevel.write_edf(str(tmp_path / "c.edf"), [np.sin(np.arange(1000) / 10)], [header])
    raw = bytearray((tmp_path / "c.edf").read_bytes())
    assert raw[192:197] == b"EDF+C"  # EDF+ spec 2.1.3.2: reserved field says continuous
    raw[192:197] = b"EDF+D"
    (tmp_path / "d.edf").write_bytes(bytes(raw))
    with pytest.raises(RecordError, match="discontinuous") as info:
        open_record(tmp_path / "d.edf")
    assert str(info.value).count("d.edf") == 1
