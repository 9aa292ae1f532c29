"""One record's row of the study table, as a batch worker computes it.

Takes a path (workers read the files themselves; nothing but small rows crosses the wire),
opens the record and its sidecar (read only: no lock is taken and nothing is written), runs
the engine, resolves the final reading and returns a ``StudyRow``. Never raises: a record
that cannot be read, or whose sidecar is unreadable or made for another record, becomes a
row with its ``error`` (a wrong reading is never reported as final).
"""

from __future__ import annotations

import time
from collections.abc import Mapping, Sequence
from dataclasses import replace

from reviewapp.core.errors import ReviewError
from reviewapp.core.study.table import StudyRow, failed_row, row_from_final

# Shortest record measured (same rule as ``reviewapp measure``): two beats even at 30 bpm
# and enough signal for the filters (common practice, no source).
MIN_DURATION_S = 2.0


def study_record(path: str, tolerances_ms: Mapping[str, float] | None = None) -> StudyRow:
    """The study-table row of the record at ``path`` (see the module docstring)."""
    c0 = time.thread_time()
    row = _row(path, tolerances_ms)
    return replace(row, cpu_seconds=time.thread_time() - c0)


def _row(path: str, tolerances_ms: Mapping[str, float] | None) -> StudyRow:
    try:
        from reviewapp.core.engine import analyse
        from reviewapp.core.io import open_record
        from reviewapp.core.marks.convert import record_identity
        from reviewapp.core.marks.final import resolve_final, sidecar_for

        record = open_record(path)
        if record.duration_s < MIN_DURATION_S:
            return failed_row(
                path,
                f"{path}: record too short to measure ({record.duration_s:.3g} s; at least "
                f"{MIN_DURATION_S:g} s needed)",
            )
        sidecar = sidecar_for(record, record_identity(record))
        analysis = analyse(record)
        final = resolve_final(sidecar, analysis, tolerances_ms=tolerances_ms)
        return row_from_final(path, record, final)
    except ReviewError as err:
        return failed_row(path, str(err))
    except MemoryError:
        return failed_row(path, f"{path}: not enough memory to measure this record")
    except Exception as err:  # one record's bug must not stop a study of thousands
        return failed_row(path, f"{path}: could not be measured ({type(err).__name__}: {err})")


def study_records(
    paths: Sequence[str], force: bool = False, tolerances_ms: Mapping[str, float] | None = None
) -> list[StudyRow]:
    """``study_record`` for a chunk of paths, rows in input order (the batch runner's task
    signature: ``force`` is unused, nothing is written)."""
    return [study_record(p, tolerances_ms) for p in paths]
