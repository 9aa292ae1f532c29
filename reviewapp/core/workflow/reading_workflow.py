"""The reading of one record by one reader, as plain Python: the model the window's views show
and send their edits to (tested without Qt in tests/workflow).

``ReadingWorkflow`` holds the automatic ``Analysis``, the marks file (``MarksStore``) opened
for the reader in their reading mode, and the reader's corrections. A correction lives in one
place only, the reader's ``ReviewerReading`` (the marks model's ``Override``, keyed by
``OverrideKey``); the engine's overrides and every value on screen are derived from it.

Every change is a marks command (``reviewapp.core.marks.commands``) run on the holder of the
reading: the marks file, saved at once with its audit event, or ``MemoryMarks`` when the
reading stays in the window. One reader action is one undo step (``history.Step``); a new
value equal to the old one is not a step and is not audited. Each action returns an
``Outcome`` saying what actually happened, and listeners hear a ``WorkflowChange``.

The parts of a reading each have their own small editor on the workflow: ``calipers``,
``notes``, ``statements`` (the reader's interpretation; ``automatic_interpretation`` gives
the engine's statements, None in a blinded read that hides the automatic marks) and
``decisions`` (sign-off, adjudication).
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Literal

from reviewapp.core.errors import MarksError, ReviewError
from reviewapp.core.fiducials import MarkOverride, WaveMarks, match_beat
from reviewapp.core.marks.commands import Command
from reviewapp.core.marks.convert import automatic_from_analysis, overrides_for
from reviewapp.core.marks.errors import ConflictError, TakenOverError
from reviewapp.core.marks.model import Caliper, Override, ReviewerReading
from reviewapp.core.marks.store import MarksStore
from reviewapp.core.workflow.editors import (
    Build,
    CaliperEditor,
    DecisionEditor,
    NoteEditor,
    StatementEditor,
    read_only,
    when_text,
)
from reviewapp.core.workflow.history import CommandPart, History, MarchPart, Part, Step
from reviewapp.core.workflow.memory import Holder, MemoryMarks
from reviewapp.core.workflow.opening import MarksOpening
from reviewapp.core.workflow.outcome import Outcome
from reviewapp.core.workflow.roles import FIRST, UNIDENTIFIED, ReadMode
from reviewapp.core.workflow.targets import MarkEdit, MarkTarget

if TYPE_CHECKING:
    from reviewapp.core.engine import Analysis, Reading
    from reviewapp.core.interpret import Interpretation
    from reviewapp.core.record import Record

Snapshot = tuple[ReviewerReading, ReviewerReading, frozenset[str]]
Resolution = Literal["reload", "keep_aside", "merge"]


@dataclass(frozen=True)
class WorkflowChange:
    """What changed: ``values`` (the reading's measurements, also while dragging), ``marks``
    (committed corrections: re-place the marks), ``calipers``, ``stored`` (status, notes,
    anything of the stored reading) and ``reopened`` ((by, at) of a sign-off an edit undid)."""

    values: bool = False
    marks: bool = False
    calipers: bool = False
    stored: bool = False
    reopened: tuple[str, str] | None = None


EVERYTHING = WorkflowChange(values=True, marks=True, calipers=True, stored=True)


class ReadingWorkflow:
    """One reader's reading of one analysed record (see the module docstring)."""

    def __init__(
        self,
        analysis: Analysis,
        opening: MarksOpening | None = None,
        *,
        mode: ReadMode = FIRST,
        reader: str | None = None,
    ) -> None:
        self.analysis = analysis
        self.mode = mode
        self.reader = reader
        opening = opening or MarksOpening(None, "marks kept in this window only")
        self.store: MarksStore | None = opening.store
        self.note = opening.note
        self.memory = self._new_memory()
        self.history = History()
        # Asked before every recorded edit (the window asks who is reading when no id is set);
        # False: the edit is dropped (a caliper stays in the window only).
        self.edit_guard: Callable[[], bool] | None = None
        self.conflict: ConflictError | None = None
        self.marching: set[str] = set()  # time calipers marched out (window only)
        self._listeners: list[Callable[[WorkflowChange], None]] = []
        self._overrides: tuple[MarkOverride, ...] = ()
        self._committed: Reading = analysis.reading(())
        self._preview: Reading | None = None
        self.calipers = CaliperEditor(self)
        self.notes = NoteEditor(self)
        self.statements = StatementEditor(self)
        self.decisions = DecisionEditor(self)
        self._interpretation: tuple[Reading, Interpretation] | None = None
        self._sync_values()

    # --- what the views read ---------------------------------------------------------------
    @property
    def record(self) -> Record:
        return self.analysis.record

    @property
    def fs_hz(self) -> float:
        return self.analysis.fs_hz

    @property
    def reading(self) -> Reading:
        """Measurements and findings on screen (with the mark being dragged, if any)."""
        return self._preview if self._preview is not None else self._committed

    @property
    def committed_reading(self) -> Reading:
        return self._committed

    @property
    def holder(self) -> Holder:
        """Where the reader's corrections are: the marks file, else the window."""
        return self.store if self.store is not None else self.memory

    @property
    def marks(self) -> ReviewerReading:
        """The reader's reading: status, corrections, calipers, notes (the one copy)."""
        return self.holder.reading

    @property
    def engine_overrides(self) -> tuple[MarkOverride, ...]:
        """The corrections as the engine takes them (derived from ``marks``)."""
        return self._overrides

    @property
    def rep_r_index(self) -> int | None:
        rep = self.analysis.representative
        return None if rep is None else rep.r_index

    @property
    def blinded(self) -> bool:
        return self.holder.blinded

    @property
    def hide_automatic(self) -> bool:
        """A blinded read without the automatic marks: nothing the engine placed may show."""
        h = self.holder
        return h.blinded and not h.show_automatic

    @property
    def writable(self) -> bool:
        """Corrections can be kept (a writable marks file, or the window when there is none)."""
        return self.store is None or not self.store.read_only

    @property
    def identified(self) -> bool:
        return self.store is None or self.store.reviewer != UNIDENTIFIED

    @property
    def can_compare(self) -> bool:
        """Other readings may be shown: a marks file, and a reader who is not blinded."""
        return self.store is not None and not self.store.blinded

    def readings(self) -> dict[str, ReviewerReading]:
        """Every reading of the record (empty without a marks file); refused (BlindedError)
        to a blinded reader."""
        return {} if self.store is None else self.store.readings()

    def correction(self, target: MarkTarget) -> Override | None:
        return self.marks.override(target.key(self.fs_hz))

    def is_corrected(self, target: MarkTarget) -> bool:
        return self.correction(target) is not None

    def beat_marks(self) -> tuple[WaveMarks, ...]:
        return self.reading.marked.beat_marks

    def shown_sample(self, target: MarkTarget) -> int | None:
        """Where the mark is now (committed reading), in the target's samples."""
        marked = self._committed.marked
        lead_i = None if target.lead is None else self.record.lead_index(target.lead)
        if target.scope == "representative":
            rep = marked.representative
            if rep is None:
                return None
            marks = rep.marks if lead_i is None else rep.lead_marks[lead_i]
            return marks.get(target.fiducial)
        bi = match_beat(marked.beats, int(target.beat_r or 0), self.fs_hz)
        if bi is None:
            return None
        marks = marked.beat_marks[bi] if lead_i is None else marked.beat_lead_marks[bi][lead_i]
        return marks.get(target.fiducial)

    def automatic_interpretation(self) -> Interpretation | None:
        """The engine's statements for the reading on screen (with a mark being dragged, if
        any); None in a blinded read that hides the automatic marks."""
        if self.hide_automatic:
            return None
        reading = self.reading
        cached = self._interpretation
        if cached is not None and cached[0] is reading:
            return cached[1]
        from reviewapp.core.interpret import interpret

        result = interpret(reading, self.record.subject)
        self._interpretation = (reading, result)
        return result

    def all_calipers(self) -> tuple[Caliper, ...]:
        """The reading's calipers, then any kept in the window only."""
        own = () if self.store is None else self.store.reading.calipers
        return own + self.memory.reading.calipers

    # --- listeners --------------------------------------------------------------------------
    def subscribe(self, fn: Callable[[WorkflowChange], None]) -> Callable[[], None]:
        """Call ``fn`` after every change; returns the function that stops it."""
        self._listeners.append(fn)
        return lambda: self._listeners.remove(fn) if fn in self._listeners else None

    def _notify(self, change: WorkflowChange) -> None:
        for fn in list(self._listeners):
            fn(change)

    # --- values -------------------------------------------------------------------------------
    def _sync_values(self) -> bool:
        """Recompute the reading if the corrections changed; True if they did."""
        ovs = tuple(overrides_for(self.marks, self.fs_hz, self.rep_r_index))
        if ovs == self._overrides and self._preview is None:
            return False
        changed = ovs != self._overrides
        self._overrides = ovs
        self._preview = None
        if changed:
            self._committed = self.analysis.reading(ovs)
        return True

    # --- mark corrections ---------------------------------------------------------------------
    def mark_edit(self, edit: MarkEdit) -> Outcome:
        """The one entry for every mark edit a view sends (median beat, beat, lead)."""
        if edit.action == "preview":
            return self.preview(edit.target, edit.sample)
        if edit.action == "move":
            return self.move_mark(edit.target, edit.sample)
        return self.reset_mark(edit.target)

    def preview(self, target: MarkTarget, sample: int | None) -> Outcome:
        """Values with the mark at ``sample`` while it is dragged; nothing is recorded."""
        key = (target.scope, target.fiducial, target.beat_r, target.lead)
        rest = [o for o in self._overrides if (o.scope, o.fiducial, o.beat_r, o.lead) != key]
        self._preview = self.analysis.reading((*rest, target.override(sample)))
        self._notify(WorkflowChange(values=True))
        return Outcome(True, "")

    def cancel_preview(self) -> None:
        if self._preview is not None:
            self._preview = None
            self._notify(WorkflowChange(values=True, marks=True))

    def move_mark(self, target: MarkTarget, sample: int | None) -> Outcome:
        what = target.describe(self.fs_hz)
        unplaced = self.hide_automatic and not self.is_corrected(target)
        if sample == self.shown_sample(target) and not unplaced:
            self.cancel_preview()  # a drag that came back where it started
            return Outcome.unchanged(f"No change: {what} is already there.")
        text = f"Mark {what} absent" if sample is None else f"Move {what}"
        ov = target.override(sample)
        out = self._edit_marks(text, lambda h: h.edits.from_mark(ov, self.rep_r_index))
        if not out.recorded:
            self.cancel_preview()
        return out

    def reset_mark(self, target: MarkTarget) -> Outcome:
        what = target.describe(self.fs_hz)
        if not self.is_corrected(target):
            return Outcome.unchanged(f"No change: {what} is the automatic mark already.")
        key = target.key(self.fs_hz)
        return self._edit_marks(
            f"Reset {what} to automatic",
            lambda h: h.edits.reset_fiducial(
                target.fiducial, scope=target.scope, beat_r_s=key[1], lead=target.lead
            ),
        )

    def reset_all(self) -> Outcome:
        """Every correction back to automatic: one undo step, one audited reset per mark."""
        keys = [o.key for o in self.marks.overrides]
        if not keys:
            return Outcome.unchanged("No change: every mark is automatic already.")

        def reset(key: tuple) -> Callable[[Holder], Command]:
            scope, beat_r_s, lead, fiducial = key
            return lambda h: h.edits.reset_fiducial(
                fiducial, scope=scope, beat_r_s=beat_r_s, lead=lead
            )

        return self._edit_marks("Reset all marks to automatic", *[reset(k) for k in keys])

    def _edit_marks(self, text: str, *builds: Callable[[Holder], Command]) -> Outcome:
        if not self.may_edit():
            return Outcome.unchanged("Not changed: no reader id given.")
        holder = self.holder
        if holder.read_only:
            return read_only(self.store)
        first = self.store_automatic_first()
        if first is not None:
            return first
        return self.record_step(text, [(holder, b) for b in builds])

    def store_automatic_first(self) -> Outcome | None:
        """Put the engine's marks in the file with the first correction (saved with it), so
        each override keeps the automatic value it replaced (``old_s``)."""
        st = self.store
        if st is None or st.read_only or st.blinded:
            return None
        auto = st.automatic
        if auto is not None and auto.engine_version == self.analysis.engine_version:
            return None
        try:
            st.set_automatic(automatic_from_analysis(self.analysis), save=False)
        except ReviewError as err:
            return Outcome.failed(err)
        return None

    # --- running steps --------------------------------------------------------------------------
    def may_edit(self) -> bool:
        return self.edit_guard is None or self.edit_guard()

    def record_step(
        self, text: str, builds: Sequence[Build], extra: Sequence[Part] = ()
    ) -> Outcome:
        """Make and run the commands of one reader action (each made against the reading the
        previous one left), save, and keep it as one undo step. A command that changes nothing
        is dropped; an action left with nothing is reported as no change."""
        before = self._snapshot()
        parts: list[Part] = []
        try:
            for holder, build in builds:
                cmd = build(holder)
                if cmd.changes_nothing:
                    continue
                holder.apply(cmd)
                parts.append(CommandPart(holder, cmd))
        except ReviewError as err:
            self._revert(parts)
            return Outcome.failed(err)
        parts.extend(extra)
        for p in extra:
            self._run_march(p, "do")
        if not parts:
            return Outcome.unchanged(f"No change: {text} would change nothing.")
        self.history.push(Step(text, tuple(parts)))
        return self._finish(text, parts, before)

    def _revert(self, parts: Iterable[Part]) -> None:
        for p in reversed(list(parts)):
            if isinstance(p, CommandPart):
                p.holder.apply(p.command, "undo")

    def _run_march(self, p: Part, mode: str) -> None:
        if isinstance(p, MarchPart):
            on = p.on if mode != "undo" else not p.on
            (self.marching.add if on else self.marching.discard)(p.caliper_id)

    def _snapshot(self) -> Snapshot:
        return (self.marks, self.memory.reading, frozenset(self.marching))

    def _finish(self, text: str, parts: Sequence[Part], before: Snapshot) -> Outcome:
        """Save what the step changed, then tell the listeners and the reader."""
        holders = {id(p.holder): p.holder for p in parts if isinstance(p, CommandPart)}
        saved_to = None
        outcome: Outcome | None = None
        for h in holders.values():
            try:
                h.save()
            except ConflictError as err:
                outcome = self._conflict_outcome(err, recorded=True)
            except ReviewError as err:
                outcome = Outcome(
                    False,
                    f"{text}: not saved ({err.problem}); the change is kept in this window and "
                    "saved with the next one",
                    recorded=True,
                    problem=err,
                )
            else:
                if h.path is not None:
                    saved_to = h.path
        self._changed(before)
        if outcome is not None:
            return outcome
        where = f"saved to {saved_to.name}" if saved_to is not None else "kept in this window only"
        return Outcome(True, f"{text}: {where}.", saved_to=saved_to, recorded=True)

    def _changed(self, before: Snapshot) -> None:
        old, old_memory, old_march = before
        new = self.marks
        marks = self._sync_values()
        reopened = None
        if old.status == "signed_off" and new.status != "signed_off":
            reopened = (old.signed_off_by or "", old.signed_off_at or "")
        self._notify(
            WorkflowChange(
                values=marks,
                marks=marks,
                calipers=(old.calipers, old_memory.calipers, old_march)
                != (new.calipers, self.memory.reading.calipers, frozenset(self.marching)),
                stored=True,
                reopened=reopened,
            )
        )

    def _conflict_outcome(self, err: ConflictError, *, recorded: bool) -> Outcome:
        self.conflict = err
        if isinstance(err, TakenOverError):
            who = err.holder.get("reviewer") or "another reader"
            since = when_text(str(err.holder.get("since") or "")) or "a moment ago"
            file = "the marks file" if self.store is None else self.store.path.name
            return Outcome(
                False,
                f"Not saved: {who} took this record over in another window ({since}); this "
                f"window can no longer save to {file}. Your change is kept here: save your "
                "reading as a separate file, or continue read-only.",
                recorded=recorded,
                problem=err,
                conflict=True,
                displaced=True,
            )
        return Outcome(
            False,
            "Not saved: the marks file was changed by another window or program since it was "
            "read. Reload it, keep your reading aside, or merge the two.",
            recorded=recorded,
            problem=err,
            conflict=True,
        )

    # --- undo / redo ----------------------------------------------------------------------------
    def undo(self) -> Outcome:
        return self._step_back_or_forth("undo")

    def redo(self) -> Outcome:
        return self._step_back_or_forth("redo")

    def _step_back_or_forth(self, mode: Literal["undo", "redo"]) -> Outcome:
        step = self.history.take_undo() if mode == "undo" else self.history.take_redo()
        if step is None:
            return Outcome.unchanged(f"Nothing to {mode}.")
        before = self._snapshot()
        parts = list(reversed(step.parts)) if mode == "undo" else list(step.parts)
        try:
            for p in parts:
                if isinstance(p, CommandPart):
                    p.holder.apply(p.command, mode)
                else:
                    self._run_march(p, mode)
        except MarksError as err:
            # The reading no longer matches the history (it was changed from elsewhere).
            self.history.clear()
            self._changed(before)
            return Outcome.failed(
                err, f"Cannot {mode} {step.text}: {err.problem}; the undo history was cleared"
            )
        verb = "Undone" if mode == "undo" else "Redone"
        return self._finish(f"{verb}: {step.text}", parts, before)

    # --- the marks file ---------------------------------------------------------------------------
    def use_marks(
        self,
        opening: MarksOpening,
        mode: ReadMode,
        reader: str | None,
        *,
        carry_window_calipers: bool = False,
    ) -> Outcome:
        """Continue with another marks file (another reader id or role) without analysing
        again. The undo history belongs to the previous reading and is cleared. With
        ``carry_window_calipers`` (the reader just said who they are), calipers kept in the
        window are added to the new reading, each as an undo step."""
        old_memory = self.memory.reading
        if self.store is not None:
            self.store.close()
        self.store, self.note, self.mode, self.reader = opening.store, opening.note, mode, reader
        self.memory = self._new_memory()
        # Without a file the whole window-only reading goes on; with one, its calipers only.
        self.memory.carry(old_memory, corrections=self.store is None)
        self.history.clear()
        self.conflict = None
        self._preview = None
        self._sync_values()
        st = self.store
        carried: list[Outcome] = []
        if carry_window_calipers and st is not None and not st.read_only:
            self.memory = self._new_memory()
            for c in old_memory.calipers:
                carried.append(self.calipers.add(c))
        self._notify(EVERYTHING)
        problem = next((o for o in carried if o.problem is not None), None)
        return problem or Outcome(True, self.note)

    def release_marks(self) -> None:
        """Let go of the marks file's lock (before it is opened again, e.g. under another
        reader id); ``use_marks`` follows."""
        if self.store is not None:
            self.store.close()

    def _new_memory(self) -> MemoryMarks:
        auto = None if self.mode.hide_automatic else automatic_from_analysis(self.analysis)
        return MemoryMarks(
            self.reader or UNIDENTIFIED,
            self.fs_hz,
            auto,
            role=self.mode.role,
            blinded=self.mode.blinded,
            show_automatic=self.mode.show_automatic,
        )

    def resolve_conflict(self, choice: Resolution) -> Outcome:
        """The marks file changed on disk: ``reload`` it (this window's unsaved changes are
        dropped), ``keep_aside`` this reading as a separate file and reload, or ``merge`` the
        two and save. The undo history is cleared, since the reading was replaced."""
        st = self.store
        if st is None:
            return Outcome.unchanged("No marks file to reconcile.")
        before = self._snapshot()
        try:
            if choice == "reload":
                st.resolve_reload()
                message = f"Reloaded {st.path.name}: this window's unsaved changes were dropped."
            elif choice == "keep_aside":
                aside = st.resolve_save_aside()
                message = f"Your reading was kept as {aside.name}; {st.path.name} was reloaded."
            else:
                st.resolve_merge()
                message = f"Merged with the marks file on disk and saved to {st.path.name}."
        except ReviewError as err:
            return Outcome.failed(err, f"Not resolved: {err.problem}")
        self.conflict = None
        self.history.clear()
        self._changed(before)
        return Outcome(True, message, saved_to=st.path)

    def close(self) -> None:
        if self.store is not None:
            self.store.close()
        self._listeners.clear()
