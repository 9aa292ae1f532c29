"""The one place batch, worklist and export touch the marks sidecar (``reviewapp.core.marks``).

Every sidecar is read and judged by the marks store's own reader: ``read_sidecar_bytes`` (a
regular file, under the size cap) and ``codec.decode`` (JSON, schema, version), and, where the
record's content fingerprint is known (batch), the store's identity check. A file the store
would refuse is never reported as signed or current: it is ``invalid`` (unreadable, hostile,
another schema version), ``foreign`` (made for another record: its record name differs) or
``stale`` (same record name, but the record's files changed after the marks were made), and
it is left untouched.

The worklist lists thousands of records and does not open them, so it cannot know their
fingerprints: it gets the codec's verdict and the record-name check. Decoded views are kept
in a small cache keyed by the file's identity (device, inode, size, modification and change
times), so listing a folder again costs a ``stat`` per sidecar; any change to the file
misses the cache and is judged afresh.
"""

from __future__ import annotations

import os
import stat
import threading
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from reviewapp.batch.summary import CachedSummary
from reviewapp.core.errors import MarksError, printable
from reviewapp.core.fiducials import MarkOverride
from reviewapp.core.marks.errors import ForeignSidecarError, UnreadableSidecarError
from reviewapp.core.marks.model import RecordIdentity, ReviewerReading, Sidecar
from reviewapp.core.record import Record

SIDECAR_SUFFIX = ".marks.json"
STATUSES = ("unread", "in_progress", "signed_off")
# What a batch or a listing found in a record's marks file (``MarksState``).
ABSENT, VALID, FOREIGN, STALE, INVALID = "absent", "valid", "foreign", "stale", "invalid"


@dataclass(frozen=True)
class SidecarView:
    """What the batch and the worklist read from one valid sidecar (read-only)."""

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
    record: RecordIdentity | None = None  # the record the sidecar names

    @property
    def record_name(self) -> str:
        return "" if self.record is None else self.record.name

    @property
    def signed_off(self) -> bool:
        return self.status == "signed_off"


class SidecarProblem(MarksError):
    """A marks file the store would refuse; ``state`` is FOREIGN, STALE or INVALID."""

    def __init__(self, problem: str, path: Path, state: str) -> None:
        self.state = state
        super().__init__(problem, path)


def sidecar_path(record_path: Path) -> Path:
    """``<folder>/<record stem>.marks.json`` (``1.hea`` -> ``1.marks.json``), as the store."""
    record_path = Path(record_path)
    return record_path.with_name(record_path.stem + SIDECAR_SUFFIX)


def record_fingerprint(record: Record) -> str:
    """The marks store's content hash of the record's files."""
    from reviewapp.core.marks import record_fingerprint as fp

    return fp(record)


# --- reading through the store's codec --------------------------------------------------------


def primary_reading(sidecar: Sidecar) -> ReviewerReading | None:
    """The reading a worklist shows: signed off first, then the most recently edited."""
    if not sidecar.readings:
        return None
    latest: dict[str, str] = {}
    for e in sidecar.audit:
        if e.at > latest.get(e.reviewer, ""):
            latest[e.reviewer] = e.at
    rank = {"signed_off": 2, "in_progress": 1}
    return max(
        sidecar.readings,
        key=lambda r: (rank.get(r.status, 0), latest.get(r.reviewer, ""), r.reviewer),
    )


def _view(path: Path, sidecar: Sidecar) -> SidecarView:
    shown = primary_reading(sidecar)
    cache = sidecar.listing_cache
    return SidecarView(
        sidecar=path,
        fingerprint=sidecar.record.fingerprint,
        engine_version=None if sidecar.automatic is None else sidecar.automatic.engine_version,
        status=shown.status if shown is not None else "unread",
        reviewer=shown.reviewer if shown is not None else None,
        signed_off_at=shown.signed_off_at if shown is not None else None,
        any_signed_off=any(r.status == "signed_off" for r in sidecar.readings),
        n_readings=len(sidecar.readings),
        summary=CachedSummary.from_json(cache) if isinstance(cache, dict) else None,
        status_by_reviewer=tuple(sorted((r.reviewer, r.status) for r in sidecar.readings)),
        record=sidecar.record,
    )


_CACHE: dict[tuple[Any, ...], SidecarView] = {}
_CACHE_LOCK = threading.Lock()
_CACHE_MAX = 100_000


def _identity(path: Path) -> tuple[Any, ...] | None:
    """The file's identity for the cache; None when absent. A path that is not a regular
    file is an INVALID sidecar (a FIFO is never opened)."""
    try:
        st = os.stat(path)
    except FileNotFoundError:
        return None
    except OSError as err:
        raise SidecarProblem(
            f"cannot read the marks file: {err.strerror or err}", path, INVALID
        ) from None
    if not stat.S_ISREG(st.st_mode):
        from reviewapp.core.io.files import file_kind

        raise SidecarProblem(
            f"the marks file is {file_kind(st.st_mode)}, not a regular file; left untouched",
            path,
            INVALID,
        )
    return (str(path), st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns, st.st_ctime_ns)


def _decoded_view(path: Path) -> SidecarView | None:
    key = _identity(path)
    if key is None:
        return None
    with _CACHE_LOCK:
        hit = _CACHE.get(key)
    if hit is not None:
        return hit
    from reviewapp.core.marks import codec
    from reviewapp.core.marks.store import read_sidecar_bytes

    try:
        data = read_sidecar_bytes(path)
        if data is None:
            return None
        view = _view(path, codec.decode(data, path))
    except UnreadableSidecarError as err:
        raise SidecarProblem(f"{err.problem}; left untouched", path, INVALID) from None
    if _identity(path) == key:  # unchanged while it was read: safe to remember
        with _CACHE_LOCK:
            if len(_CACHE) >= _CACHE_MAX:
                _CACHE.clear()
            _CACHE[key] = view
    return view


def read_view(record_path: Path, fingerprint: str | None = None) -> SidecarView | None:
    """The view of ``record_path``'s sidecar, judged by the marks store; None when there is
    none.

    Raises SidecarProblem (a MarksError) when the store would refuse the file: INVALID (not
    JSON, not the schema, a newer schema version, not a regular file), FOREIGN (it names
    another record) or, given the record's ``fingerprint``, STALE (the record's files changed
    since the marks were made; the store's identity check).
    """
    record_path = Path(record_path)
    path = sidecar_path(record_path)
    view = _decoded_view(path)
    if view is None:
        return None
    if view.record_name != printable(record_path.stem):
        raise SidecarProblem(
            f"the marks file was made for record {view.record_name!r}, not "
            f"{record_path.stem!r} (copied from another record?); left untouched",
            path,
            FOREIGN,
        )
    if fingerprint is not None and view.record is not None and view.fingerprint != fingerprint:
        from reviewapp.core.marks.store import check_identity

        try:  # the store's own identity check and wording
            check_identity(
                Sidecar(record=view.record), replace(view.record, fingerprint=fingerprint), path
            )
        except ForeignSidecarError as err:
            raise SidecarProblem(
                f"the record's files changed after these marks were made: {err.problem}; left "
                "untouched",
                path,
                STALE,
            ) from None
    return view


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


def clean_stale_lock(record_path: Path) -> bool:
    """Remove the lock of ``record_path``'s sidecar if its holder is gone (a crashed window),
    so it does not outlive a batch that found the record current. A live lock is kept."""
    from reviewapp.core.marks.lock import remove_if_stale

    return remove_if_stale(sidecar_path(record_path))


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
    statements: tuple[Any, ...] = ()  # the reader's interpretation (ReaderStatement)
    role: str | None = None  # "first", "second" or "adjudicator"


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
        chosen = primary_reading(sidecar)
    if chosen is None:
        return ReadingForReport()
    rep = analysis.representative
    marks = overrides_for(chosen, record.fs_hz, None if rep is None else rep.r_index)
    return ReadingForReport(
        overrides=tuple(marks),
        status=chosen.status,
        reviewer=chosen.reviewer,
        signed_off_at=chosen.signed_off_at,
        statements=chosen.statements,
        role=chosen.role,
    )
