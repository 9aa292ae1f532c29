"""Bad input: every damaged or hostile file gives a RecordError that names the file.

Files are copies (in tmp_path) of real records, damaged on purpose; nothing else may escape,
and nothing may hang.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pydicom
import pytest
from pydicom.data import get_testdata_file

from reviewapp.core.errors import RecordError
from reviewapp.core.io import UNEXPECTED, open_record


def _expect_error(path: Path, match: str | None = None, **kw) -> RecordError:
    with pytest.raises(RecordError) as info:
        open_record(path, **kw)
    err = info.value
    assert err.path is not None and err.path.parent == path.parent, str(err)
    assert err.path.name in str(err)
    assert UNEXPECTED not in str(err), str(err)  # a reader's own message, not the safety net
    if match:
        assert match.lower() in str(err).lower(), str(err)
    return err


@pytest.fixture
def ludb_copy(shared_data: Path, tmp_path: Path) -> Path:
    for ext in (".hea", ".dat"):
        shutil.copy(shared_data / "ludb" / f"1{ext}", tmp_path / f"1{ext}")
    return tmp_path / "1.hea"


def _edit_header(hea: Path, old: str, new: str) -> None:
    text = hea.read_text()
    assert old in text
    hea.write_text(text.replace(old, new, 1))


def test_truncated_signal_file(ludb_copy: Path) -> None:
    dat = ludb_copy.with_suffix(".dat")
    dat.write_bytes(dat.read_bytes()[:50_001])
    _expect_error(ludb_copy, "truncated")


def test_header_declares_more_samples_than_the_file(ludb_copy: Path) -> None:
    _edit_header(ludb_copy, "1 12 500 5000", "1 12 500 6000")
    _expect_error(ludb_copy, "truncated")


def test_huge_declared_length(ludb_copy: Path) -> None:
    _edit_header(ludb_copy, "1 12 500 5000", "1 12 500 99999999999")
    _expect_error(ludb_copy, "truncated")
    _edit_header(ludb_copy, "99999999999", "999999999999999999999")
    _expect_error(ludb_copy)


def test_header_with_fewer_signal_lines_than_declared(ludb_copy: Path) -> None:
    _edit_header(ludb_copy, "1 12 500 5000", "1 13 500 5000")
    _expect_error(ludb_copy)


def test_header_with_wrong_format_for_the_data(ludb_copy: Path) -> None:
    # Format 32 needs twice the bytes of format 16: the file is now "truncated".
    ludb_copy.write_text(ludb_copy.read_text().replace(".dat 16 ", ".dat 32 "))
    _expect_error(ludb_copy, "truncated")


@pytest.mark.parametrize("fs", ["0", "-500", "nan", "abc"])
def test_zero_negative_or_nonsense_sampling_rate_in_header(ludb_copy: Path, fs: str) -> None:
    _edit_header(ludb_copy, "1 12 500 5000", f"1 12 {fs} 5000")
    _expect_error(ludb_copy)


def test_missing_signal_file(ludb_copy: Path) -> None:
    ludb_copy.with_suffix(".dat").unlink()
    _expect_error(ludb_copy, "missing")


def test_wfdb_invalid_sample_code_is_nan_not_error(ludb_copy: Path) -> None:
    # WFDB signal(5): the most negative 16-bit value marks "no sample"; the record model
    # serves it as NaN (a gap), which wfdb.rdrecord also does.
    import wfdb

    dat = ludb_copy.with_suffix(".dat")
    raw = bytearray(dat.read_bytes())
    raw[0:2] = np.array([-32768], dtype="<i2").tobytes()
    dat.write_bytes(bytes(raw))
    rec = open_record(ludb_copy)
    ref = wfdb.rdrecord(str(ludb_copy.with_suffix(""))).p_signal  # reference reader
    assert np.isnan(rec.signal_mv[0, 0]) and np.isnan(ref[0, 0])


def test_unknown_lead_names_are_kept(ludb_copy: Path) -> None:
    _edit_header(ludb_copy, " 0 v6\n", " 0 chest-7\n")
    rec = open_record(ludb_copy)
    assert rec.lead_names[-1] == "chest-7"


@pytest.mark.parametrize("cell", ["nan", "inf", "-inf", "abc", ""])
def test_csv_non_finite_or_non_numeric(tmp_path: Path, cell: str) -> None:
    path = tmp_path / "bad.csv"
    path.write_text(f"time_s,I,II\n0,0.1,0.2\n0.002,{cell},0.1\n0.004,0.0,0.3\n")
    _expect_error(path)


def test_aecg_non_finite_digits_and_zero_increment(tmp_path: Path) -> None:
    fixture = (Path(__file__).parent / "fixtures" / "small_aecg.xml").read_text()
    path = tmp_path / "bad.xml"
    path.write_text(fixture.replace("0 40 80 120", "0 nan 80 120"))
    _expect_error(path, "finite")
    path.write_text(
        fixture.replace('<increment value="0.002" unit="s"/>', '<increment value="0" unit="s"/>')
    )
    _expect_error(path, "positive")
    path.write_text(
        fixture.replace(
            '<increment value="0.002" unit="s"/>', '<increment value="-0.002" unit="s"/>'
        )
    )
    _expect_error(path, "positive")


@pytest.mark.parametrize("suffix", [".hea", ".csv", ".tsv", ".xml", ".edf", ".bdf", ".dcm"])
def test_empty_files(tmp_path: Path, suffix: str) -> None:
    path = tmp_path / f"empty{suffix}"
    path.write_bytes(b"")
    _expect_error(path)


@pytest.mark.parametrize("suffix", [".hea", ".csv", ".txt", ".xml", ".edf", ".dcm", ".bin", ""])
def test_binary_garbage(tmp_path: Path, suffix: str) -> None:
    rng = np.random.default_rng(7)
    path = tmp_path / f"garbage{suffix}"
    path.write_bytes(rng.integers(0, 256, 4096, dtype=np.uint8).tobytes())
    _expect_error(path)


def test_missing_file_and_folder(tmp_path: Path) -> None:
    _expect_error(tmp_path / "nothere.csv", "not found")
    _expect_error(tmp_path / "nothere", "not found")
    (tmp_path / "folder.edf").mkdir()
    _expect_error(tmp_path / "folder.edf")


def test_dicom_damaged_elements(tmp_path: Path) -> None:
    src = get_testdata_file("waveform_ecg.dcm")
    if src is None:
        pytest.skip("pydicom test file waveform_ecg.dcm not available")
    edits = {
        "huge": lambda g: setattr(g, "NumberOfWaveformSamples", 2**31 - 1),
        "zero_fs": lambda g: setattr(g, "SamplingFrequency", 0),
        "neg_fs": lambda g: setattr(g, "SamplingFrequency", -1000),
        "bits": lambda g: setattr(g, "WaveformBitsAllocated", 12),
        "channels": lambda g: setattr(g, "NumberOfWaveformChannels", 13),
        "no_data": lambda g: delattr(g, "WaveformData"),
    }
    for name, edit in edits.items():
        ds = pydicom.dcmread(src)
        for g in ds.WaveformSequence:
            edit(g)
        path = tmp_path / f"{name}.dcm"
        ds.save_as(path)
        _expect_error(path)
    ds = pydicom.dcmread(src)
    del ds.WaveformSequence
    ds.save_as(tmp_path / "nowave.dcm")
    _expect_error(tmp_path / "nowave.dcm", "no waveform")


@pytest.mark.parametrize("gain", ["1e300", "1e-300"])
def test_absurd_adc_gain_is_refused_not_flattened(ludb_copy: Path, gain: str) -> None:
    # WFDB header signal line: "file format gain(baseline)/units ..." (PhysioNet header(5)
    # format). A gain beyond float range used to become infinity when read, turning the lead
    # into zeros without a word; it must be refused as a damaged header.
    text = ludb_copy.read_text().splitlines()
    fields = text[1].split()
    fields[2] = gain + fields[2][fields[2].index("(") :] if "(" in fields[2] else gain
    text[1] = " ".join(fields)
    ludb_copy.write_text("\n".join(text) + "\n")
    _expect_error(ludb_copy, "gain")
