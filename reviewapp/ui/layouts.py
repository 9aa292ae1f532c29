"""Which lead goes where on the page: 12 stacked, 6x2, 3x4 with rhythm strips, and records
that are not a standard 12-lead.

Columns show consecutive time spans of one page, so every cell shares the same time axis:
x on the paper is simply the page time, and a mark at time t falls in exactly one cell of a
row. Pure Python (no Qt), so layouts can be checked without a window.

- The standard twelve keep their conventional places in the grid (3 x 4: I, II, III / aVR,
  aVL, aVF / V1-V3 / V4-V6 column by column; 6 x 2: limb leads left, chest leads right); a
  lead the record lacks leaves its place empty rather than shifting the others.
- Leads outside the twelve (Frank X, Y, Z; posterior V7-V9; right-sided V3R ...) go to their
  own group below the page's main part, one group per kind, each with a heading.
- A record with too few of the standard leads for a grid (a 2-lead Holter or QT database
  record, a 3-lead record) shows every lead as a full-length strip, in the record's order,
  whatever layout is chosen; there is no separate rhythm strip (each strip is one).
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass

from reviewapp.core.record import STANDARD_12

LAYOUTS: dict[str, str] = {
    "12x1": "12 leads stacked",
    "6x2": "6 x 2",
    "3x4+1": "3 x 4 + 1 rhythm strip",
    "3x4+3": "3 x 4 + 3 rhythm strips",
}
LEAD_ORDERS = ("standard", "cabrera")
# Cabrera: limb leads in their frontal-plane angular sequence, aVR shown inverted.
CABRERA_SEQUENCE = ("aVL", "I", "-aVR", "II", "aVF", "III", "V1", "V2", "V3", "V4", "V5", "V6")
DEFAULT_RHYTHM_LEADS = ("II", "V1", "V5")
# Below this many of the standard twelve a grid would be mostly empty places: every lead is
# then a full-length strip (common practice, no source: 8 is the independent lead set I, II,
# V1-V6 from which the other four are derived).
GRID_MIN_STANDARD = 8
# Leads outside the twelve, by kind, in the order their groups appear below the page.
_RIGHT_SIDED = re.compile(r"^V\d+R$")
EXTRA_GROUP_TITLES = {
    "right": "Right-sided chest leads",
    "posterior": "Posterior chest leads",
    "frank": "Frank leads (vectorcardiographic X, Y, Z)",
    "other": "Other leads",
}


def extra_group(lead: str) -> str:
    """The group a lead outside the standard twelve belongs to.

    >>> [extra_group(n) for n in ("X", "V4R", "V8", "MLII")]
    ['frank', 'right', 'posterior', 'other']
    """
    if lead in ("X", "Y", "Z"):
        return "frank"
    if _RIGHT_SIDED.match(lead):
        return "right"
    if lead in ("V7", "V8", "V9"):
        return "posterior"
    return "other"


@dataclass(frozen=True)
class Cell:
    """One trace on the page: a lead over page-relative seconds [t0_s, t1_s) in grid (row, col)."""

    lead: str
    row: int
    col: int
    t0_s: float
    t1_s: float
    inverted: bool = False
    rhythm: bool = False

    @property
    def label(self) -> str:
        return f"-{self.lead}" if self.inverted else self.lead


@dataclass(frozen=True)
class LeadGroup:
    """Leads outside the standard twelve shown together: ``n_rows`` rows from ``first_row``,
    under a heading (``title``)."""

    kind: str
    title: str
    leads: tuple[str, ...]
    first_row: int
    n_rows: int


@dataclass(frozen=True)
class PageLayout:
    """The cells of one page. ``groups``: the extra-lead groups (each starts a new row under
    a heading). ``strips``: every lead is a full-length strip because the record has too few
    of the standard leads for the chosen grid (``note`` says so in words)."""

    key: str
    cells: tuple[Cell, ...]
    n_rows: int
    n_cols: int
    page_s: float
    groups: tuple[LeadGroup, ...] = ()
    strips: bool = False
    note: str = ""

    def leads_shown(self) -> set[str]:
        return {c.lead for c in self.cells}

    def cells_at(self, t_s: float) -> tuple[Cell, ...]:
        """Cells whose time span contains page time ``t_s``."""
        return tuple(
            c for c in self.cells if c.t0_s <= t_s < c.t1_s or (t_s == c.t1_s == self.page_s)
        )

    @property
    def rhythm_leads(self) -> tuple[str, ...]:
        """The leads of the rhythm strips, top to bottom (the rhythm box shows the first)."""
        return tuple(c.lead for c in sorted(self.cells, key=lambda c: c.row) if c.rhythm)


def ordered_leads(available: Sequence[str], order: str = "standard") -> list[tuple[str, bool]]:
    """(lead, inverted) in display order; leads outside the 12 follow in record order."""
    if order not in LEAD_ORDERS:
        raise ValueError(f"unknown lead order {order!r}; expected one of {LEAD_ORDERS}")
    avail = list(available)
    seq = CABRERA_SEQUENCE if order == "cabrera" else STANDARD_12
    out: list[tuple[str, bool]] = []
    for name in seq:
        inverted = name.startswith("-")
        lead = name.lstrip("-")
        if lead in avail:
            out.append((lead, inverted))
    out += [(n, False) for n in avail if n not in {lead for lead, _ in out}]
    return out


def _strips(key: str, available: Sequence[str], page_s: float) -> PageLayout:
    cells = tuple(Cell(lead, i, 0, 0.0, page_s) for i, lead in enumerate(available))
    n = len(cells)
    note = f"{n} lead{'s' if n != 1 else ''}, each a full strip" if n > 1 else ""
    return PageLayout(key, cells, n, 1, page_s, strips=True, note=note)


def _rhythm_choice(
    rhythm_leads: Sequence[str], leads: list[tuple[str, bool]], want: int
) -> list[str]:
    names = [lead for lead, _ in leads]
    chosen = [r for r in rhythm_leads if r in names][:want]
    # Fill from the standard leads first: a rhythm strip of an extra lead is a last resort.
    for name in sorted(names, key=lambda n: n not in STANDARD_12):
        if len(chosen) >= min(want, len(names)):
            break
        if name not in chosen:
            chosen.append(name)
    return chosen


def build_layout(
    key: str,
    available: Sequence[str],
    page_s: float,
    *,
    order: str = "standard",
    rhythm_leads: Sequence[str] = DEFAULT_RHYTHM_LEADS,
) -> PageLayout:
    """Cells for layout ``key`` (one of LAYOUTS) over a page of ``page_s`` seconds.

    >>> lay = build_layout("3x4+1", STANDARD_12, 10.0)
    >>> (lay.n_rows, lay.n_cols, len(lay.cells), lay.rhythm_leads)
    (4, 4, 13, ('II',))
    >>> lay = build_layout("3x4+1", (*STANDARD_12, "X", "Y", "Z"), 10.0)
    >>> [(g.title, g.leads, g.first_row) for g in lay.groups]
    [('Frank leads (vectorcardiographic X, Y, Z)', ('X', 'Y', 'Z'), 4)]
    >>> build_layout("3x4+1", ("MLII", "V5"), 10.0).strips
    True
    """
    if key not in LAYOUTS:
        raise ValueError(f"unknown layout {key!r}; expected one of {tuple(LAYOUTS)}")
    if page_s <= 0:
        raise ValueError("page length must be positive")
    n_standard = sum(1 for n in available if n in STANDARD_12)
    if n_standard < GRID_MIN_STANDARD or len(available) <= 1:
        return _strips(key, available, page_s)
    leads = ordered_leads(available, order)
    std = [(lead, inv) for lead, inv in leads if lead in STANDARD_12]
    extra = [lead for lead, _ in leads if lead not in STANDARD_12]
    seq = [n.lstrip("-") for n in (CABRERA_SEQUENCE if order == "cabrera" else STANDARD_12)]
    cells: list[Cell] = []
    if key == "12x1":
        n_cols, grid_rows, span = 1, len(std), page_s
        for i, (lead, inv) in enumerate(std):
            cells.append(Cell(lead, i, 0, 0.0, page_s, inv))
    else:
        n_cols = 2 if key == "6x2" else 4
        grid_rows = 12 // n_cols
        span = page_s / n_cols
        for lead, inv in std:
            col, row = divmod(seq.index(lead), grid_rows)
            cells.append(Cell(lead, row, col, col * span, (col + 1) * span, inv))
    row = grid_rows
    if key.startswith("3x4"):
        for lead in _rhythm_choice(rhythm_leads, leads, 1 if key == "3x4+1" else 3):
            cells.append(Cell(lead, row, 0, 0.0, page_s, False, rhythm=True))
            row += 1
    groups: list[LeadGroup] = []
    for kind, title in EXTRA_GROUP_TITLES.items():
        members = [lead for lead in extra if extra_group(lead) == kind]
        if not members:
            continue
        n_group_rows = math.ceil(len(members) / n_cols)
        for j, lead in enumerate(members):
            r, col = divmod(j, n_cols)
            cells.append(Cell(lead, row + r, col, col * span, (col + 1) * span))
        groups.append(LeadGroup(kind, title, tuple(members), row, n_group_rows))
        row += n_group_rows
    return PageLayout(key, tuple(cells), row, n_cols, page_s, tuple(groups))
