"""Run the batch step over many records: in-process, on a local Dask cluster, or on a remote one.

Workers receive paths, never arrays: each opens its records, analyses them and writes the
sidecars itself, returning only small ``RecordOutcome``s. Records go out in small chunks
(``task.process_records``): one Dask task per record of ~40 ms would spend a noticeable share
of the two cores on scheduling, and within a chunk each sidecar's fsync waits overlap the
analysis of the next record. Futures are collected as they finish (``_completed``), so progress
moves as chunks finish, in whatever order; a worker lost mid-run costs only a retry of its
chunk on another worker, and a cluster left with no worker stops the batch with a message
instead of a wait without end.
"""

from __future__ import annotations

import logging
import math
import os
import time
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from reviewapp.batch.task import DONE, FAILED, SKIPPED, RecordOutcome, process_records
from reviewapp.core.errors import printable
from reviewapp.core.log import capture_warnings, log_path

ProgressFn = Callable[[RecordOutcome], None]
# A chunk task: (paths, force) -> one outcome per path, in order (default: the batch step).
ChunkTask = Callable[[list[str], bool], list]


@dataclass(frozen=True)
class BatchResult:
    """Every record's outcome (in input order) and the wall time of the run.

    ``seconds`` is the whole run; ``startup_seconds`` the part of it spent before the first
    record started (starting the cluster, importing the pipeline), so that records per second
    of a large folder is ``len(outcomes) / (seconds - startup_seconds)``.
    """

    outcomes: tuple[RecordOutcome, ...]
    seconds: float
    workers: int
    startup_seconds: float = 0.0

    def count(self, outcome: str) -> int:
        return sum(1 for o in self.outcomes if o.outcome == outcome)

    @property
    def done(self) -> int:
        return self.count(DONE)

    @property
    def skipped(self) -> int:
        return self.count(SKIPPED)

    @property
    def failed(self) -> int:
        return self.count(FAILED)

    @property
    def records_per_second(self) -> float:
        """Throughput once started (start-up excluded); nan for an empty run."""
        busy = self.seconds - self.startup_seconds
        return len(self.outcomes) / busy if self.outcomes and busy > 0 else float("nan")


def default_workers() -> int:
    return max(1, os.cpu_count() or 1)


# How long an existing cluster may be without any worker (none joined yet, or all lost) before
# the batch stops with a clear message instead of waiting forever.
WORKER_WAIT_S = 60.0


def run_batch(
    paths: Sequence[Path],
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    force: bool = False,
    progress: ProgressFn | None = None,
    processes: bool = True,
    task: ChunkTask = process_records,
    worker_wait_s: float = WORKER_WAIT_S,
) -> BatchResult:
    """Process ``paths``; never raises for a bad record (its outcome carries the error).

    workers: worker count for a local cluster (default: the machine's cores); 1 = in-process,
        no cluster. Ignored with ``scheduler``.
    scheduler: address of an existing Dask scheduler (``tcp://host:8786``).
    processes: local cluster of processes (default) or of threads.
    task: what each worker runs on a chunk of paths (picklable; e.g. the study table's
        ``study_records``); its outcomes need ``path``, ``record`` and ``outcome``.
    worker_wait_s: with ``scheduler``, how long to wait for a first worker, and how long the
        cluster may be left without workers mid-run; then ReviewError (none joined) or the
        remaining records fail with "no Dask worker left". A worker lost while others remain
        costs nothing: the scheduler gives its records to the others.
    """
    t0 = time.perf_counter()
    items = [str(p) for p in paths]
    n_workers = default_workers() if workers is None else max(1, int(workers))
    if scheduler is None and n_workers == 1:
        outcomes, startup = _run_in_process(items, force, progress, task)
    else:
        outcomes, startup = _run_on_dask(
            items, force, progress, n_workers, scheduler, processes, task, worker_wait_s
        )
    return BatchResult(tuple(outcomes), time.perf_counter() - t0, n_workers, startup)


MAX_CHUNK = 16


def chunks(items: Sequence[str], n_workers: int) -> list[list[str]]:
    """Split ``items`` into consecutive chunks: about 8 per worker so the workers finish
    together, at most ``MAX_CHUNK`` records so progress still moves every second or so."""
    size = max(1, min(MAX_CHUNK, math.ceil(len(items) / (8 * max(1, n_workers)))))
    return [list(items[i : i + size]) for i in range(0, len(items), size)]


def _run_in_process(
    items: list[str], force: bool, progress: ProgressFn | None, task: ChunkTask
) -> tuple[list[RecordOutcome], float]:
    t0 = time.perf_counter()
    _warm_up(_suffixes(items))
    startup = time.perf_counter() - t0
    outcomes: list[RecordOutcome] = []
    for chunk in chunks(items, 1):
        for out in task(chunk, force):
            outcomes.append(out)
            if progress is not None:
                progress(out)
    return outcomes, startup


def _run_on_dask(
    items: list[str],
    force: bool,
    progress: ProgressFn | None,
    n_workers: int,
    scheduler: str | None,
    processes: bool,
    task: ChunkTask,
    worker_wait_s: float = WORKER_WAIT_S,
) -> tuple[list[RecordOutcome], float]:
    import dask
    from dask.distributed import Client, LocalCluster

    t0 = time.perf_counter()
    cluster = None
    if scheduler is None:
        # The workers' sampling profiler (every 10 ms), GIL monitor, event-loop tick (20 ms),
        # system monitor (500 ms) and memory monitor (100 ms) cost CPU that a batch would
        # rather spend on records: an idle 2-worker cluster took 13-14 % of a core with the
        # defaults, 3-4 % with these. The nanny passes this config to the workers.
        quiet = {
            "distributed.worker.profile.enabled": False,
            "distributed.admin.system-monitor.gil.enabled": False,
            "distributed.admin.tick.interval": "500ms",
            "distributed.admin.system-monitor.interval": "2s",
            "distributed.worker.memory.monitor-interval": "1s",
            # Dask sets MALLOC_TRIM_THRESHOLD_ in each worker, which also fixes glibc's mmap
            # threshold at 128 KiB: every array of a record (12 x 5000 samples) is then mapped
            # and page-faulted afresh, 10-20 % more CPU per record than in-process. A batch
            # worker's memory is small and steady, so glibc's adaptive default is kept.
            "distributed.nanny.pre-spawn-environ.MALLOC_TRIM_THRESHOLD_": None,
        }
        with dask.config.set(quiet):  # workers are spawned (and get their config) in here
            # One thread per worker process: the analysis holds the GIL most of the time, so a
            # second Dask thread would mostly wait for it; the fsync waits are overlapped by
            # the writer thread inside each task instead (task.process_records).
            cluster = LocalCluster(
                n_workers=n_workers,
                threads_per_worker=1,
                processes=processes,
                dashboard_address=None,
                silence_logs=logging.ERROR,
            )
        client = Client(cluster)
    else:
        from reviewapp.core.errors import ReviewError

        try:
            client = Client(scheduler, timeout="10s")
        except (OSError, TimeoutError) as err:
            raise ReviewError(f"cannot reach the Dask scheduler at {scheduler}: {err}") from err
    try:
        if scheduler is not None:
            try:
                client.wait_for_workers(1, timeout=worker_wait_s)
            except (TimeoutError, OSError):
                raise ReviewError(
                    f"no Dask worker joined the scheduler at {scheduler} within "
                    f"{worker_wait_s:g} s; start workers (dask worker {scheduler}) or run "
                    "without --scheduler"
                ) from None
        # Import the pipeline on every worker first, so records start together; their
        # warnings go to the log file, not to the terminal the workers were started from.
        client.run(_warm_up, _suffixes(items), str(log_path()))
        n = n_workers if scheduler is None else max(1, len(client.scheduler_info()["workers"]))
        startup = time.perf_counter() - t0
        futures = {}
        offset = 0
        for group in chunks(items, n):
            futures[client.submit(task, group, force, pure=False)] = (offset, group)
            offset += len(group)
        results: list[RecordOutcome | None] = [None] * len(items)

        def finish(fut: Any, outs: list[RecordOutcome]) -> None:
            offset, _group = futures.pop(fut)
            fut.release()
            for j, out in enumerate(outs):
                results[offset + j] = out
                if progress is not None:
                    progress(out)

        for fut, outs in _completed(client, futures, worker_wait_s):
            finish(fut, outs)
        return [r for r in results if r is not None], startup
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def _failed(group: Sequence[str], why: str) -> list[RecordOutcome]:
    return [
        RecordOutcome(path, Path(path).stem, FAILED, error=printable(f"{path}: {why}"))
        for path in group
    ]


def _completed(
    client: Any, futures: dict[Any, tuple[int, list[str]]], worker_wait_s: float
) -> Iterator[tuple[Any, list[RecordOutcome]]]:
    """Each chunk's outcomes as its future finishes, in whatever order.

    A chunk whose worker died is given to another worker by the scheduler (Dask retries a task
    whose worker was lost); one that kept killing workers fails with the error. If the cluster
    has no worker at all for ``worker_wait_s``, the chunks still waiting fail with "no Dask
    worker left" instead of the batch waiting forever.
    """
    from dask.distributed import wait

    pending = set(futures)
    alone_since: float | None = None
    while pending:
        try:
            done, pending = wait(pending, timeout=1.0, return_when="FIRST_COMPLETED")
        except TimeoutError:
            done = set()
        for fut in done:
            group = futures[fut][1]
            try:
                outs = fut.result()
            except Exception as err:  # the chunk killed its workers (crash, OOM kill)
                outs = _failed(group, f"worker failed: {type(err).__name__}: {err}")
            yield fut, outs
        if done:
            alone_since = None
            continue
        if client.nthreads():
            alone_since = None
        elif alone_since is None:
            alone_since = time.monotonic()
        elif time.monotonic() - alone_since > worker_wait_s:
            for fut in list(pending):
                yield (
                    fut,
                    _failed(
                        futures[fut][1], f"no Dask worker left for {worker_wait_s:g} s; not marked"
                    ),
                )
            return


def _suffixes(items: Sequence[str]) -> set[str]:
    return {Path(p).suffix.lower() for p in items}


def _warm_up(suffixes: set[str] | frozenset[str] = frozenset(), log: str | None = None) -> None:
    """Import the pipeline, and the readers of the given file suffixes, before timing starts;
    with ``log``, send this process's warnings to that log file."""
    if log is not None:
        capture_warnings(Path(log))
    import reviewapp.core.engine
    import reviewapp.core.io
    import reviewapp.core.marks
    from reviewapp.core.marks import codec

    codec._validator()  # build the schema validator once per process
    if suffixes & set(reviewapp.core.io.WFDB_SUFFIXES):
        import wfdb  # noqa: F401  (imports pandas: a third of a second)

        import reviewapp.core.io.wfdb_format


__all__ = ["DONE", "FAILED", "SKIPPED", "BatchResult", "default_workers", "run_batch"]
