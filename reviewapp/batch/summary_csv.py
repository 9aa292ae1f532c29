"""The batch summary CSV: one row per record, with an error column for records that failed."""

from __future__ import annotations

import csv
from collections.abc import Iterable
from pathlib import Path

from reviewapp.batch.task import RecordOutcome
from reviewapp.core.errors import ReviewError

COLUMNS = (
    "record",
    "path",
    "outcome",
    "reading_status",
    "reviewer",
    "engine_version",
    "hr_bpm",
    "pr_ms",
    "qrs_ms",
    "qt_ms",
    "qtc_bazett_ms",
    "qtc_fridericia_ms",
    "flags",
    "seconds",
    "note",
    "error",
)


def _fmt(v: float | None) -> str:
    return "" if v is None else f"{v:.1f}"


def outcome_row(o: RecordOutcome) -> dict[str, str]:
    s = o.summary
    return {
        "record": o.record,
        "path": o.path,
        "outcome": o.outcome,
        "reading_status": o.status or "",
        "reviewer": o.reviewer or "",
        "engine_version": s.engine_version if s else "",
        "hr_bpm": _fmt(s.hr_bpm if s else None),
        "pr_ms": _fmt(s.pr_ms if s else None),
        "qrs_ms": _fmt(s.qrs_ms if s else None),
        "qt_ms": _fmt(s.qt_ms if s else None),
        "qtc_bazett_ms": _fmt(s.qtc_bazett_ms if s else None),
        "qtc_fridericia_ms": _fmt(s.qtc_fridericia_ms if s else None),
        "flags": " | ".join(s.flags) if s else "",
        "seconds": f"{o.seconds:.3f}",
        "note": o.note,
        "error": o.error,
    }


def write_summary_csv(path: Path, outcomes: Iterable[RecordOutcome]) -> None:
    """Write the summary (UTF-8, comma-separated, header row of COLUMNS)."""
    path = Path(path)
    try:
        with open(path, "w", newline="", encoding="utf-8") as fh:
            w = csv.DictWriter(fh, fieldnames=COLUMNS)
            w.writeheader()
            for o in outcomes:
                w.writerow(outcome_row(o))
    except OSError as err:
        raise ReviewError(f"cannot write the batch summary: {err.strerror or err}", path) from err
