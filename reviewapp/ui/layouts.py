"""Which lead goes where on the page: 12 stacked, 6x2, 3x4 with rhythm strips.

Columns show consecutive time spans of one page, so every cell shares the same time axis:
x on the paper is simply the page time, and a mark at time t falls in exactly one column.
Pure Python (no Qt), so layouts can be checked without a window.
"""

from __future__ import annotations

import math
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
class PageLayout:
    key: str
    cells: tuple[Cell, ...]
    n_rows: int
    n_cols: int
    page_s: float

    def leads_shown(self) -> set[str]:
        return {c.lead for c in self.cells}

    def cells_at(self, t_s: float) -> tuple[Cell, ...]:
        """Cells whose time span contains page time ``t_s``."""
        return tuple(
            c for c in self.cells if c.t0_s <= t_s < c.t1_s or (t_s == c.t1_s == self.page_s)
        )


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
    >>> (lay.n_rows, lay.n_cols, len(lay.cells))
    (4, 4, 13)
    """
    if key not in LAYOUTS:
        raise ValueError(f"unknown layout {key!r}; expected one of {tuple(LAYOUTS)}")
    if page_s <= 0:
        raise ValueError("page length must be positive")
    leads = ordered_leads(available, order)
    n = len(leads)
    cells: list[Cell] = []
    if key == "12x1" or n == 1:
        cells = [Cell(lead, i, 0, 0.0, page_s, inv) for i, (lead, inv) in enumerate(leads)]
        return PageLayout(key, tuple(cells), n, 1, page_s)
    n_cols = 2 if key == "6x2" else 4
    span = page_s / n_cols
    # The 12 standard leads fill the grid column by column; any other leads (Frank X, Y, Z,
    # V4R ...) follow in extra rows so every lead of the record stays on the page.
    std = [(lead, inv) for lead, inv in leads if lead in STANDARD_12]
    extra = [(lead, inv) for lead, inv in leads if lead not in STANDARD_12]
    if len(std) < 2:
        std, extra = leads, []
    n_rows = math.ceil(len(std) / n_cols)
    for i, (lead, inv) in enumerate(std):
        col, row = divmod(i, n_rows)
        cells.append(Cell(lead, row, col, col * span, (col + 1) * span, inv))
    for j, (lead, inv) in enumerate(extra):
        row, col = divmod(j, n_cols)
        cells.append(Cell(lead, n_rows + row, col, col * span, (col + 1) * span, inv))
    n_rows += math.ceil(len(extra) / n_cols)
    rows_total = n_rows
    if key.startswith("3x4"):
        want = 1 if key == "3x4+1" else 3
        names = [lead for lead, _ in leads]
        chosen = [r for r in rhythm_leads if r in names][:want]
        for name in names:
            if len(chosen) >= min(want, n):
                break
            if name not in chosen:
                chosen.append(name)
        for j, lead in enumerate(chosen):
            cells.append(Cell(lead, n_rows + j, 0, 0.0, page_s, False, rhythm=True))
        rows_total += len(chosen)
    return PageLayout(key, tuple(cells), rows_total, n_cols, page_s)
