"""CSV units plausibility, line-numbered CSV errors, empty WFDB headers, and what `info` shows
(subject facts from header comments, date-only acquisition, file units, original lead names)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import wfdb
from pyedflib import highlevel

from reviewapp import cli
from reviewapp.core.describe import describe_record
from reviewapp.core.errors import RecordError
from reviewapp.core.io import open_record


def _ludb1(shared_data: Path) -> wfdb.Record:
    return wfdb.rdrecord(str(shared_data / "ludb" / "1"))  # 12 leads, 500 Hz, mV


def _write_csv(path: Path, rec: wfdb.Record, scale: float, names: list[str] | None = None) -> Path:
    t = np.arange(rec.sig_len) / rec.fs
    data = np.column_stack([t, rec.p_signal[:, :3] * scale])
    header = ",".join(["time_s", *(names or rec.sig_name[:3])])
    np.savetxt(path, data, delimiter=",", header=header, comments="", fmt="%.6f")
    return path


def test_csv_in_microvolts_without_units_is_refused(shared_data: Path, tmp_path: Path) -> None:
    # Reference: the wfdb library's physical signal of LUDB record 1 (mV), written in uV.
    rec = _ludb1(shared_data)
    path = _write_csv(tmp_path / "uv.csv", rec, 1000.0)
    with pytest.raises(RecordError) as err:
        open_record(path)
    assert "uv.csv" in str(err.value) and "--units uV" in str(err.value)
    ok = open_record(path, units="uV")
    got = ok.window(0, rec.sig_len)[:, :3]
    assert np.max(np.abs(got - rec.p_signal[:, :3])) < 1e-5  # 6 printed decimals of uV
    assert "uV in the file, served as mV" in describe_record(ok)


def test_csv_in_volts_without_units_is_refused(shared_data: Path, tmp_path: Path) -> None:
    path = _write_csv(tmp_path / "v.csv", _ludb1(shared_data), 1e-3)
    with pytest.raises(RecordError, match="--units V") as err:
        open_record(path)
    assert "v.csv" in str(err.value)


def test_csv_in_millivolts_without_units_is_read(shared_data: Path, tmp_path: Path) -> None:
    rec = open_record(_write_csv(tmp_path / "mv.csv", _ludb1(shared_data), 1.0))
    assert any("assumed mV" in n for n in rec.notes)


def test_measure_accepts_units(shared_data: Path, tmp_path: Path, capsys) -> None:
    path = _write_csv(tmp_path / "uv.csv", _ludb1(shared_data), 1000.0)
    assert cli.main(["measure", str(path), "--format", "json"]) == 2
    assert "--units uV" in capsys.readouterr().err
    assert cli.main(["measure", str(path), "--format", "json", "--units", "uV"]) == 0


def test_csv_errors_give_file_line_and_column(tmp_path: Path) -> None:
    bad = tmp_path / "bad.csv"
    bad.write_text("\ntime_s,I,II\n0,0.1,0.2\n\n0.002,0.1,abc\n")
    with pytest.raises(RecordError) as err:
        open_record(bad)
    # Line 5 of the file (blank line 1, header line 2, blank line 4 counted).
    assert "line 5, column 'II'" in str(err.value) and "abc" in str(err.value)
    short = tmp_path / "short.csv"
    short.write_text("time_s,I,II\n0,0.1,0.2\n0.002,0.1\n")
    with pytest.raises(RecordError, match=r"line 3: 2 values but 3 columns"):
        open_record(short)
    nan = tmp_path / "nan.csv"
    nan.write_text("time_s,I,II\n0,0.1,0.2\n0.002,nan,0.1\n")
    with pytest.raises(RecordError, match=r"line 3, column 'I'"):
        open_record(nan)


@pytest.mark.parametrize("content", ["", "\n\n", "# a comment only\n"])
def test_empty_wfdb_header_message(tmp_path: Path, content: str) -> None:
    hea = tmp_path / "e.hea"
    hea.write_text(content)
    with pytest.raises(RecordError) as err:
        open_record(hea)
    text = str(err.value)
    assert "e.hea" in text and "cannot read WFDB header: the header" in text
    assert "index" not in text


def test_qtdb_age_and_sex_on_one_line(shared_data: Path) -> None:
    # The header comment itself (read with wfdb) is the reference: "Age: 47  Sex: M".
    head = wfdb.rdheader(str(shared_data / "qtdb" / "sele0104"))
    assert any("Sex: M" in c and "Age: 47" in c for c in head.comments)
    s = open_record(shared_data / "qtdb" / "sele0104.hea").subject
    assert s.age_years == 47 and s.sex == "male"


def test_ptb_date_only_acquisition(shared_data: Path) -> None:
    # PTB comment "ECG date: 01/10/1990" (day/month/year) gives a date, no time.
    rec = open_record(shared_data / "ptbdb" / "s0010_re.hea")
    assert rec.subject.acquired_at is not None and rec.subject.acquired_at.year == 1990
    assert rec.subject.acquired_time_known is False
    text = describe_record(rec)
    assert "acquired 1990-10-01" in text and "00:00:00" not in text
    # Frank leads keep their file names visibly (wfdb: sig_name vx, vy, vz).
    assert "X (file name vx)" in text


def test_edf_in_microvolts_says_so(shared_data: Path, tmp_path: Path) -> None:
    src = _ludb1(shared_data)
    headers = [
        highlevel.make_signal_header(
            n, dimension="uV", sample_frequency=500, physical_min=-1e4, physical_max=1e4,
            digital_min=-32768, digital_max=32767,
        )
        for n in src.sig_name[:2]
    ]  # fmt: skip
    path = tmp_path / "uv.edf"
    highlevel.write_edf(str(path), [src.p_signal[:, i] * 1000.0 for i in range(2)], headers)
    text = describe_record(open_record(path))
    assert "units:        uV in the file, served as mV" in text
