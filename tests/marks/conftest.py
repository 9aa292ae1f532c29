"""Fixtures for the marks tests: records backed by a file, and a fast scratch folder.

The records here are invented signals, used only as something to hang a sidecar on (the
storage logic under test never looks at the samples); references come from elsewhere.
"""

from __future__ import annotations

import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path

import numpy as np
import pytest

from reviewapp.core.marks import AutoBeat, AutomaticMarks, FiducialTimes, RepresentativeTimes
from reviewapp.core.record import Record, record_from_array

FS_HZ = 500.0


def make_record(folder: Path, name: str = "rec", content: bytes = b"demo signal file\n") -> Record:
    """A small Record whose source file is ``folder/<name>.csv`` (so fingerprints hash a file)."""
    src = folder / f"{name}.csv"
    if not src.exists():
        src.write_bytes(content)
    sig = np.zeros((2000, 2), dtype=np.float32)
    return record_from_array(sig, FS_HZ, ["I", "II"], name=name, source_path=src)


def make_automatic(version: str = "0.1.0", shift_s: float = 0.0) -> AutomaticMarks:
    rep = FiducialTimes(-0.15, -0.06, -0.044 + shift_s, 0.052, 0.35 + shift_s)
    beats = tuple(
        AutoBeat(r, "dominant", FiducialTimes(r - 0.15, r - 0.06, r - 0.044, r + 0.052, r + 0.35))
        for r in (0.6, 1.4, 2.2, 3.0)
    )
    return AutomaticMarks(
        version, "2026-01-01T00:00:00.000000Z", RepresentativeTimes(rep, (("I", rep),)), beats
    )


def _scratch_parent() -> str | None:
    # tmpfs when there is one: fsync is then cheap, keeping hundreds of durable saves fast.
    shm = Path("/dev/shm")
    return str(shm) if shm.is_dir() and shutil.disk_usage(shm).free > 200e6 else None


@pytest.fixture
def scratch() -> Iterator[Path]:
    d = Path(tempfile.mkdtemp(prefix="reviewapp-marks-", dir=_scratch_parent()))
    try:
        yield d
    finally:
        shutil.rmtree(d, ignore_errors=True)


def scratch_dir() -> Path:
    """Same as the fixture, for hypothesis tests (which cannot take function fixtures)."""
    return Path(tempfile.mkdtemp(prefix="reviewapp-marks-", dir=_scratch_parent()))


class Kit:
    """Helpers handed to tests (importlib import mode: tests cannot import this conftest)."""

    fs_hz = FS_HZ
    make_record = staticmethod(make_record)
    make_automatic = staticmethod(make_automatic)
    scratch_dir = staticmethod(scratch_dir)


@pytest.fixture(scope="session")
def kit() -> Kit:
    return Kit()
