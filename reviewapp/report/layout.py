"""Geometry of the report page in millimetres (no Qt): every text block, panel and the grid.

The page is landscape. The grid area is a whole number of 5 mm boxes: a calibration zone,
then the trace width (250 mm = 10 s at 25 mm/s; narrower only when the sheet is too small
for the calibration zone at high speed). The 3 x 4 layout puts I, II, III / aVR, aVL, aVF /
V1-V3 / V4-V6 in four consecutive time columns (each a quarter of the shown span) and a lead II
rhythm strip across the whole trace width below them, with the fiducial marks in three lanes
(P, QRS, T) under it.

Every block the page draws into is a named ``Rect`` in ``PageLayout.blocks()``; the painter
keeps text inside its block (eliding what does not fit), so blocks that do not intersect mean
nothing on the page overlaps.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from typing import TypeVar

import numpy as np

from reviewapp.core.record import STANDARD_12

# A position or a whole trace of positions: x_of/y_of map one value or an array alike.
Values = TypeVar("Values", float, np.ndarray)

# ISO 216 A4 and ANSI Letter, portrait width x height in mm (landscape swaps them).
PAPER_MM = {"a4": (210.0, 297.0), "letter": (215.9, 279.4)}
# Common practice, no source: standard recorder settings offered by electrocardiographs.
STANDARD_SPEEDS_MM_PER_S = (12.5, 25.0, 50.0, 100.0)
STANDARD_GAINS_MM_PER_MV = (2.5, 5.0, 10.0, 20.0, 40.0)

LAYOUT_3X4 = (
    ("I", "aVR", "V1", "V4"),
    ("II", "aVL", "V2", "V5"),
    ("III", "aVF", "V3", "V6"),
)
RHYTHM_LEAD = "II"
__all__ = [
    "LAYOUT_3X4",
    "RHYTHM_LEAD",
    "STANDARD_12",
    "STANDARD_GAINS_MM_PER_MV",
    "STANDARD_SPEEDS_MM_PER_S",
    "PageLayout",
    "Rect",
    "page_layout",
]

TRACE_WIDTH_MM = 250.0
MINOR_MM = 1.0
MAJOR_MM = 5.0
# Common practice, no source: a 1 mV calibration pulse lasting 0.2 s precedes each row.
CAL_PULSE_S = 0.2
CAL_PULSE_MV = 1.0
# Common practice, no source: keep at least this much paper outside the printed area, since
# office printers cannot print to the edge of the sheet.
MIN_MARGIN_MM = 6.0

# Vertical plan (mm).
HEADER_H = 38.0
GRID_H = 145.0
FOOTER_H = 11.0
GAP = 2.0
BEAT_PANEL_W = 52.0
# The title keeps this much of its row; the interpretation line takes the rest
# (report/interpretation_block.py).
TITLE_W = 96.0
ROW_BASELINES_IN_GRID = (21.0, 55.0, 89.0, 120.0)  # 3 lead rows + rhythm strip
# The three mark lanes (P, QRS, T) under a strip: top offset from its baseline and lane height.
LANE_TOP_BELOW_BASELINE_MM = 11.0
LANE_H_MM = 2.5
FIDUCIAL_LANES = ("P", "QRS", "T")


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

    def intersects(self, other: Rect) -> bool:
        """True when the interiors overlap (shared edges do not count)."""
        return (
            self.x < other.right
            and other.x < self.right
            and self.y < other.bottom
            and other.y < self.bottom
        )

    def contains(self, other: Rect, tol: float = 1e-9) -> bool:
        return (
            other.x >= self.x - tol
            and other.y >= self.y - tol
            and other.right <= self.right + tol
            and other.bottom <= self.bottom + tol
        )


@dataclass(frozen=True)
class PageLayout:
    """Every region of the page, in mm from the top-left corner of the sheet."""

    paper: str
    width_mm: float
    height_mm: float
    speed_mm_per_s: float
    gain_mm_per_mv: float
    header: Rect  # everything above the grid (the blocks below lie inside it)
    title: Rect  # "ECG reading report · record"
    statements: Rect  # the interpretation in two lines, right of the title
    facts: Rect  # subject, age, sex, study time point, acquisition, file
    status: Rect  # reading status, reviewer, corrected marks
    table: Rect  # global measurements with normal ranges and flags
    beat_panel: Rect  # representative beat at true scale, right end of the header
    beat_title: Rect  # the panel's caption (speed and gain it uses)
    beat_trace: Rect  # where the representative beat is drawn (clipped to it)
    beat_labels: Rect  # the fiducial labels under the beat
    grid: Rect  # the whole 1 mm / 5 mm grid area
    cal_width_mm: float  # calibration zone at the left of the grid
    trace_w_mm: float  # width of the traces after the calibration zone
    row_baselines_mm: tuple[float, ...]  # y of each row's 0 mV line: 3 lead rows + rhythm
    footer: Rect
    footer_scale: Rect  # speed, gain, grid, span shown
    footer_meta: Rect  # engine version, print time
    footer_key: Rect  # key to the mark glyphs
    footer_notes: Rect  # analysis notes
    footer_caution: Rect  # the clinical caution

    @property
    def trace_x0_mm(self) -> float:
        return self.grid.x + self.cal_width_mm

    @property
    def shown_s(self) -> float:
        """Seconds of signal across the trace width at this speed."""
        return self.trace_w_mm / self.speed_mm_per_s

    @property
    def column_s(self) -> float:
        return self.shown_s / 4.0

    @property
    def cal_pulse_mv(self) -> float:
        """1 mV, or 0.5 mV when a 1 mV pulse would not fit above the top row (labelled)."""
        room = self.row_baselines_mm[0] - self.grid.y - 0.5
        return CAL_PULSE_MV if CAL_PULSE_MV * self.gain_mm_per_mv <= room else CAL_PULSE_MV / 2

    def x_of(self, t_s: Values, t0_s: float = 0.0) -> Values:
        """x (mm) of time ``t_s`` on a strip starting at ``t0_s`` at the trace origin."""
        return self.trace_x0_mm + (t_s - t0_s) * self.speed_mm_per_s

    def y_of(self, mv: Values, row: int) -> Values:
        """y (mm) of ``mv`` on row ``row`` (positive up)."""
        return self.row_baselines_mm[row] - mv * self.gain_mm_per_mv

    def lanes(self, row: int) -> dict[str, Rect]:
        """The P, QRS and T mark lanes under strip ``row`` (inside the grid)."""
        y0 = self.row_baselines_mm[row] + LANE_TOP_BELOW_BASELINE_MM
        return {
            name: Rect(self.trace_x0_mm, y0 + k * LANE_H_MM, self.trace_w_mm, LANE_H_MM)
            for k, name in enumerate(FIDUCIAL_LANES)
        }

    def blocks(self) -> dict[str, Rect]:
        """The top-level blocks that must not overlap one another."""
        return {
            "title": self.title,
            "statements": self.statements,
            "facts": self.facts,
            "status": self.status,
            "table": self.table,
            "beat_panel": self.beat_panel,
            "grid": self.grid,
            "footer_scale": self.footer_scale,
            "footer_meta": self.footer_meta,
            "footer_key": self.footer_key,
            "footer_notes": self.footer_notes,
            "footer_caution": self.footer_caution,
        }

    def overlaps(self) -> list[tuple[str, str]]:
        """Pairs of blocks that intersect (empty for a valid layout)."""
        items = self.blocks().items()
        return [
            (a, b) for (a, ra), (b, rb) in itertools.combinations(items, 2) if ra.intersects(rb)
        ]


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
    trace_w = TRACE_WIDTH_MM
    grid_w = math.ceil((cal + trace_w) / MAJOR_MM) * MAJOR_MM
    max_grid_w = width - 2 * MIN_MARGIN_MM
    if grid_w > max_grid_w:  # e.g. Letter at 100 mm/s: give up whole boxes of trace
        trace_w -= math.ceil((grid_w - max_grid_w) / MAJOR_MM) * MAJOR_MM
        grid_w = math.ceil((cal + trace_w) / MAJOR_MM) * MAJOR_MM
    cal = grid_w - trace_w  # the remainder of the last box goes to the calibration zone
    block_h = HEADER_H + GAP + GRID_H + GAP + FOOTER_H
    top = (height - block_h) / 2.0
    left = (width - grid_w) / 2.0
    header = Rect(left, top, grid_w, HEADER_H)
    beat_panel = Rect(header.right - BEAT_PANEL_W, top, BEAT_PANEL_W, HEADER_H)
    text_w = beat_panel.x - 3.0 - left
    title = Rect(left, top, TITLE_W, 5.0)
    statements = Rect(left + TITLE_W + 2.0, top, text_w - TITLE_W - 2.0, 5.0)
    facts = Rect(left, title.bottom, text_w, 4.2)
    status = Rect(left, facts.bottom, text_w, 4.2)
    table = Rect(left, status.bottom + 0.2, text_w, header.bottom - status.bottom - 0.2)
    beat_title = Rect(beat_panel.x, beat_panel.y, beat_panel.w, 5.0)
    beat_labels = Rect(beat_panel.x, beat_panel.bottom - 6.0, beat_panel.w, 6.0)
    beat_trace = Rect(
        beat_panel.x, beat_title.bottom, beat_panel.w, beat_labels.y - beat_title.bottom
    )
    grid = Rect(left, header.bottom + GAP, grid_w, GRID_H)
    baselines = tuple(grid.y + b for b in ROW_BASELINES_IN_GRID)
    footer = Rect(left, grid.bottom + GAP, grid_w, FOOTER_H)
    meta_w = 62.0
    notes_w = 70.0
    footer_scale = Rect(left, footer.y, grid_w - meta_w - 2.0, 3.8)
    footer_meta = Rect(footer.right - meta_w, footer.y, meta_w, 3.8)
    footer_key = Rect(left, footer_scale.bottom, grid_w - notes_w - 2.0, 3.6)
    footer_notes = Rect(footer.right - notes_w, footer_scale.bottom, notes_w, 3.6)
    footer_caution = Rect(left, footer_key.bottom, grid_w, footer.bottom - footer_key.bottom)
    return PageLayout(
        paper=paper,
        width_mm=width,
        height_mm=height,
        speed_mm_per_s=float(speed_mm_per_s),
        gain_mm_per_mv=float(gain_mm_per_mv),
        header=header,
        title=title,
        statements=statements,
        facts=facts,
        status=status,
        table=table,
        beat_panel=beat_panel,
        beat_title=beat_title,
        beat_trace=beat_trace,
        beat_labels=beat_labels,
        grid=grid,
        cal_width_mm=cal,
        trace_w_mm=trace_w,
        row_baselines_mm=baselines,
        footer=footer,
        footer_scale=footer_scale,
        footer_meta=footer_meta,
        footer_key=footer_key,
        footer_notes=footer_notes,
        footer_caution=footer_caution,
    )
