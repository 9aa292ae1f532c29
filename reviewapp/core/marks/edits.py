"""Make reviewer-edit commands against a store's current reading (``store.edits``).

Times are snapped to the record's sample grid here, so what is saved is exactly what the
engine will use. Nothing is applied until the command is given to ``store.do`` (or an undo
stack's ``push``).
"""

from __future__ import annotations

import uuid
from collections.abc import Callable
from dataclasses import replace
from typing import Literal, Protocol

from reviewapp.core.errors import MarksError
from reviewapp.core.fiducials import FIDUCIALS, MarkOverride
from reviewapp.core.marks.commands import (
    Command,
    Composite,
    MoveStatement,
    SetCaliper,
    SetNote,
    SetOverride,
    SetStatement,
    SetStatus,
    status_of,
)
from reviewapp.core.marks.convert import override_from_mark
from reviewapp.core.marks.model import (
    AutomaticMarks,
    Caliper,
    Note,
    Override,
    ReaderStatement,
    ReviewerReading,
    StatementOrigin,
)

# Which fiducials bound each interval (adopted together when adjudicating an interval).
INTERVAL_ENDS: dict[str, tuple[str, str]] = {
    "pr_ms": ("p_on", "qrs_on"),
    "p_ms": ("p_on", "p_off"),
    "qrs_ms": ("qrs_on", "qrs_off"),
    "qt_ms": ("qrs_on", "t_off"),
}


def snap_s(t_s: float | None, fs_hz: float) -> float | None:
    """Round a time to the nearest sample: ``round(t * fs) / fs`` (None stays None)."""
    if t_s is None:
        return None
    return round(float(t_s) * fs_hz) / fs_hz


def new_id() -> str:
    return uuid.uuid4().hex[:16]


class ReadingHolder(Protocol):
    """What ``Edits`` reads from the holder of a reading: ``MarksStore`` (a marks file) or
    ``reviewapp.core.workflow.memory.MemoryMarks`` (a reading kept in a window only)."""

    reviewer: str
    clock: Callable[[], str]

    @property
    def reading(self) -> ReviewerReading: ...

    @property
    def fs_hz(self) -> float: ...

    @property
    def automatic(self) -> AutomaticMarks | None: ...

    def require_adjudicator(self) -> None: ...


class Edits:
    """Command factory bound to a store (or any ``ReadingHolder``)."""

    def __init__(self, store: ReadingHolder) -> None:
        self._store = store

    @property
    def _reading(self) -> ReviewerReading:
        return self._store.reading

    @property
    def _fs(self) -> float:
        return self._store.fs_hz

    # --- fiducials ------------------------------------------------------------------------

    def move_fiducial(
        self,
        fiducial: str,
        new_s: float | None,
        *,
        scope: Literal["representative", "beat"] = "representative",
        beat_r_s: float | None = None,
        lead: str | None = None,
        action: str = "move_fiducial",
    ) -> SetOverride:
        """Set a boundary. Representative scope: ``new_s`` relative to its R; beat scope: from
        record start, ``beat_r_s`` the beat's R. ``new_s=None`` marks the wave absent."""
        if fiducial not in FIDUCIALS:
            raise MarksError(f"unknown fiducial {fiducial!r}; expected one of {FIDUCIALS}")
        if scope == "beat" and beat_r_s is None:
            raise MarksError("a beat mark needs the beat's R time")
        if scope == "representative":
            beat_r_s = None
        beat_r_s = snap_s(beat_r_s, self._fs)
        key = (scope, beat_r_s, lead, fiducial)
        before = self._reading.override(key)
        if before is not None:
            old_s = before.old_s
        else:
            auto = self._store.automatic
            old_s = (
                None if auto is None else auto.value_s(scope, fiducial, beat_r_s, lead, self._fs)
            )
        after = Override(
            scope=scope,
            fiducial=fiducial,
            new_s=snap_s(new_s, self._fs),
            old_s=snap_s(old_s, self._fs),
            beat_r_s=beat_r_s,
            lead=lead,
        )
        return SetOverride(action, status_of(self._reading), key, before, after)

    def from_mark(self, mark: MarkOverride, rep_r_index: int | None) -> SetOverride:
        """The command for an engine ``MarkOverride`` (samples), e.g. from a drag in the
        window; ``rep_r_index`` is ``analysis.representative.r_index``."""
        ov = override_from_mark(mark, self._fs, rep_r_index)
        return self.move_fiducial(
            ov.fiducial, ov.new_s, scope=ov.scope, beat_r_s=ov.beat_r_s, lead=ov.lead
        )

    def reset_fiducial(
        self,
        fiducial: str,
        *,
        scope: Literal["representative", "beat"] = "representative",
        beat_r_s: float | None = None,
        lead: str | None = None,
    ) -> SetOverride:
        """Remove the reader's override: back to the automatic mark."""
        key = (scope, snap_s(beat_r_s, self._fs) if scope == "beat" else None, lead, fiducial)
        before = self._reading.override(key)
        if before is None:
            raise MarksError(f"{fiducial} is not overridden; nothing to reset")
        return SetOverride("reset_fiducial", status_of(self._reading), key, before, None)

    # --- calipers -------------------------------------------------------------------------

    def add_caliper(
        self,
        kind: Literal["time", "amplitude"],
        t1_s: float,
        t2_s: float,
        *,
        v1_mv: float = 0.0,
        v2_mv: float = 0.0,
        lead: str | None = None,
        label: str = "",
        caliper_id: str | None = None,
    ) -> SetCaliper:
        """A new caliper; ``caliper_id`` keeps the id it had in another reading (a caliper
        drawn before the reader was known, saved once they are)."""
        c = Caliper(
            id=caliper_id or new_id(),
            kind=kind,
            t1_s=float(snap_s(t1_s, self._fs)),  # type: ignore[arg-type]
            t2_s=float(snap_s(t2_s, self._fs)),  # type: ignore[arg-type]
            v1_mv=float(v1_mv),
            v2_mv=float(v2_mv),
            lead=lead,
            label=label,
        )
        r = self._reading
        return SetCaliper("add_caliper", status_of(r), None, c, len(r.calipers))

    def move_caliper(self, caliper_id: str, **changes: object) -> SetCaliper:
        """Change any of t1_s, t2_s, v1_mv, v2_mv, lead, label of one caliper."""
        r = self._reading
        before = r.caliper(caliper_id)
        if before is None:
            raise MarksError(f"no caliper {caliper_id!r}")
        allowed = {"t1_s", "t2_s", "v1_mv", "v2_mv", "lead", "label"}
        if bad := set(changes) - allowed:
            raise MarksError(f"cannot change {sorted(bad)} of a caliper")
        for name in ("t1_s", "t2_s"):
            if name in changes:
                changes[name] = snap_s(float(changes[name]), self._fs)  # type: ignore[arg-type]
        for name in ("v1_mv", "v2_mv"):
            if name in changes:
                changes[name] = float(changes[name])  # type: ignore[arg-type]
        after = replace(before, **changes)  # type: ignore[arg-type]
        index = r.calipers.index(before)
        return SetCaliper("move_caliper", status_of(r), before, after, index)

    def delete_caliper(self, caliper_id: str) -> SetCaliper:
        r = self._reading
        before = r.caliper(caliper_id)
        if before is None:
            raise MarksError(f"no caliper {caliper_id!r}")
        return SetCaliper("delete_caliper", status_of(r), before, None, r.calipers.index(before))

    # --- notes ----------------------------------------------------------------------------

    def add_note(self, text: str) -> SetNote:
        r = self._reading
        return SetNote("add_note", status_of(r), None, Note(new_id(), str(text)), len(r.notes))

    def edit_note(self, note_id: str, text: str) -> SetNote:
        r = self._reading
        before = r.note(note_id)
        if before is None:
            raise MarksError(f"no note {note_id!r}")
        return SetNote(
            "edit_note", status_of(r), before, Note(note_id, str(text)), r.notes.index(before)
        )

    def delete_note(self, note_id: str) -> SetNote:
        r = self._reading
        before = r.note(note_id)
        if before is None:
            raise MarksError(f"no note {note_id!r}")
        return SetNote("delete_note", status_of(r), before, None, r.notes.index(before))

    # --- interpretation statements --------------------------------------------------------

    def add_statement(
        self,
        code: str,
        text: str,
        *,
        origin: StatementOrigin = "catalogue",
        from_reader: str | None = None,
        index: int | None = None,
    ) -> SetStatement:
        """A new statement (catalogue ``code``, ``other.free_text`` for the reader's own
        words) at ``index`` (default: the end of the list)."""
        text = str(text).strip()
        if not text:
            raise MarksError("a statement needs text")
        r = self._reading
        x = ReaderStatement(new_id(), str(code), text, origin, from_reader)
        at = len(r.statements) if index is None else max(0, min(int(index), len(r.statements)))
        return SetStatement("add_statement", status_of(r), None, x, at)

    def add_statements(
        self, items: list[tuple[str, str]], *, origin: StatementOrigin, name: str
    ) -> Command:
        """Several statements ((code, text) pairs) added at the end as one edit."""
        r = self._reading
        parts: list[Command] = []
        for k, (code, text) in enumerate(items):
            x = ReaderStatement(new_id(), str(code), str(text).strip(), origin, None)
            parts.append(
                SetStatement("add_statement", status_of(r), None, x, len(r.statements) + k)
            )
        return Composite("add_statement", status_of(r), tuple(parts), name)

    def edit_statement(self, statement_id: str, text: str) -> SetStatement:
        """New text of one statement (its code and origin stay)."""
        text = str(text).strip()
        if not text:
            raise MarksError("a statement needs text; delete it instead")
        r = self._reading
        before = r.statement(statement_id)
        if before is None:
            raise MarksError(f"no statement {statement_id!r}")
        after = replace(before, text=text)
        return SetStatement(
            "edit_statement", status_of(r), before, after, r.statements.index(before)
        )

    def delete_statement(self, statement_id: str) -> SetStatement:
        r = self._reading
        before = r.statement(statement_id)
        if before is None:
            raise MarksError(f"no statement {statement_id!r}")
        return SetStatement(
            "delete_statement", status_of(r), before, None, r.statements.index(before)
        )

    def move_statement(self, statement_id: str, new_index: int) -> MoveStatement:
        r = self._reading
        before = r.statement(statement_id)
        if before is None:
            raise MarksError(f"no statement {statement_id!r}")
        old = r.statements.index(before)
        new = max(0, min(int(new_index), len(r.statements) - 1))
        return MoveStatement("move_statement", status_of(r), statement_id, old, new)

    # --- status ---------------------------------------------------------------------------

    def set_status(self, status: Literal["unread", "in_progress"]) -> SetStatus:
        """Mark the reading unread or in progress (signing off is ``sign_off``)."""
        if status not in ("unread", "in_progress"):
            raise MarksError(f"status {status!r} cannot be set directly; use sign_off")
        return SetStatus("set_status", status_of(self._reading), (status, None, None))

    def sign_off(self) -> SetStatus:
        """Sign the reading off as this store's reviewer, now (UTC)."""
        if self._reading.status == "signed_off":
            raise MarksError("the reading is already signed off")
        return SetStatus(
            "sign_off",
            status_of(self._reading),
            ("signed_off", self._store.reviewer, self._store.clock()),
        )

    # --- adjudication ---------------------------------------------------------------------

    def adjudicate_fiducial(
        self, fiducial: str, value_s: float | None, *, chosen_from: str = "set"
    ) -> SetOverride:
        """Final representative-beat value of one fiducial (relative to R), picked from a
        reader (``chosen_from`` = their reviewer id) or set by the adjudicator ("set")."""
        self._store.require_adjudicator()
        cmd = self.move_fiducial(fiducial, value_s, action="adjudicate")
        return replace(cmd, source=chosen_from)

    def adopt_interval(self, interval: str, source: ReviewerReading) -> Command:
        """Adjudicate an interval by adopting both of its end marks from ``source``'s reading
        (an interval is always recomputed from marks, never set as a number)."""
        self._store.require_adjudicator()
        if interval not in INTERVAL_ENDS:
            raise MarksError(
                f"unknown interval {interval!r}; expected one of {sorted(INTERVAL_ENDS)}"
            )
        auto = self._store.automatic
        parts: list[Command] = []
        for fid in INTERVAL_ENDS[interval]:
            key = ("representative", None, None, fid)
            ov = source.override(key)
            if ov is not None:
                value = ov.new_s
            elif auto is not None:
                value = auto.value_s("representative", fid, None, None, self._fs)
            else:
                raise MarksError(f"no value of {fid} to adopt from {source.reviewer}")
            parts.append(self.move_fiducial(fid, value))
        return Composite(
            "adjudicate",
            status_of(self._reading),
            tuple(parts),
            f"interval {interval} (adopted from {source.reviewer})",
        )
