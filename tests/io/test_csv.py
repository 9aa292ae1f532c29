"""CSV/TSV reader: round trips of real records, time columns, unit suffixes."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import wfdb

from reviewapp.core.errors import RecordError
from reviewapp.core.io import open_record
from reviewapp.core.io.writers import write_csv


@pytest.fixture(scope="module")
def ludb1(shared_data: Path):
    return wfdb.rdrecord(str(shared_data / "ludb" / "1"), sampto=1500)


def test_write_csv_round_trip(shared_data: Path, tmp_path: Path) -> None:
    rec = open_record(shared_data / "ludb" / "1.hea")
    out = write_csv(rec, tmp_path / "ludb1.csv", include_derived=False)
    back = open_record(out)
    assert back.fs_hz == 500 and back.n_samples == 5000  # from the time_s column
    assert back.lead_names == rec.lead_names
    # Reference: wfdb.rdrecord of LUDB 1; 9 significant digits represent float32 exactly.
    ref = wfdb.rdrecord(str(shared_data / "ludb" / "1")).p_signal
    np.testing.assert_allclose(back.signal_mv, ref, rtol=0, atol=1e-6)
    assert not any("assumed" in n for n in back.notes)  # units came from the "[mV]" suffix


@pytest.mark.parametrize(
    ("sep", "time_col", "time_scale", "unit_fmt", "factor"),
    [
        (",", "time_ms", 1000.0, "{} [uV]", 1000.0),
        ("\t", "t", 1.0, "{}_mV", 1.0),
        (";", "time (s)", 1.0, "{} (V)", 0.001),
        (",", "Time", 1.0, "{}", 1.0),
    ],
)
def test_time_column_and_units(
    ludb1, tmp_path: Path, sep, time_col, time_scale, unit_fmt, factor
) -> None:
    sig = ludb1.p_signal[:, :2] * factor
    t = np.arange(sig.shape[0]) / 500 * time_scale
    header = sep.join([time_col] + [unit_fmt.format(n) for n in ("Lead I", "II")])
    path = tmp_path / f"x{'.tsv' if sep == chr(9) else '.csv'}"
    np.savetxt(
        path, np.column_stack([t, sig]), delimiter=sep, header=header, comments="", fmt="%.6f"
    )
    rec = open_record(path)
    assert rec.fs_hz == pytest.approx(500.0)
    # Printed with 6 decimals in the file's units: error <= 0.5e-6 unit -> mV by the factor.
    tol = 0.5e-6 / factor + 1e-6
    np.testing.assert_allclose(rec.signal_mv[:, :2], ludb1.p_signal[:, :2], atol=tol)
    assert rec.lead_names[:3] == ("I", "II", "III") and rec.leads[2].derived
    assumed = any("assumed mV" in n for n in rec.notes)
    assert assumed == (unit_fmt == "{}")


def test_fs_argument_and_units_argument(ludb1, tmp_path: Path) -> None:
    path = tmp_path / "plain.csv"
    np.savetxt(
        path, ludb1.p_signal[:, :3] * 1000, delimiter=",", header="I,II,V1", comments="", fmt="%.3f"
    )
    with pytest.raises(RecordError, match="sampling rate"):
        open_record(path)
    rec = open_record(path, fs_hz=500, units="uV")
    np.testing.assert_allclose(rec.signal_mv[:, :2], ludb1.p_signal[:, :2], atol=1e-6)
    for bad in (0.0, -500.0, float("nan")):
        with pytest.raises(RecordError, match=r"plain\.csv"):
            open_record(path, fs_hz=bad)


def test_uneven_time_and_disagreeing_fs(ludb1, tmp_path: Path) -> None:
    t = np.arange(100) / 500
    t[50:] += 0.01
    path = tmp_path / "uneven.csv"
    np.savetxt(
        path,
        np.column_stack([t, ludb1.p_signal[:100, 0]]),
        delimiter=",",
        header="time_s,I",
        comments="",
    )
    with pytest.raises(RecordError, match="not evenly spaced"):
        open_record(path)
    t = np.arange(100) / 500
    np.savetxt(
        path,
        np.column_stack([t, ludb1.p_signal[:100, 0]]),
        delimiter=",",
        header="time_s,I",
        comments="",
    )
    with pytest.raises(RecordError, match="500 Hz but"):
        open_record(path, fs_hz=250)


def test_unknown_lead_names_are_kept(tmp_path: Path) -> None:
    path = tmp_path / "odd.csv"
    path.write_text("time_s,Lead Q7,ECG-chest\n0,0.1,0.2\n0.004,0.2,0.1\n0.008,0.0,0.3\n")
    rec = open_record(path)
    assert rec.lead_names == ("Q7", "chest") and rec.fs_hz == 250
