"""Where a page's cells sit on the paper, in millimetres (pure Python, no Qt).

The paper canvas is drawn in millimetres (y grows downwards). A sample index and a millivolt
value map to a point through the page start, the cell's row and the ``PaperScale``; calipers
and marks keep samples and millivolts, and ask this object where to draw.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from reviewapp.ui.layouts import Cell, PageLayout
from reviewapp.ui.paper import PaperScale

LEFT_MARGIN_MM = 14.0  # room for the 1 mV pulse before each row's trace
TOP_MARGIN_MM = 10.0  # room for the speed/gain line
BOTTOM_MARGIN_MM = 10.0
RIGHT_MARGIN_MM = 5.0


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
        return TOP_MARGIN_MM + self.layout.n_rows * self.pitch_mm + BOTTOM_MARGIN_MM

    def x_of_time(self, t_page_s: float) -> float:
        return LEFT_MARGIN_MM + self.scale.x_mm(t_page_s)

    def x_of_sample(self, sample: float) -> float:
        return LEFT_MARGIN_MM + self.scale.x_mm((sample - self.page_start) / self.fs_hz)

    def sample_of_x(self, x_mm: float) -> int:
        """Nearest record sample to a paper x (snaps to samples)."""
        t = self.scale.seconds_from_mm(x_mm - LEFT_MARGIN_MM)
        return self.page_start + round(t * self.fs_hz)

    def baseline_y(self, row: int) -> float:
        return TOP_MARGIN_MM + (row + 0.5) * self.pitch_mm

    def y_of_mv(self, row: int, mv: float) -> float:
        return self.baseline_y(row) - self.scale.y_mm(mv)

    def mv_of_y(self, row: int, y_mm: float) -> float:
        return self.scale.mv_from_mm(self.baseline_y(row) - y_mm)

    def row_band(self, row: int) -> tuple[float, float]:
        top = TOP_MARGIN_MM + row * self.pitch_mm
        return top, top + self.pitch_mm

    def cell_at(self, x_mm: float, y_mm: float) -> Cell | None:
        row = math.floor((y_mm - TOP_MARGIN_MM) / self.pitch_mm)
        t = self.scale.seconds_from_mm(x_mm - LEFT_MARGIN_MM)
        for c in self.layout.cells:
            if c.row == row and c.t0_s <= t <= c.t1_s:
                return c
        return None

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
