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


LUDB_LEAD_NAMES = ("I", "II", "III", "aVR", "aVL", "aVF", "V1", "V2", "V3", "V4", "V5", "V6")


class LudbAnalyses:
    """One engine analysis per LUDB record, made on first use and kept for the whole run, so
    the accuracy checks of several test modules share it (``ludb_analyses`` fixture)."""

    def __init__(self, root: Path) -> None:
        self.root = root
        self._cache: dict[str, object] = {}

    def names(self) -> list[str]:
        return sorted((p.stem for p in self.root.glob("*.hea")), key=lambda s: (len(s), s))

    def __getitem__(self, name: str):
        if name not in self._cache:
            import warnings

            import numpy as np
            import wfdb

            from reviewapp.core.engine import analyse
            from reviewapp.core.record import record_from_array

            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                sig = wfdb.rdrecord(str(self.root / name))
                x = np.asarray(sig.p_signal, dtype=np.float32)
                rec = record_from_array(x, float(sig.fs), LUDB_LEAD_NAMES, name=name)
                self._cache[name] = analyse(rec)
        return self._cache[name]


@pytest.fixture(scope="session")
def ludb_analyses(shared_data: Path) -> LudbAnalyses:
    """LUDB records (Kalyakulina et al., IEEE Access 2020) analysed once per test run."""
    return LudbAnalyses(shared_data / "ludb")


@pytest.fixture(scope="session", autouse=True)
def _qt_torn_down_before_python():
    """Close and delete every Qt window while the application still exists.

    Widgets and pyqtgraph views left for the interpreter's own teardown are destroyed in no
    particular order, after their C++ parents may be gone; PySide6 and pyqtgraph can crash
    there (pyqtgraph's package notes say so), turning a green run into a failed process.
    """
    yield
    import sys

    if "PySide6.QtWidgets" not in sys.modules:
        return
    import gc

    from PySide6 import QtCore, QtWidgets

    app = QtWidgets.QApplication.instance()
    if app is None:
        return
    app.closeAllWindows()
    for w in QtWidgets.QApplication.topLevelWidgets():
        w.deleteLater()
    QtCore.QCoreApplication.sendPostedEvents(None, QtCore.QEvent.Type.DeferredDelete)
    app.processEvents()
    gc.collect()
