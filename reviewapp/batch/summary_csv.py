"""The batch summary CSV: one row per record, with an error column for records that failed.

The values (``auto_*`` columns and ``auto_flags``) are computed from the AUTOMATIC marks the
batch stored, never from a reader's corrections: a batch never opens a reading, and a
blinded second reader's list must not show the first reader's numbers. The reading status
and reviewer columns say whether a reader has worked on the record; open it (or use
``reviewapp export --csv``) for the values under the reader's marks. ``marks_file`` says how
the marks store judged the record's sidecar: absent, valid, or foreign / stale / invalid (left
untouched; the record failed, the error column says why). ``auto_not_comparable`` and
``auto_less_reliable`` carry the engine's reasons for those values (a QTc in a wide QRS or an
irregular rhythm, frontal axes from inconsistent limb leads, ...) in the words and form of the
``reviewapp measure`` CSV columns of the same names (``reason_text.csv_cells``).

The file is written atomically (temporary file, fsync, rename): a full disk or a kill leaves
the previous summary whole, never one cut mid-row. Text is UTF-8; characters a file name may
hold that are not printable or not UTF-8 (a newline, a byte of another encoding) are written
escaped (``\n``, ``\xff``), as on the terminal.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable
from pathlib import Path

from reviewapp.batch.summary import CachedSummary
from reviewapp.batch.task import RecordOutcome
from reviewapp.core.errors import printable
from reviewapp.core.marks.durable import atomic_write
from reviewapp.core.measure.reason_text import csv_cells

COLUMNS = (
    "record",
    "path",
    "outcome",
    "reading_status",
    "reviewer",
    "marks_file",
    "engine_version",
    "auto_hr_bpm",
    "auto_pr_ms",
    "auto_qrs_ms",
    "auto_qt_ms",
    "auto_qtc_bazett_ms",
    "auto_qtc_fridericia_ms",
    "auto_flags",
    "auto_not_comparable",
    "auto_less_reliable",
    "seconds",
    "note",
    "error",
)


def _fmt(v: float | None) -> str:
    return "" if v is None else f"{v:.1f}"


# A signed-off record keeps the cache it had; one written before the cache kept the reasons
# cannot say them (any other record is analysed again).
_REASONS_UNKNOWN = "unknown: marks cached before reasons were kept; open the record to see them"


def _reason_cells(s: CachedSummary | None) -> tuple[str, str]:
    if s is None:
        return "", ""
    if s.reasons is None:
        return _REASONS_UNKNOWN, _REASONS_UNKNOWN
    return csv_cells(s.reasons)


def outcome_row(o: RecordOutcome) -> dict[str, str]:
    s = o.summary
    not_comparable, less_reliable = _reason_cells(s)
    return {
        "record": printable(o.record),
        "path": printable(o.path),
        "outcome": o.outcome,
        "reading_status": o.status or "",
        "reviewer": o.reviewer or "",
        "marks_file": o.marks_file,
        "engine_version": s.engine_version if s else "",
        "auto_hr_bpm": _fmt(s.hr_bpm if s else None),
        "auto_pr_ms": _fmt(s.pr_ms if s else None),
        "auto_qrs_ms": _fmt(s.qrs_ms if s else None),
        "auto_qt_ms": _fmt(s.qt_ms if s else None),
        "auto_qtc_bazett_ms": _fmt(s.qtc_bazett_ms if s else None),
        "auto_qtc_fridericia_ms": _fmt(s.qtc_fridericia_ms if s else None),
        "auto_flags": " | ".join(s.flags) if s else "",
        "auto_not_comparable": not_comparable,
        "auto_less_reliable": less_reliable,
        "seconds": f"{o.seconds:.3f}",
        "note": printable(o.note),
        "error": printable(o.error),
    }


def summary_csv_text(outcomes: Iterable[RecordOutcome]) -> str:
    out = io.StringIO()
    w = csv.DictWriter(out, fieldnames=COLUMNS, lineterminator="\r\n")
    w.writeheader()
    for o in outcomes:
        w.writerow(outcome_row(o))
    return out.getvalue()


def write_summary_csv(path: Path, outcomes: Iterable[RecordOutcome]) -> None:
    """Write the summary (UTF-8, comma-separated, header row of COLUMNS) atomically."""
    data = summary_csv_text(outcomes).encode("utf-8")
    atomic_write(Path(path), data, failure="cannot write the batch summary")
