"""A cheaper answer to the question PySide6 asks of every module imported after it.

For its optional ``from __feature__ import ...`` switches, PySide6 6.x records, for each newly
imported module, whether the module's source mentions "PySide6": shibokensupport's
``feature._mod_uses_pyside`` calls ``inspect.getsource`` on it, which decodes the whole file,
splits it into lines and keeps them in ``linecache``. Over the ~900 modules the window and the
first record import (pyqtgraph, numpy, pandas via wfdb) that is ~0.2 s of launch on a 2-core
machine (measured with cProfile and benchmarks/bench_ui.py; the same cost is described in
napari issue #8584).

``install()`` replaces that check with one giving the same answer for a module with a plain
``.py`` file: search the file's bytes for b"PySide6" ("PySide6" is ASCII, so a match in the
bytes of an ASCII-compatible source is a match in its text). Anything else (no file, a
compiled module, a module in a zip) still goes to PySide6's own check. Without the private
function (another PySide6 release) nothing is replaced.
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from types import ModuleType

_MARKER = "_reviewapp_raw_source_check"


def install() -> bool:
    """Replace PySide6's per-import source check; True when it is (now or already) replaced."""
    feature = sys.modules.get("shibokensupport.feature")
    original = getattr(feature, "_mod_uses_pyside", None)
    if feature is None or not callable(original):
        return False
    if getattr(original, _MARKER, False):
        return True
    vars(feature)["_mod_uses_pyside"] = raw_source_check(original)
    return True


def raw_source_check(original: Callable[[ModuleType], bool]) -> Callable[[ModuleType], bool]:
    """``original``'s answer for ``module``, from the raw bytes of its ``.py`` file when it has
    one."""

    def mod_uses_pyside(module: ModuleType) -> bool:
        path = getattr(module, "__file__", None)
        if isinstance(path, str) and path.endswith(".py"):
            try:
                with open(path, "rb") as f:
                    return b"PySide6" in f.read()
            except OSError:
                pass
        return bool(original(module))

    setattr(mod_uses_pyside, _MARKER, True)
    return mod_uses_pyside
