"""Every normal-limit row at its threshold, and every row's source parsed as a citation.

The expected limits are written out by hand in ``expected_limits.py`` (with their sources and
"from memory" marks), independently of the limits table; each entry is checked at the limit,
one printed step inside and one printed step outside, through ``evaluate_findings``.
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

import pytest

from reviewapp.core.measure import (
    evaluate_findings,
    normal_range,
)
from reviewapp.core.measure.limit_text import range_text
from reviewapp.core.measure.limits import COMMON_PRACTICE, FROM_MEMORY, LIMITS, _applies

sys.path.insert(0, str(Path(__file__).resolve().parent))
from expected_limits import EXPECTED, STEP, Expected, entry_id, measurements_for


def _flags(e: Expected, value: float) -> list:
    found = evaluate_findings(measurements_for(e, value), e.subject)
    return [f for f in found if f.quantity == e.quantity]


def _cases(e: Expected) -> list[tuple[float, str]]:
    """(value, expected direction or "") at each bound, one step inside and one outside."""
    step = STEP[e.unit]
    out = []
    if e.high is not None:
        out += [
            (e.high - step, ""),
            (e.high, "" if e.high_is_normal else "above"),
            (e.high + step, "above"),
        ]
    if e.low is not None:
        out += [
            (e.low + step, ""),
            (e.low, "" if e.low_is_normal else "below"),
            (e.low - step, "below"),
        ]
    return out


@pytest.mark.parametrize("e", EXPECTED, ids=entry_id)
def test_each_limit_at_its_threshold(e: Expected) -> None:
    for value, direction in _cases(e):
        value = round(value, 2)
        flags = _flags(e, value)
        if not direction:
            assert flags == [], (value, [f.text for f in flags])
            continue
        assert {f.lead for f in flags} == (set(e.leads) or {None}), (value, flags)
        for f in flags:
            assert f.direction == direction and f.value == value
            assert f.limit == (e.high if direction == "above" else e.low)
            _assert_cites(f.source, e)


@pytest.mark.parametrize("e", EXPECTED, ids=entry_id)
def test_normal_range_is_the_published_one(e: Expected) -> None:
    for lead in e.leads or (None,):
        nr = normal_range(e.quantity, e.subject, lead=lead)
        assert nr is not None
        got = (nr.low, nr.high, nr.unit)
        assert got == (e.low, e.high, e.unit)
        if e.low is not None:
            assert nr.low_is_normal is e.low_is_normal
        if e.high is not None:
            assert nr.high_is_normal is e.high_is_normal
        assert range_text(nr) == e.range_text


def _rows_for(e: Expected) -> list[int]:
    return [
        i
        for i, row in enumerate(LIMITS)
        if row.quantity == e.quantity
        and any(_applies(row, e.subject, lead) for lead in (e.leads or (None,)))
    ]


def test_every_row_is_tested_and_every_entry_has_one_row() -> None:
    covered: set[int] = set()
    for e in EXPECTED:
        rows = _rows_for(e)
        assert len(rows) == 1, (entry_id(e), rows)  # sex and age stated: exactly one row
        covered.update(rows)
    untested = [f"{LIMITS[i].quantity} {LIMITS[i].who()}" for i in range(len(LIMITS))]
    untested = [t for i, t in enumerate(untested) if i not in covered]
    assert untested == [], f"limit rows without a threshold test: {untested}"


@pytest.mark.parametrize("e", EXPECTED, ids=entry_id)
def test_row_basis_marks_what_was_recalled(e: Expected) -> None:
    (i,) = _rows_for(e)
    basis = LIMITS[i].basis
    assert (FROM_MEMORY in basis) is e.recalled, basis
    if e.cite is None:
        assert COMMON_PRACTICE in basis


# A citation: first author (surname and initials, or "Surname & Surname"), a journal, and
# "year;volume:pages" (Vancouver style, as the sources in the table are written).
JOURNALS = ("Circulation", "Am Heart J", "J Am Coll Cardiol", "Eur Heart J", "Am J Cardiol")
CITATION = re.compile(
    r"(?P<author>[A-Z][a-z]+) [A-Z]{1,2}(?: et al\.|, [A-Z][a-z]+ [A-Z]{1,2})?, .*?"
    r"(?P<journal>" + "|".join(re.escape(j) for j in JOURNALS) + r") "
    r"(?P<year>(?:19|20)\d\d);(?P<volume>\d+):(?P<pages>e?\d+-e?\d+)"
)


def parse_citation(text: str) -> tuple[str, str, int] | None:
    """(first author, journal, year) of the first citation in ``text``, or None.

    >>> parse_citation("Sokolow M, Lyon TP, Am Heart J 1949;37:161-186: SV1 + RV5 > 3.5 mV")
    ('Sokolow', 'Am Heart J', 1949)
    >>> parse_citation("conventional limit: PR 120-200 ms") is None
    True
    """
    m = CITATION.search(text)
    if m is None:
        return None
    year = int(m["year"])
    return (m["author"], m["journal"], year) if 1900 <= year <= 2030 else None


def test_citation_parser_refuses_a_digit_alone() -> None:
    # The old check accepted any source holding "20" (e.g. "PR 120-200 ms").
    assert parse_citation("common practice: PR 120-200 ms") is None
    assert parse_citation("Smith et al., 2009") is None  # no journal
    assert parse_citation("Rautaharju PM et al., Circulation 2009;119:e241-e250") == (
        "Rautaharju",
        "Circulation",
        2009,
    )


def _assert_cites(source: str, e: Expected) -> None:
    cited = parse_citation(source)
    if e.cite is None:
        assert cited is None and source.startswith("conventional limit"), source
        return
    assert cited is not None, f"no citation (authors, journal, year) in {source!r}"
    assert (cited[0], cited[2]) == e.cite, (cited, e.cite)


def test_every_row_cites_or_says_conventional() -> None:
    for row in LIMITS:
        cited = parse_citation(row.source)
        if cited is None:
            assert COMMON_PRACTICE in row.basis and row.source.startswith("conventional limit")
        # Markers for code and tests only never reach the reader (RULES: user text cites).
        assert FROM_MEMORY not in row.source and COMMON_PRACTICE not in row.source


def test_sources_of_every_entry_cite_the_expected_publication() -> None:
    for e in EXPECTED:
        (i,) = _rows_for(e)
        _assert_cites(LIMITS[i].source, e)
