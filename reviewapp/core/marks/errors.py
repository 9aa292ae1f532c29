"""The specific marks errors. All are ``MarksError`` so the window and CLI need catch one type."""

from __future__ import annotations

from pathlib import Path

from reviewapp.core.errors import MarksError


class UnreadableSidecarError(MarksError):
    """The sidecar is corrupt, hostile, of a future schema version or not valid.

    The file is left untouched. ``MarksStore.open(..., fresh_if_unreadable=True)`` (or
    ``set_aside(path)``) renames it to ``<name>.marks.json.set-aside-<utc>`` so a fresh reading
    can start beside it.
    """


class FutureVersionError(UnreadableSidecarError):
    """The sidecar was written by a newer reviewapp (higher schema version)."""


class ForeignSidecarError(UnreadableSidecarError):
    """The sidecar belongs to another record, or the record's files changed since it was made."""

    def __init__(self, problem: str, path: str | Path | None, *, expected: str, found: str):
        self.expected_fingerprint = expected
        self.found_fingerprint = found
        super().__init__(problem, path)


class ConflictError(MarksError):
    """The sidecar changed on disk since this store loaded or last saved it.

    Nothing was written. The store keeps the unsaved reading in memory; resolve with one of
    ``store.resolve_reload()``, ``store.resolve_save_aside()`` or ``store.resolve_merge()``
    (listed in ``options``).
    """

    options: tuple[str, ...] = ("reload", "save_aside", "merge")


class TakenOverError(ConflictError):
    """Another window took this record's lock over (``MarksStore.take_over``): this store can
    no longer save to the marks file. Nothing was written; the reading stays in memory. Keep it
    as a separate file (``store.resolve_save_aside()``) and continue read-only. ``holder``: the
    new holder's lock fields (empty when they cannot be read)."""

    options: tuple[str, ...] = ("save_aside",)

    def __init__(self, problem: str, path: str | Path | None, holder: dict[str, object]):
        self.holder = holder
        super().__init__(problem, path)


class MergeConflictError(ConflictError):
    """A merge was asked for but both sides changed the same item; ``conflicts`` names them."""

    def __init__(self, problem: str, path: str | Path | None, conflicts: tuple[str, ...]):
        self.conflicts = conflicts
        super().__init__(problem, path)


class LockedError(MarksError):
    """Another live window (or process) holds the record's lock; ``holder`` says who."""

    def __init__(self, problem: str, path: str | Path | None, holder: dict[str, object]):
        self.holder = holder
        super().__init__(problem, path)


class BlindedError(MarksError):
    """A blinded reader asked for another reader's marks, values or notes."""


class ReadOnlyError(MarksError):
    """An edit was attempted on a store opened read-only."""
