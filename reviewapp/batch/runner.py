"""Run the batch step over many records: in-process, on a local Dask cluster, or on a remote one.

Workers receive paths, never arrays: each opens its record, analyses it and writes the sidecar
itself, returning only a small ``RecordOutcome``. Futures are collected with ``as_completed`` so
progress moves as records finish, in whatever order they finish.
"""

from __future__ import annotations

import logging
import os
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

from reviewapp.batch.task import DONE, FAILED, SKIPPED, RecordOutcome, process_record

ProgressFn = Callable[[RecordOutcome], None]


@dataclass(frozen=True)
class BatchResult:
    """Every record's outcome (in input order) and the wall time of the run."""

    outcomes: tuple[RecordOutcome, ...]
    seconds: float
    workers: int

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


def default_workers() -> int:
    return max(1, os.cpu_count() or 1)


def run_batch(
    paths: Sequence[Path],
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    force: bool = False,
    progress: ProgressFn | None = None,
    processes: bool = True,
) -> BatchResult:
    """Process ``paths``; never raises for a bad record (its outcome carries the error).

    workers: worker count for a local cluster (default: the machine's cores); 1 = in-process,
        no cluster. Ignored with ``scheduler``.
    scheduler: address of an existing Dask scheduler (``tcp://host:8786``).
    processes: local cluster of processes (default) or of threads.
    """
    t0 = time.perf_counter()
    items = [str(p) for p in paths]
    n_workers = default_workers() if workers is None else max(1, int(workers))
    if scheduler is None and n_workers == 1:
        outcomes = _run_in_process(items, force, progress)
    else:
        outcomes = _run_on_dask(items, force, progress, n_workers, scheduler, processes)
    return BatchResult(tuple(outcomes), time.perf_counter() - t0, n_workers)


def _run_in_process(
    items: list[str], force: bool, progress: ProgressFn | None
) -> list[RecordOutcome]:
    outcomes = []
    for path in items:
        out = process_record(path, force)
        outcomes.append(out)
        if progress is not None:
            progress(out)
    return outcomes


def _run_on_dask(
    items: list[str],
    force: bool,
    progress: ProgressFn | None,
    n_workers: int,
    scheduler: str | None,
    processes: bool,
) -> list[RecordOutcome]:
    import dask
    from dask.distributed import Client, LocalCluster, as_completed

    cluster = None
    if scheduler is None:
        # The workers' sampling profiler (every 10 ms) and GIL monitor cost CPU that a batch of
        # short tasks would rather spend on records; the nanny passes this config to workers.
        quiet = {
            "distributed.worker.profile.enabled": False,
            "distributed.admin.system-monitor.gil.enabled": False,
        }
        with dask.config.set(quiet):  # workers are spawned (and get their config) in here
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
        # Import the pipeline on every worker first, so records start together.
        client.run(_warm_up)
        futures = {
            client.submit(process_record, path, force, pure=False): i
            for i, path in enumerate(items)
        }
        results: list[RecordOutcome | None] = [None] * len(items)
        for fut in as_completed(futures):
            i = futures[fut]
            try:
                out = fut.result()
            except Exception as err:  # a worker died on this record (crash, OOM kill)
                out = RecordOutcome(
                    items[i],
                    Path(items[i]).stem,
                    FAILED,
                    error=f"{items[i]}: worker failed: {type(err).__name__}: {err}",
                )
            results[i] = out
            fut.release()
            if progress is not None:
                progress(out)
        return [r for r in results if r is not None]
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def _warm_up() -> None:
    import reviewapp.core.engine
    import reviewapp.core.io
    import reviewapp.core.marks  # noqa: F401


__all__ = ["DONE", "FAILED", "SKIPPED", "BatchResult", "default_workers", "run_batch"]
