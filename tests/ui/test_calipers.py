"""Calipers read exact intervals from sample indices, whatever the zoom, speed or gain."""

from __future__ import annotations

import pytest
from PySide6 import QtCore

from reviewapp.ui.calipers import time_readout

L = QtCore.Qt.MouseButton.LeftButton


def drag(qtbot, widget, a: QtCore.QPoint, b: QtCore.QPoint, steps: int = 6) -> None:
    """Press at a, move in steps, release at b: real mouse events on the viewport.

    The short waits matter: pyqtgraph drops move events closer than ~16 ms apart.
    """
    qtbot.mousePress(widget, L, pos=a)
    for k in range(1, steps + 1):
        p = QtCore.QPoint(
            a.x() + (b.x() - a.x()) * k // steps, a.y() + (b.y() - a.y()) * k // steps
        )
        qtbot.wait(20)
        qtbot.mouseMove(widget, p)
    qtbot.mouseRelease(widget, L, pos=b)


def sample_under(w, p: QtCore.QPoint) -> int:
    """The record sample under a viewport pixel, by inverting the view's own transform."""
    scene = w.paper.mapToScene(p)
    return w.paper.geom.sample_of_x(w.paper.vb.mapSceneToView(scene).x())


def test_time_readout_is_samples_over_rate():
    # 250 samples at 500 Hz = 500 ms -> 120 /min (60000 / 500).
    r = time_readout(1000, 1250, 500.0)
    assert r.interval_ms == 500.0 and r.rate_bpm == 120.0


@pytest.mark.parametrize("speed", [25.0, 50.0])
def test_dragged_caliper_leg_reads_exact_interval(loaded, qtbot, speed):
    w = loaded
    w.view.set_speed(speed)
    w.view.set_layout("3x4+1")
    qtbot.wait(10)
    fs = w.record.fs_hz  # 1000 Hz in the PTB header (wfdb)
    rhythm_row = next(c.row for c in w.paper.geom.layout.cells if c.rhythm)
    c = w.paper.add_caliper("time", row=rhythm_row, center_sample=1500)
    c.set_legs(a=1300, b=1700)
    vp = w.paper.viewport()
    top, bottom = w.paper.geom.row_band(rhythm_row)
    # Grab leg b in the lower half of the row (away from the bar), drop it near sample 2100.
    y_mm = top + 0.8 * (bottom - top)
    start = w.paper.map_to_viewport(w.paper.geom.x_of_sample(1700), y_mm).toPoint()
    target_mm_x = w.paper.geom.x_of_sample(2100)
    end = w.paper.map_to_viewport(target_mm_x, y_mm).toPoint()
    drag(qtbot, vp, start, end)
    # The leg snaps to the sample under the release pixel; the readout is exactly (b-a)/fs.
    landed = c.b
    assert landed == sample_under(w, end)
    assert abs(landed - 2100) <= fs / (speed * w.paper.px_per_mm) + 1  # within one pixel
    assert c.a == 1300
    assert c.readout().interval_ms == pytest.approx((landed - 1300) / fs * 1000.0, abs=1e-9)
    assert c.readout().rate_bpm == pytest.approx(60000.0 / ((landed - 1300) / fs * 1000.0))
    # Readout is independent of zoom, speed and gain: change all three.
    before = c.label_text()
    w.paper.zoom_by(1.7)
    w.view.set_gain(20.0)
    w.view.set_speed(50.0 if speed == 25.0 else 25.0)
    assert c.label_text() == before


def test_drag_whole_pair_and_keyboard_nudge_and_delete(loaded, qtbot):
    w = loaded
    w.view.set_layout("12x1")
    c = w.paper.add_caliper("time", row=1, center_sample=2000)
    c.set_legs(a=1800, b=2200)
    vp = w.paper.viewport()
    bar_y = c._bar_y()
    mid = w.paper.map_to_viewport(w.paper.geom.x_of_sample(2000), bar_y).toPoint()
    end = QtCore.QPoint(mid.x() + 50, mid.y())
    drag(qtbot, vp, mid, end)
    moved = c.a - 1800
    assert moved > 0 and c.b - 2200 == moved  # both legs moved together
    assert c.readout().interval_ms == pytest.approx(400.0)
    # Arrow keys move the selected part by one sample (1 ms at 1000 Hz).
    c.part = "b"
    b0 = c.b
    qtbot.keyClick(w, QtCore.Qt.Key.Key_Right)
    assert c.b == b0 + 1
    assert c.readout().interval_ms == pytest.approx(401.0)
    qtbot.keyClick(w, QtCore.Qt.Key.Key_Left)
    qtbot.keyClick(w, QtCore.Qt.Key.Key_Left)
    assert c.b == b0 - 1
    qtbot.keyClick(w, QtCore.Qt.Key.Key_Delete)
    assert c not in w.paper.calipers


def test_amplitude_caliper_reads_mv_and_mm_at_gain(loaded, qtbot):
    w = loaded
    w.view.set_layout("12x1")
    w.view.set_gain(20.0)
    c = w.paper.add_caliper("amplitude", row=1, center_sample=3000)
    c.set_levels(a_mv=0.0, b_mv=0.5)
    vp = w.paper.viewport()
    g = w.paper.geom
    # Where 0.5 mV of this lead is drawn (its display baseline centring included).
    start = w.paper.map_to_viewport(g.x_of_sample(3000) + 3.0, g.y_of_mv(1, 0.5, c.lead))
    start = start.toPoint()
    # 20 mm/mV at 4 px/mm: 80 px per mV; move up 40 px = +0.5 mV.
    end = QtCore.QPoint(start.x(), start.y() - 40)
    drag(qtbot, vp, start, end)
    assert c.b_mv == pytest.approx(1.0, abs=0.5 / 40 + 1e-6)
    r = c.readout()
    assert r.amplitude_mm == pytest.approx(r.amplitude_mv * 20.0)
    qtbot.keyClick(w, QtCore.Qt.Key.Key_Up)
    assert c.readout().amplitude_mv == pytest.approx(r.amplitude_mv + 0.01)


def test_any_number_of_pairs_and_march_out(loaded, qtbot):
    w = loaded
    w.view.set_layout("12x1")
    pairs = [w.paper.add_caliper("time", row=k, center_sample=1000 + 500 * k) for k in range(5)]
    assert len(w.paper.calipers) == 5
    c = pairs[0]
    c.set_legs(a=1000, b=1800)
    w.paper._select(c)
    qtbot.keyClick(w, QtCore.Qt.Key.Key_M)
    assert c.march
    # March-out repeats the 800-sample interval along the 10 s strip: 2600, 3400, ... 9800.
    forward = sorted(s for s in c.march_positions(10_000) if s > 1800)
    assert forward == list(range(2600, 10_001, 800))


def test_shift_drag_draws_a_new_time_caliper(loaded, qtbot):
    w = loaded
    w.view.set_layout("12x1")
    g = w.paper.geom
    vp = w.paper.viewport()
    row = 2
    y = g.baseline_y(row) + 3.0
    a = w.paper.map_to_viewport(g.x_of_sample(1200), y).toPoint()
    b = w.paper.map_to_viewport(g.x_of_sample(2000), y).toPoint()
    shift = QtCore.Qt.KeyboardModifier.ShiftModifier
    qtbot.mousePress(vp, L, shift, pos=a)
    for k in range(1, 5):
        qtbot.wait(20)
        qtbot.mouseMove(vp, QtCore.QPoint(a.x() + (b.x() - a.x()) * k // 4, a.y()))
    qtbot.mouseRelease(vp, L, shift, pos=b)
    assert len(w.paper.calipers) == 1
    c = w.paper.calipers[0]
    assert c.row == row and c.lead == g.layout.cells[row].lead
    assert (c.a, c.b) == (sample_under(w, a), sample_under(w, b))
    assert c.readout().interval_ms == pytest.approx((c.b - c.a) / w.record.fs_hz * 1000.0)
