"""The one error type the user-facing layers catch and show."""

from __future__ import annotations

from pathlib import Path


class ReviewError(Exception):
    """A problem the user can act on: names the file (when there is one) and the problem.

    The CLI prints ``str(err)`` on one line and exits with code 2; the window shows it in a
    dialog. Nothing else should ever reach the user.
    """

    def __init__(self, problem: str, path: str | Path | None = None) -> None:
        self.problem = problem
        self.path = Path(path) if path is not None else None
        super().__init__(f"{self.path}: {problem}" if self.path is not None else problem)


class RecordError(ReviewError):
    """A record file cannot be opened or its content is not a usable ECG."""


class MarksError(ReviewError):
    """A marks sidecar cannot be read, validated or written."""
