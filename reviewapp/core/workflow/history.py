"""The reading's undo history: one step per reader action, each made of the marks commands it
ran (a reset of every mark is one step of many commands) and window-only changes such as a
caliper's march-out."""

from __future__ import annotations

from dataclasses import dataclass

from reviewapp.core.marks.commands import Command
from reviewapp.core.workflow.memory import Holder


@dataclass(frozen=True)
class CommandPart:
    """A marks command run on the reading that holds it (the marks file or the window)."""

    holder: Holder
    command: Command


@dataclass(frozen=True)
class MarchPart:
    """March-out of one time caliper on or off (drawn in the window only; not in the file)."""

    caliper_id: str
    on: bool


Part = CommandPart | MarchPart


@dataclass(frozen=True)
class Step:
    """One undoable reader action and the words that name it ("Move T end (median beat)")."""

    text: str
    parts: tuple[Part, ...]


class History:
    """A linear undo / redo history of steps (a new step drops the redo side)."""

    def __init__(self) -> None:
        self._done: list[Step] = []
        self._undone: list[Step] = []

    def push(self, step: Step) -> None:
        self._done.append(step)
        self._undone.clear()

    def clear(self) -> None:
        self._done.clear()
        self._undone.clear()

    def take_undo(self) -> Step | None:
        if not self._done:
            return None
        step = self._done.pop()
        self._undone.append(step)
        return step

    def take_redo(self) -> Step | None:
        if not self._undone:
            return None
        step = self._undone.pop()
        self._done.append(step)
        return step

    @property
    def undo_text(self) -> str | None:
        return self._done[-1].text if self._done else None

    @property
    def redo_text(self) -> str | None:
        return self._undone[-1].text if self._undone else None

    def __len__(self) -> int:
        return len(self._done)
