"""Page layout: no block overlaps another at any paper size, speed or gain; every drawn text
stays in its block; traces never leave the grid (or the beat panel's trace area); the beat
panel lowers its own gain, and says so, when the beat would not fit.

Outside references:
- ISO 216 A4 (210 x 297 mm) and ANSI Letter (215.9 x 279.4 mm) sheets.
- Standard recorder settings 12.5/25/50/100 mm/s and 2.5/5/10/20/40 mm/mV (common practice,
  no source).
- The 12-lead record is LUDB record 1 (PhysioNet, via the shared_data fixture); the QTDB
  record sel100 (PhysioNet) is the 2-lead case.
"""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest

from reviewapp.core.engine import analyse
from reviewapp.core.io import open_record
from reviewapp.report import page as page_mod
from reviewapp.report.content import build_report_content
from reviewapp.report.export import render_page
from reviewapp.report.layout import (
    STANDARD_GAINS_MM_PER_MV,
    STANDARD_SPEEDS_MM_PER_S,
    Rect,
    page_layout,
)

PAPERS = ("a4", "letter")
SHEETS_MM = {"a4": (297.0, 210.0), "letter": (279.4, 215.9)}


@pytest.fixture(scope="module")
def ludb_content(shared_data: Path):
    return build_report_content(analyse(open_record(shared_data / "ludb" / "1.hea")))


@pytest.fixture(scope="module")
def qtdb_content(shared_data: Path):
    return build_report_content(analyse(open_record(shared_data / "qtdb" / "sel100.hea")))


def _grow(r: Rect, d: float) -> Rect:
    return Rect(r.x - d, r.y - d, r.w + 2 * d, r.h + 2 * d)


def test_rect_intersection():
    a = Rect(0.0, 0.0, 10.0, 10.0)
    assert a.intersects(Rect(9.0, 9.0, 5.0, 5.0))
    assert not a.intersects(Rect(10.0, 0.0, 5.0, 5.0))  # touching edges do not overlap
    assert a.contains(Rect(1.0, 1.0, 9.0, 9.0)) and not a.contains(Rect(1.0, 1.0, 9.5, 9.0))


@pytest.mark.parametrize("paper", PAPERS)
def test_layout_blocks_never_intersect_and_stay_on_the_sheet(paper: str):
    w_sheet, h_sheet = SHEETS_MM[paper]
    for speed, gain in itertools.product(STANDARD_SPEEDS_MM_PER_S, STANDARD_GAINS_MM_PER_MV):
        lo = page_layout(paper, speed, gain)
        assert (lo.width_mm, lo.height_mm) == pytest.approx((w_sheet, h_sheet))
        assert lo.overlaps() == [], (speed, gain)
        sheet = Rect(5.0, 5.0, w_sheet - 10.0, h_sheet - 10.0)  # >= 5 mm unprintable edge
        for name, r in lo.blocks().items():
            assert sheet.contains(r), (name, r, speed)
            assert r.w > 0 and r.h > 0, name
        # The header text blocks and the beat panel share the header band, side by side.
        for name in ("title", "facts", "status", "table", "beat_panel"):
            assert lo.header.contains(getattr(lo, name)), name
        parts = (lo.beat_title, lo.beat_trace, lo.beat_labels)
        assert all(lo.beat_panel.contains(p) for p in parts)
        assert not any(a.intersects(b) for a, b in itertools.combinations(parts, 2))
        # Whole 5 mm boxes; lanes for the marks inside the grid.
        assert lo.grid.w % 5 == 0 and lo.grid.h % 5 == 0
        for lane in lo.lanes(3).values():
            assert lo.grid.contains(lane)


def _check_texts_in_blocks(drawing, lo) -> None:
    blocks = dict(lo.blocks())
    blocks.update(beat_title=lo.beat_title, beat_trace=lo.beat_trace, beat_labels=lo.beat_labels)
    for text, box in drawing.texts:
        homes = [n for n, r in blocks.items() if _grow(r, 0.25).contains(box)]
        assert homes, f"text {text!r} at {box} is in no block"
        # In particular nothing of the header text reaches into the representative-beat box.
        if "beat" not in homes[0]:
            assert not box.intersects(_grow(lo.beat_panel, -0.25)), text


@pytest.mark.parametrize("paper", PAPERS)
def test_every_drawn_text_stays_inside_its_block(paper: str, ludb_content, qtdb_content):
    """The QA case: '12 leads, 500 Hz, 10.0 s' drawn under the beat box. Now every text box
    the painter draws lies inside one block, and blocks do not intersect."""
    settings = [(25.0, g) for g in STANDARD_GAINS_MM_PER_MV] + [
        (s, 10.0) for s in STANDARD_SPEEDS_MM_PER_S
    ]
    for content in (ludb_content, qtdb_content):
        for speed, gain in settings:
            lo = page_layout(paper, speed, gain)
            img, drawing = render_page(content, lo, dpi=40.0)
            assert not img.isNull()
            _check_texts_in_blocks(drawing, lo)


def _green_mask(img) -> np.ndarray:
    from PySide6.QtGui import QImage

    img = img.convertToFormat(QImage.Format.Format_RGB888)
    w, h, bpl = img.width(), img.height(), img.bytesPerLine()
    a = np.frombuffer(img.constBits(), dtype=np.uint8, count=bpl * h).reshape(h, bpl)
    a = a[:, : w * 3].reshape(h, w, 3).astype(int)
    return (a[..., 1] - np.maximum(a[..., 0], a[..., 2])) > 60


def _inside(mask: np.ndarray, r: Rect, px_per_mm: float, pad_px: int = 1) -> np.ndarray:
    out = np.zeros_like(mask)
    y0 = max(0, int(np.floor(r.y * px_per_mm)) - pad_px)
    x0 = max(0, int(np.floor(r.x * px_per_mm)) - pad_px)
    y1 = int(np.ceil(r.bottom * px_per_mm)) + pad_px + 1
    x1 = int(np.ceil(r.right * px_per_mm)) + pad_px + 1
    out[y0:y1, x0:x1] = True
    return out


@pytest.mark.parametrize("paper", PAPERS)
def test_traces_stay_in_the_grid_and_the_beat_fits_its_panel(paper: str, ludb_content, monkeypatch):
    """At every standard gain, no trace pixel falls outside the grid or the beat panel's trace
    area (so never on the header, the footer or the margins), and the representative beat is
    drawn whole (not touching its area's edges) at a gain the panel prints."""
    green = page_mod.QColor(0, 220, 0)
    monkeypatch.setattr(page_mod, "TRACE_INK", green)
    monkeypatch.setattr(page_mod, "REP_OTHER_LEADS", green)
    dpi = 100.0
    px_per_mm = dpi / 25.4
    for gain in STANDARD_GAINS_MM_PER_MV:
        lo = page_layout(paper, 25.0, gain)
        img, drawing = render_page(ludb_content, lo, dpi=dpi)
        mask = _green_mask(img)
        assert mask.any()
        allowed = _inside(mask, lo.grid, px_per_mm) | _inside(mask, lo.beat_trace, px_per_mm)
        stray = np.argwhere(mask & ~allowed)
        assert stray.size == 0, f"gain {gain}: trace ink outside the grid at px {stray[:5]}"
        beat_gain = drawing.beat_gain_mm_per_mv
        assert beat_gain is not None and beat_gain <= gain
        assert beat_gain in STANDARD_GAINS_MM_PER_MV
        # The panel labels the gain it uses.
        assert any(f"{beat_gain:g} mm/mV" in t for t, _ in drawing.texts)
        if beat_gain < gain:
            assert any("reduced" in t for t, _ in drawing.texts)
        # Beat drawn whole: its ink stays > 0.3 mm from the top and bottom of its area.
        area = lo.beat_trace
        rows = np.flatnonzero(
            mask[:, int(area.x * px_per_mm) + 2 : int(area.right * px_per_mm) - 2].any(axis=1)
        )
        rows = rows[(rows >= area.y * px_per_mm - 1) & (rows <= area.bottom * px_per_mm + 1)]
        assert rows.size > 0
        assert rows.min() / px_per_mm > area.y + 0.3, gain
        assert rows.max() / px_per_mm < area.bottom - 0.3, gain
    # LUDB 1's beat spans well over 1 mV, so at 40 mm/mV the panel must have reduced its gain.
    assert beat_gain < 40.0


def test_beat_panel_gain_rule():
    # A 2 mV beat in 26 mm: 20 mm/mV would need 40 mm, 10 mm/mV needs 20 mm.
    assert page_mod.beat_panel_gain(2.0, 26.0, 20.0) == 10.0
    assert page_mod.beat_panel_gain(2.0, 26.0, 5.0) == 5.0  # never above the page gain
    assert page_mod.beat_panel_gain(20.0, 26.0, 10.0) == 2.5  # nothing fits: smallest
