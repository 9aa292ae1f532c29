"""Where a page's cells sit on the paper, in millimetres (pure Python, no Qt).

The paper canvas is drawn in millimetres (y grows downwards). A sample index and a millivolt
value map to a point through the page start, the cell's row and the ``PaperScale``; calipers
and marks keep samples and millivolts, and ask this object where to draw.

Each extra-lead group (Frank X, Y, Z ...) starts after a gap of one large square that holds
its heading. ``offsets_mv`` is the display-only baseline centring: a lead's trace is drawn
that many millivolts lower (its baseline on its row), and every millivolt the reader reads
off the paper (an amplitude caliper) is converted back, so the values stay the signal's own.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

from reviewapp.ui.layouts import Cell, PageLayout
from reviewapp.ui.paper import PaperScale

LEFT_MARGIN_MM = 14.0  # room for the 1 mV pulse before each row's trace
TOP_MARGIN_MM = 10.0  # room for the speed/gain line
BOTTOM_MARGIN_MM = 10.0
RIGHT_MARGIN_MM = 5.0
GROUP_GAP_MM = 5.0  # one large square above each extra-lead group, for its heading


def row_pitch_mm(gain_mm_per_mv: float) -> float:
    """Row spacing: 2 mV of trace per row, whole 5 mm squares, at least 15 mm.

    Common practice, no source: big QRS complexes may overlap the next row, as on paper.
    """
    return max(15.0, 5.0 * math.ceil(2.0 * gain_mm_per_mv / 5.0))


@dataclass(frozen=True)
class PageGeometry:
    layout: PageLayout
    scale: PaperScale
    fs_hz: float
    page_start: int  # record sample index at the page's left edge
    # Display-only baseline offset of each lead (mV), subtracted where its trace is drawn.
    offsets_mv: Mapping[str, float] = field(default_factory=dict, compare=False, hash=False)

    @property
    def pitch_mm(self) -> float:
        return row_pitch_mm(self.scale.gain_mm_per_mv)

    @property
    def page_samples(self) -> int:
        return round(self.layout.page_s * self.fs_hz)

    @property
    def width_mm(self) -> float:
        return LEFT_MARGIN_MM + self.scale.x_mm(self.layout.page_s) + RIGHT_MARGIN_MM

    @property
    def height_mm(self) -> float:
        gaps = GROUP_GAP_MM * len(self.layout.groups)
        return TOP_MARGIN_MM + self.layout.n_rows * self.pitch_mm + gaps + BOTTOM_MARGIN_MM

    def x_of_time(self, t_page_s: float) -> float:
        return LEFT_MARGIN_MM + self.scale.x_mm(t_page_s)

    def x_of_sample(self, sample: float) -> float:
        return LEFT_MARGIN_MM + self.scale.x_mm((sample - self.page_start) / self.fs_hz)

    def sample_of_x(self, x_mm: float) -> int:
        """Nearest record sample to a paper x (snaps to samples)."""
        t = self.scale.seconds_from_mm(x_mm - LEFT_MARGIN_MM)
        return self.page_start + round(t * self.fs_hz)

    def row_top(self, row: int) -> float:
        """y (mm) of the top of ``row``: the rows above it and the group gaps above it."""
        gaps = sum(1 for g in self.layout.groups if g.first_row <= row)
        return TOP_MARGIN_MM + row * self.pitch_mm + gaps * GROUP_GAP_MM

    def baseline_y(self, row: int) -> float:
        return self.row_top(row) + 0.5 * self.pitch_mm

    def offset_mv(self, lead: str | None) -> float:
        return 0.0 if lead is None else float(self.offsets_mv.get(lead, 0.0))

    def y_of_mv(self, row: int, mv: float, lead: str | None = None) -> float:
        """y (mm) of ``mv`` of ``lead`` on ``row`` (its display offset taken off)."""
        return self.baseline_y(row) - self.scale.y_mm(mv - self.offset_mv(lead))

    def mv_of_y(self, row: int, y_mm: float, lead: str | None = None) -> float:
        return self.scale.mv_from_mm(self.baseline_y(row) - y_mm) + self.offset_mv(lead)

    def row_band(self, row: int) -> tuple[float, float]:
        top = self.row_top(row)
        return top, top + self.pitch_mm

    def row_at(self, y_mm: float) -> int | None:
        """The row whose band holds ``y_mm`` (None in a margin or a group's heading gap)."""
        for row in range(self.layout.n_rows):
            top, bottom = self.row_band(row)
            if top <= y_mm < bottom:
                return row
        return None

    def cell_at(self, x_mm: float, y_mm: float) -> Cell | None:
        row = self.row_at(y_mm)
        t = self.scale.seconds_from_mm(x_mm - LEFT_MARGIN_MM)
        for c in self.layout.cells:
            if c.row == row and c.t0_s <= t <= c.t1_s:
                return c
        return None

    def cell_of(self, row: int, sample: int) -> Cell | None:
        """The cell of ``row`` showing ``sample``."""
        t = (sample - self.page_start) / self.fs_hz
        return next((c for c in self.layout.cells_at(t) if c.row == row), None)

    def sample_range(self, cell: Cell) -> tuple[int, int]:
        return (
            self.page_start + round(cell.t0_s * self.fs_hz),
            self.page_start + round(cell.t1_s * self.fs_hz),
        )

    def bands_at_sample(self, sample: int) -> list[tuple[float, float]]:
        """Vertical extents (mm) of the rows showing ``sample``; adjacent rows merged."""
        t = (sample - self.page_start) / self.fs_hz
        rows = sorted({c.row for c in self.layout.cells_at(t)})
        bands: list[tuple[float, float]] = []
        for r in rows:
            top, bottom = self.row_band(r)
            if bands and abs(bands[-1][1] - top) < 1e-9:
                bands[-1] = (bands[-1][0], bottom)
            else:
                bands.append((top, bottom))
        return bands
