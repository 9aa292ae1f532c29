"""The window appears before the signal stack loads (launch speed guard, no timing)."""

from __future__ import annotations

import os
import subprocess
import sys

_PROBE = """
import sys, tempfile, os
from PySide6 import QtCore
from reviewapp.ui.app import create_app
from reviewapp.ui.main_window import MainWindow
app = create_app()
ini = os.path.join(tempfile.mkdtemp(), "s.ini")
w = MainWindow(QtCore.QSettings(ini, QtCore.QSettings.Format.IniFormat))
w.show()
app.processEvents()
print("LOADED:" + ",".join(sorted(m for m in ("scipy.signal", "wfdb", "pandas", "dask")
                                   if m in sys.modules)))
"""


def test_window_shows_without_loading_scipy_signal_wfdb_or_dask() -> None:
    # SciPy's signal package alone costs ~1 s to import on this class of machine; the engine
    # loads it after the record is on screen (main_window.analyse), not before the window.
    env = dict(os.environ, QT_QPA_PLATFORM="offscreen")
    out = subprocess.run(
        [sys.executable, "-c", _PROBE],
        capture_output=True,
        text=True,
        timeout=120,
        env=env,
        check=True,
    ).stdout
    line = next(line for line in out.splitlines() if line.startswith("LOADED:"))
    assert line == "LOADED:", f"loaded before the window was up: {line[7:]}"
