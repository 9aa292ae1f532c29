"""One record's batch step, run on a worker: open, analyse, store automated marks + cache.

The function takes a path (workers read the file themselves; no arrays cross the wire) and
returns a small picklable ``RecordOutcome``. It never raises: any failure becomes an outcome
with an error message, so one bad record never stops a batch.
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from reviewapp.batch import sidecar_adapter as sidecars
from reviewapp.batch.summary import CachedSummary, summarise
from reviewapp.core.errors import ReviewError, printable

DONE, SKIPPED, FAILED = "done", "skipped", "failed"


@dataclass(frozen=True)
class RecordOutcome:
    """What happened to one record in a batch."""

    path: str
    record: str
    outcome: str  # DONE | SKIPPED | FAILED
    status: str | None = None  # reading status in the sidecar
    reviewer: str | None = None
    summary: CachedSummary | None = None
    seconds: float = 0.0  # wall time on the worker
    error: str = ""
    note: str = ""
    cpu_seconds: float = 0.0  # CPU time the worker's threads spent on this record
    # The record's marks file as the store judged it: absent, valid, foreign, stale, invalid
    # (sidecar_adapter); the last three are left untouched and the record fails.
    marks_file: str = "absent"


def engine_version() -> str:
    from reviewapp.core.engine import ENGINE_VERSION

    return ENGINE_VERSION


def is_current(view: sidecars.SidecarView | None, fingerprint: str, version: str) -> bool:
    """True when the sidecar's automated marks and cache were made from this record content
    by this engine version (a cache from before it kept the reasons is not current)."""
    return (
        view is not None
        and view.fingerprint == fingerprint
        and view.engine_version == version
        and view.summary is not None
        and view.summary.engine_version == version
        and view.summary.record_fingerprint == fingerprint
        and view.summary.reasons is not None
    )


def process_record(path: str, force: bool = False) -> RecordOutcome:
    """Compute and store the automatic marks of one record unless its sidecar is current.

    A record with a signed-off reading is never touched (its automatic marks stay the ones it
    was read on); reviewer overrides are never touched (the store replaces only the automatic
    marks and the listing cache).
    """
    step = _analyse_step(path, force)
    return step if isinstance(step, RecordOutcome) else step.store()


def process_records(paths: Sequence[str], force: bool = False) -> list[RecordOutcome]:
    """``process_record`` for several records on one worker, outcomes in input order.

    Each record's sidecar write (lock, atomic write, several fsync waits) runs on one writer
    thread while this thread analyses the next record, so the disk waits overlap computing;
    the writes stay one at a time and every outcome is returned only once its write is done
    (or failed). Each folder's stale temporary files are swept once, not once per record.
    """
    swept: set[Path] = set()
    pending: list[RecordOutcome | Future[RecordOutcome]] = []
    with ThreadPoolExecutor(1, thread_name_prefix="reviewapp-sidecar-writer") as writer:
        for path in paths:
            folder = Path(path).parent
            if folder not in swept:
                sidecars.sweep_folder(folder)
                swept.add(folder)
            step = _analyse_step(path, force, folder_swept=True)
            pending.append(step if isinstance(step, RecordOutcome) else writer.submit(step.store))
        return [p if isinstance(p, RecordOutcome) else p.result() for p in pending]


@dataclass
class _PendingStore:
    """An analysed record whose sidecar is still to be written."""

    path: str
    name: str
    view: sidecars.SidecarView | None
    record: Any
    analysis: Any
    fingerprint: str
    summary: CachedSummary
    started: float  # perf_counter at the start of the record
    cpu_seconds: float  # CPU time of the analysing thread so far
    folder_swept: bool

    def store(self) -> RecordOutcome:
        c0 = time.thread_time()
        error = ""
        try:
            sidecars.store_automatic(
                self.record,
                self.analysis,
                self.fingerprint,
                self.summary,
                folder_swept=self.folder_swept,
            )
        except Exception as err:
            error = _failure_message(Path(self.path), err)
        view = self.view
        return RecordOutcome(
            self.path,
            self.name,
            FAILED if error else DONE,
            view.status if view is not None else (None if error else "unread"),
            view.reviewer if view is not None else None,
            None if error else self.summary,
            time.perf_counter() - self.started,
            error=error,
            note="" if error else "; ".join(self.analysis.notes),
            cpu_seconds=self.cpu_seconds + time.thread_time() - c0,
            marks_file="valid" if not error or view is not None else "absent",
        )


def _failure_message(p: Path, err: BaseException) -> str:
    if isinstance(err, ReviewError):
        return str(err)  # one printable line naming the file
    if isinstance(err, MemoryError):
        return printable(f"{p}: not enough memory to analyse this record")
    # a bug in one record's analysis must not stop the batch
    return printable(f"{p}: unexpected {type(err).__name__}: {err}")


def _analyse_step(
    path: str, force: bool, *, folder_swept: bool = False
) -> RecordOutcome | _PendingStore:
    """Everything but the sidecar write: a final outcome (skipped, failed) or the write to do.

    CPU time is this thread's (``thread_time``), so a writer thread's work is not counted
    twice.
    """
    t0 = time.perf_counter()
    c0 = time.thread_time()
    p = Path(path)
    name = p.stem
    view = None

    marks = sidecars.ABSENT

    def outcome(kind: str, summary: CachedSummary | None = None, **kw: str) -> RecordOutcome:
        return RecordOutcome(
            path,
            name,
            kind,
            view.status if view is not None else None,
            view.reviewer if view is not None else None,
            summary,
            time.perf_counter() - t0,
            **kw,
            cpu_seconds=time.thread_time() - c0,
            marks_file=marks,
        )

    try:
        from reviewapp.core.engine import analyse
        from reviewapp.core.io import open_record
        from reviewapp.core.record import check_analysable

        record = open_record(p)
        fingerprint = sidecars.record_fingerprint(record)
        try:
            # The store's own judgement: codec (JSON, schema, version) and identity.
            view = sidecars.read_view(p, fingerprint)
        except sidecars.SidecarProblem as problem:
            marks = problem.state
            return outcome(FAILED, error=f"{p}: {problem.state} marks file: {problem}")
        marks = sidecars.VALID if view is not None else sidecars.ABSENT
        if view is not None and view.any_signed_off:
            sidecars.clean_stale_lock(p)
            return outcome(SKIPPED, view.summary, note="signed off: left as read")
        version = engine_version()
        if not force and is_current(view, fingerprint, version):
            assert view is not None
            sidecars.clean_stale_lock(p)
            return outcome(SKIPPED, view.summary, note="current")
        # The engine's filters fail on a record too short or too coarsely sampled, and it
        # holds the whole record: refuse those in words (measure's limits).
        check_analysable(record, p)
        analysis = analyse(record)
        summary = summarise(
            analysis.reading(), engine_version=analysis.engine_version, fingerprint=fingerprint
        )
        return _PendingStore(
            path,
            name,
            view,
            record,
            analysis,
            fingerprint,
            summary,
            t0,
            time.thread_time() - c0,
            folder_swept,
        )
    except Exception as err:
        return outcome(FAILED, error=_failure_message(p, err))
