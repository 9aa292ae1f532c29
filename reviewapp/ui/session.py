"""The reader's corrections for one record, and the readings they produce.

``ReadingSession`` is the seam between the window and the marks: it holds the automatic
``Analysis``, the current ``MarkOverride`` set, and recomputes the ``Reading`` (every interval,
QTc, axis and finding) whenever an override changes. Edits go through ``undo_stack`` as
``QUndoCommand`` objects (ui/undo.py). With a ``MarksStore`` (reviewapp.core.marks) every
edit is the store's command object: saved at once to the record's sidecar, with its audit
event; undo and redo run the store's undo/redo. Without one (a record with no file, or a
sidecar that cannot be used) the overrides live in memory only.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui

from reviewapp.core.errors import MarksError
from reviewapp.core.fiducials import MarkOverride, WaveMarks

if TYPE_CHECKING:
    from reviewapp.core.engine import Analysis, Reading
    from reviewapp.core.marks.commands import Command
    from reviewapp.core.marks.store import MarksStore

OverrideKey = tuple[str, str, int | None, str | None]


def override_key(ov: MarkOverride) -> OverrideKey:
    return (ov.scope, ov.fiducial, ov.beat_r, ov.lead)


class ReadingSession(QtCore.QObject):
    """Overrides + automatic analysis -> current reading. Emits ``changed(reading)``."""

    changed = QtCore.Signal(object)
    overrides_changed = QtCore.Signal()
    store_error = QtCore.Signal(object)  # a MarksError while saving an edit
    # The stored reading changed (edit, undo, redo, reload): status, notes, adjudication.
    stored = QtCore.Signal()
    # An edit reopened a signed-off reading: (signed_off_by, signed_off_at) before the edit.
    reopened = QtCore.Signal(str, str)

    def __init__(
        self,
        analysis: Analysis,
        parent: QtCore.QObject | None = None,
        store: MarksStore | None = None,
    ) -> None:
        super().__init__(parent)
        self.analysis = analysis
        self.store = store
        self._overrides: dict[OverrideKey, MarkOverride] = {}
        self.undo_stack = QtGui.QUndoStack(self)
        # Asked before every edit (the window: "who is reading?"); False drops the edit.
        self.edit_guard: Callable[[], bool] | None = None
        if store is not None:
            self._overrides = self._from_store()
        self._reading = analysis.reading(tuple(self._overrides.values()))

    # --- the sidecar store -----------------------------------------------------------------
    @property
    def rep_r_index(self) -> int | None:
        rep = self.analysis.representative
        return None if rep is None else rep.r_index

    def _from_store(self) -> dict[OverrideKey, MarkOverride]:
        assert self.store is not None
        return {override_key(ov): ov for ov in self.store.engine_overrides(self.rep_r_index)}

    def reload_from_store(self) -> None:
        """Take the overrides from the store (after its do/undo/redo, reload or merge)."""
        self._overrides = self._from_store()
        self._recompute()
        self.overrides_changed.emit()
        self.stored.emit()

    def set_store(self, store: MarksStore | None) -> None:
        """Continue with another store (e.g. the reader identified themselves); the undo
        history belongs to the previous one and is cleared."""
        self.undo_stack.clear()
        self.store = store
        if store is not None:
            self.reload_from_store()

    def may_edit(self) -> bool:
        return self.edit_guard is None or self.edit_guard()

    def push_store_command(self, cmd: Command, text: str) -> bool:
        """Run a marks-store command (note, status, sign-off, adjudication) as one undoable
        step; False (and ``store_error``) if there is no writable store."""
        from reviewapp.ui.undo import StoreCommand

        if self.store is None or self.store.read_only:
            from reviewapp.core.marks.errors import ReadOnlyError

            path = None if self.store is None else self.store.path
            self.store_error.emit(
                ReadOnlyError("this reading cannot be changed here (no writable marks file)", path)
            )
            return False
        self.undo_stack.push(StoreCommand(self, cmd, text))
        return True

    def ensure_automatic_stored(self) -> None:
        """Record the engine's marks in the sidecar before the first edit, so each override
        keeps the automatic value it replaced (``old_s``)."""
        from reviewapp import __version__
        from reviewapp.core.marks.convert import automatic_from_analysis

        st = self.store
        if st is None or st.read_only or st.blinded:
            return
        auto = st.automatic
        if (
            auto is None
            or getattr(auto, "engine_version", __version__) != self.analysis.engine_version
        ):
            st.set_automatic(automatic_from_analysis(self.analysis))

    def close_store(self) -> None:
        if self.store is not None:
            self.store.close()

    # --- reading -------------------------------------------------------------------------
    @property
    def reading(self) -> Reading:
        return self._reading

    @property
    def fs_hz(self) -> float:
        return self.analysis.fs_hz

    def overrides(self) -> tuple[MarkOverride, ...]:
        return tuple(self._overrides.values())

    def override_for(self, key: OverrideKey) -> MarkOverride | None:
        return self._overrides.get(key)

    def _recompute(self, extra: MarkOverride | None = None) -> None:
        ovs = dict(self._overrides)
        if extra is not None:
            ovs[override_key(extra)] = extra
        self._reading = self.analysis.reading(tuple(ovs.values()))
        self.changed.emit(self._reading)

    # --- raw edits (undo commands call these) --------------------------------------------
    def put(self, key: OverrideKey, ov: MarkOverride | None) -> None:
        """Set (or with None, remove: back to automatic) one override, then recompute."""
        if ov is None:
            self._overrides.pop(key, None)
        else:
            self._overrides[key] = ov
        self._recompute()
        self.overrides_changed.emit()

    def replace_all(self, overrides: dict[OverrideKey, MarkOverride]) -> None:
        self._overrides = dict(overrides)
        self._recompute()
        self.overrides_changed.emit()

    def snapshot(self) -> dict[OverrideKey, MarkOverride]:
        return dict(self._overrides)

    # --- live preview during a drag (not an edit until committed) ------------------------
    def preview(self, ov: MarkOverride) -> Reading:
        self._recompute(ov)
        return self._reading

    def cancel_preview(self) -> None:
        self._recompute()

    # --- edits through the undo stack ----------------------------------------------------
    def commit(self, ov: MarkOverride) -> None:
        from reviewapp.ui.undo import SetOverrideCommand, StoreCommand, describe

        key = override_key(ov)
        if self._overrides.get(key) == ov or not self.may_edit():
            self._recompute()
            self.overrides_changed.emit()  # a dropped drag snaps back
            return
        if self.store is None:
            self.undo_stack.push(SetOverrideCommand(self, key, ov))
            return
        try:
            self.ensure_automatic_stored()
            cmd = self.store.edits.from_mark(ov, self.rep_r_index)
        except MarksError as err:
            self._recompute()
            self.store_error.emit(err)
            return
        self.undo_stack.push(StoreCommand(self, cmd, describe(key, ov, self.fs_hz)))

    def _store_reset_command(self, key: OverrideKey):
        assert self.store is not None
        scope, fiducial, beat_r, lead = key
        return self.store.edits.reset_fiducial(
            fiducial,
            scope=scope,  # type: ignore[arg-type]
            beat_r_s=None if beat_r is None else beat_r / self.fs_hz,
            lead=lead,
        )

    def reset_mark(self, key: OverrideKey) -> None:
        from reviewapp.ui.undo import SetOverrideCommand, StoreCommand, describe

        if key not in self._overrides or not self.may_edit():
            return
        if self.store is None:
            self.undo_stack.push(SetOverrideCommand(self, key, None))
            return
        try:
            cmd = self._store_reset_command(key)
        except MarksError as err:
            self.store_error.emit(err)
            return
        self.undo_stack.push(StoreCommand(self, cmd, describe(key, None, self.fs_hz)))

    def reset_all(self) -> None:
        from reviewapp.ui.undo import ReplaceOverridesCommand

        if not self._overrides or not self.may_edit():
            return
        if self.store is None:
            self.undo_stack.push(ReplaceOverridesCommand(self, {}, "Reset all marks to automatic"))
            return
        # One undo step in the window; one audited reset per mark in the sidecar.
        self.undo_stack.beginMacro("Reset all marks to automatic")
        for key in list(self._overrides):
            self.reset_mark(key)
        self.undo_stack.endMacro()

    # --- marks as the reader sees them ---------------------------------------------------
    def representative_marks(self) -> WaveMarks | None:
        rep = self._reading.marked.representative
        return rep.marks if rep is not None else None

    def beat_marks(self) -> tuple[WaveMarks, ...]:
        return self._reading.marked.beat_marks

    @property
    def hide_automatic(self) -> bool:
        """A blinded read without the automatic marks: nothing the engine placed may show."""
        st = self.store
        return st is not None and st.blinded and not st.show_automatic

    def is_corrected(
        self, scope: str, fiducial: str, beat_r: int | None = None, lead: str | None = None
    ) -> bool:
        """Whether the reader set this mark (``lead``: that lead's own mark, else global)."""
        return (scope, fiducial, beat_r, lead) in self._overrides

    def representative_override(self, fiducial: str, sample: int | None) -> MarkOverride:
        return MarkOverride(scope="representative", fiducial=fiducial, sample=sample)

    def beat_override(self, beat_index: int, fiducial: str, sample: int | None) -> MarkOverride:
        beat = self.analysis.beats[beat_index]
        return MarkOverride(scope="beat", fiducial=fiducial, sample=sample, beat_r=beat.r)


def shifted_override(ov: MarkOverride, delta: int) -> MarkOverride:
    return replace(ov, sample=None if ov.sample is None else ov.sample + delta)
