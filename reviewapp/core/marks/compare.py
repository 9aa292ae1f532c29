"""Two readings of one record side by side: per fiducial and per interval, with flags.

Fiducials are the representative beat's global boundaries (ms relative to its R), each
reader's override if they set one, else the automatic mark. Intervals are recomputed by the
engine from each reader's marks (``analysis.reading(overrides).measurements.intervals``),
never taken from storage.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING

from reviewapp.core.fiducials import FIDUCIALS
from reviewapp.core.marks.convert import overrides_for
from reviewapp.core.marks.model import ReaderStatement, ReviewerReading

if TYPE_CHECKING:
    from reviewapp.core.engine import Analysis

DEFAULT_INTERVAL_TOLERANCES_MS: Mapping[str, float] = {"qt_ms": 10.0, "qrs_ms": 10.0, "pr_ms": 10.0}
# Fiducial defaults: the CSE tolerances (2 x SD between CSE referees), CSE Working Party,
# Eur Heart J 6:815-825, 1985, as tabulated by Martinez et al., IEEE TBME 51(4):570-581, 2004.
DEFAULT_FIDUCIAL_TOLERANCES_MS: Mapping[str, float] = {
    "p_on": 10.2,
    "p_off": 12.7,
    "qrs_on": 6.5,
    "qrs_off": 11.6,
    "t_off": 30.6,
}
# The boundaries each compared interval runs between (definitions: Kligfield et al.,
# Circulation 2007, AHA/ACCF/HRS Part I). A boundary's tolerance is capped by the tightest
# tolerance of an interval it bounds: with the other boundary shared, the interval differs by
# exactly the boundary's difference, so a T end "within tolerance" could otherwise make a QT
# "beyond tolerance" on the same screen.
INTERVAL_BOUNDARIES: Mapping[str, tuple[str, str]] = {
    "pr_ms": ("p_on", "qrs_on"),
    "p_ms": ("p_on", "p_off"),
    "qrs_ms": ("qrs_on", "qrs_off"),
    "qt_ms": ("qrs_on", "t_off"),
}
COMPARED_INTERVALS: tuple[str, ...] = (
    "pr_ms",
    "p_ms",
    "qrs_ms",
    "qt_ms",
    "qtc_bazett_ms",
    "qtc_fridericia_ms",
)


@dataclass(frozen=True)
class ComparisonRow:
    """One quantity: both readers' values (ms), ``diff_ms = b - a``, and the verdict.

    source_a/source_b: "reader" (their own mark) or "automatic" for fiducials, "computed" for
    intervals. beyond_tolerance: both present and ``|diff_ms| > tolerance_ms``.
    presence_differs: one reader has a value (or the wave) and the other not.
    """

    item: str
    kind: str  # "fiducial" | "interval"
    a_ms: float | None
    b_ms: float | None
    diff_ms: float | None
    tolerance_ms: float | None
    beyond_tolerance: bool
    presence_differs: bool
    source_a: str
    source_b: str

    @property
    def flagged(self) -> bool:
        return self.beyond_tolerance or self.presence_differs


@dataclass(frozen=True)
class Comparison:
    reviewer_a: str
    reviewer_b: str
    rows: tuple[ComparisonRow, ...]

    @property
    def flagged(self) -> tuple[ComparisonRow, ...]:
        return tuple(r for r in self.rows if r.flagged)

    def row(self, item: str) -> ComparisonRow:
        for r in self.rows:
            if r.item == item:
                return r
        raise KeyError(item)


def _fiducial_ms(
    reading: ReviewerReading, analysis: Analysis, fid: str
) -> tuple[float | None, str]:
    ov = reading.override(("representative", None, None, fid))
    if ov is not None:
        return (None if ov.new_s is None else ov.new_s * 1000.0), "reader"
    rep = analysis.representative
    if rep is None:
        return None, "automatic"
    sample = rep.marks.get(fid)
    return (
        None if sample is None else (sample - rep.r_index) * 1000.0 / analysis.fs_hz
    ), "automatic"


def _row(
    item: str, kind: str, a: float | None, b: float | None, tol: float | None, sa: str, sb: str
) -> ComparisonRow:
    diff = None if a is None or b is None else b - a
    beyond = diff is not None and tol is not None and abs(diff) > tol + 1e-9
    return ComparisonRow(item, kind, a, b, diff, tol, beyond, (a is None) != (b is None), sa, sb)


def comparison_tolerances_ms(given_ms: Mapping[str, float] | None = None) -> dict[str, float]:
    """Every item's tolerance (ms): the defaults updated by ``given_ms``; a fiducial not given
    explicitly gets the smaller of its CSE tolerance and the tolerance of each interval it
    bounds (``INTERVAL_BOUNDARIES``).

    Example: ``comparison_tolerances_ms()["t_off"]`` is 10.0 (QT's), not the CSE 30.6;
    ``comparison_tolerances_ms({"qt_ms": 20})["t_off"]`` is 20.0.
    """
    given = {k: float(v) for k, v in (given_ms or {}).items()}
    tol: dict[str, float] = {**DEFAULT_FIDUCIAL_TOLERANCES_MS, **DEFAULT_INTERVAL_TOLERANCES_MS}
    tol.update(given)
    for interval, bounds in INTERVAL_BOUNDARIES.items():
        if interval not in tol:
            continue
        for fid in bounds:
            if fid not in given:
                tol[fid] = min(tol.get(fid, tol[interval]), tol[interval])
    return tol


def compare_readings(
    analysis: Analysis,
    reading_a: ReviewerReading,
    reading_b: ReviewerReading,
    tolerances_ms: Mapping[str, float] | None = None,
) -> Comparison:
    """Compare two readers' readings of the record ``analysis`` was made from.

    tolerances_ms: per item (interval names such as ``"qt_ms"`` or fiducial names such as
        ``"qrs_on"``), in ms; defaults: QT, QRS and PR 10 ms and the CSE fiducial tolerances,
        each fiducial's capped by the intervals it bounds (``comparison_tolerances_ms``).
        Items without a tolerance are listed but only flagged when presence differs.

    Example: ``compare_readings(an, first, second, {"qt_ms": 10}).row("qt_ms").diff_ms``.
    """
    tol = comparison_tolerances_ms(tolerances_ms)
    rows: list[ComparisonRow] = []
    for fid in FIDUCIALS:
        a, sa = _fiducial_ms(reading_a, analysis, fid)
        b, sb = _fiducial_ms(reading_b, analysis, fid)
        rows.append(_row(fid, "fiducial", a, b, tol.get(fid), sa, sb))
    rep = analysis.representative
    r_index = None if rep is None else rep.r_index
    ia = analysis.reading(overrides_for(reading_a, analysis.fs_hz, r_index)).measurements.intervals
    ib = analysis.reading(overrides_for(reading_b, analysis.fs_hz, r_index)).measurements.intervals
    names = list(COMPARED_INTERVALS) + [
        k for k in tol if k not in COMPARED_INTERVALS and k not in FIDUCIALS
    ]
    for name in names:
        a_val = getattr(ia, name, None)
        b_val = getattr(ib, name, None)
        rows.append(_row(name, "interval", a_val, b_val, tol.get(name), "computed", "computed"))
    return Comparison(reading_a.reviewer, reading_b.reviewer, tuple(rows))


@dataclass(frozen=True)
class StatementRow:
    """One statement of either reader's interpretation, matched on its key
    (``ReaderStatement.key``: the catalogue code, or the words of free text). ``agree``: both
    readers state it; ``text_a``/``text_b`` as each wrote it (None: not stated)."""

    key: str
    code: str
    text_a: str | None
    text_b: str | None

    @property
    def agree(self) -> bool:
        return self.text_a is not None and self.text_b is not None

    @property
    def verdict(self) -> str:
        """ "agree", "agree, worded differently" or "differ: only A" / "differ: only B"."""
        if self.agree:
            same = (self.text_a or "").strip().lower() == (self.text_b or "").strip().lower()
            return "agree" if same else "agree, worded differently"
        return "differ: only A" if self.text_a is not None else "differ: only B"


def compare_statements(
    reading_a: ReviewerReading, reading_b: ReviewerReading
) -> tuple[StatementRow, ...]:
    """Both readers' interpretations statement by statement: A's order, then what only B
    states. Example: ``[r.verdict for r in compare_statements(first, second)]``."""
    by_b: dict[str, ReaderStatement] = {}
    for x in reading_b.statements:
        by_b.setdefault(x.key, x)
    rows: list[StatementRow] = []
    seen: set[str] = set()
    for x in reading_a.statements:
        if x.key in seen:
            continue
        seen.add(x.key)
        other = by_b.get(x.key)
        rows.append(StatementRow(x.key, x.code, x.text, None if other is None else other.text))
    for x in reading_b.statements:
        if x.key not in seen:
            seen.add(x.key)
            rows.append(StatementRow(x.key, x.code, None, x.text))
    return tuple(rows)
