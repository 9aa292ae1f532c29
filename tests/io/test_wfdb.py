"""WFDB reader checked against wfdb-python's own reading of the PhysioNet records."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import wfdb

from reviewapp.core.io import open_record
from reviewapp.core.io.wfdb_format import Format212Source, WfdbWindowSource, read_wfdb
from reviewapp.core.record import DigitalMemmapSource

# float32 output vs wfdb's float64: relative rounding of float32 (2^-24 ~ 6e-8) times the
# largest value; 1e-6 mV absolute is far below one ADC step of any of these records.
ATOL_MV = 1e-6

RECORDS = [
    "ptbdb/s0010_re",  # 15 leads in two signal files (.dat + .xyz), format 16
    "mitdb/100",  # format 212, 30 min
    "qtdb/sel100",
    "qtdb/sel102",
    "qtdb/sel14157",  # gain 0 (uncalibrated) in the header
    "ludb/1",
    "ludb/101",
    "ludb/199",
]


def _recorded(rec):
    return [i for i, lead in enumerate(rec.leads) if not lead.derived]


@pytest.mark.parametrize("name", RECORDS)
def test_physical_signal_equals_wfdb_rdrecord(shared_data: Path, name: str) -> None:
    base = shared_data / name
    if not base.with_suffix(".hea").is_file():
        pytest.skip(f"{name} not in this copy of the data")
    rec = open_record(base.with_suffix(".hea"))
    # Reference: wfdb.rdrecord physical signal (wfdb-python, PhysioNet's reference reader).
    ref = wfdb.rdrecord(str(base))
    got = rec.signal_mv[:, _recorded(rec)]
    assert got.shape == ref.p_signal.shape
    np.testing.assert_allclose(got, ref.p_signal, rtol=0, atol=ATOL_MV)
    assert rec.fs_hz == ref.fs
    assert [lead.original_name for lead in rec.leads if not lead.derived] == ref.sig_name
    assert [lead.adc_gain_per_mv for lead in rec.leads if not lead.derived] == ref.adc_gain


def test_ptb_all_fifteen_leads_and_memmap(shared_data: Path) -> None:
    rec = read_wfdb(shared_data / "ptbdb" / "s0010_re.hea")
    # Header of s0010_re (PhysioNet PTB): i..v6 in .dat, vx vy vz in .xyz.
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
        "X",
        "Y",
        "Z",
    )
    assert {lead.signal_file for lead in rec.leads} == {"s0010_re.dat", "s0010_re.xyz"}
    assert not any(lead.derived for lead in rec.leads)
    assert rec.n_samples == 38400 and rec.fs_hz == 1000
    # Subject facts from the header comments ("# age: 81", "# sex: female", "# ECG date:
    # 01/10/1990" in s0010_re.hea).
    assert rec.subject.age_years == 81 and rec.subject.sex == "female"
    assert rec.subject.acquired_at is not None and rec.subject.acquired_at.month == 10
    # Both files memory-mapped (no wfdb window reads).
    parts = rec.source.parts
    assert all(isinstance(p, DigitalMemmapSource) for p in parts)


def test_ludb_subject_facts_match_ludb_csv(shared_data: Path) -> None:
    import csv

    rows = {r["ID"]: r for r in csv.DictReader((shared_data / "ludb" / "ludb.csv").open())}
    checked = 0
    for rid in ("1", "101", "151", "199"):
        hea = shared_data / "ludb" / f"{rid}.hea"
        if not hea.is_file() or rid not in rows:
            continue
        rec = read_wfdb(hea)
        # Reference: ludb.csv (Sex, Age columns) distributed with LUDB.
        assert rec.subject.sex == {"F": "female", "M": "male"}[rows[rid]["Sex"].strip()]
        age = rows[rid]["Age"].strip()
        if age.isdigit():
            assert rec.subject.age_years == float(age)
        checked += 1
    assert checked >= 2


def test_mit_header_comment_age_sex(shared_data: Path) -> None:
    rec = read_wfdb(shared_data / "mitdb" / "100.hea")
    # 100.hea first comment line "69 M 1085 1629 x1" (MIT-BIH: age, sex, ...).
    assert rec.subject.age_years == 69 and rec.subject.sex == "male"
    assert isinstance(rec.source, Format212Source)  # format 212: decoded from a memory map


@pytest.mark.parametrize("name", ["mitdb/100", "ptbdb/s0010_re", "ludb/1"])
def test_window_reads_equal_full_read(shared_data: Path, name: str) -> None:
    rec = open_record(shared_data / f"{name}.hea")
    # Reference: wfdb.rdrecord(sampfrom, sampto) windows and the full read.
    full = wfdb.rdrecord(str(shared_data / name)).p_signal
    cols = _recorded(rec)
    n = rec.n_samples
    for start, stop in [(0, 1), (0, 777), (n // 3, n // 3 + 1234), (n - 500, n), (n - 1, n)]:
        w = rec.window(start, stop)[:, cols]
        np.testing.assert_allclose(w, full[start:stop], rtol=0, atol=ATOL_MV)
    assert rec.window(n, n + 10).shape == (0, rec.n_leads)


WRITABLE_FORMATS = ["16", "24", "32", "80", "516"]  # formats wfdb.wrsamp writes
# Formats wfdb cannot write: packed here by the WFDB signal(5) specification (61: 16-bit
# big-endian two's complement; 160: 16-bit offset binary). 212 is covered by MIT-BIH/QTDB.
PACKED_FORMATS = {"61": lambda d: d.astype(">i2"), "160": lambda d: (d + 32768).astype("<u2")}


def _ludb_digital(shared_data: Path) -> np.ndarray:
    src = wfdb.rdrecord(
        str(shared_data / "ludb" / "1"), sampto=500, channels=[1, 6], physical=False
    )
    return src.d_signal.astype(np.int64)


@pytest.mark.parametrize("fmt", WRITABLE_FORMATS)
def test_wfdb_formats_written_by_wfdb(shared_data: Path, tmp_path: Path, fmt: str) -> None:
    """LUDB record 1 (II, V1, 1 s) written by wfdb.wrsamp in each format, read both ways."""
    d = _ludb_digital(shared_data)
    if fmt == "80":
        d = np.clip(d // 64, -127, 127)
    try:
        wfdb.wrsamp(
            "rec",
            fs=500,
            units=["mV", "mV"],
            sig_name=["ii", "v1"],
            d_signal=d,
            fmt=[fmt, fmt],
            adc_gain=[200.0, 200.0],
            baseline=[0, 0],
            write_dir=str(tmp_path),
        )
    except ImportError as err:  # FLAC needs the optional soundfile package
        pytest.skip(f"wfdb cannot write format {fmt} here: {err}")
    rec = open_record(tmp_path / "rec.hea")
    if fmt in ("24", "516"):
        assert isinstance(rec.source, WfdbWindowSource)  # read through wfdb.rdrecord windows
    # Reference: wfdb.rdrecord physical values of the same file.
    ref = wfdb.rdrecord(str(tmp_path / "rec")).p_signal
    np.testing.assert_allclose(rec.signal_mv, ref, rtol=0, atol=ATOL_MV)
    np.testing.assert_allclose(rec.window(100, 400), ref[100:400], rtol=0, atol=ATOL_MV)


@pytest.mark.parametrize("fmt", sorted(PACKED_FORMATS))
def test_wfdb_formats_packed_by_spec(shared_data: Path, tmp_path: Path, fmt: str) -> None:
    d = _ludb_digital(shared_data)
    (tmp_path / "rec.dat").write_bytes(PACKED_FORMATS[fmt](d).tobytes())
    (tmp_path / "rec.hea").write_text(
        f"rec 2 500 {d.shape[0]}\n"
        f"rec.dat {fmt} 200 16 0 0 0 0 ii\n"
        f"rec.dat {fmt} 200 16 0 0 0 0 v1\n"
    )
    rec = open_record(tmp_path / "rec.hea")
    ref = wfdb.rdrecord(str(tmp_path / "rec")).p_signal  # reference: wfdb-python
    np.testing.assert_allclose(rec.signal_mv, ref, rtol=0, atol=ATOL_MV)
    # Hand check of the spec: physical = digital / gain.
    np.testing.assert_allclose(rec.signal_mv[:, 0], d[:, 0] / 200.0, rtol=1e-6)


def _pack_212(d: np.ndarray) -> bytes:
    """Pack digital samples in WFDB format 212 (signal(5)): two 12-bit samples in 3 bytes."""
    flat = d.reshape(-1).astype(np.int64) & 0xFFF
    if flat.size % 2:
        flat = np.append(flat, 0)
    a, b = flat[0::2], flat[1::2]
    out = np.empty((a.size, 3), dtype=np.uint8)
    out[:, 0] = a & 0xFF
    out[:, 1] = ((a >> 8) & 0x0F) | (((b >> 8) & 0x0F) << 4)
    out[:, 2] = b & 0xFF
    return out.tobytes()


def test_format_212_odd_signal_count_and_windows(shared_data: Path, tmp_path: Path) -> None:
    """Three interleaved signals, odd length: sample pairs straddle frames."""
    d = wfdb.rdrecord(
        str(shared_data / "ludb" / "1"), sampto=501, channels=[0, 1, 6], physical=False
    ).d_signal.astype(np.int64)
    d = np.clip(d, -2047, 2047)
    d[7, 1] = -2048  # WFDB's "no sample" code for format 212
    (tmp_path / "r.dat").write_bytes(_pack_212(d))
    (tmp_path / "r.hea").write_text(
        "r 3 500 501\n" + "".join(f"r.dat 212 100(3) 12 0 0 0 0 {n}\n" for n in ("I", "II", "V1"))
    )
    rec = open_record(tmp_path / "r.hea")
    assert isinstance(rec.source.base, Format212Source)  # under the derived-lead matrix
    ref = wfdb.rdrecord(str(tmp_path / "r")).p_signal  # reference: wfdb-python
    cols = [rec.lead_index(n) for n in ("I", "II", "V1")]
    np.testing.assert_allclose(rec.signal_mv[:, cols], ref, rtol=0, atol=ATOL_MV)
    assert np.isnan(rec.signal_mv[7, cols[1]]) and np.isnan(ref[7, 1])
    for a, b in [(0, 1), (1, 2), (3, 10), (250, 501), (500, 501)]:
        np.testing.assert_allclose(rec.window(a, b)[:, cols], ref[a:b], rtol=0, atol=ATOL_MV)


def test_units_in_uv_and_non_voltage_signal(shared_data: Path, tmp_path: Path) -> None:
    d = wfdb.rdrecord(
        str(shared_data / "ludb" / "1"), sampto=1000, channels=[0, 1], physical=False
    ).d_signal
    wfdb.wrsamp(
        "mix",
        fs=500,
        units=["uV", "mmHg"],
        sig_name=["I", "ABP"],
        d_signal=d,
        fmt=["16", "16"],
        adc_gain=[1.716, 10.0],
        baseline=[0, 0],
        write_dir=str(tmp_path),
    )
    rec = open_record(tmp_path / "mix.hea")
    ref = wfdb.rdrecord(str(tmp_path / "mix")).p_signal
    assert rec.lead_names == ("I",)
    # uV -> mV: divide wfdb's physical value (uV) by 1000.
    np.testing.assert_allclose(rec.signal_mv[:, 0], ref[:, 0] / 1000.0, rtol=1e-6, atol=1e-9)
    assert any("ABP (mmHg)" in n for n in rec.notes)
    # Units override: treat the header's values as mV.
    rec2 = open_record(tmp_path / "mix.hea", units="mV")
    assert rec2.lead_names == ("I", "ABP")  # both kept when the caller states the units


def test_multi_segment_record(shared_data: Path, tmp_path: Path) -> None:
    """Two segments (LUDB 1 and 2 seconds) behind one master header, read across the seam."""
    d = wfdb.rdrecord(str(shared_data / "ludb" / "1"), channels=[0, 1], physical=False).d_signal
    for seg, (a, b) in {"seg1": (0, 1000), "seg2": (1000, 2500)}.items():
        wfdb.wrsamp(
            seg,
            fs=500,
            units=["mV", "mV"],
            sig_name=["I", "II"],
            d_signal=d[a:b],
            fmt=["16", "16"],
            adc_gain=[1716.0, 1206.0],
            baseline=[6, 2],
            write_dir=str(tmp_path),
        )
    # Master header layout: WFDB header(5) man page, multi-segment records.
    (tmp_path / "multi.hea").write_text("multi/2 2 500 2500\nseg1 1000\nseg2 1500\n")
    rec = open_record(tmp_path / "multi.hea")
    # Reference: wfdb.rdrecord of the multi-segment record, merged to one signal (m2s).
    ref = wfdb.rdrecord(str(tmp_path / "multi"), m2s=True).p_signal
    cols = _recorded(rec)
    np.testing.assert_allclose(rec.signal_mv[:, cols], ref, rtol=0, atol=ATOL_MV)
    np.testing.assert_allclose(rec.window(900, 1100)[:, cols], ref[900:1100], atol=ATOL_MV)
    assert rec.lead_names[:2] == ("I", "II") and any("multi-segment" in n for n in rec.notes)
    from reviewapp.core.io import find_records

    assert find_records(tmp_path) == [tmp_path / "multi.hea"]


def test_long_record_is_not_loaded(tmp_path: Path) -> None:
    """A 25-hour, 2-lead format 16 record (sparse file) opens and serves windows lazily."""
    n = 25 * 3600 * 250
    with (tmp_path / "long.dat").open("wb") as fh:
        fh.truncate(n * 2 * 2)  # zeros on disk, no memory used
        fh.seek(n * 2 * 2 - 4)
        fh.write(np.array([200, -400], dtype="<i2").tobytes())
    (tmp_path / "long.hea").write_text(
        f"long 2 250 {n}\nlong.dat 16 200 16 0 0 0 0 I\nlong.dat 16 200 16 0 0 0 0 II\n"
    )
    rec = open_record(tmp_path / "long.hea")
    assert rec.n_samples == n and isinstance(rec.source, DigitalMemmapSource | type(rec.source))
    last = rec.window(n - 1, n)
    # Hand computation: (200 - 0) / 200 = 1 mV, -400 / 200 = -2 mV; III = II - I = -3 mV.
    assert last[0, rec.lead_index("I")] == pytest.approx(1.0)
    assert last[0, rec.lead_index("III")] == pytest.approx(-3.0)
    assert rec.leads[0].flat  # the first minute is all zeros


def test_header_without_signal_length(shared_data: Path, tmp_path: Path) -> None:
    """header(5) makes the length optional; it then follows from the signal file's size."""
    for ext in (".hea", ".dat"):
        (tmp_path / f"1{ext}").write_bytes((shared_data / "ludb" / f"1{ext}").read_bytes())
    hea = tmp_path / "1.hea"
    hea.write_text(hea.read_text().replace("1 12 500 5000", "1 12 500"))
    rec = open_record(hea)
    ref = wfdb.rdrecord(str(tmp_path / "1")).p_signal  # reference: wfdb infers it too
    assert rec.n_samples == ref.shape[0] == 5000
    np.testing.assert_allclose(rec.signal_mv, ref, rtol=0, atol=ATOL_MV)
    assert any("from file size" in n for n in rec.notes)
