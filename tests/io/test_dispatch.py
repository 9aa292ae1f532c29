"""open_record dispatch (extension and content sniffing), find_records, describe_record."""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pytest
from pydicom.data import get_testdata_file

from reviewapp.core.describe import describe_record
from reviewapp.core.io import SUPPORTED_SUFFIXES, detect_format, find_records, open_record
from reviewapp.core.record import record_from_array

FIXTURE = Path(__file__).parent / "fixtures" / "small_aecg.xml"


def test_supported_suffixes() -> None:
    for s in (".hea", ".edf", ".bdf", ".csv", ".tsv", ".txt", ".xml", ".dcm"):
        assert s in SUPPORTED_SUFFIXES


def test_content_sniffing_without_extension(shared_data: Path, tmp_path: Path) -> None:
    dcm = get_testdata_file("waveform_ecg.dcm")
    if dcm is not None:
        # DICOM PS3.10 7.1: 128-byte preamble then "DICM".
        shutil.copy(dcm, tmp_path / "ecg_export")
        assert detect_format(tmp_path / "ecg_export") == "DICOM"
        assert open_record(tmp_path / "ecg_export").source_format == "DICOM"
    shutil.copy(FIXTURE, tmp_path / "ecg.aecg")
    assert open_record(tmp_path / "ecg.aecg").source_format == "HL7 aECG"
    from pyedflib import highlevel

    header = highlevel.make_signal_header("ECG I", dimension="mV", sample_frequency=250,
                                          physical_min=-5, physical_max=5)  # fmt: skip
    highlevel.write_edf(str(tmp_path / "x.edf"), [np.zeros(500)], [header])
    (tmp_path / "x.edf").rename(tmp_path / "edfdata")
    assert detect_format(tmp_path / "edfdata") == "EDF"  # EDF version field "0       "
    # WFDB: the record name without extension, a signal file, or an annotation file.
    for p in ("ludb/1", "ludb/1.dat", "ptbdb/s0010_re.xyz", "mitdb/100.atr"):
        assert detect_format(shared_data / p) == "WFDB"


def test_find_records_skips_sidecars_and_json(shared_data: Path, tmp_path: Path) -> None:
    for ext in (".hea", ".dat"):
        shutil.copy(shared_data / "ludb" / f"1{ext}", tmp_path / f"1{ext}")
    shutil.copy(shared_data / "ludb" / "1.ii", tmp_path / "1.ii")
    (tmp_path / "1.marks.json").write_text("{}")
    (tmp_path / "truth.json").write_text("{}")
    (tmp_path / "sub").mkdir()
    shutil.copy(FIXTURE, tmp_path / "sub" / "a.xml")
    (tmp_path / "sub" / "notes.xml").write_text("<notes/>")
    (tmp_path / "sub" / "diagnoses.csv").write_text("ID,Sex,Age\n1,F,51\n")
    (tmp_path / "sub" / "ecg.csv").write_text("time_s,I\n0,0\n0.002,0.1\n")
    assert find_records(tmp_path) == [tmp_path / "1.hea", tmp_path / "sub/a.xml",
                                      tmp_path / "sub/ecg.csv"]  # fmt: skip
    assert find_records(tmp_path, recursive=False) == [tmp_path / "1.hea"]


def test_describe_record_names_everything(shared_data: Path) -> None:
    text = describe_record(open_record(shared_data / "ptbdb" / "s0010_re.hea"))
    for expected in ("format:       WFDB", "1000 Hz", "38400 samples", "leads (15):",
                     "gain 2000 adu/mV", "s0010_re.xyz", "age 81 y, female"):  # fmt: skip
        assert expected in text, expected
    sig = np.zeros((1000, 2), dtype=np.float32)
    sig[:, 1] = np.sin(np.arange(1000) / 20)
    rec = record_from_array(sig, 500, ["I", "II"])
    text = describe_record(rec)
    assert "I      [flat]" in text and "III    [derived]" in text
    assert "derived from I and II" in text and "2.000 s" in text


@pytest.mark.parametrize("name", ["ludb/1", "mitdb/100"])
def test_units_override_scales(shared_data: Path, name: str) -> None:
    rec_mv = open_record(shared_data / f"{name}.hea")
    rec_uv = open_record(shared_data / f"{name}.hea", units="uV")
    # Stating uV for a header that says mV divides every value by 1000.
    np.testing.assert_allclose(rec_uv.window(0, 500), rec_mv.window(0, 500) / 1000, rtol=1e-6)
