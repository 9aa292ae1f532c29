"""What an action of the reading workflow actually did, for the reader to be told.

A status message is made from an ``Outcome`` after the fact, so it never reports a save that
did not happen or a change that was not made.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from reviewapp.core.errors import ReviewError


@dataclass(frozen=True)
class Outcome:
    """``done``: the change was made (and, with a marks file, written to ``saved_to``).
    ``recorded``: it is an undo step (also when the save failed). ``problem``: what went
    wrong, for a message box. ``conflict``: the marks file changed on disk since it was read;
    nothing was written and the reader chooses reload, keep theirs aside or merge.
    ``displaced``: another window took the record over; this one can no longer save there and
    the reader may keep the reading as a separate file."""

    done: bool
    message: str
    saved_to: Path | None = None
    recorded: bool = False
    problem: ReviewError | None = None
    conflict: bool = False
    displaced: bool = False

    @classmethod
    def unchanged(cls, message: str) -> Outcome:
        return cls(False, message)

    @classmethod
    def failed(cls, problem: ReviewError, message: str = "") -> Outcome:
        return cls(False, message or f"Not changed: {problem.problem}", problem=problem)
