"""Study table throughput: records per second on 1 worker (in-process) and 2 workers (Dask).

Records: synthetic 12-lead, 500 Hz, 10 s ECGs (reviewapp.core.synth; invented signals) of an
invented study, 20 per subject (five day -1 ECGs at different rates, a pre-dose triplicate and
four post-dose triplicates), written as WFDB with `# subject:` and `# timepoint:` header
comments. As in a real study every record has a marks file: the batch step pre-marks the whole
folder first (the peer measured in the same run: `reviewapp batch` on 2 workers), then a
first reader signs 30 % of the records off and a second reader corrects and signs 5 %.

    OMP_NUM_THREADS=1 python benchmarks/bench_study.py [--records 1000]

Goal: >= 30 records/s on 2 cores for the table. Not a test: timings never gate CI. On a shared
machine wall-clock rates depend on what else runs (the load average is printed), so the CPU
time each record costs its worker is printed too, with the rate that gives on idle cores.
The 1- and 2-worker tables are compared value by value (they must be identical).
"""

from __future__ import annotations

import argparse
import functools
import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from reviewapp.batch.runner import run_batch
from reviewapp.core.io import find_records, open_record
from reviewapp.core.marks import MarksStore
from reviewapp.core.record import SubjectFacts
from reviewapp.core.study.analysis import analyse_study
from reviewapp.core.study.table import records_csv_text
from reviewapp.core.study.task import study_records
from reviewapp.core.synth import SynthParams, generate
from reviewapp.core.synth.wfdb_out import write_synthetic

TIMEPOINTS = (
    *((f"day -1 {k}", 1, 48.0 + 9.0 * k) for k in range(5)),
    ("pre-dose", 3, 0.0),
    *((f"post-dose {h} h", 3, 0.0) for h in (1, 2, 4, 8)),
)


def make_study(folder: Path, n: int) -> None:
    k = 0
    subject = 0
    while k < n:
        subject += 1
        base_hr = 58.0 + (subject * 7) % 17
        for label, reps, hr in TIMEPOINTS:
            for r in range(reps):
                if k >= n:
                    return
                rate = hr or base_hr + r
                rr_s = 60.0 / rate
                qt = 405.0 * rr_s ** (0.30 + 0.01 * (subject % 8))
                facts = SubjectFacts(
                    subject_id=f"B-{subject:03d}", comments=(f"timepoint: {label}",)
                )
                params = SynthParams(
                    hr_bpm=rate,
                    qt_ms=qt / rr_s ** (1 / 3),
                    qt_rate_adapt=True,
                    rr_sd_ms=15.0,
                    seed=k,
                )
                name = f"b{k:04d}"
                hea = write_synthetic(generate(params, name=name, subject=facts), folder, name)
                (folder / f"{name}.truth.json").unlink()
                del hea
                k += 1


def add_readings(folder: Path) -> tuple[int, int]:
    """reader1 signs 30 % of the records off; reader2 moves T end and signs 5 %."""
    first = second = 0
    for i, hea in enumerate(sorted(folder.glob("*.hea"))):
        if i % 10 >= 3:
            continue
        record = open_record(hea)
        with MarksStore.open(record, "reader1", role="first") as store:
            store.do(store.edits.sign_off())
        first += 1
        if i % 20 == 0:
            with MarksStore.open(record, "reader2", role="second") as store:
                t_off = store.automatic.representative.marks.t_off
                store.do(store.edits.move_fiducial("t_off", t_off + 0.012))
                store.do(store.edits.sign_off())
            second += 1
    return first, second


def timed(paths: list[Path], workers: int, task=None) -> dict:  # type: ignore[no-untyped-def]
    load = os.getloadavg()[0]
    cpu0 = os.times()
    kw = {} if task is None else {"task": task}
    result = run_batch(paths, workers=workers, **kw)
    cpu1 = os.times()
    n = len(result.outcomes)
    return {
        "result": result,
        "rate": result.records_per_second,
        "startup_s": result.startup_seconds,
        "overall": n / result.seconds,
        "main_cpu_ms": 1000 * (cpu1.user + cpu1.system - cpu0.user - cpu0.system) / n,
        "load": load,
    }


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--records", type=int, default=1000)
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="bench-study-") as tmp:
        folder = Path(tmp) / "study"
        folder.mkdir()
        t = time.perf_counter()
        make_study(folder, args.records)
        print(
            f"generated {args.records} records in {time.perf_counter() - t:.1f} s "
            f"(OMP_NUM_THREADS={os.environ.get('OMP_NUM_THREADS')})"
        )
        paths = find_records(folder)
        peer = timed(paths, 2)
        print(
            f"peer, batch pre-marking on 2 workers: {peer['rate']:.1f} records/s after start-up "
            f"({peer['result'].failed} failed, load average {peer['load']:.1f})"
        )
        t = time.perf_counter()
        first, second = add_readings(folder)
        took = time.perf_counter() - t
        print(f"readings: {first} signed by reader1, {second} double-read ({took:.1f} s)")
        task = functools.partial(study_records)
        runs = {}
        for workers in (1, 2):
            r = runs[workers] = timed(paths, workers, task)
            rows = r["result"].outcomes
            cpu_ms = 1000 * sum(o.cpu_seconds for o in rows) / max(1, len(rows))
            print(
                f"study table, {workers} worker(s): {r['rate']:5.1f} records/s after start-up "
                f"({r['overall']:.1f} over the whole run; start-up {r['startup_s']:.2f} s), "
                f"{r['main_cpu_ms']:.1f} ms CPU per record in the calling process, load average "
                f"{r['load']:.1f} on {os.cpu_count()} cores, "
                f"{sum(1 for o in rows if o.outcome == 'failed')} failed; {cpu_ms:.0f} ms worker "
                f"CPU per record (idle-core capacity {1000 * workers / cpu_ms:.0f} records/s)"
            )
        same = records_csv_text(runs[1]["result"].outcomes) == records_csv_text(
            runs[2]["result"].outcomes
        )
        print(f"1-worker and 2-worker tables identical: {same}")
        t = time.perf_counter()
        analysis = analyse_study(list(runs[2]["result"].outcomes))
        print(
            f"analysis of {len(analysis.used)} ECGs, {len(analysis.subjects)} subjects: "
            f"{time.perf_counter() - t:.2f} s"
        )
        rate2 = runs[2]["rate"]
        print(
            f"ratio study/batch on 2 workers: {rate2 / peer['rate']:.2f}; ratio 2-worker/1-worker "
            f"{rate2 / runs[1]['rate']:.2f} (goal >= 30 records/s on 2 cores: "
            f"{'met' if rate2 >= 30 else 'NOT met'} as measured)"
        )
        return 0 if same else 1


if __name__ == "__main__":
    raise SystemExit(main())
