"""A reading kept in the window only: for a record with no file, a marks file that cannot be
used, or calipers drawn before the reader has said who they are.

It runs the marks model's own commands (``reviewapp.core.marks.commands``) the way
``MarksStore`` does, without a file and without an audit trail, so the workflow has one way to
change a reading whatever holds it.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path
from typing import Literal, TypeAlias

from reviewapp.core.errors import MarksError
from reviewapp.core.marks.commands import Command
from reviewapp.core.marks.durable import utc_now
from reviewapp.core.marks.edits import Edits
from reviewapp.core.marks.model import AutomaticMarks, Caliper, ReviewerReading, Role
from reviewapp.core.marks.store import MarksStore


class MemoryMarks:
    """One reader's reading held in memory; the parts of ``MarksStore`` the workflow uses."""

    path: Path | None = None
    read_only = False
    revision = 0

    def __init__(
        self,
        reviewer: str,
        fs_hz: float,
        automatic: AutomaticMarks | None,
        *,
        role: Role = "first",
        blinded: bool = False,
        show_automatic: bool = True,
    ) -> None:
        self.reviewer = reviewer
        self.role: Role = role
        self.blinded = blinded
        self.show_automatic = show_automatic
        self._fs_hz = float(fs_hz)
        self._automatic = automatic
        self.clock = utc_now
        self._reading = ReviewerReading(reviewer=reviewer, role=role, blinded=blinded)
        self.edits = Edits(self)

    def carry(self, previous: ReviewerReading, *, corrections: bool) -> None:
        """Take over another window-only reading's calipers (and, with ``corrections``, its
        corrections, notes and status) under this reader and role."""
        if corrections:
            self._reading = replace(
                previous, reviewer=self.reviewer, role=self.role, blinded=self.blinded
            )
        else:
            self._reading = replace(self._reading, calipers=previous.calipers)

    @property
    def calipers(self) -> tuple[Caliper, ...]:
        return self._reading.calipers

    @property
    def fs_hz(self) -> float:
        return self._fs_hz

    @property
    def reading(self) -> ReviewerReading:
        return self._reading

    @property
    def automatic(self) -> AutomaticMarks | None:
        return None if self.blinded and not self.show_automatic else self._automatic

    def readings(self) -> dict[str, ReviewerReading]:
        return {self.reviewer: self._reading}

    def require_adjudicator(self) -> None:
        if self.role != "adjudicator":
            raise MarksError(
                f"{self.reviewer} is {self.role} reader; only an adjudicator sets final values"
            )

    def apply(self, cmd: Command, mode: Literal["do", "undo", "redo"] = "do") -> ReviewerReading:
        self._reading = cmd.revert(self._reading) if mode == "undo" else cmd.apply(self._reading)
        return self._reading

    def save(self) -> None:
        """Nothing to write: the reading lives in this window only."""


# Where a reading is held: the marks file or the window.
Holder: TypeAlias = MarksStore | MemoryMarks
