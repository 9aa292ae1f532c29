"""The one place batch, worklist and export touch the marks sidecar (``reviewapp.core.marks``).

Two paths, on purpose:
- writing (batch) and reading marks for a report go through the marks store, which validates
  against the schema, checks the record fingerprint, takes the lock and writes atomically;
- listing (worklist rows) and the batch's "is this sidecar current?" decision read the raw
  JSON for a handful of fields. Schema validation costs tens of milliseconds per file, which a
  10,000-record worklist cannot pay; nothing read this way is ever written back or measured
  on, and a file this fast path cannot make sense of is simply treated as not current (the
  store then gives the proper error).
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from reviewapp.batch.summary import CachedSummary
from reviewapp.core.errors import MarksError
from reviewapp.core.fiducials import MarkOverride
from reviewapp.core.record import Record

SIDECAR_SUFFIX = ".marks.json"
STATUSES = ("unread", "in_progress", "signed_off")
# Same cap as the marks store: larger files are not marks files this program wrote.
_MAX_BYTES = 50 * 2**20


@dataclass(frozen=True)
class SidecarView:
    """What the batch and the worklist read from one sidecar (fast path, read-only)."""

    sidecar: Path
    fingerprint: str | None  # of the record the sidecar belongs to
    engine_version: str | None  # of the stored automatic marks; None = none stored
    status: str  # of the reading shown: one of STATUSES
    reviewer: str | None  # reviewer of the reading shown (a signed-off one first)
    signed_off_at: str | None
    any_signed_off: bool  # some reading of this record is signed off
    n_readings: int
    summary: CachedSummary | None  # listing cache, or None
    # Each reader's own status, (reviewer, status) sorted by reviewer: a blinded second reader's
    # worklist shows theirs, not the record's overall status (which would tell them the first
    # reader has signed and hide their own unread records from "unread only").
    status_by_reviewer: tuple[tuple[str, str], ...] = ()

    @property
    def signed_off(self) -> bool:
        return self.status == "signed_off"


def sidecar_path(record_path: Path) -> Path:
    """``<folder>/<record stem>.marks.json`` (``1.hea`` -> ``1.marks.json``), as the store."""
    record_path = Path(record_path)
    return record_path.with_name(record_path.stem + SIDECAR_SUFFIX)


def record_fingerprint(record: Record) -> str:
    """The marks store's content hash of the record's files."""
    from reviewapp.core.marks import record_fingerprint as fp

    return fp(record)


# --- fast read-only view ---------------------------------------------------------------------


def _load_raw(path: Path) -> dict[str, Any] | None:
    try:
        with open(path, "rb") as fh:
            data = fh.read(_MAX_BYTES + 1)
    except FileNotFoundError:
        return None
    except OSError as err:
        raise MarksError(f"cannot read the marks file: {err.strerror or err}", path) from None
    if len(data) > _MAX_BYTES:
        raise MarksError("marks file is larger than any this program writes", path)
    try:
        doc = json.loads(data)
    except (json.JSONDecodeError, UnicodeDecodeError, RecursionError) as err:
        raise MarksError(f"the marks file is not valid JSON ({type(err).__name__})", path) from None
    if not isinstance(doc, dict) or doc.get("format") != "reviewapp-marks":
        raise MarksError("not a reviewapp marks file", path)
    return doc


def _latest_event_by(doc: Mapping[str, Any]) -> dict[str, str]:
    latest: dict[str, str] = {}
    audit = doc.get("audit")
    for e in audit if isinstance(audit, list) else ():
        if isinstance(e, dict) and isinstance(e.get("reviewer"), str):
            at = str(e.get("at", ""))
            if at > latest.get(e["reviewer"], ""):
                latest[e["reviewer"]] = at
    return latest


def _primary(doc: Mapping[str, Any]) -> tuple[str | None, Mapping[str, Any] | None]:
    """The reading a worklist shows: signed off first, then the most recently edited."""
    readings = doc.get("readings")
    items = [
        (k, v)
        for k, v in (readings.items() if isinstance(readings, dict) else ())
        if isinstance(v, dict)
    ]
    if not items:
        return None, None
    latest = _latest_event_by(doc)
    rank = {"signed_off": 2, "in_progress": 1}
    return max(
        items, key=lambda kv: (rank.get(kv[1].get("status"), 0), latest.get(kv[0], ""), kv[0])
    )


def read_view(record_path: Path) -> SidecarView | None:
    """The listing view of ``record_path``'s sidecar; None when there is none.

    Raises MarksError when the file exists but is not a readable marks file.
    """
    path = sidecar_path(record_path)
    doc = _load_raw(path)
    if doc is None:
        return None
    rec = doc.get("record") if isinstance(doc.get("record"), dict) else {}
    auto = doc.get("automatic") if isinstance(doc.get("automatic"), dict) else None
    reviewer, reading = _primary(doc)
    status = str(reading.get("status", "unread")) if reading is not None else "unread"
    if status not in STATUSES:
        raise MarksError(f"unknown reading status {status[:40]!r}", path)
    readings = doc.get("readings") if isinstance(doc.get("readings"), dict) else {}
    cache = doc.get("listing_cache")
    return SidecarView(
        sidecar=path,
        fingerprint=rec.get("fingerprint") if isinstance(rec.get("fingerprint"), str) else None,
        engine_version=None if auto is None else auto.get("engine_version"),
        status=status,
        reviewer=reviewer,
        signed_off_at=None if reading is None else reading.get("signed_off_at"),
        any_signed_off=any(
            isinstance(r, dict) and r.get("status") == "signed_off" for r in readings.values()
        ),
        n_readings=len(readings),
        summary=CachedSummary.from_json(cache) if isinstance(cache, dict) else None,
        status_by_reviewer=tuple(
            sorted(
                (k, str(v.get("status")))
                for k, v in readings.items()
                if isinstance(k, str) and isinstance(v, dict) and v.get("status") in STATUSES
            )
        ),
    )


# --- through the marks store ------------------------------------------------------------------


def store_automatic(
    record: Record,
    analysis: Any,
    fingerprint: str,
    summary: CachedSummary,
    *,
    folder_swept: bool = False,
) -> Path:
    """Store the engine's marks and the listing cache; every reading is left untouched.

    ``folder_swept``: the caller already removed dead writers' temporary files in the record's
    folder (``sweep_folder``), so the store need not list the folder again.

    Raises the store's errors: LockedError (a window has the record open), ForeignSidecarError
    (the sidecar belongs to other record content), UnreadableSidecarError.
    """
    from reviewapp.core.marks import automatic_from_analysis, write_automatic

    return write_automatic(
        record,
        automatic_from_analysis(analysis),
        actor="batch",
        fingerprint=fingerprint,
        listing_cache=summary.to_json(),
        sweep_temps=not folder_swept,
    )


def sweep_folder(folder: Path) -> None:
    """Remove temporary files of marks writes whose process died (see ``store_automatic``)."""
    from reviewapp.core.marks.durable import remove_stale_temps_in

    remove_stale_temps_in(folder)


@dataclass(frozen=True)
class ReadingForReport:
    """One reader's overrides (engine samples) and status, for the report page."""

    overrides: tuple[MarkOverride, ...] = ()
    status: str = "unread"
    reviewer: str | None = None
    signed_off_at: str | None = None


def reading_for_report(
    record: Record, analysis: Any, reviewer: str | None = None
) -> ReadingForReport:
    """The validated reading to print: ``reviewer``'s, else a signed-off one, else the most
    recently edited; no sidecar = automatic marks only.

    Raises MarksError for an unreadable sidecar or one made for other record content.
    """
    from reviewapp.core.marks import load_sidecar, overrides_for, record_identity

    path = Path(record.source_path) if record.source_path is not None else None
    if path is None:
        return ReadingForReport()
    side = sidecar_path(path)
    if not side.exists():
        if reviewer is not None:
            raise MarksError(f"no marks file, so no reading by {reviewer!r}", side)
        return ReadingForReport()
    sidecar = load_sidecar(side, record_identity(record))
    if reviewer is not None:
        chosen = sidecar.reading(reviewer)
        if chosen is None:
            raise MarksError(f"no reading by {reviewer!r} in the marks file", side)
    else:
        doc = _load_raw(side) or {}
        name, _ = _primary(doc)
        chosen = sidecar.reading(name) if name is not None else None
    if chosen is None:
        return ReadingForReport()
    rep = analysis.representative
    marks = overrides_for(chosen, record.fs_hz, None if rep is None else rep.r_index)
    return ReadingForReport(
        overrides=tuple(marks),
        status=chosen.status,
        reviewer=chosen.reviewer,
        signed_off_at=chosen.signed_off_at,
    )
