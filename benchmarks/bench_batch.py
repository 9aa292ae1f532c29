"""Batch throughput: records per second on 1 worker (in-process) and 2 workers (LocalCluster).

Records: synthetic 12-lead, 500 Hz, 10 s (reviewapp.core.synth; invented signals), written as
WFDB into a temporary folder; each run starts from a fresh copy without sidecars. The rate is
records / (run time - start-up): start-up (starting the cluster, importing the pipeline on
each worker) is printed separately, as a large folder pays it once.

    OMP_NUM_THREADS=1 python benchmarks/bench_batch.py [--records 120]

Goal: >= 30 records/s on 2 cores. Not a test: timings never gate CI. On a shared machine the
wall-clock rates depend on what else runs (the load average is printed), so the CPU time each
record costs its worker is printed too, with the rate that would give on idle cores.
"""

from __future__ import annotations

import argparse
import os
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


def one_run(source: Path, workers: int) -> dict[str, float]:
    """Rates and costs of one run on a fresh copy of ``source``."""
    with tempfile.TemporaryDirectory(prefix="bench-batch-") as tmp:
        folder = Path(tmp) / "run"
        shutil.copytree(source, folder)
        paths = find_records(folder)
        cpu0 = os.times()
        result = run_batch(paths, workers=workers)
        cpu1 = os.times()
        n = len(result.outcomes)
        return {
            "rate": result.records_per_second,
            "startup_s": result.startup_seconds,
            "overall": n / result.seconds,
            "cpu_ms": 1000 * sum(o.cpu_seconds for o in result.outcomes) / n,
            # this process alone: the whole in-process run, or the client + scheduler
            "main_cpu_ms": 1000 * (cpu1.user + cpu1.system - cpu0.user - cpu0.system) / n,
            "failed": result.failed,
        }


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--records", type=int, default=120)
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="bench-src-") as tmp:
        src = Path(tmp) / "src"
        t = time.perf_counter()
        make_records(src, args.records)
        print(
            f"generated {args.records} records (10 s, 12 leads, 500 Hz) in "
            f"{time.perf_counter() - t:.1f} s; OMP_NUM_THREADS={os.environ.get('OMP_NUM_THREADS')}"
        )
        runs = {}
        for workers in (1, 2):
            load = os.getloadavg()[0]
            r = runs[workers] = one_run(src, workers)
            print(
                f"{workers} worker(s): {r['rate']:5.1f} records/s after start-up "
                f"({r['overall']:.1f} over the whole run; start-up {r['startup_s']:.2f} s), "
                f"{r['cpu_ms']:.0f} ms worker CPU per record (idle-core capacity "
                f"{1000 * workers / r['cpu_ms']:.0f} records/s), {r['main_cpu_ms']:.1f} ms CPU "
                f"per record in the calling process, load average {load:.1f} on "
                f"{os.cpu_count()} cores, {r['failed']:.0f} failed"
            )
        print(
            f"ratio 2-worker/1-worker: {runs[2]['rate'] / runs[1]['rate']:.2f} after start-up "
            f"(goal >= 30 records/s on 2 cores: "
            f"{'met' if runs[2]['rate'] >= 30 else 'NOT met'} as measured)"
        )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
