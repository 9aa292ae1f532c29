"""A folder of real and synthetic records plus corrupt files, built in tmp at test time.

Real records come from ../shared/data via the ``shared_data`` fixture (copied into tmp, never
into the repository): LUDB 1, 2, 101 (12 leads, 500 Hz, 10 s) and a 10 s window of QTDB sel100
(2 leads, 250 Hz). Synthetic records (invented signals with known intervals) come from
reviewapp.core.synth.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pytest
import wfdb

from reviewapp.core.synth import SynthParams, generate
from reviewapp.core.synth.wfdb_out import write_synthetic

LUDB_RECORDS = ("1", "2", "101")
SYNTH = {"syn60": 60.0, "syn75": 75.0}


def add_synthetic(folder: Path, name: str, hr_bpm: float, seed: int = 0) -> Path:
    syn = generate(SynthParams(hr_bpm=hr_bpm, duration_s=10.0, seed=seed), name=name)
    return write_synthetic(syn, folder, name)


def qtdb_window(shared: Path, folder: Path, record: str = "sel100", seconds: float = 10.0) -> Path:
    src = wfdb.rdrecord(str(shared / "qtdb" / record), sampto=round(seconds * 250.0))
    wfdb.wrsamp(
        f"{record}w",
        fs=src.fs,
        units=list(src.units),
        sig_name=list(src.sig_name),
        p_signal=np.asarray(src.p_signal, dtype=np.float64),
        fmt=["16"] * src.n_sig,
        write_dir=str(folder),
    )
    return folder / f"{record}w.hea"


@pytest.fixture
def record_folder(tmp_path: Path, shared_data: Path) -> Path:
    folder = tmp_path / "worklist"
    (folder / "site-b").mkdir(parents=True)
    for r in LUDB_RECORDS:
        for ext in (".hea", ".dat"):
            shutil.copy(shared_data / "ludb" / f"{r}{ext}", folder / f"{r}{ext}")
    qtdb_window(shared_data, folder / "site-b")
    for k, (name, hr) in enumerate(SYNTH.items()):
        add_synthetic(folder / "site-b", name, hr, seed=k)
    # Corrupt: a header of garbage, and a header whose signal file is cut short.
    (folder / "garbage.hea").write_bytes(b"\x00\x13 not a header \xff\n")
    shutil.copy(shared_data / "ludb" / "2.hea", folder / "cut.hea")
    (folder / "cut.hea").write_text((folder / "cut.hea").read_text().replace("2.dat", "cut.dat"))
    (folder / "cut.dat").write_bytes((shared_data / "ludb" / "2.dat").read_bytes()[:1000])
    return folder


GOOD = {"1", "2", "101", "sel100w", "syn60", "syn75"}
BAD = {"garbage", "cut"}
