"""Opening a record's marks file for a reader in a reading mode, with what to tell them."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from reviewapp.core.errors import ReviewError
from reviewapp.core.marks.errors import LockedError
from reviewapp.core.marks.store import MarksStore
from reviewapp.core.record import Record
from reviewapp.core.workflow.roles import UNIDENTIFIED, ReadMode


@dataclass(frozen=True)
class MarksOpening:
    """The store (None: the reading stays in the window), a one-line note on where the marks
    are kept, and the problems met (each for a message box). ``locked``: another live window
    holds the record, so the store was opened read-only (the reader may take it over).
    ``warning``: what a take-over means for the window displaced (to show the reader)."""

    store: MarksStore | None
    note: str
    problems: tuple[ReviewError, ...] = ()
    locked: LockedError | None = None
    warning: str = ""


@dataclass(frozen=True)
class LockHolder:
    """Who holds a record's marks lock in another live window, in words."""

    reviewer: str
    where: str  # "process 123 on host"
    since: str  # "2026-12-02 00:52 UTC", or "" when the lock does not say

    @property
    def text(self) -> str:
        since = f" since {self.since}" if self.since else ""
        return f"{self.reviewer} ({self.where}){since}"


def holder_of(fields: Mapping[str, object]) -> LockHolder:
    """A lock file's fields in words."""
    from reviewapp.core.workflow.editors import when_text

    return LockHolder(
        str(fields.get("reviewer") or "another reader"),
        f"process {fields.get('pid', '?')} on {fields.get('host', '?')}",
        when_text(str(fields.get("since") or "")),
    )


# Who holds a record's marks lock: nobody ("free"); a process running on this computer
# ("live"); a process on another computer, which this one cannot check and so counts as
# holding it ("elsewhere"); or a holder that is gone (its process ended, the computer
# restarted, its process id reused, or a lock file that cannot be read: "stale").
LockState = Literal["free", "live", "elsewhere", "stale"]
_STATE_WORDS: dict[str, str] = {
    "live": "that program is running on this computer",
    "elsewhere": "on another computer: whether that window is still open cannot be checked "
    "from here, so the lock counts as held",
    "stale": "its program is gone (ended, or the computer restarted): the next reader to open "
    "the record takes it over without asking",
}


@dataclass(frozen=True)
class LockReport:
    """The state of a record's marks lock and its holder in words (None: free, or a lock file
    that cannot be read)."""

    lock_path: Path
    state: LockState
    holder: LockHolder | None

    @property
    def held(self) -> bool:
        """Whether opening the record for writing is refused without a take-over."""
        return self.state in ("live", "elsewhere")

    @property
    def text(self) -> str:
        if self.state == "free":
            return "free: no window or program holds this record's marks"
        if self.holder is None:  # what no working copy of this program writes
            return (
                "left as an unreadable lock file: the next reader to open the record takes it "
                "over without asking"
            )
        verb = "left by" if self.state == "stale" else "held by"
        return f"{verb} {self.holder.text}: {_STATE_WORDS[self.state]}"


def lock_report(record: Record) -> LockReport | None:
    """Who holds ``record``'s marks lock, and whether they can be checked; None for a record
    without a file (its marks stay in the window)."""
    from reviewapp.core.marks.convert import sidecar_path_for
    from reviewapp.core.marks.durable import host_name
    from reviewapp.core.marks.lock import is_live, lock_path_for, read_holder

    if record.source_path is None:
        return None
    path = lock_path_for(sidecar_path_for(record))
    fields = read_holder(path)
    if fields is None:
        return LockReport(path, "free", None)
    holder = holder_of(fields) if fields else None
    if not is_live(fields):
        return LockReport(path, "stale", holder)
    return LockReport(path, "live" if fields.get("host") == host_name() else "elsewhere", holder)


def lock_holder(record: Record) -> LockHolder | None:
    """The live holder of ``record``'s marks lock (another window or program), or None when
    nobody holds it or its holder is gone (a stale lock is taken over silently on opening)."""
    report = lock_report(record)
    return report.holder if report is not None and report.held else None


def _open_in(
    mode: ReadMode,
    record: Record,
    reviewer: str,
    *,
    read_only: bool = False,
    lock: bool = True,
    force_lock: bool = False,
) -> MarksStore:
    """``MarksStore.open`` for ``reviewer`` in the reading mode (``force_lock``: take over)."""
    return MarksStore.open(
        record,
        reviewer,
        role=mode.role,
        blinded=mode.blinded,
        show_automatic=mode.show_automatic,
        read_only=read_only,
        lock=lock,
        force_lock=force_lock,
    )


def take_over_marks(record: Record, reader: str, mode: ReadMode) -> MarksOpening:
    """Open ``record``'s marks for ``reader`` although another window holds them
    (``MarksStore.take_over``: the store records the take-over in the audit trail). The
    other window can no longer save there."""
    try:
        # The marks file must be one this reader can write (this record's, readable, and not
        # read by them in another role) before the holder loses the lock, not after.
        _open_in(mode, record, reader, read_only=True, lock=False).close()
        store = _open_in(mode, record, reader, force_lock=True)
    except ReviewError as err:
        return MarksOpening(None, "marks kept in this window only: the take-over failed", (err,))
    warning = "" if store.took_over is None else store.took_over.warning
    return MarksOpening(
        store, f"reading as {reader}: took over {store.path.name}", (), None, warning
    )


def open_marks(record: Record, reader: str | None, mode: ReadMode) -> MarksOpening:
    """The record's marks file for ``reader`` in ``mode``.

    Before the reader has given an id the file is opened read-only (the first edit asks who
    is reading); a record held by another window opens read-only; a file that cannot be used
    leaves the reading in the window, and the reader is told each time.
    """
    if record.source_path is None:
        return MarksOpening(None, "marks kept in this window only (the record has no file)")

    def open_as(reviewer: str, *, read_only: bool = False, lock: bool = True) -> MarksStore:
        return _open_in(mode, record, reviewer, read_only=read_only, lock=lock)

    unusable = "marks kept in this window only: the marks file could not be used"
    try:
        if reader is None:
            store = open_as(UNIDENTIFIED, read_only=True, lock=False)
            return MarksOpening(
                store, "reader not set: you are asked for your id at the first edit"
            )
        store = open_as(reader)
    except LockedError as err:
        try:
            store = open_as(reader or UNIDENTIFIED, read_only=True)
        except ReviewError as err2:
            return MarksOpening(None, unusable, (err, err2))
        return MarksOpening(store, f"marks read-only: {err.problem}", (err,), err)
    except ReviewError as err:
        return MarksOpening(None, unusable, (err,))
    where = (
        f"marks file {store.path.name}"
        if store.path.exists()
        else f"no marks file yet (your first change writes {store.path.name})"
    )
    return MarksOpening(store, f"reading as {reader}: {where}")
