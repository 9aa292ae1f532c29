"""Shared fixtures. Real reference records are read in place from ../shared/data."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

REPO = Path(__file__).resolve().parents[1]
_SHARED = Path(os.environ.get("REVIEWAPP_SHARED_DATA", REPO.parent / "shared" / "data"))


@pytest.fixture(scope="session")
def shared_data() -> Path:
    """The folder of open reference ECG records (PhysioNet: LUDB, QTDB, MIT-BIH, PTB).

    Skips with a clear reason where it is absent; set REVIEWAPP_SHARED_DATA to point elsewhere.
    """
    if not _SHARED.is_dir():
        pytest.skip(
            f"reference ECG data not found at {_SHARED} (expected ../shared/data beside the "
            "checkout, or REVIEWAPP_SHARED_DATA); these checks need the open PhysioNet records"
        )
    return _SHARED


@pytest.fixture(scope="session")
def sample_records_dir() -> Path:
    return REPO / "sample_records"


@pytest.fixture(scope="session", autouse=True)
def _shared_data_stays_untouched():
    """Fail the run if any test wrote into the reference data (sidecars, locks, annotations).

    The open records are read in place and never changed; readings made in tests belong in
    tmp_path copies.
    """
    if not _SHARED.is_dir():
        yield
        return

    def listing() -> set[str]:
        return {str(p.relative_to(_SHARED)) for p in _SHARED.rglob("*") if p.is_file()}

    before = listing()
    yield
    added = sorted(listing() - before)
    assert not added, f"tests wrote into {_SHARED}: {added[:10]}"
