"""Opening a record's marks file for a reader in a reading mode, with what to tell them."""

from __future__ import annotations

from dataclasses import dataclass

from reviewapp.core.errors import ReviewError
from reviewapp.core.marks.errors import LockedError
from reviewapp.core.marks.store import MarksStore
from reviewapp.core.record import Record
from reviewapp.core.workflow.roles import UNIDENTIFIED, ReadMode


@dataclass(frozen=True)
class MarksOpening:
    """The store (None: the reading stays in the window), a one-line note on where the marks
    are kept, and the problems met (each for a message box)."""

    store: MarksStore | None
    note: str
    problems: tuple[ReviewError, ...] = ()


def open_marks(record: Record, reader: str | None, mode: ReadMode) -> MarksOpening:
    """The record's marks file for ``reader`` in ``mode``.

    Before the reader has given an id the file is opened read-only (the first edit asks who
    is reading); a record held by another window opens read-only; a file that cannot be used
    leaves the reading in the window, and the reader is told each time.
    """
    if record.source_path is None:
        return MarksOpening(None, "marks kept in this window only (the record has no file)")

    def open_as(reviewer: str, *, read_only: bool = False, lock: bool = True) -> MarksStore:
        return MarksStore.open(
            record,
            reviewer,
            role=mode.role,
            blinded=mode.blinded,
            show_automatic=mode.show_automatic,
            read_only=read_only,
            lock=lock,
        )

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
        return MarksOpening(store, f"marks read-only: {err.problem}", (err,))
    except ReviewError as err:
        return MarksOpening(None, unusable, (err,))
    where = (
        f"marks file {store.path.name}"
        if store.path.exists()
        else f"no marks file yet (your first change writes {store.path.name})"
    )
    return MarksOpening(store, f"reading as {reader}: {where}")
