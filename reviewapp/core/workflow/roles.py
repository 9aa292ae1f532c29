"""Who reads and how: the reader id rule and the reading mode (role, blinding, whether a
blinded reader sees the automatic marks)."""

from __future__ import annotations

from dataclasses import dataclass

from reviewapp.core.marks.model import Role
from reviewapp.core.marks.store import REVIEWER_ID

READER_ID = REVIEWER_ID
# Opens the sidecar before the reader has said who they are; never written (read-only store).
UNIDENTIFIED = "unidentified-reader"


def usable_reader_id(text: str | None) -> str | None:
    """``text`` stripped if it is a usable reader id (1-64 letters, digits, '.', '_', '@',
    '-', starting with a letter or digit), else None.

    >>> usable_reader_id(" reader1 "), usable_reader_id("-x"), usable_reader_id("")
    ('reader1', None, None)
    """
    rid = (text or "").strip()
    return rid if READER_ID.match(rid) else None


@dataclass(frozen=True)
class ReadMode:
    """How the record is read: role, blinding, and (blinded only) whether the automatic marks
    are offered."""

    role: Role = "first"
    blinded: bool = False
    show_automatic: bool = True

    def __post_init__(self) -> None:
        # A reading mode that is not a ReadMode (e.g. a QAction's checked flag) must fail
        # here, where it is made, not later inside the marks file.
        if self.role not in ("first", "second", "adjudicator"):
            raise ValueError(f"unknown reading role {self.role!r}")
        if self.role == "adjudicator" and self.blinded:
            raise ValueError("an adjudicator sees both readings and cannot be blinded")

    @property
    def hide_automatic(self) -> bool:
        return self.blinded and not self.show_automatic

    @property
    def text(self) -> str:
        if self.role == "second":
            if not self.blinded:
                return "second reader"
            return "second reader (blinded" + (
                ")" if self.show_automatic else ", automatic marks hidden)"
            )
        return {"first": "first reader", "adjudicator": "adjudicator"}[self.role]


FIRST = ReadMode()
SECOND_BLINDED = ReadMode("second", True, True)
SECOND_HIDDEN = ReadMode("second", True, False)
ADJUDICATOR = ReadMode("adjudicator", False, True)
READ_MODES: tuple[ReadMode, ...] = (FIRST, SECOND_BLINDED, SECOND_HIDDEN, ADJUDICATOR)
