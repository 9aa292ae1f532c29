"""Undoable edits of the reader's marks (QUndoCommand over a ReadingSession)."""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6 import QtGui

from reviewapp.core.fiducials import FIDUCIAL_LABELS, MarkOverride

if TYPE_CHECKING:
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
