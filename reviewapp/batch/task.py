"""One record's batch step, run on a worker: open, analyse, store automated marks + cache.

The function takes a path (workers read the file themselves; no arrays cross the wire) and
returns a small picklable ``RecordOutcome``. It never raises: any failure becomes an outcome
with an error message, so one bad record never stops a batch.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from pathlib import Path

from reviewapp.batch import sidecar_adapter as sidecars
from reviewapp.batch.summary import CachedSummary, summarise
from reviewapp.core.errors import ReviewError

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
    cpu_seconds: float = 0.0  # CPU time of the worker process on this record


def engine_version() -> str:
    from reviewapp.core.engine import ENGINE_VERSION

    return ENGINE_VERSION


def is_current(view: sidecars.SidecarView | None, fingerprint: str, version: str) -> bool:
    """True when the sidecar's automated marks and cache were made from this record content
    by this engine version."""
    return (
        view is not None
        and view.fingerprint == fingerprint
        and view.engine_version == version
        and view.summary is not None
        and view.summary.engine_version == version
        and view.summary.record_fingerprint == fingerprint
    )


def process_record(path: str, force: bool = False) -> RecordOutcome:
    """Compute and store the automatic marks of one record unless its sidecar is current.

    A record with a signed-off reading is never touched (its automatic marks stay the ones it
    was read on); reviewer overrides are never touched (the store replaces only the automatic
    marks and the listing cache).
    """
    t0 = time.perf_counter()
    c0 = time.process_time()
    p = Path(path)
    name = p.stem
    view = None

    def outcome(kind: str, summary: CachedSummary | None = None, **kw: str) -> RecordOutcome:
        return RecordOutcome(
            path,
            name,
            kind,
            view.status if view is not None else ("unread" if kind == DONE else None),
            view.reviewer if view is not None else None,
            summary,
            time.perf_counter() - t0,
            **kw,
            cpu_seconds=time.process_time() - c0,
        )

    try:
        view = sidecars.read_view(p)
        if view is not None and view.any_signed_off:
            return outcome(SKIPPED, view.summary, note="signed off: left as read")
        from reviewapp.core.engine import analyse
        from reviewapp.core.io import open_record

        record = open_record(p)
        fingerprint = sidecars.record_fingerprint(record)
        version = engine_version()
        if not force and is_current(view, fingerprint, version):
            assert view is not None
            return outcome(SKIPPED, view.summary, note="current")
        analysis = analyse(record)
        summary = summarise(
            analysis.reading(), engine_version=analysis.engine_version, fingerprint=fingerprint
        )
        sidecars.store_automatic(record, analysis, fingerprint, summary)
        return outcome(DONE, summary, note="; ".join(analysis.notes))
    except ReviewError as err:
        msg = str(err)
    except MemoryError:
        msg = f"{p}: not enough memory to analyse this record"
    except Exception as err:  # a bug in one record's analysis must not stop the batch
        msg = f"{p}: unexpected {type(err).__name__}: {err}"
    return outcome(FAILED, error=msg)
