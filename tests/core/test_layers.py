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


def _module_level_imports(package_dir, prefix: str) -> dict[str, set[str]]:
    """Each module's imports of ``prefix`` modules made when it is loaded (module level; an
    import inside a function or an ``if TYPE_CHECKING`` block runs later or never)."""
    import ast

    graph: dict[str, set[str]] = {}
    for path in sorted(package_dir.glob("*.py")):
        deps: set[str] = set()
        for node in ast.parse(path.read_text(encoding="utf-8")).body:
            if isinstance(node, ast.ImportFrom) and (node.module or "").startswith(prefix):
                deps.add(node.module or "")
            elif isinstance(node, ast.Import):
                deps.update(a.name for a in node.names if a.name.startswith(prefix))
        graph[f"{prefix}.{path.stem}"] = deps
    return graph


def test_no_import_cycle_between_ui_modules() -> None:
    """The window is composition: its views import downwards only, never in a circle."""
    from pathlib import Path

    import reviewapp.ui

    graph = _module_level_imports(Path(reviewapp.ui.__file__).parent, "reviewapp.ui")
    assert len(graph) > 20
    state: dict[str, int] = {}
    cycles: list[list[str]] = []

    def visit(mod: str, path: list[str]) -> None:
        state[mod] = 1
        for dep in sorted(graph.get(mod, ())):
            if state.get(dep) == 1:
                cycles.append([*path[path.index(dep) :], dep])
            elif dep not in state:
                visit(dep, [*path, dep])
        state[mod] = 2

    for mod in graph:
        if mod not in state:
            visit(mod, [mod])
    assert cycles == []
