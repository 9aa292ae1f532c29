"""Undoable edits of the reader's marks and calipers (QUndoCommand over a ReadingSession)."""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

from PySide6 import QtGui

from reviewapp.core.errors import MarksError
from reviewapp.core.fiducials import FIDUCIAL_LABELS, MarkOverride

if TYPE_CHECKING:
    from reviewapp.core.marks.commands import Command
    from reviewapp.ui.calipers import CaliperPair, CaliperState
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


def run_store(session: ReadingSession, cmd: Command, mode: str) -> bool:
    """``store.do`` / ``redo`` / ``undo`` of one marks-store command (saved with its audit
    event), then the session follows the store. False (and ``store_error``) if it failed."""
    store = session.store
    assert store is not None
    before = store.reading
    try:
        getattr(store, mode)(cmd)
    except MarksError as err:
        session.reload_from_store()
        session.store_error.emit(err)
        return False
    session.reload_from_store()
    if before.status == "signed_off" and store.reading.status != "signed_off":
        # The store recorded a "reopen" event; the window tells the reader.
        session.reopened.emit(before.signed_off_by or "", before.signed_off_at or "")
    return True


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
        if not run_store(self.session, self.cmd, "redo" if self._done_once else "do"):
            self.setObsolete(True)
            return
        self._done_once = True

    def undo(self) -> None:
        run_store(self.session, self.cmd, "undo")


class CaliperCommand(QtGui.QUndoCommand):
    """Add (``old`` None), move / relabel, or delete (``new`` None) one caliper.

    The edit has already happened on the paper when the command is pushed (the reader
    dragged, typed or pressed Delete), so the first redo only records it: with ``store_cmd``
    (the store's ``add_caliper`` / ``move_caliper`` / ``delete_caliper``) through
    ``store.do``, once, with its audit event. Later redo / undo run ``store.redo`` /
    ``store.undo`` and ``place(caliper, state)`` puts the caliper where that step left it
    (``None``: off the paper). Without a store the step lives in the window only.

    A save that fails is shown to the reader and the command made obsolete; a move or delete
    goes back on the paper, an added caliper stays there (kept in this window only).
    """

    def __init__(
        self,
        session: ReadingSession,
        place: Callable[[CaliperPair, CaliperState | None], None],
        caliper: CaliperPair,
        old: CaliperState | None,
        new: CaliperState | None,
        text: str,
        store_cmd: Command | None = None,
    ) -> None:
        super().__init__(text)
        self.session = session
        self.place = place
        self.caliper = caliper
        self.old, self.new = old, new
        self.store_cmd = store_cmd
        self._done_once = False

    def redo(self) -> None:
        c = self.caliper
        if self.store_cmd is not None and self.session.store is not None:
            if not run_store(self.session, self.store_cmd, "redo" if self._done_once else "do"):
                self.setObsolete(True)
                if not self._done_once:
                    if self.old is None:
                        c.committed, c.store_id = None, None
                    else:
                        self.place(c, self.old)
                return
            if self.new is not None:
                c.store_id = self.store_cmd.caliper_id  # type: ignore[attr-defined]
        if self._done_once:
            self.place(c, self.new)
        else:
            c.committed = self.new
        self._done_once = True

    def undo(self) -> None:
        if self.store_cmd is not None and self.session.store is not None:
            run_store(self.session, self.store_cmd, "undo")
        self.place(self.caliper, self.old)


class MarchCommand(QtGui.QUndoCommand):
    """March-out on or off for one time caliper (drawn in the window only: the marks file
    keeps no march-out, so there is nothing to save)."""

    def __init__(self, caliper: CaliperPair, on: bool) -> None:
        super().__init__(f"March-out {'on' if on else 'off'} ({caliper.name})")
        self.caliper, self.on = caliper, on

    def redo(self) -> None:
        self.caliper.march = self.on
        self.caliper.update()

    def undo(self) -> None:
        self.caliper.march = not self.on
        self.caliper.update()
