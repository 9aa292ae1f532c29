"""Batch throughput: records per second on 1 worker (in-process) and 2 workers (LocalCluster).

Records: synthetic 12-lead, 500 Hz, 10 s (reviewapp.core.synth; invented signals), written as
WFDB into a temporary folder; each run starts from a fresh copy without sidecars. Two rates
are printed per run: over the whole run (including, for 2 workers, starting the cluster) and
steady state (first finished record to last, which is what a large folder sees).

    python benchmarks/bench_batch.py [--records 60]

Goal: >= 30 records/s on 2 cores (steady state). Not a test: timings never gate CI. On a
shared machine the wall-clock rates depend on what else runs, so the CPU time each record
costs its worker is printed too, with the rate that would give on idle cores.
"""

from __future__ import annotations

import argparse
import shutil
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from reviewapp.batch.runner import run_batch
from reviewapp.core.io import find_records
from reviewapp.core.synth import SynthParams, generate
from reviewapp.core.synth.wfdb_out import write_synthetic


def make_records(folder: Path, n: int) -> None:
    for k in range(n):
        params = SynthParams(hr_bpm=50.0 + (k % 50), qt_ms=360.0 + (k % 9) * 10, seed=k)
        write_synthetic(generate(params, name=f"b{k:03d}"), folder, f"b{k:03d}")


def one_run(source: Path, workers: int) -> tuple[float, float, float, int]:
    """(records/s over the run, steady-state records/s, CPU ms per record, failures) on a
    fresh copy."""
    with tempfile.TemporaryDirectory(prefix="bench-batch-") as tmp:
        folder = Path(tmp) / "run"
        shutil.copytree(source, folder)
        paths = find_records(folder)
        stamps: list[float] = []
        t0 = time.perf_counter()
        result = run_batch(
            paths, workers=workers, progress=lambda o: stamps.append(time.perf_counter())
        )
        total = time.perf_counter() - t0
        steady = (len(stamps) - 1) / (stamps[-1] - stamps[0]) if len(stamps) > 1 else float("nan")
        cpu_ms = 1000 * sum(o.cpu_seconds for o in result.outcomes) / len(result.outcomes)
        return len(paths) / total, steady, cpu_ms, result.failed


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--records", type=int, default=60)
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="bench-src-") as tmp:
        src = Path(tmp) / "src"
        t = time.perf_counter()
        make_records(src, args.records)
        print(
            f"generated {args.records} records (10 s, 12 leads, 500 Hz) in "
            f"{time.perf_counter() - t:.1f} s"
        )
        rates = {}
        for workers in (1, 2):
            overall, steady, cpu_ms, failed = one_run(src, workers)
            rates[workers] = (overall, steady)
            print(
                f"{workers} worker(s): {overall:5.1f} records/s overall, {steady:5.1f} records/s "
                f"steady state, {cpu_ms:.0f} ms CPU per record (capacity on {workers} idle "
                f"core(s): {1000 * workers / cpu_ms:.0f} records/s), {failed} failed"
            )
        print(
            f"ratio 2-worker/1-worker: {rates[2][0] / rates[1][0]:.2f} overall, "
            f"{rates[2][1] / rates[1][1]:.2f} steady state (goal >= 30 records/s on 2 cores)"
        )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
