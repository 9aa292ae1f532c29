"""The one error type the user-facing layers catch and show."""

from __future__ import annotations

import unicodedata
from pathlib import Path

# Characters that would break a one-line message or fool a terminal: control characters
# (newline, escape), format characters (right-to-left override), line and paragraph
# separators, and the lone surrogates Python uses for the bytes of a file name that is not
# UTF-8 (PEP 383 "surrogateescape").
_ESCAPED_CATEGORIES = frozenset({"Cc", "Cf", "Cs", "Zl", "Zp"})
_SHORT = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def printable(text: str) -> str:
    """``text`` on one line, every character that is not safe to print escaped.

    A file name's undecodable byte shows as ``\\xff`` (its byte), a newline as ``\\n``, other
    control or format characters as ``\\x1b`` or ``\\u202e``; the rest is unchanged.

    >>> printable("ok.hea"), printable("two\\nlines.hea"), printable("bad\\udcff.csv")
    ('ok.hea', 'two\\\\nlines.hea', 'bad\\\\xff.csv')
    """
    if text.isprintable():
        return text
    out = []
    for ch in text:
        if unicodedata.category(ch) not in _ESCAPED_CATEGORIES:
            out.append(ch)
        elif ch in _SHORT:
            out.append(_SHORT[ch])
        elif 0xDC80 <= ord(ch) <= 0xDCFF:
            out.append(f"\\x{ord(ch) - 0xDC00:02x}")
        elif ord(ch) <= 0xFF:
            out.append(f"\\x{ord(ch):02x}")
        else:
            out.append(f"\\u{ord(ch):04x}" if ord(ch) <= 0xFFFF else f"\\U{ord(ch):08x}")
    return "".join(out)


class ReviewError(Exception):
    """A problem the user can act on: names the file (when there is one) and the problem.

    The CLI prints ``str(err)`` on one line and exits with code 2; the window shows it in a
    dialog. Nothing else should ever reach the user. ``str(err)`` is always one printable
    line: the path and the problem are escaped (``printable``), so a file name holding a
    newline or bytes that are not UTF-8 cannot split or garble it.
    """

    def __init__(self, problem: str, path: str | Path | None = None) -> None:
        self.problem = problem
        self.path = Path(path) if path is not None else None
        text = problem if self.path is None else f"{self.path}: {problem}"
        super().__init__(printable(text))


class RecordError(ReviewError):
    """A record file cannot be opened or its content is not a usable ECG."""


class MarksError(ReviewError):
    """A marks sidecar cannot be read, validated or written."""
