"""The reader's corrections for one record, and the readings they produce.

``ReadingSession`` is the seam between the window and the marks: it holds the automatic
``Analysis``, the current ``MarkOverride`` set, and recomputes the ``Reading`` (every interval,
QTc, axis and finding) whenever an override changes. Edits go through ``undo_stack`` as
``QUndoCommand`` objects (ui/undo.py); a sidecar store can listen to ``overrides_changed``.
"""

from __future__ import annotations

from dataclasses import replace
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui

from reviewapp.core.fiducials import MarkOverride, WaveMarks

if TYPE_CHECKING:
    from reviewapp.core.engine import Analysis, Reading

OverrideKey = tuple[str, str, int | None, str | None]


def override_key(ov: MarkOverride) -> OverrideKey:
    return (ov.scope, ov.fiducial, ov.beat_r, ov.lead)


class ReadingSession(QtCore.QObject):
    """Overrides + automatic analysis -> current reading. Emits ``changed(reading)``."""

    changed = QtCore.Signal(object)
    overrides_changed = QtCore.Signal()

    def __init__(self, analysis: Analysis, parent: QtCore.QObject | None = None) -> None:
        super().__init__(parent)
        self.analysis = analysis
        self._overrides: dict[OverrideKey, MarkOverride] = {}
        self.undo_stack = QtGui.QUndoStack(self)
        self._reading = analysis.reading(())

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
        from reviewapp.ui.undo import SetOverrideCommand

        key = override_key(ov)
        if self._overrides.get(key) == ov:
            self._recompute()
            return
        self.undo_stack.push(SetOverrideCommand(self, key, ov))

    def reset_mark(self, key: OverrideKey) -> None:
        from reviewapp.ui.undo import SetOverrideCommand

        if key in self._overrides:
            self.undo_stack.push(SetOverrideCommand(self, key, None))

    def reset_all(self) -> None:
        from reviewapp.ui.undo import ReplaceOverridesCommand

        if self._overrides:
            self.undo_stack.push(ReplaceOverridesCommand(self, {}, "Reset all marks to automatic"))

    # --- marks as the reader sees them ---------------------------------------------------
    def representative_marks(self) -> WaveMarks | None:
        rep = self._reading.marked.representative
        return rep.marks if rep is not None else None

    def beat_marks(self) -> tuple[WaveMarks, ...]:
        return self._reading.marked.beat_marks

    def is_corrected(self, scope: str, fiducial: str, beat_r: int | None = None) -> bool:
        return (scope, fiducial, beat_r, None) in self._overrides

    def representative_override(self, fiducial: str, sample: int | None) -> MarkOverride:
        return MarkOverride(scope="representative", fiducial=fiducial, sample=sample)

    def beat_override(self, beat_index: int, fiducial: str, sample: int | None) -> MarkOverride:
        beat = self.analysis.beats[beat_index]
        return MarkOverride(scope="beat", fiducial=fiducial, sample=sample, beat_r=beat.r)


def shifted_override(ov: MarkOverride, delta: int) -> MarkOverride:
    return replace(ov, sample=None if ov.sample is None else ov.sample + delta)
