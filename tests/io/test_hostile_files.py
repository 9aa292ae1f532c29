"""Hostile inputs found by trying the readers as a hostile user would (issue: "nothing hangs,
nothing misstates a reading"). Each file is crafted here, in tmp; none is committed.

References: WFDB header(5) (PhysioNet WFDB Programmer's Guide: the frequency is a
floating-point field the WFDB library reads with sscanf "%lf", so 5e2 is 500 Hz), the EDF
specification (Kemp et al. 1992; header numbers are ASCII decimals; data records follow the
header, so their count times their size must be in the file), wfdb-python as the reference
reader of the samples, and the operating system's file types (mkfifo, /dev/null, a socket).
"""

from __future__ import annotations

import os
import shutil
import signal
import socket
import stat
from pathlib import Path

import numpy as np
import pytest
import wfdb

from reviewapp.core.errors import RecordError
from reviewapp.core.io import open_record
from reviewapp.core.record import SIGNAL_BUDGET_ENV, check_analysable

REPO = Path(__file__).resolve().parents[2]
SAMPLE = REPO / "sample_records" / "s001_predose"


class Hang(BaseException):
    pass


@pytest.fixture
def no_hang():
    """Fail (instead of hanging the suite) when a call blocks for 5 s."""

    def alarm(signum, frame):
        raise Hang("blocked for 5 s")

    old = signal.signal(signal.SIGALRM, alarm)
    signal.setitimer(signal.ITIMER_REAL, 5.0)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)


def _copy_sample(folder: Path, name: str = "rec") -> Path:
    text = SAMPLE.with_suffix(".hea").read_text()
    text = text.replace("s001_predose.dat", f"{name}.dat").replace("s001_predose", name, 1)
    (folder / f"{name}.hea").write_text(text)
    shutil.copy(SAMPLE.with_suffix(".dat"), folder / f"{name}.dat")
    return folder / f"{name}.hea"


# ---------------------------------------------------------------- special files


@pytest.mark.parametrize("name", ["f", "f.csv", "f.hea", "f.edf", "f.xml", "f.dcm"])
def test_a_fifo_is_refused_by_type_without_blocking(tmp_path: Path, no_hang, name: str):
    fifo = tmp_path / name
    os.mkfifo(fifo)
    with pytest.raises(RecordError, match="FIFO") as info:
        open_record(fifo)
    assert info.value.path == fifo


def test_devices_sockets_and_folders_are_refused_by_type(tmp_path: Path, no_hang):
    dev = tmp_path / "zero.csv"
    dev.symlink_to("/dev/zero")  # reading it would never end
    with pytest.raises(RecordError, match="character device"):
        open_record(dev)
    sock_path = tmp_path / "s.csv"
    with socket.socket(socket.AF_UNIX) as sock:
        sock.bind(str(sock_path))
        assert stat.S_ISSOCK(os.stat(sock_path).st_mode)
        with pytest.raises(RecordError, match="socket"):
            open_record(sock_path)
    for folder in (tmp_path, Path("/"), Path(".")):
        with pytest.raises(RecordError, match="is a folder"):
            open_record(folder)
    with pytest.raises(RecordError, match="path is empty"):
        open_record("")


def test_a_signal_file_that_is_a_fifo_is_refused_on_the_header(tmp_path: Path, no_hang):
    hea = _copy_sample(tmp_path)
    (tmp_path / "rec.dat").unlink()
    os.mkfifo(tmp_path / "rec.dat")
    with pytest.raises(RecordError, match=r"signal file rec\.dat .*FIFO") as info:
        open_record(hea)
    assert info.value.path == hea


# ---------------------------------------------------------------- numbers in headers


@pytest.mark.parametrize("written", ["5e2", "0.5e3", "0.5E3", "5.0E+2", "500.", "50000e-2"])
def test_wfdb_frequency_in_exponent_notation_reads_as_written(tmp_path: Path, written: str):
    hea = _copy_sample(tmp_path)
    text = hea.read_text()
    assert " 12 500 5000 " in text
    hea.write_text(text.replace(" 12 500 5000 ", f" 12 {written} 5000 ", 1))
    rec = open_record(hea)
    assert rec.fs_hz == 500.0  # header(5): a floating-point field; 5e2 is 500
    assert rec.n_samples == 5000
    # The base time and date after the frequency are not lost either.
    assert rec.subject.acquired_at is not None and rec.subject.acquired_at.hour == 7
    # The samples are wfdb's own reading of the same files.
    ref = wfdb.rdrecord(str(SAMPLE), physical=True)
    np.testing.assert_allclose(rec.window(0, 5000)[:, :2], ref.p_signal[:, :2], atol=1e-6)


@pytest.mark.parametrize(
    "old,new,message",
    [
        (" 12 500 5000 ", " 12 500 5e3 ", "number of samples per signal '5e3' is not a whole"),
        (" 12 500 5000 ", " 12 nan 5000 ", "sampling frequency 'nan' is not a decimal"),
        (" 12 500 5000 ", " 12 1_000 5000 ", "sampling frequency '1_000' is not a decimal"),
        (" 12 500 5000 ", " 12 -5e2 5000 ", "sampling frequency must be positive"),
        ("1000.0(0)/mV", "1E3(0)/mV", "ADC gain written in a form the WFDB reading library"),
        ("1000.0(0)/mV", "1000.0(0.5)/mV", "baseline '0.5' is not a whole number"),
    ],
)
def test_wfdb_header_numbers_outside_the_spec_are_refused(
    tmp_path: Path, old: str, new: str, message: str
):
    hea = _copy_sample(tmp_path)
    text = hea.read_text()
    assert old in text
    hea.write_text(text.replace(old, new, 1))
    with pytest.raises(RecordError, match=message):
        open_record(hea)


def _edf(path: Path, duration: bytes | None = None, records: bytes | None = None) -> Path:
    from pyedflib import highlevel

    hdr = [
        highlevel.make_signal_header(
            "ECG I", dimension="mV", sample_frequency=500, physical_min=-5, physical_max=5
        )
    ]
    highlevel.write_edf(str(path), [np.zeros(1000)], hdr)
    raw = bytearray(path.read_bytes())
    if records is not None:
        raw[236:244] = records.ljust(8)
    if duration is not None:
        raw[244:252] = duration.ljust(8)
    path.write_bytes(bytes(raw))
    return path


def test_edf_header_numbers_and_declared_records_are_checked(tmp_path: Path):
    ok = open_record(_edf(tmp_path / "ok.edf"))
    assert ok.fs_hz == 500.0 and ok.n_samples == 1000
    with pytest.raises(RecordError, match="data record duration '1e9' is not a plain decimal"):
        open_record(_edf(tmp_path / "d.edf", duration=b"1e9"))
    many = _edf(tmp_path / "many.edf", records=b"14000")
    assert many.stat().st_size < 4000
    with pytest.raises(RecordError, match="declares 14,000 data records, the file holds 2"):
        open_record(many)


# ---------------------------------------------------------------- memory and time


def test_sparse_wfdb_record_is_refused_before_anything_is_held(tmp_path: Path):
    """A 0-byte sparse signal file of 49 M samples: the header is honest about its size, the
    file's length matches, and nothing is on disk. Opening it is paged (nothing read); any
    use of the whole record is refused by the memory budget, not attempted."""
    (tmp_path / "sp.hea").write_text("sp 1 500 49000000\nsp.dat 16 200 16 0 0 0 0 I\n")
    with open(tmp_path / "sp.dat", "wb") as fh:
        fh.truncate(98_000_000)
    rec = open_record(tmp_path / "sp.hea")
    assert rec.n_samples == 49_000_000
    with pytest.raises(RecordError, match="above the 64 MB budget"):
        check_analysable(rec)
    with pytest.raises(RecordError, match="budget"):
        _ = rec.signal_mv


def test_nul_filled_csv_is_refused_at_its_first_chunk(tmp_path: Path, no_hang):
    nul = tmp_path / "nul.csv"
    with open(nul, "wb") as fh:
        fh.truncate(200_000_000)  # sparse: 200 MB of NUL bytes
    with pytest.raises(RecordError, match="a NUL byte at byte 0"):
        open_record(nul)


def test_budget_is_configurable(tmp_path: Path, monkeypatch: pytest.MonkeyPatch):
    rec = open_record(SAMPLE.with_suffix(".hea"))
    check_analysable(rec)  # 10 s x 12 leads: 0.23 MB
    monkeypatch.setenv(SIGNAL_BUDGET_ENV, "0.1")
    with pytest.raises(RecordError, match=r"above the 0 MB budget"):
        check_analysable(rec)
    csv = tmp_path / "long.csv"
    rows = "\n".join(f"{i / 500:.3f},0.1,0.2" for i in range(20_000))
    csv.write_text("time_s,I,II\n" + rows + "\n")
    with pytest.raises(RecordError, match="convert it to a binary format"):
        open_record(csv)


def test_csv_of_ten_thousand_columns_opens_in_linear_time(tmp_path: Path, no_hang):
    """10^5 columns: the no_hang alarm (5 s) fails the test if opening is quadratic again
    (134 s before); a linear reader takes about 1 s."""
    n = 100_000
    header = "time_s," + ",".join(f"c{i}" for i in range(n))
    even = ",".join("0.1" if i % 2 else "-0.2" for i in range(n))
    odd = ",".join("-0.2" if i % 2 else "0.1" for i in range(n))
    rows = [f"{t:.3f},{values}" for t, values in ((0.0, even), (0.002, odd), (0.004, even))]
    path = tmp_path / "wide.csv"
    path.write_text("\n".join([header, *rows]) + "\n")
    rec = open_record(path)
    assert rec.n_leads == n and rec.n_samples == 3 and rec.fs_hz == 500.0
    assert rec.lead_index("c99999") == n - 1
    assert len(rec.notes[0]) < 200  # the note names a dozen leads, not 10^5
    assert rec.window(0, 3)[1:, 1].tolist() == pytest.approx([-0.2, 0.1])
