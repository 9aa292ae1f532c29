"""Mutation check: does some test fail when a normal limit or a QTc formula constant changes?

Each mutant changes one thing in a copy of the repository and runs the tests there:

- every bound of every row of ``reviewapp/core/measure/limits.py`` (``LIMITS``): moved up by
  one printed step (1 ms, 1 bpm, 1 degree, 0.01 mV), moved down by one step, and its
  inclusive/exclusive side flipped (``low_is_normal`` / ``high_is_normal``);
- every constant of the four QTc formulas in ``reviewapp/core/measure/qtc.py`` (Bazett's
  exponent 1/2, Fridericia's 1/3, Framingham's 154 ms and its 1 s reference, Hodges'
  1.75 ms/bpm and 60 bpm, the ms-to-s and RR-to-HR conversions).

A mutant is caught when the tests fail. First the tests aimed at these tables run (fast);
a mutant they miss is run against the wider set (``tests/measure``, ``tests/report``,
``tests/test_cli.py``) before it is reported as surviving. The unmutated copy must pass.

Run (about 15 minutes on 2 cores; not part of CI)::

    .venv/bin/python benchmarks/mutation_check.py            # this checkout
    .venv/bin/python benchmarks/mutation_check.py --repo DIR # another tree (e.g. an old commit)

Exit code 0 when every mutant is caught, 1 when some survive (they are listed).
"""

from __future__ import annotations

import argparse
import dataclasses
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
SHARED = REPO.parent / "shared" / "data"
STEP = {"ms": 1.0, "bpm": 1.0, "deg": 1.0, "mV": 0.01}
FAST = ["tests/measure/test_limit_thresholds.py", "tests/measure/test_qtc.py"]
WIDE = ["tests/measure", "tests/report", "tests/test_cli.py"]
QTC_FILE = "reviewapp/core/measure/qtc.py"
LIMITS_FILE = "reviewapp/core/measure/limits.py"
# (name, text in qtc.py, replacement): each a small change of one published constant.
QTC_MUTANTS = (
    ("Bazett exponent 1/2 -> 0.51", "qt_ms / math.sqrt(rr_s)", "qt_ms / rr_s**0.51"),
    ("Fridericia exponent 1/3 -> 1/3.1", "rr_s ** (1.0 / 3.0)", "rr_s ** (1.0 / 3.1)"),
    ("Framingham 154 ms -> 150 ms", "154.0 * (1.0 - rr_s)", "150.0 * (1.0 - rr_s)"),
    ("Framingham reference 1 s -> 1.02 s", "154.0 * (1.0 - rr_s)", "154.0 * (1.02 - rr_s)"),
    ("Hodges 1.75 ms/bpm -> 1.70", "1.75 * (hr_bpm - 60.0)", "1.70 * (hr_bpm - 60.0)"),
    ("Hodges reference 60 bpm -> 61", "1.75 * (hr_bpm - 60.0)", "1.75 * (hr_bpm - 61.0)"),
    ("Hodges HR = 60000/RR -> 61000/RR", "60000.0 / rr_ms", "61000.0 / rr_ms"),
    ("RR ms -> s divisor 1000 -> 1010", "return rr_ms / 1000.0", "return rr_ms / 1010.0"),
)


@dataclasses.dataclass
class Result:
    name: str
    caught: bool
    by: str  # "fast", "wide" or "" (survived)
    seconds: float


def _limit_mutants(repo: Path) -> list[tuple[str, int, dict]]:
    """(name, row index, dataclasses.replace arguments) for every bound of every row."""
    sys.path.insert(0, str(repo))
    try:
        import importlib

        for mod in [m for m in sys.modules if m == "reviewapp" or m.startswith("reviewapp.")]:
            del sys.modules[mod]
        limits = importlib.import_module("reviewapp.core.measure.limits")
    finally:
        sys.path.pop(0)
    out = []
    for i, row in enumerate(limits.LIMITS):
        who = row.who() or "all"
        step = STEP[row.unit]
        for side in ("low", "high"):
            bound = getattr(row, side)
            if bound is None:
                continue
            flag = f"{side}_is_normal"
            here = f"{row.quantity} [{who}] {side} {bound:g}"
            out.append((f"{here} +{step:g}", i, {side: round(bound + step, 2)}))
            out.append((f"{here} -{step:g}", i, {side: round(bound - step, 2)}))
            out.append((f"{here} inclusive flipped", i, {flag: not getattr(row, flag)}))
    return out


def _copy(repo: Path, dest: Path) -> None:
    def ignore(_dir: str, names: list[str]) -> set[str]:
        return {n for n in names if n in {".venv", ".git", "__pycache__", ".ruff_cache"}}

    shutil.copytree(repo, dest, ignore=ignore)


def _run(copy: Path, tests: list[str], env: dict[str, str]) -> bool:
    """True when the tests pass (the mutant survived them)."""
    cmd = [sys.executable, "-m", "pytest", "-x", "-q", "-p", "no:cacheprovider", "-n", "0", *tests]
    proc = subprocess.run(cmd, cwd=copy, env=env, capture_output=True, text=True)
    return proc.returncode == 0


def _check(copy: Path, name: str, env: dict[str, str]) -> Result:
    t0 = time.perf_counter()
    if not _run(copy, FAST, env):
        return Result(name, True, "fast", time.perf_counter() - t0)
    if WIDE and not _run(copy, WIDE, env):
        return Result(name, True, "wide", time.perf_counter() - t0)
    return Result(name, False, "", time.perf_counter() - t0)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--repo", type=Path, default=REPO, help="tree to mutate (default: this one)")
    ap.add_argument("--only", default="", help="run only mutants whose name contains this")
    ap.add_argument("--fast", nargs="*", help=f"first test paths (default {' '.join(FAST)})")
    ap.add_argument("--wide", nargs="*", help=f"then these (default {' '.join(WIDE)}; none: skip)")
    args = ap.parse_args(argv)
    if args.fast is not None:
        FAST[:] = args.fast
    if args.wide is not None:
        WIDE[:] = args.wide
    repo = args.repo.resolve()
    env = dict(os.environ, QT_QPA_PLATFORM="offscreen", OMP_NUM_THREADS="1")
    if SHARED.is_dir():
        env.setdefault("REVIEWAPP_SHARED_DATA", str(SHARED))
    fast = [t for t in FAST if (repo / t).exists()]
    FAST[:] = fast or ["tests/measure"]
    results: list[Result] = []
    with tempfile.TemporaryDirectory(prefix="mutation-") as tmp:
        copy = Path(tmp) / "repo"
        _copy(repo, copy)
        probe = subprocess.run(
            [sys.executable, "-c", "import reviewapp; print(reviewapp.__file__)"],
            cwd=copy, env=env, capture_output=True, text=True,
        )  # fmt: skip
        if not probe.stdout.strip().startswith(str(copy)):
            print(f"the copy is not the package imported: {probe.stdout or probe.stderr}")
            return 2
        if not _run(copy, FAST, env) or (WIDE and not _run(copy, WIDE, env)):
            print("the unmutated copy fails its tests: fix them before checking mutants")
            return 2
        limits_src = (copy / LIMITS_FILE).read_text(encoding="utf-8")
        qtc_src = (copy / QTC_FILE).read_text(encoding="utf-8")
        for name, index, change in _limit_mutants(repo):
            if args.only not in name:
                continue
            patch = (
                "\n\n# --- mutant ---\nimport dataclasses as _dc\n"
                f"LIMITS = tuple(_dc.replace(_r, **{change!r}) if _i == {index} else _r "
                "for _i, _r in enumerate(LIMITS))\n"
            )
            (copy / LIMITS_FILE).write_text(limits_src + patch, encoding="utf-8")
            results.append(_check(copy, name, env))
            print(_line(results[-1]), flush=True)
        (copy / LIMITS_FILE).write_text(limits_src, encoding="utf-8")
        for name, old, new in QTC_MUTANTS:
            if args.only not in name:
                continue
            if old not in qtc_src:
                print(f"cannot apply {name!r}: {old!r} not in {QTC_FILE}")
                return 2
            (copy / QTC_FILE).write_text(qtc_src.replace(old, new, 1), encoding="utf-8")
            results.append(_check(copy, f"QTc {name}", env))
            print(_line(results[-1]), flush=True)
        (copy / QTC_FILE).write_text(qtc_src, encoding="utf-8")
    survived = [r for r in results if not r.caught]
    fast_n = sum(r.by == "fast" for r in results)
    print(
        f"\n{len(results)} mutants: {len(results) - len(survived)} caught "
        f"({fast_n} by the limit and QTc tests, {len(results) - len(survived) - fast_n} only "
        f"by the wider tests), {len(survived)} not caught by any test"
    )
    for r in survived:
        print(f"  NOT CAUGHT: {r.name}")
    return 1 if survived else 0


def _line(r: Result) -> str:
    state = f"caught ({r.by})" if r.caught else "NOT CAUGHT"
    return f"{state:16s} {r.seconds:5.1f} s  {r.name}"


if __name__ == "__main__":
    raise SystemExit(main())
