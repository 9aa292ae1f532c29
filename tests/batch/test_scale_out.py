"""Scale-out: a real Dask cluster (``dask scheduler`` and ``dask worker`` processes, Dask's own
command line) loses a worker to SIGKILL mid-run; the batch still marks every record, and every
sidecar is the one a ``--workers 1`` run writes.

Outside references: Dask's scheduler reassigns the tasks of a lost worker (distributed
documentation, "worker failure"); the expected sidecars come from the in-process run of the
same records, and each is checked by the marks store (load_sidecar with the record's identity).
Records are synthetic (invented signals).
"""

from __future__ import annotations

import csv
import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

from reviewapp.batch.runner import run_batch
from reviewapp.core.io import find_records, open_record
from reviewapp.core.marks import load_sidecar, record_identity

from .conftest import add_synthetic

REPO = Path(__file__).resolve().parents[2]
N_RECORDS = 24
DASK = [sys.executable, "-m", "dask"]


def _env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    env["QT_QPA_PLATFORM"] = "offscreen"
    return env


def _comparable(side: Path) -> dict:
    """What a sidecar says about its record, without the times it was written at."""
    doc = json.loads(side.read_text())
    auto = dict(doc["automatic"])
    auto.pop("computed_at")
    cache = dict(doc["listing_cache"])
    cache.pop("computed_at_utc")
    return {"record": doc["record"], "automatic": auto, "cache": cache, "readings": doc["readings"]}


def _wait_for(test, timeout_s: float, what: str) -> None:
    deadline = time.monotonic() + timeout_s
    while not test():
        assert time.monotonic() < deadline, f"timed out waiting for {what}"
        time.sleep(0.02)


def test_killing_a_worker_mid_run_loses_no_record(tmp_path: Path) -> None:
    folder, single = tmp_path / "cluster", tmp_path / "single"
    for k in range(N_RECORDS):
        add_synthetic(folder, f"r{k:02d}", 55.0 + k, seed=k)
    shutil.copytree(folder, single)
    env = _env()
    sched_file = tmp_path / "scheduler.json"
    procs: list[subprocess.Popen] = []
    quiet = {"stdout": subprocess.DEVNULL, "stderr": subprocess.DEVNULL, "env": env}
    try:
        procs.append(
            subprocess.Popen(
                [*DASK, "scheduler", "--scheduler-file", str(sched_file), "--port", "0",
                 "--no-dashboard"],
                **quiet,
            )
        )  # fmt: skip
        _wait_for(sched_file.exists, 60, "the scheduler")
        _wait_for(lambda: "address" in sched_file.read_text(), 10, "the scheduler file")
        address = json.loads(sched_file.read_text())["address"]
        workers = [
            subprocess.Popen(
                [*DASK, "worker", "--scheduler-file", str(sched_file), "--nthreads", "1",
                 "--no-nanny", "--no-dashboard", "--name", f"w{i}"],
                **quiet,
            )
            for i in range(2)
        ]  # fmt: skip
        procs += workers
        summary = tmp_path / "summary.csv"
        batch = subprocess.Popen(
            [*(sys.executable, "-m", "reviewapp", "batch", str(folder)),
             *("--scheduler", address, "--summary", str(summary), "--worker-wait", "60")],
            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env,
        )  # fmt: skip
        procs.append(batch)
        # Kill one worker once the run is under way (some sidecars written, most not).
        _wait_for(lambda: len(list(folder.glob("*.marks.json"))) >= 3, 120, "the first records")
        assert batch.poll() is None, "the batch finished before a worker could be killed"
        written_before_kill = len(list(folder.glob("*.marks.json")))
        workers[0].send_signal(signal.SIGKILL)
        workers[0].wait(timeout=30)
        out, err = batch.communicate(timeout=300)
        assert batch.returncode == 0, err[-2000:]
    finally:
        for p in procs:
            if p.poll() is None:
                p.kill()
                p.wait(timeout=30)
    assert written_before_kill < N_RECORDS
    with open(summary, newline="") as fh:
        rows = {r["record"]: r for r in csv.DictReader(fh)}
    assert len(rows) == N_RECORDS
    # A record the dead worker had written before dying is current on the retry: skipped.
    assert all(r["outcome"] in ("done", "skipped") for r in rows.values()), rows
    assert f"{N_RECORDS} records:" in out and "0 failed" in out

    # The same records in-process, one at a time (what `--workers 1` runs).
    assert run_batch(find_records(single), workers=1).done == N_RECORDS
    for k in range(N_RECORDS):
        name = f"r{k:02d}"
        side = folder / f"{name}.marks.json"
        load_sidecar(side, record_identity(open_record(folder / f"{name}.hea")))
        assert _comparable(side) == _comparable(single / f"{name}.marks.json"), name
    assert not list(folder.glob("*.lock")) and not list(folder.glob(".*.tmp-*"))
