"""The one way a value, a normal range, a flag and a finding are written.

Every place a reader sees a limit (the summary dock, the report page, the report CSV, the
``measure`` table and JSON) takes its text from here, so the same fact never reads two ways.

Precision is what a 12-lead printout gives and what the limits are stated in: intervals and
durations in whole ms, rates in whole bpm, axes in whole degrees (signed, "+60°"), amplitudes
and ST levels in mV to two decimals (the ST criteria are stated in 0.05 mV steps; common
practice, no source). A value is judged against its limit *as printed* (``shown``), so a flag
never contradicts the number beside it.

A range says which side of each bound is normal: "120 to 200 ms" (both bounds normal),
"< 120 ms" (120 is abnormal), "<= 110 ms" (110 is normal), "> 390 and < 450 ms". A flag is
"high" or "low", always beside its range; a finding's sentence gives value, side and range:
"P duration 120 ms, above normal (normal < 120 ms)". Operators are ASCII so every console and
CSV reader shows them.
"""

from __future__ import annotations

from reviewapp.core.measure.types import NormalRange

DECIMALS: dict[str, int] = {"ms": 0, "bpm": 0, "deg": 0, "mV": 2}
# Units whose numbers carry their sign ("+60°") and whose symbol follows without a space.
_SIGNED = frozenset({"deg"})
_SYMBOL = {"deg": "°"}


def unit_key(unit: str) -> str:
    """The table's unit name for ``unit`` ("°" and "deg" are the same unit)."""
    return "deg" if unit in ("°", "deg") else unit


def shown(value: float, unit: str) -> float:
    """``value`` rounded as it is printed (negative zero becomes 0.0, never "-0.00 mV").

    >>> shown(389.6, "ms"), shown(-0.004, "mV"), shown(0.126, "mV"), shown(-29.5, "deg")
    (390.0, 0.0, 0.13, -30.0)
    """
    digits = DECIMALS.get(unit_key(unit), 0)
    return float(f"{value:.{digits}f}") + 0.0


def number_text(value: float, unit: str, *, signed: bool | None = None) -> str:
    """The number alone, at the unit's precision: "120", "0.10", "+60".

    ``signed`` forces (True) or suppresses (False) the "+" of a positive value; by default
    only axes carry it. Zero is never signed.

    >>> number_text(119.6, "ms"), number_text(0.1, "mV"), number_text(60.2, "deg")
    ('120', '0.10', '+60')
    >>> number_text(-0.004, "mV", signed=True), number_text(0.25, "mV", signed=True)
    ('0.00', '+0.25')
    """
    key = unit_key(unit)
    v = shown(value, key)
    digits = DECIMALS.get(key, 0)
    plus = (key in _SIGNED) if signed is None else signed
    return f"{v:+.{digits}f}" if plus and v != 0.0 else f"{v:.{digits}f}"


def unit_symbol(unit: str) -> str:
    """The unit as printed after a number: "ms", "mV", "°"."""
    key = unit_key(unit)
    return _SYMBOL.get(key, key)


def with_unit(number: str, unit: str) -> str:
    key = unit_key(unit)
    symbol = _SYMBOL.get(key)
    return f"{number}{symbol}" if symbol else f"{number} {key}"


def value_text(value: float | None, unit: str, *, missing: str = "—") -> str:
    """A value with its unit: "120 ms", "0.10 mV", "-45°"; ``missing`` when None.

    >>> value_text(452.4, "ms"), value_text(-0.056, "mV"), value_text(-45.0, "deg")
    ('452 ms', '-0.06 mV', '-45°')
    """
    if value is None:
        return missing
    return with_unit(number_text(value, unit), unit)


def range_text(nr: NormalRange | None, *, missing: str = "") -> str:
    """The normal range, saying which side of each bound is normal.

    >>> range_text(NormalRange("pr_ms", 120.0, 200.0, "ms", ""))
    '120 to 200 ms'
    >>> range_text(NormalRange("p_ms", None, 120.0, "ms", "", high_is_normal=False))
    '< 120 ms'
    >>> range_text(NormalRange("q", 390.0, 450.0, "ms", "", False, False))
    '> 390 and < 450 ms'
    >>> range_text(NormalRange("qrs_axis_deg", -30.0, 90.0, "deg", ""))
    '-30° to +90°'
    >>> range_text(NormalRange("st_j_mv", -0.05, 0.1, "mV", "", False, False))
    '> -0.05 and < 0.10 mV'
    """
    if nr is None or (nr.low is None and nr.high is None):
        return missing
    unit = nr.unit
    lo, hi = nr.low, nr.high
    if lo is not None and hi is not None and nr.low_is_normal and nr.high_is_normal:
        if unit_key(unit) in _SYMBOL:  # "-30° to +90°": each bound carries its symbol
            return f"{value_text(lo, unit)} to {value_text(hi, unit)}"
        return with_unit(f"{number_text(lo, unit)} to {number_text(hi, unit)}", unit)
    parts = []
    if lo is not None:
        parts.append(f"{'>=' if nr.low_is_normal else '>'} {number_text(lo, unit)}")
    if hi is not None:
        parts.append(f"{'<=' if nr.high_is_normal else '<'} {number_text(hi, unit)}")
    return with_unit(" and ".join(parts), unit)


def direction_of(nr: NormalRange | None, value: float | None) -> str:
    """ "above", "below" or "" for ``value`` as printed against ``nr``."""
    if nr is None or value is None:
        return ""
    v = shown(value, nr.unit)
    if nr.is_above(v):
        return "above"
    if nr.is_below(v):
        return "below"
    return ""


def flag_text(direction: str) -> str:
    """The flag of a table cell: "high" or "low"; "" when normal. Which side of the bound is
    normal is said once, by the range printed beside it (``range_text``).

    >>> flag_text("below"), flag_text("")
    ('low', '')
    """
    return {"above": "high", "below": "low"}.get(direction, "")


def normal_clause(nr: NormalRange) -> str:
    """ "(normal < 120 ms)" or "(normal > 390 and < 450 ms; female adult)"."""
    who = f"; {nr.applies_to}" if nr.applies_to else ""
    return f"(normal {range_text(nr)}{who})"


def finding_text(label: str, value: float, nr: NormalRange, direction: str) -> str:
    """The sentence of a finding: value, which side of normal, and the normal range.

    >>> nr = NormalRange("p_ms", None, 120.0, "ms", "", high_is_normal=False)
    >>> finding_text("P duration", 120.0, nr, "above")
    'P duration 120 ms, above normal (normal < 120 ms)'
    """
    return f"{label} {value_text(value, nr.unit)}, {direction} normal {normal_clause(nr)}"


def merged_text(label: str, parts: list[tuple[str, float]], nr: NormalRange, direction: str) -> str:
    """One sentence for several formulas of one quantity flagging the same way.

    >>> nr = NormalRange("qtc_bazett_ms", 390.0, 450.0, "ms", "", False, False, "male adult")
    >>> merged_text("QTc", [("Bazett", 472.0), ("Fridericia", 455.2)], nr, "above")
    'QTc above normal by Bazett 472 ms, Fridericia 455 ms (normal > 390 and < 450 ms; male adult)'
    """
    by = ", ".join(f"{name} {value_text(v, nr.unit)}" for name, v in parts)
    return f"{label} {direction} normal by {by} {normal_clause(nr)}"
