"""The editors of a reading's parts besides its marks: calipers, notes, and the decisions
(sign-off, the adjudicator's final values). Each makes marks commands and hands them to the
workflow as one step (``StepRecorder.record_step``).

``StatementEditor`` keeps the reader's interpretation statements, shaped like ``NoteEditor``.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import replace
from typing import TYPE_CHECKING, Protocol

from reviewapp.core.errors import MarksError, ReviewError
from reviewapp.core.fiducials import FIDUCIAL_LABELS
from reviewapp.core.marks.commands import Command
from reviewapp.core.marks.model import Caliper
from reviewapp.core.marks.store import MarksStore
from reviewapp.core.workflow.history import MarchPart, Part
from reviewapp.core.workflow.memory import Holder, MemoryMarks
from reviewapp.core.workflow.outcome import Outcome
from reviewapp.core.workflow.roles import UNIDENTIFIED

if TYPE_CHECKING:
    from reviewapp.core.interpret import Interpretation

Build = tuple[Holder, Callable[[Holder], Command]]


class StepRecorder(Protocol):
    """What an editor needs from the workflow."""

    store: MarksStore | None
    memory: MemoryMarks
    marching: set[str]

    @property
    def identified(self) -> bool: ...

    def may_edit(self) -> bool: ...

    def store_automatic_first(self) -> Outcome | None: ...

    def all_calipers(self) -> tuple[Caliper, ...]: ...

    def automatic_interpretation(self) -> Interpretation | None: ...

    def record_step(
        self, text: str, builds: Sequence[Build], extra: Sequence[Part] = ()
    ) -> Outcome: ...


def read_only(store: MarksStore | None) -> Outcome:
    from reviewapp.core.marks.errors import ReadOnlyError

    path = None if store is None else store.path
    return Outcome.failed(ReadOnlyError("this reading is open read-only here", path))


def writable_store(
    w: StepRecorder, what: str, *, with_automatic: bool = False
) -> MarksStore | Outcome:
    """The marks file to change, asking who reads first; an Outcome when it cannot be.
    ``with_automatic``: the engine's marks are stored first (the values marks replace)."""
    if w.store is None:
        return Outcome.failed(MarksError(f"{what} need a marks file; this record has none"))
    if not w.may_edit():
        return Outcome.unchanged("Not changed: no reader id given.")
    st = w.store  # the question may have reopened it under the reader's id
    if st is None or st.read_only:
        return read_only(st)
    failed = w.store_automatic_first() if with_automatic else None
    return st if failed is None else failed


class CaliperEditor:
    """Calipers (seconds from record start, mV): add, move or relabel, delete, march-out.
    Without a writable marks file they are kept in the window, still undoable."""

    def __init__(self, workflow: StepRecorder) -> None:
        self._w = workflow

    def _target(self) -> Holder:
        w = self._w
        if w.store is not None and w.store.read_only and not w.identified:
            w.may_edit()  # asks who is reading; an answer reopens the file writable
        st = w.store
        return st if st is not None and not st.read_only else w.memory

    def _holding(self, caliper_id: str) -> Holder | None:
        for h in (self._w.store, self._w.memory):
            if h is not None and h.reading.caliper(caliper_id) is not None:
                return h
        return None

    def add(self, c: Caliper) -> Outcome:
        """A new caliper (its id given: ``c.id``, or a new one when empty) as one undo step."""
        h = self._target()

        def build(h: Holder) -> Command:
            return h.edits.add_caliper(
                c.kind,
                c.t1_s,
                c.t2_s,
                v1_mv=c.v1_mv,
                v2_mv=c.v2_mv,
                lead=c.lead,
                label=c.label,
                caliper_id=c.id or None,
            )

        out = self._w.record_step(f"Add caliper {c.label}".rstrip(), [(h, build)])
        if h is self._w.memory and self._w.store is not None and out.recorded:
            why = "no reader id given" if not self._w.identified else "the reading is read-only"
            return replace(out, message=f"Caliper {c.label} kept in this window only: {why}.")
        return out

    def move(self, caliper_id: str, **changes: object) -> Outcome:
        """Change any of t1_s, t2_s, v1_mv, v2_mv, lead, label: one undo step."""
        h = self._holding(caliper_id)
        old = None if h is None else h.reading.caliper(caliper_id)
        if h is None or old is None:
            return Outcome.unchanged("No change: that caliper is not in this reading.")
        moved = any(k != "label" and v != getattr(old, k) for k, v in changes.items())
        new_label = changes.get("label", old.label)
        text = (
            f"Rename caliper {old.label} to {new_label}"
            if new_label != old.label and not moved
            else f"Move caliper {old.label}"
        )
        return self._w.record_step(
            text, [(h, lambda h: h.edits.move_caliper(caliper_id, **changes))]
        )

    def delete(self, caliper_id: str) -> Outcome:
        h = self._holding(caliper_id)
        old = None if h is None else h.reading.caliper(caliper_id)
        if h is None or old is None:
            return Outcome.unchanged("No change: that caliper is not in this reading.")
        return self._w.record_step(
            f"Delete caliper {old.label}".rstrip(),
            [(h, lambda h: h.edits.delete_caliper(caliper_id))],
        )

    def set_march(self, caliper_id: str, on: bool) -> Outcome:
        """March-out of a time caliper on or off: an undo step of the window only (the marks
        file keeps no march-out)."""
        if (caliper_id in self._w.marching) == on:
            return Outcome.unchanged(f"No change: march-out is {'on' if on else 'off'} already.")
        label = next((c.label for c in self._w.all_calipers() if c.id == caliper_id), "")
        return self._w.record_step(
            f"March-out {'on' if on else 'off'} ({label})", [], [MarchPart(caliper_id, on)]
        )


class NoteEditor:
    """Free-text notes of the reading, kept in the marks file."""

    def __init__(self, workflow: StepRecorder) -> None:
        self._w = workflow

    def add(self, text: str) -> Outcome:
        text = text.strip()
        if not text:
            return Outcome.unchanged("No note added: the text is empty.")
        st = writable_store(self._w, "notes")
        if isinstance(st, Outcome):
            return st
        return self._w.record_step("Add note", [(st, lambda h: h.edits.add_note(text))])

    def edit(self, note_id: str, text: str) -> Outcome:
        text = text.strip()
        if not text:
            return Outcome.unchanged("Note not changed: the text is empty (delete it instead).")
        st = writable_store(self._w, "notes")
        if isinstance(st, Outcome):
            return st
        return self._w.record_step("Edit note", [(st, lambda h: h.edits.edit_note(note_id, text))])

    def delete(self, note_id: str) -> Outcome:
        st = writable_store(self._w, "notes")
        if isinstance(st, Outcome):
            return st
        return self._w.record_step("Delete note", [(st, lambda h: h.edits.delete_note(note_id))])


AUTOMATIC_HIDDEN = (
    "Not available: the automatic statements are hidden in this blinded read (automatic "
    "marks hidden); pick statements from the catalogue or type your own."
)


class StatementEditor:
    """The reader's interpretation: statements picked from the catalogue (searchable), the
    automatic statements taken over when the reader asks for them, and free text; each can be
    edited, removed and moved. Kept in the marks file (one undo step and one audit event per
    action), in the reader's order."""

    def __init__(self, workflow: StepRecorder) -> None:
        self._w = workflow

    def _store(self) -> MarksStore | Outcome:
        return writable_store(self._w, "interpretation statements")

    def add(self, code: str, text: str | None = None) -> Outcome:
        """A catalogue statement (its trade term, or ``text`` when given) at the end."""
        from reviewapp.core.interpret import CATALOGUE, FREE_TEXT

        d = CATALOGUE.get(code)
        if d is None:
            return Outcome.unchanged(f"No statement added: {code!r} is not in the catalogue.")
        if code == FREE_TEXT:
            return self.add_free_text(text or "")
        st = self._store()
        if isinstance(st, Outcome):
            return st
        words = (text or d.text).strip()
        if any(x.code == code for x in st.reading.statements):
            return Outcome.unchanged(f"No statement added: {d.text!r} is in the list already.")
        return self._w.record_step(
            f"Add statement {d.text}", [(st, lambda h: h.edits.add_statement(code, words))]
        )

    def add_free_text(self, text: str) -> Outcome:
        from reviewapp.core.interpret import FREE_TEXT

        text = text.strip()
        if not text:
            return Outcome.unchanged("No statement added: the text is empty.")
        st = self._store()
        if isinstance(st, Outcome):
            return st
        return self._w.record_step(
            "Add statement (own words)",
            [(st, lambda h: h.edits.add_statement(FREE_TEXT, text, origin="free_text"))],
        )

    def start_from_automatic(self) -> Outcome:
        """The automatic statements the list does not hold yet, added at its end (one step).
        Refused in a blinded read that hides the automatic marks."""
        auto = self._w.automatic_interpretation()
        if auto is None:
            return Outcome.unchanged(AUTOMATIC_HIDDEN)
        st = self._store()
        if isinstance(st, Outcome):
            return st
        have = {x.code for x in st.reading.statements}
        items = [(s.code, s.line) for s in auto.statements if s.code not in have]
        if not items:
            return Outcome.unchanged("No change: every automatic statement is in the list already.")
        name = f"{len(items)} automatic statement(s)"
        return self._w.record_step(
            f"Add {name}",
            [(st, lambda h: h.edits.add_statements(items, origin="automatic", name=name))],
        )

    def edit(self, statement_id: str, text: str) -> Outcome:
        text = text.strip()
        if not text:
            return Outcome.unchanged(
                "Statement not changed: the text is empty (remove it instead)."
            )
        st = self._store()
        if isinstance(st, Outcome):
            return st
        return self._w.record_step(
            "Edit statement", [(st, lambda h: h.edits.edit_statement(statement_id, text))]
        )

    def delete(self, statement_id: str) -> Outcome:
        st = self._store()
        if isinstance(st, Outcome):
            return st
        old = st.reading.statement(statement_id)
        if old is None:
            return Outcome.unchanged("No change: that statement is not in this reading.")
        return self._w.record_step(
            f"Remove statement {old.text}",
            [(st, lambda h: h.edits.delete_statement(statement_id))],
        )

    def move(self, statement_id: str, delta: int) -> Outcome:
        """Move a statement ``delta`` places (-1 up, +1 down)."""
        st = self._store()
        if isinstance(st, Outcome):
            return st
        items = st.reading.statements
        old = st.reading.statement(statement_id)
        if old is None:
            return Outcome.unchanged("No change: that statement is not in this reading.")
        i = items.index(old)
        j = max(0, min(len(items) - 1, i + int(delta)))
        if i == j:
            where = "first" if delta < 0 else "last"
            return Outcome.unchanged(f"No change: {old.text!r} is {where} already.")
        return self._w.record_step(
            f"Move statement {'up' if j < i else 'down'}",
            [(st, lambda h: h.edits.move_statement(statement_id, j))],
        )

    def adopt(self, reviewer: str, statement_id: str) -> Outcome:
        """Adjudication: take another reader's statement into this (the adjudicator's)
        interpretation, naming where it came from."""
        st = writable_store(self._w, "final statements")
        if isinstance(st, Outcome):
            return st
        try:
            st.require_adjudicator()
            source = st.readings().get(reviewer)
        except ReviewError as err:
            return Outcome.failed(err)
        x = None if source is None else source.statement(statement_id)
        if x is None:
            return Outcome.failed(MarksError(f"no such statement in {reviewer}'s reading"))
        if any(y.key == x.key for y in st.reading.statements):
            return Outcome.unchanged(f"No change: {x.text!r} is in the final statements already.")
        return self._w.record_step(
            f"Adjudicate statement {x.text}: from {reviewer}",
            [
                (
                    st,
                    lambda h: h.edits.add_statement(
                        x.code, x.text, origin="reader", from_reader=reviewer
                    ),
                )
            ],
        )


def when_text(at: str | None) -> str:
    """'2026-12-02 00:52 UTC' from the marks file's ISO time ('' when absent).

    >>> when_text("2026-12-02T00:52:11Z")
    '2026-12-02 00:52 UTC'
    """
    return "" if not at else at[:16].replace("T", " ") + " UTC"


class DecisionEditor:
    """Sign-off, and the adjudicator's final values."""

    def __init__(self, workflow: StepRecorder) -> None:
        self._w = workflow

    def sign_off_refusal(self) -> str | None:
        """Why this reading cannot be signed off now (None: it can; a reader not identified
        yet is asked at the sign-off)."""
        st = self._w.store
        if st is None:
            return "a reading can be signed off only for a record file (marks file)"
        if st.read_only and st.reviewer != UNIDENTIFIED:
            return "this reading is open read-only here"
        if st.reading.status == "signed_off":
            return "this reading is already signed off"
        return None

    def sign_off(self) -> Outcome:
        st = writable_store(self._w, "sign-offs")
        if isinstance(st, Outcome):
            return st
        if st.reading.status == "signed_off":
            return Outcome.unchanged("No change: this reading is signed off already.")
        out = self._w.record_step("Sign off reading", [(st, lambda h: h.edits.sign_off())])
        r = st.reading
        if out.done and r.status == "signed_off":
            when = when_text(r.signed_off_at)
            text = f"Signed off by {r.signed_off_by} at {when}; saved to {st.path.name}."
            return replace(out, message=text)
        return out

    def adjudicate_fiducial(
        self, fiducial: str, value_s: float | None, chosen_from: str
    ) -> Outcome:
        """The final median-beat value of a fiducial (s from R), from a reader or "set"."""
        st = writable_store(self._w, "final values", with_automatic=True)
        if isinstance(st, Outcome):
            return st
        try:
            cmd = st.edits.adjudicate_fiducial(fiducial, value_s, chosen_from=chosen_from)
        except ReviewError as err:
            return Outcome.failed(err)
        label = FIDUCIAL_LABELS.get(fiducial, fiducial)
        value = "absent" if value_s is None else f"{value_s * 1000:.0f} ms"
        if cmd.changes_nothing:
            return Outcome.unchanged(f"No change: the final {label} is {value} already.")
        where = "set" if chosen_from == "set" else f"from {chosen_from}"
        return self._w.record_step(f"Adjudicate {label}: {value} {where}", [(st, lambda h: cmd)])

    def adopt_interval(self, interval: str, label: str, source: str) -> Outcome:
        """Adjudicate an interval by adopting both its end marks from ``source``'s reading."""
        st = writable_store(self._w, "final values", with_automatic=True)
        if isinstance(st, Outcome):
            return st
        reading = st.readings().get(source)
        if reading is None:
            return Outcome.failed(MarksError(f"no reading by {source} in this marks file"))
        try:
            cmd = st.edits.adopt_interval(interval, reading)
        except ReviewError as err:
            return Outcome.failed(err)
        if cmd.changes_nothing:
            return Outcome.unchanged(f"No change: the final {label} marks are {source}'s already.")
        return self._w.record_step(
            f"Adjudicate {label}: marks from {source}", [(st, lambda h: cmd)]
        )
