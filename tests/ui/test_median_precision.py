"""Precise correction of the median beat: the magnified beat's own time scale, drags without a
dead zone, one-sample nudges of the selected mark from the keyboard, and a median panel that
stays whatever the gain and the layout.

The record is PTB s0010_re at 1000 Hz (wfdb), so one sample is 1 ms. Expected positions come
from the view's own pixel transform (what the reader's mouse sees) and from the sampling rate
in the record's header, never from the code that moves the marks.
"""

from __future__ import annotations

import pytest
from PySide6 import QtCore, QtWidgets

from reviewapp.core.workflow import MarkTarget
from reviewapp.ui.page_controls import MEDIAN_MIN_PX
from tests.ui.conftest import choose_in_box

L = QtCore.Qt.MouseButton.LeftButton
Key = QtCore.Qt.Key
T_END = MarkTarget("representative", "t_off")


def _key(w, qtbot, key) -> None:
    w.activateWindow()
    qtbot.waitUntil(lambda: QtWidgets.QApplication.activeWindow() is w, timeout=3000)
    qtbot.keyClick(w, key)


def _select(w, qtbot, fid: str) -> None:
    mv = w.median
    qtbot.mouseClick(mv.viewport(), L, pos=mv.line_point(fid, plot_index=1, frac_y=0.3))
    qtbot.wait(20)
    assert mv.selected_fid == fid


@pytest.fixture
def median(loaded, qtbot):
    w = loaded
    w.view.show_median(True)
    qtbot.wait(30)
    return w


@pytest.mark.parametrize("ms_per_px", [2.0, 1.0, 0.5])
def test_a_3_px_drag_in_the_magnified_beat_moves_t_end_by_its_scale(median, qtbot, ms_per_px):
    w, mv = median, median.median
    choose_in_box(qtbot, mv.bar.scale_box, f"{ms_per_px:g} ms per pixel")
    assert mv.mag_ms_per_px == ms_per_px
    _select(w, qtbot, "t_off")
    scale = mv.magnifier_ms_per_px()
    assert scale == pytest.approx(ms_per_px, rel=0.02)  # the chosen scale, as drawn
    k0 = w.workflow.shown_sample(T_END)
    start = mv.magnifier_point("t_off", frac_y=0.4)
    # One press, one 3 px move, one release: no threshold swallows the movement.
    qtbot.mousePress(mv.viewport(), L, pos=start)
    qtbot.mouseMove(mv.viewport(), QtCore.QPoint(start.x() + 3, start.y()))
    qtbot.mouseRelease(mv.viewport(), L, pos=QtCore.QPoint(start.x() + 3, start.y()))
    qtbot.wait(20)
    k1 = w.workflow.shown_sample(T_END)
    moved_ms = (k1 - k0) * 1000.0 / w.record.fs_hz
    # 3 px x the view's ms per pixel, within one sample (1 ms at 1000 Hz).
    assert abs(moved_ms - 3 * scale) <= 1000.0 / w.record.fs_hz
    assert k1 != k0 and w.workflow.is_corrected(T_END)


def test_the_magnified_scale_does_not_follow_the_page(median, qtbot):
    w, mv = median, median.median
    before = mv.magnifier_ms_per_px()
    panel = mv.plots[0]
    panel_before = panel.viewRect().width() / panel.width()
    w.view.set_speed(50.0)  # the page (and its median panels) twice as wide per second
    qtbot.wait(30)
    panel = mv.plots[0]
    assert panel.viewRect().width() / panel.width() < 0.75 * panel_before
    assert mv.magnifier_ms_per_px() == pytest.approx(before, rel=0.02)
    # At true size on a 25 mm/s page one pixel is a quarter of a millimetre, 10 ms here.
    assert before <= 1.0 + 1e-6 < 1000.0 / 25.0 / w.view.scale.px_per_mm


def test_arrow_keys_nudge_the_selected_mark_one_sample_not_a_caliper(median, qtbot):
    w, mv = median, median.median
    cal = w.paper.add_caliper("time", center_sample=3000)
    a0, b0 = cal.a, cal.b
    _select(w, qtbot, "t_off")
    # Visibly selected: a halo on every T end line, the others plain; the bar says so.
    assert all(ln.selected for ln in mv._all_lines("t_off"))
    assert not any(ln.selected for ln in mv._all_lines("qrs_on"))
    assert "selected: T end" in mv.bar.readout.text()
    assert w.paper.selected is None  # one selection for the window
    k0 = w.workflow.shown_sample(T_END)
    qt0 = w.workflow.reading.measurements.intervals.qt_ms
    _key(w, qtbot, Key.Key_Right)
    # At once: the lines and the values (QT = T end - QRS onset, so +1 sample = +1 ms).
    assert mv.shown_sample("t_off") == k0 + 1
    assert w.workflow.reading.measurements.intervals.qt_ms == pytest.approx(qt0 + 1.0)
    # Beside the mark in the magnified beat at once; the Measurements dock when it pauses.
    assert f"QT {qt0 + 1.0:.0f} ms" in mv.mag_position.text()
    qtbot.waitUntil(lambda: w.summary.value_text("qt_ms") == f"{qt0 + 1.0:.0f} ms", timeout=2000)
    _key(w, qtbot, Key.Key_Right)
    _key(w, qtbot, Key.Key_Left)
    assert (cal.a, cal.b) == (a0, b0)  # the caliper behind stays put
    # The burst becomes one correction when the reader pauses.
    qtbot.waitUntil(lambda: w.workflow.is_corrected(T_END), timeout=3000)
    assert w.workflow.shown_sample(T_END) == k0 + 1
    assert w.acts["undo"].text() == "Undo Move T end (median beat)"
    w.act_undo.trigger()
    qtbot.wait(20)
    assert w.workflow.shown_sample(T_END) == k0 and not w.workflow.is_corrected(T_END)
    assert mv.selected_fid == "t_off"  # still selected after the step
    # Up and down do not move a mark.
    _key(w, qtbot, Key.Key_Up)
    assert mv.shown_sample("t_off") == k0 and w.selection.pending is None


def _px_off(line) -> float:
    """How far (screen pixels, from the panel's own transform) the line is drawn from its
    value."""
    vb = line.getViewBox()
    x_value = vb.mapViewToScene(QtCore.QPointF(line.value(), 0.0)).x()
    x_drawn = vb.mapViewToScene(QtCore.QPointF(line.drawn_value(), 0.0)).x()
    return abs(x_drawn - x_value)


def test_every_line_follows_the_nudged_mark_within_half_a_pixel(median, qtbot):
    w, mv = median, median.median
    _select(w, qtbot, "t_off")
    k0 = w.workflow.shown_sample(T_END)
    lines = mv._all_lines("t_off")
    drawn0 = [ln.drawn_value() for ln in lines]
    for n in range(1, 26):
        _key(w, qtbot, Key.Key_Right)
        want_ms = (k0 + n - w.workflow.rep_r_index) * 1000.0 / w.record.fs_hz
        for ln in lines:
            assert ln.value() == pytest.approx(want_ms)  # the value is always exact
            assert _px_off(ln) < 0.5 + 1e-6  # drawn within half a pixel of it
    # 25 ms is more than two pixels of a small panel at 25 mm/s: those lines were redrawn.
    assert all(ln.drawn_value() != d for ln, d in zip(lines, drawn0, strict=True))
    wf = w.workflow
    qtbot.waitUntil(  # the last sample committed (a slow key on a loaded machine is a pause)
        lambda: wf.shown_sample(T_END) == k0 + 25 and wf.reading is wf.committed_reading,
        timeout=3000,
    )
    # Once the correction is made, every line is drawn exactly at its value.
    qtbot.waitUntil(
        lambda: all(ln.drawn_value() == ln.value() for ln in mv._all_lines("t_off")),
        timeout=2000,
    )


def _drag_in_magnifier(w, qtbot, mv, px: int) -> None:
    """Press T end's line in the magnified beat and move the mouse ``px`` pixels right, one
    pixel a step (a drag in progress: each step a preview, nothing committed), checking that
    every T end line is drawn within half a pixel of its value at each step; then release."""
    start = mv.magnifier_point("t_off", frac_y=0.4)
    qtbot.mousePress(mv.viewport(), L, pos=start)
    for dx in range(1, px + 1):
        qtbot.mouseMove(mv.viewport(), QtCore.QPoint(start.x() + dx, start.y()))
        assert w.workflow.reading is not w.workflow.committed_reading  # still a drag
        assert all(_px_off(ln) < 0.5 + 1e-6 for ln in mv._all_lines("t_off")), dx
    qtbot.mouseRelease(mv.viewport(), L, pos=QtCore.QPoint(start.x() + px, start.y()))


def test_the_lines_stay_within_half_a_pixel_after_the_panels_grow(median, qtbot):
    # Each line remembers its panel's pixel width between moves; the panels growing (a larger
    # window) must renew it, or a small panel's line could lag by more than half a new pixel.
    w, mv = median, median.median
    _select(w, qtbot, "t_off")
    _drag_in_magnifier(w, qtbot, mv, 12)  # the pixel widths are measured while it moves
    small = mv.lines["t_off"][0]
    before = small.getViewBox().viewPixelSize()[0]
    w.resize(int(w.width() * 1.6), int(w.height() * 1.6))
    qtbot.waitUntil(lambda: small.getViewBox().viewPixelSize()[0] < 0.8 * before, timeout=3000)
    _select(w, qtbot, "t_off")
    _drag_in_magnifier(w, qtbot, mv, 12)


def test_a_beat_mark_on_the_paper_is_selected_and_nudged(median, qtbot):
    w = median
    w.view.set_layout("12x1")
    qtbot.wait(20)
    mark = next(m for m in w.paper.marks if m.fiducial == "t_off" and m.beat_index == 3)
    target = mark.target
    s0 = mark.sample
    top, _bottom = mark._bands[0]
    # On the top row (the page at true size is taller than the paper's part of the window).
    p = w.paper.map_to_viewport(w.paper.geom.x_of_sample(s0), top + 8.0).toPoint()
    qtbot.mouseClick(w.paper.viewport(), L, pos=p)
    assert w.paper.selected is mark and mark.selected
    assert w.median.selected_fid is None
    _key(w, qtbot, Key.Key_Left)
    assert mark.sample == s0 - 1
    w.selection.flush()  # as before any other step
    assert w.workflow.shown_sample(target) == s0 - 1 and w.workflow.is_corrected(target)
    # The mark drawn again after its correction is still the selection.
    sel = w.paper.selected
    assert sel is not None and sel.target == target and sel.selected


@pytest.mark.parametrize(
    ("layout", "gain"), [("3x4+3", 40.0), ("12x1", 10.0), ("12x1", 40.0), ("3x4+1", 2.5)]
)
def test_the_median_panel_stays_whatever_the_gain_and_layout(median, qtbot, layout, gain):
    w = median
    w.act_median_auto.trigger()  # View ▸ Median beat sized to the page
    w.view.set_layout(layout)
    w.view.set_gain(gain)
    qtbot.wait(50)
    assert w.view.median_auto and w.median.isVisible()
    assert w.view.median_area.height() >= MEDIAN_MIN_PX - 2
    assert w.median.magnifier is not None and w.median.magnifier.width() > 250
    # The page scrolls instead: its bar appears when the page is taller than the paper.
    g = w.paper.geom
    if g.height_mm * w.view.scale.px_per_mm * w.paper.zoom > w.paper.height():
        assert w.paper.v_scroll.isVisible()


def test_clicking_a_lead_shows_it_magnified(median, qtbot):
    mv = median.median
    assert mv.mag_lead == "II" and mv.bar.lead_box.currentData() == "II"
    v1 = next(i for i, p in enumerate(mv.plots) if p.lead == "V1")
    vb = mv.plots[v1]
    # A point of the panel away from every mark line (its left edge, lower part).
    r = vb.viewRect()
    pt = mv.mapFromScene(vb.mapViewToScene(QtCore.QPointF(r.left() + 0.03 * r.width(), r.top())))
    qtbot.mouseClick(mv.viewport(), L, pos=QtCore.QPoint(pt.x() + 2, pt.y() - 10))
    qtbot.wait(20)
    assert mv.mag_lead == "V1" and mv.bar.lead_box.currentData() == "V1"
    # Every lead superimposed, from the bar's lead box: one curve per lead, no J dot.
    choose_in_box(qtbot, mv.bar.lead_box, "All leads superimposed")
    curves = [
        it for it in mv.magnifier.getViewBox().addedItems if type(it).__name__ == "PlotCurveItem"
    ]
    assert len(curves) == len(median.record.lead_names) and mv.mag_j is None


def test_a_mark_line_off_screen_moves_with_its_value(qapp) -> None:
    # A line whose view has never been on a screen has no pixel size: it must still move (and
    # not fail) when the mark changes, e.g. while the median panel is built.
    import pyqtgraph as pg

    from reviewapp.ui.median_marks import MedianMarkLine

    vb = pg.ViewBox()
    line = MedianMarkLine("t_off", 0.0, pg.mkPen("k"), pg.mkPen("k"))
    vb.addItem(line, ignoreBounds=True)
    line.boundingRect()
    line.setPos(5.0)
    assert line.value() == 5.0 and line.drawn_value() == 5.0


def _magnified_at(mv, sample: int) -> float:
    curve, _idx = mv._mag_curves[0]
    _x, y = curve.getData()
    return float(y[sample])


def test_the_magnified_beat_reads_st_from_the_isoelectric_level(median, qtbot):
    # The magnified beat's mV axis starts at the level the ST levels are measured from, so the
    # curve at a lead's J point reads that lead's ST at J as the Measurements dock gives it
    # (the measurement's own level: Kligfield et al., Circulation 2007, ST referred to the
    # isoelectric PR segment). It follows a corrected QRS onset (the level moves with it).
    w, mv = median, median.median
    rep = w.workflow.reading.marked.representative
    idx = w.record.lead_index(mv.mag_lead)
    axis = mv.magnifier.getAxis("left").labelText
    assert "isoelectric" in axis

    def st_j_shown_and_measured() -> tuple[float, float]:
        reading = w.workflow.reading
        lead = reading.measurements.lead(mv.mag_lead)
        j = reading.marked.representative.lead_marks[idx].qrs_off
        return _magnified_at(mv, j), lead.st_j_mv

    shown, measured = st_j_shown_and_measured()
    assert shown == pytest.approx(measured, abs=1e-6)
    # The J dot sits on the curve there.
    assert mv.mag_j.pos().y() == pytest.approx(measured, abs=1e-6)
    _select(w, qtbot, "qrs_on")
    k0 = rep.marks.qrs_on
    for _ in range(8):
        _key(w, qtbot, Key.Key_Left)
    on = MarkTarget("representative", "qrs_on")
    wf = w.workflow
    # The burst is one correction once the reader pauses (on a loaded machine a slow key can
    # be a pause too): wait for the last sample to be the committed one.
    qtbot.waitUntil(
        lambda: wf.shown_sample(on) == k0 - 8 and wf.reading is wf.committed_reading,
        timeout=3000,
    )
    assert wf.is_corrected(on)
    shown2, measured2 = st_j_shown_and_measured()
    assert measured2 != pytest.approx(measured, abs=1e-9)  # the level did move
    assert shown2 == pytest.approx(measured2, abs=1e-6)
