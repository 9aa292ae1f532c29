"""Geometry of the report page in millimetres (no Qt): paper, header, grid, rows and columns.

The page is landscape. The grid area is a whole number of 5 mm boxes: a calibration zone,
then 250 mm of trace (10 s at 25 mm/s). The 3 x 4 layout puts I, II, III / aVR, aVL, aVF /
V1-V3 / V4-V6 in four consecutive time columns (each a quarter of the shown span) and a lead II
rhythm strip across the whole trace width below them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from reviewapp.core.record import STANDARD_12

# ISO 216 A4 and ANSI Letter, portrait width x height in mm (landscape swaps them).
PAPER_MM = {"a4": (210.0, 297.0), "letter": (215.9, 279.4)}

LAYOUT_3X4 = (
    ("I", "aVR", "V1", "V4"),
    ("II", "aVL", "V2", "V5"),
    ("III", "aVF", "V3", "V6"),
)
RHYTHM_LEAD = "II"
__all__ = ["LAYOUT_3X4", "RHYTHM_LEAD", "STANDARD_12", "PageLayout", "Rect", "page_layout"]

TRACE_WIDTH_MM = 250.0
MINOR_MM = 1.0
MAJOR_MM = 5.0
# Common practice, no source: a 1 mV calibration pulse lasting 0.2 s precedes each row.
CAL_PULSE_S = 0.2
CAL_PULSE_MV = 1.0


@dataclass(frozen=True)
class Rect:
    x: float
    y: float
    w: float
    h: float

    @property
    def right(self) -> float:
        return self.x + self.w

    @property
    def bottom(self) -> float:
        return self.y + self.h


@dataclass(frozen=True)
class PageLayout:
    """Every region of the page, in mm from the top-left corner of the sheet."""

    paper: str
    width_mm: float
    height_mm: float
    speed_mm_per_s: float
    gain_mm_per_mv: float
    header: Rect
    beat_panel: Rect  # representative beat at true scale, right end of the header
    grid: Rect  # the whole 1 mm / 5 mm grid area
    cal_width_mm: float  # calibration zone at the left of the grid
    row_baselines_mm: tuple[float, ...]  # y of each row's 0 mV line: 3 lead rows + rhythm
    footer: Rect

    @property
    def trace_x0_mm(self) -> float:
        return self.grid.x + self.cal_width_mm

    @property
    def shown_s(self) -> float:
        """Seconds of signal across the trace width at this speed."""
        return TRACE_WIDTH_MM / self.speed_mm_per_s

    @property
    def column_s(self) -> float:
        return self.shown_s / 4.0

    def x_of(self, t_s: float, t0_s: float = 0.0) -> float:
        """x (mm) of time ``t_s`` on a strip starting at ``t0_s`` at the trace origin."""
        return self.trace_x0_mm + (t_s - t0_s) * self.speed_mm_per_s

    def y_of(self, mv: float, row: int) -> float:
        """y (mm) of ``mv`` on row ``row`` (positive up)."""
        return self.row_baselines_mm[row] - mv * self.gain_mm_per_mv


def page_layout(
    paper: str = "a4", speed_mm_per_s: float = 25.0, gain_mm_per_mv: float = 10.0
) -> PageLayout:
    """Lay out a landscape ``paper`` page ("a4" or "letter") for the given speed and gain."""
    if paper not in PAPER_MM:
        raise ValueError(f"paper must be one of {sorted(PAPER_MM)}, got {paper!r}")
    if not (speed_mm_per_s > 0 and gain_mm_per_mv > 0):
        raise ValueError("speed and gain must be positive")
    short, long_ = PAPER_MM[paper]
    width, height = long_, short
    cal = 4.0 + CAL_PULSE_S * speed_mm_per_s
    grid_w = math.ceil((cal + TRACE_WIDTH_MM) / MAJOR_MM) * MAJOR_MM
    cal = grid_w - TRACE_WIDTH_MM  # the remainder of the last box goes to the calibration zone
    grid_h = 150.0
    header_h = 34.0
    footer_h = 9.0
    gap = 2.0
    block_h = header_h + gap + grid_h + gap + footer_h
    top = (height - block_h) / 2.0
    left = (width - grid_w) / 2.0
    header = Rect(left, top, grid_w, header_h)
    beat_w = 50.0
    beat_panel = Rect(header.right - beat_w, top + 1.0, beat_w, header_h - 2.0)
    grid = Rect(left, header.bottom + gap, grid_w, grid_h)
    baselines = tuple(grid.y + b for b in (25.0, 60.0, 95.0, 130.0))
    footer = Rect(left, grid.bottom + gap, grid_w, footer_h)
    return PageLayout(
        paper=paper,
        width_mm=width,
        height_mm=height,
        speed_mm_per_s=float(speed_mm_per_s),
        gain_mm_per_mv=float(gain_mm_per_mv),
        header=header,
        beat_panel=beat_panel,
        grid=grid,
        cal_width_mm=cal,
        row_baselines_mm=baselines,
        footer=footer,
    )
