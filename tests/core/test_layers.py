"""The core layer never imports Qt (DEVELOPERS.md, 'Layers')."""

from __future__ import annotations

import subprocess
import sys

_PROBE = """
import importlib, pkgutil, sys
import reviewapp.core as core
for m in pkgutil.walk_packages(core.__path__, 'reviewapp.core.'):
    if m.name.endswith('__main__'):
        continue
    importlib.import_module(m.name)
qt = sorted(n for n in sys.modules if n.split('.')[0] in ('PySide6', 'PyQt5', 'PyQt6', 'pyqtgraph'))
print('QT:' + ','.join(qt))
"""


def test_core_imports_no_qt() -> None:
    out = subprocess.run(
        [sys.executable, "-c", _PROBE], capture_output=True, text=True, timeout=120, check=True
    ).stdout
    line = next(line for line in out.splitlines() if line.startswith("QT:"))
    assert line == "QT:", f"core pulled in Qt modules: {line[3:]}"
