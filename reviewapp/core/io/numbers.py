"""The one strict parser for numbers written in record headers.

Python's ``float`` and ``int`` accept far more than any header format allows (``"nan"``,
``"inf"``, ``"1_000"``, non-ASCII digits, surrounding blanks), and the format libraries accept
less than their specifications (wfdb-python reads the WFDB frequency ``5e2`` as 5 Hz). Each
reader states what its format's specification allows and this module parses exactly that, or
refuses the field with a message naming it:

- ``DECIMAL_EXP``: sign, digits, optional fraction, optional exponent (``5e2``, ``0.5E3``,
  ``-1.25e-3``). WFDB header(5) floating-point fields, which the WFDB library reads with C's
  ``strtod``/``sscanf("%lf")`` (PhysioNet, WFDB Programmer's Guide, header(5)); DICOM Decimal
  String (DICOM PS3.5 section 6.2, VR "DS": "0-9, +, -, E, e, ."); HL7 v3 REAL literals.
- ``DECIMAL``: sign, digits, optional fraction, no exponent. EDF header numbers (EDF, Kemp et
  al. 1992; EDF+, Kemp and Olivan 2003, section 2.1.3: ASCII digits with "." as the only
  decimal separator; its examples and those of EDF never use an exponent).
- ``INTEGER``: sign and digits. WFDB integer fields (signal length, format, baseline, ...), EDF
  digital minimum/maximum, number of records and samples per record.

>>> parse_number("5e2", "sampling frequency", DECIMAL_EXP)
500.0
>>> parse_number(" 0.5E3 ", "sampling frequency", DECIMAL_EXP)
500.0
>>> parse_number("1e9", "record duration", DECIMAL)
Traceback (most recent call last):
...
reviewapp.core.errors.RecordError: record duration '1e9' is not a plain decimal number \
(digits, sign and '.' only)
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path

from reviewapp.core.errors import RecordError


@dataclass(frozen=True)
class NumberSyntax:
    """A number grammar: its regular expression and how to name it in a message."""

    pattern: re.Pattern[str]
    described: str
    integer: bool = False


INTEGER = NumberSyntax(re.compile(r"[+-]?[0-9]+"), "a whole number", integer=True)
DECIMAL = NumberSyntax(
    re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)"),
    "a plain decimal number (digits, sign and '.' only)",
)
DECIMAL_EXP = NumberSyntax(
    re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?"),
    "a decimal number (digits, sign, '.', and an exponent such as 5e2)",
)
# Longer fields are not numbers any header writes (and int() of 10^5 digits is slow).
_MAX_CHARS = 64


def parse_number(
    text: str,
    what: str,
    syntax: NumberSyntax,
    path: str | Path | None = None,
    *,
    positive: bool = False,
) -> float:
    """``text`` (blanks around it ignored) as a finite float, or RecordError naming ``what``.

    ``positive``: refuse zero and negative values too. Integers are returned as floats with
    an integral value; use ``parse_int`` to get an ``int``.
    """
    s = text.strip(" \t\r\n\x00")
    shown = s if len(s) <= 40 else s[:37] + "..."
    if len(s) > _MAX_CHARS or syntax.pattern.fullmatch(s) is None:
        raise RecordError(f"{what} {shown!r} is not {syntax.described}", path)
    value = float(int(s)) if syntax.integer else float(s)
    if not math.isfinite(value):
        raise RecordError(f"{what} {shown!r} is too large", path)
    if positive and not value > 0:
        raise RecordError(f"{what} must be positive, the file says {shown!r}", path)
    return value


def parse_int(text: str, what: str, path: str | Path | None = None) -> int:
    """``text`` as an int under ``INTEGER`` (RecordError naming ``what`` otherwise).

    >>> parse_int("+12", "number of signals")
    12
    """
    s = text.strip(" \t\r\n\x00")
    shown = s if len(s) <= 40 else s[:37] + "..."
    if len(s) > _MAX_CHARS or INTEGER.pattern.fullmatch(s) is None:
        raise RecordError(f"{what} {shown!r} is not {INTEGER.described}", path)
    return int(s)
