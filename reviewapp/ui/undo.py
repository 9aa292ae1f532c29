"""Undoable edits of the reader's marks (QUndoCommand over a ReadingSession)."""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6 import QtGui

from reviewapp.core.errors import MarksError
from reviewapp.core.fiducials import FIDUCIAL_LABELS, MarkOverride

if TYPE_CHECKING:
    from reviewapp.core.marks.commands import Command
    from reviewapp.ui.session import OverrideKey, ReadingSession


def describe(key: OverrideKey, ov: MarkOverride | None, fs_hz: float) -> str:
    scope, fiducial, beat_r, _lead = key
    what = FIDUCIAL_LABELS.get(fiducial, fiducial)
    where = "median beat" if scope == "representative" else f"beat at {beat_r / fs_hz:.2f} s"
    if ov is None:
        return f"Reset {what} ({where}) to automatic"
    if ov.sample is None:
        return f"Mark {what} absent ({where})"
    return f"Move {what} ({where})"


class SetOverrideCommand(QtGui.QUndoCommand):
    """Set one override (or remove it with ``new=None``); undo restores what was there."""

    def __init__(self, session: ReadingSession, key: OverrideKey, new: MarkOverride | None) -> None:
        super().__init__(describe(key, new, session.fs_hz))
        self.session = session
        self.key = key
        self.new = new
        self.old = session.override_for(key)

    def redo(self) -> None:
        self.session.put(self.key, self.new)

    def undo(self) -> None:
        self.session.put(self.key, self.old)


class ReplaceOverridesCommand(QtGui.QUndoCommand):
    def __init__(self, session: ReadingSession, new: dict, text: str) -> None:
        super().__init__(text)
        self.session = session
        self.new = dict(new)
        self.old = session.snapshot()

    def redo(self) -> None:
        self.session.replace_all(self.new)

    def undo(self) -> None:
        self.session.replace_all(self.old)


class StoreCommand(QtGui.QUndoCommand):
    """One marks-store edit (``reviewapp.core.marks`` command object) in the window's undo
    stack: redo runs ``store.do`` the first time and ``store.redo`` after; undo runs
    ``store.undo``. Each is saved to the sidecar with its audit event by the store.

    A save that fails (conflict, read-only, disk) is shown to the reader and the command is
    made obsolete, so the undo stack never holds an edit the sidecar does not.
    """

    def __init__(self, session: ReadingSession, cmd: Command, text: str) -> None:
        super().__init__(text)
        self.session = session
        self.cmd = cmd
        self._done_once = False

    def redo(self) -> None:
        store = self.session.store
        assert store is not None
        before = store.reading
        try:
            if self._done_once:
                store.redo(self.cmd)
            else:
                store.do(self.cmd)
                self._done_once = True
        except MarksError as err:
            self.setObsolete(True)
            self.session.reload_from_store()
            self.session.store_error.emit(err)
            return
        self.session.reload_from_store()
        if before.status == "signed_off" and store.reading.status != "signed_off":
            # The store recorded a "reopen" event; the window tells the reader.
            self.session.reopened.emit(before.signed_off_by or "", before.signed_off_at or "")

    def undo(self) -> None:
        store = self.session.store
        assert store is not None
        try:
            store.undo(self.cmd)
        except MarksError as err:
            self.session.store_error.emit(err)
        self.session.reload_from_store()
