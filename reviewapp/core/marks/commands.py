"""Reviewer edits as command objects with ``apply``/``revert`` (plain Python, no Qt).

A command captures, when it is made, exactly what it replaces, so ``revert(apply(r)) == r``.
Any edit of a signed-off reading reopens it (status back to ``in_progress``, sign-off cleared);
any edit of an unread reading starts it (``in_progress``); reverting restores the status the
reading had. The store (``MarksStore.do/undo/redo``) runs commands, writes the audit events
and saves; ``UndoStack`` is a plain undo/redo history over a store, and a Qt window wraps each
command in a QUndoCommand whose ``redo()`` calls ``store.do(cmd)`` (first time) or
``store.redo(cmd)`` and whose ``undo()`` calls ``store.undo(cmd)``.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Any, Literal, Protocol

from reviewapp.core.errors import MarksError
from reviewapp.core.marks.model import (
    Caliper,
    Note,
    Override,
    OverrideKey,
    ReaderStatement,
    ReviewerReading,
    Status,
    caliper_to_json,
    key_text,
    note_to_json,
    override_to_json,
    statement_to_json,
)

StatusTriple = tuple[Status, str | None, str | None]  # status, signed_off_by, signed_off_at


def status_of(r: ReviewerReading) -> StatusTriple:
    return (r.status, r.signed_off_by, r.signed_off_at)


def with_status(r: ReviewerReading, s: StatusTriple) -> ReviewerReading:
    return replace(r, status=s[0], signed_off_by=s[1], signed_off_at=s[2])


_WORKING: StatusTriple = ("in_progress", None, None)


@dataclass(frozen=True)
class Command:
    """Base of all edits. ``action`` names it in the audit trail."""

    action: str
    status_before: StatusTriple

    @property
    def reopens(self) -> bool:
        """True if applying this edit reopens a signed-off reading."""
        return self.status_before[0] == "signed_off"

    @property
    def text(self) -> str:
        """Short description for menus ("Undo move qrs_on ...")."""
        return f"{self.action.replace('_', ' ')} {self.target}"

    @property
    def target(self) -> str:
        raise NotImplementedError

    @property
    def changes_nothing(self) -> bool:
        """True when applying it would leave the reading as it is (a new value equal to the
        old one): such an edit is neither recorded nor audited."""
        return self.old_value() == self.new_value()

    def old_value(self) -> Any:
        raise NotImplementedError

    def new_value(self) -> Any:
        raise NotImplementedError

    def _forward(self, r: ReviewerReading) -> ReviewerReading:
        raise NotImplementedError

    def _backward(self, r: ReviewerReading) -> ReviewerReading:
        raise NotImplementedError

    def apply(self, r: ReviewerReading) -> ReviewerReading:
        if status_of(r) != self.status_before:
            raise MarksError(f"cannot {self.text}: the reading changed since the edit was made")
        return with_status(self._forward(r), _WORKING)

    def revert(self, r: ReviewerReading) -> ReviewerReading:
        return with_status(self._backward(r), self.status_before)


@dataclass(frozen=True)
class SetOverride(Command):
    """Set, change or remove (reset to automatic) one override."""

    key: OverrideKey
    before: Override | None
    after: Override | None
    source: str = ""  # adjudication: the reviewer the value was taken from, or "set"

    @property
    def target(self) -> str:
        where = key_text(self.key)
        return f"{where} (chosen from {self.source})" if self.source else where

    @property
    def changes_nothing(self) -> bool:
        # The value in effect is what counts: old_s (the automatic value replaced) is kept
        # from the first correction and is not a change of its own.
        b, a = self.before, self.after
        return b is not None and a is not None and b.new_s == a.new_s

    def old_value(self) -> Any:
        return None if self.before is None else override_to_json(self.before)

    def new_value(self) -> Any:
        return None if self.after is None else override_to_json(self.after)

    def _forward(self, r: ReviewerReading) -> ReviewerReading:
        if r.override(self.key) != self.before:
            raise MarksError(f"cannot {self.text}: the mark changed since the edit was made")
        return r.with_override(self.key, self.after)

    def _backward(self, r: ReviewerReading) -> ReviewerReading:
        return r.with_override(self.key, self.before)


@dataclass(frozen=True)
class SetCaliper(Command):
    """Add (before None), move/relabel, or delete (after None) one caliper at ``index``."""

    before: Caliper | None
    after: Caliper | None
    index: int

    @property
    def caliper_id(self) -> str:
        c = self.after or self.before
        assert c is not None
        return c.id

    @property
    def target(self) -> str:
        return f"caliper {self.caliper_id}"

    def old_value(self) -> Any:
        return None if self.before is None else caliper_to_json(self.before)

    def new_value(self) -> Any:
        return None if self.after is None else caliper_to_json(self.after)

    def _forward(self, r: ReviewerReading) -> ReviewerReading:
        return replace(
            r, calipers=_swap(r.calipers, self.caliper_id, self.before, self.after, self.index)
        )

    def _backward(self, r: ReviewerReading) -> ReviewerReading:
        return replace(
            r, calipers=_swap(r.calipers, self.caliper_id, self.after, self.before, self.index)
        )


@dataclass(frozen=True)
class SetNote(Command):
    """Add (before None), edit, or delete (after None) one free-text note at ``index``."""

    before: Note | None
    after: Note | None
    index: int

    @property
    def note_id(self) -> str:
        n = self.after or self.before
        assert n is not None
        return n.id

    @property
    def target(self) -> str:
        return f"note {self.note_id}"

    def old_value(self) -> Any:
        return None if self.before is None else note_to_json(self.before)

    def new_value(self) -> Any:
        return None if self.after is None else note_to_json(self.after)

    def _forward(self, r: ReviewerReading) -> ReviewerReading:
        return replace(r, notes=_swap(r.notes, self.note_id, self.before, self.after, self.index))

    def _backward(self, r: ReviewerReading) -> ReviewerReading:
        return replace(r, notes=_swap(r.notes, self.note_id, self.after, self.before, self.index))


@dataclass(frozen=True)
class SetStatement(Command):
    """Add (before None), edit, or delete (after None) one interpretation statement at
    ``index`` of the reader's list."""

    before: ReaderStatement | None
    after: ReaderStatement | None
    index: int

    @property
    def statement_id(self) -> str:
        x = self.after or self.before
        assert x is not None
        return x.id

    @property
    def target(self) -> str:
        x = self.after or self.before
        assert x is not None
        return f"statement {x.id} ({x.text[:80]})"

    def old_value(self) -> Any:
        return None if self.before is None else statement_to_json(self.before)

    def new_value(self) -> Any:
        return None if self.after is None else statement_to_json(self.after)

    def _forward(self, r: ReviewerReading) -> ReviewerReading:
        return replace(
            r,
            statements=_swap(r.statements, self.statement_id, self.before, self.after, self.index),
        )

    def _backward(self, r: ReviewerReading) -> ReviewerReading:
        return replace(
            r,
            statements=_swap(r.statements, self.statement_id, self.after, self.before, self.index),
        )


@dataclass(frozen=True)
class MoveStatement(Command):
    """Move one statement from position ``old_index`` to ``new_index`` of the reader's list."""

    statement_id: str
    old_index: int
    new_index: int

    @property
    def target(self) -> str:
        return f"statement {self.statement_id} (order)"

    def old_value(self) -> Any:
        return {"id": self.statement_id, "index": self.old_index}

    def new_value(self) -> Any:
        return {"id": self.statement_id, "index": self.new_index}

    def _move(self, r: ReviewerReading, src: int, dst: int) -> ReviewerReading:
        items = list(r.statements)
        if not 0 <= src < len(items) or items[src].id != self.statement_id:
            raise MarksError(
                f"cannot move statement {self.statement_id}: the list changed since the edit "
                "was made"
            )
        item = items.pop(src)
        items.insert(min(max(dst, 0), len(items)), item)
        return replace(r, statements=tuple(items))

    def _forward(self, r: ReviewerReading) -> ReviewerReading:
        return self._move(r, self.old_index, self.new_index)

    def _backward(self, r: ReviewerReading) -> ReviewerReading:
        return self._move(r, self.new_index, self.old_index)


@dataclass(frozen=True)
class SetStatus(Command):
    """Change the reading status; sign-off is ``after == ("signed_off", reviewer, utc)``."""

    after: StatusTriple

    @property
    def reopens(self) -> bool:
        return False  # a status change is itself the status decision, not an edit reopening

    @property
    def target(self) -> str:
        return "reading status"

    def old_value(self) -> Any:
        return _status_json(self.status_before)

    def new_value(self) -> Any:
        return _status_json(self.after)

    def apply(self, r: ReviewerReading) -> ReviewerReading:
        if status_of(r) != self.status_before:
            raise MarksError(f"cannot {self.text}: the reading changed since the edit was made")
        return with_status(r, self.after)

    def revert(self, r: ReviewerReading) -> ReviewerReading:
        return with_status(r, self.status_before)


@dataclass(frozen=True)
class Composite(Command):
    """Several edits as one (e.g. adopting both ends of an interval when adjudicating)."""

    parts: tuple[Command, ...]
    name: str

    @property
    def target(self) -> str:
        return self.name

    @property
    def changes_nothing(self) -> bool:
        return all(p.changes_nothing for p in self.parts)

    def old_value(self) -> Any:
        return {p.target[:64]: p.old_value() for p in self.parts}

    def new_value(self) -> Any:
        return {p.target[:64]: p.new_value() for p in self.parts}

    def _forward(self, r: ReviewerReading) -> ReviewerReading:
        for p in self.parts:
            r = p._forward(r)
        return r

    def _backward(self, r: ReviewerReading) -> ReviewerReading:
        for p in reversed(self.parts):
            r = p._backward(r)
        return r


def _status_json(s: StatusTriple) -> dict[str, Any]:
    return {"status": s[0], "signed_off_by": s[1], "signed_off_at": s[2]}


def _swap(items: tuple, item_id: str, expect: Any, put: Any, index: int) -> tuple:
    """Replace the item ``item_id`` (which must equal ``expect``; None = absent) by ``put``."""
    current = next((i for i, x in enumerate(items) if x.id == item_id), None)
    found = None if current is None else items[current]
    if found != expect:
        raise MarksError(f"cannot edit {item_id}: it changed since the edit was made")
    out = list(items)
    if current is not None:
        del out[current]
    if put is not None:
        out.insert(min(index, len(out)) if current is None else current, put)
    return tuple(out)


class CommandStore(Protocol):
    """What ``UndoStack`` runs commands on (``MarksStore``)."""

    revision: int

    @property
    def reading(self) -> ReviewerReading: ...

    def apply(
        self, cmd: Command, mode: Literal["do", "undo", "redo"] = "do"
    ) -> ReviewerReading: ...

    def save(self) -> None: ...


class UndoStack:
    """A plain linear undo/redo history over a store (the window uses QUndoStack instead)."""

    def __init__(self, store: CommandStore) -> None:
        self.store = store
        self._done: list[Command] = []
        self._undone: list[Command] = []
        self._revision = store.revision

    def _sync(self) -> None:
        # A reload or save-aside replaced the reading: old commands no longer apply.
        if self.store.revision != self._revision:
            self._done.clear()
            self._undone.clear()
            self._revision = self.store.revision

    def push(self, cmd: Command) -> ReviewerReading:
        """Apply and save ``cmd``. On a save error (e.g. ConflictError) the edit stays applied
        in memory and on the stack; the error propagates for the caller to resolve."""
        self._sync()
        if cmd.changes_nothing:
            return self.store.reading  # not a step: nothing changed
        result = self.store.apply(cmd)
        self._done.append(cmd)
        self._undone.clear()
        self.store.save()
        return result

    def can_undo(self) -> bool:
        self._sync()
        return bool(self._done)

    def can_redo(self) -> bool:
        self._sync()
        return bool(self._undone)

    def undo(self) -> ReviewerReading:
        self._sync()
        if not self._done:
            raise MarksError("nothing to undo")
        result = self.store.apply(self._done[-1], mode="undo")
        self._undone.append(self._done.pop())
        self.store.save()
        return result

    def redo(self) -> ReviewerReading:
        self._sync()
        if not self._undone:
            raise MarksError("nothing to redo")
        result = self.store.apply(self._undone[-1], mode="redo")
        self._done.append(self._undone.pop())
        self.store.save()
        return result

    @property
    def history(self) -> Sequence[Command]:
        return tuple(self._done)
