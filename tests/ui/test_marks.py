"""Dragging a fiducial mark corrects it: intervals, QTc and findings recompute at once."""

from __future__ import annotations

import math

import pytest
from PySide6 import QtCore

from reviewapp.core.workflow import MarkTarget
from tests.ui.test_calipers import drag, sample_under

L = QtCore.Qt.MouseButton.LeftButton


def _median_drag(w, qtbot, fid: str, dx_px: int) -> tuple[int, int]:
    """Correct the median beat's ``fid`` as a reader does: click its line on a lead's panel
    (it is selected and the magnified beat centres on it), then drag it in the magnified
    beat by ``dx_px`` pixels. Returns (the sample the mark landed on, the samples the mouse
    moved by, from the view's own transform)."""
    w.view.show_median(True)
    qtbot.wait(20)
    mv = w.median
    qtbot.mouseClick(mv.viewport(), L, pos=mv.line_point(fid, plot_index=1, frac_y=0.3))
    qtbot.wait(20)
    assert mv.selected_fid == fid
    start = mv.magnifier_point(fid, frac_y=0.3)
    end = QtCore.QPoint(start.x() + dx_px, start.y())
    drag(qtbot, mv.viewport(), start, end, steps=8)
    vb = mv.magnifier.getViewBox()
    x0 = vb.mapSceneToView(mv.mapToScene(start)).x()
    x1 = vb.mapSceneToView(mv.mapToScene(end)).x()
    rep = w.workflow.reading.marked.representative
    return rep.marks.get(fid), round((x1 - x0) / 1000.0 * w.record.fs_hz)


def test_dragging_t_end_changes_qt_by_n_over_fs(loaded, qtbot):
    w = loaded
    fs = w.record.fs_hz
    before = w.workflow.reading.measurements.intervals
    assert before.qt_ms is not None and before.rr_ms is not None
    k0 = w.workflow.reading.marked.representative.marks.t_off
    k1, expected_n = _median_drag(w, qtbot, "t_off", 40)
    n = k1 - k0
    assert n != 0 and abs(n - expected_n) <= 1  # landed where the mouse let go (snapped)
    after = w.workflow.reading.measurements.intervals
    # QT changes by exactly N / fs; QTc follows its published formula on the new QT.
    assert after.qt_ms - before.qt_ms == pytest.approx(n / fs * 1000.0, abs=1e-6)
    rr_s = after.rr_ms / 1000.0
    # Bazett, Heart 7:353-370, 1920: QTc = QT / sqrt(RR); Fridericia, 1920: QT / RR^(1/3).
    assert after.qtc_bazett_ms == pytest.approx(after.qt_ms / math.sqrt(rr_s), rel=1e-9)
    assert after.qtc_fridericia_ms == pytest.approx(after.qt_ms / rr_s ** (1 / 3), rel=1e-9)
    # The summary shows the new value, and the mark is now drawn as corrected.
    assert w.summary.value_text("qt_ms") == f"{after.qt_ms:.0f} ms"
    assert w.workflow.is_corrected(MarkTarget("representative", "t_off"))
    qtbot.wait(20)
    assert w.median.lines["t_off"][0].pen.style() == QtCore.Qt.PenStyle.DashLine
    line = w.median.mag_lines["t_off"]
    assert line.pen.style() == QtCore.Qt.PenStyle.DashLine
    assert "◆" in line.label.format
    # Undo restores the automatic mark and the automatic QT.
    w.act_undo.trigger()
    assert w.workflow.reading.measurements.intervals.qt_ms == pytest.approx(before.qt_ms)
    w.act_redo.trigger()
    assert w.workflow.reading.measurements.intervals.qt_ms == pytest.approx(after.qt_ms)
    # Reset all to automatic.
    w.act_reset_marks.trigger()  # Edit > Reset all marks to automatic
    assert not w.workflow.engine_overrides
    assert w.workflow.reading.measurements.intervals.qt_ms == pytest.approx(before.qt_ms)


@pytest.mark.parametrize(
    ("fid", "interval", "sign"), [("qrs_on", "qrs_ms", -1), ("p_on", "pr_ms", -1)]
)
def test_dragging_onsets_changes_qrs_and_pr(loaded, qtbot, fid, interval, sign):
    w = loaded
    fs = w.record.fs_hz
    before = getattr(w.workflow.reading.measurements.intervals, interval)
    k0 = w.workflow.reading.marked.representative.marks.get(fid)
    k1, expected_n = _median_drag(w, qtbot, fid, -30)
    n = k1 - k0
    assert n < 0 and abs(n - expected_n) <= 1
    after = getattr(w.workflow.reading.measurements.intervals, interval)
    # Moving an onset earlier by N samples lengthens the interval by N / fs.
    assert after - before == pytest.approx(sign * n / fs * 1000.0, abs=1e-6)


def test_beat_mark_drag_on_paper_changes_that_beats_qt(loaded, qtbot):
    w = loaded
    w.view.set_layout("12x1")
    qtbot.wait(20)
    fs = w.record.fs_hz
    mark = next(m for m in w.paper.marks if m.fiducial == "t_off" and m.beat_index == 3)
    beat_r = w.workflow.analysis.beats[3].r
    qt0 = _beat_qt(w, beat_r)
    s0 = mark.sample
    g = w.paper.geom
    top, bottom = mark._bands[0]
    y = top + 0.5 * (bottom - top)
    start = w.paper.map_to_viewport(g.x_of_sample(s0), y).toPoint()
    end = w.paper.map_to_viewport(g.x_of_sample(s0 + 30), y).toPoint()
    drag(qtbot, w.paper.viewport(), start, end)
    qtbot.wait(20)
    s1 = w.workflow.reading.marked.beat_marks[3].t_off
    # Snapped to the sample under the release pixel (one pixel is 10 samples here).
    assert s1 != s0 and s1 == sample_under(w, end)
    assert w.workflow.is_corrected(MarkTarget("beat", "t_off", beat_r=beat_r))
    if qt0 is not None:
        assert _beat_qt(w, beat_r) - qt0 == pytest.approx((s1 - s0) / fs * 1000.0, abs=1e-6)
    # The corrected mark is drawn dashed with a glyph (not colour alone).
    redrawn = next(m for m in w.paper.marks if m.fiducial == "t_off" and m.beat_index == 3)
    assert redrawn.corrected and redrawn._pen.style() == QtCore.Qt.PenStyle.DashLine
    # Double-click resets it to automatic.
    p = w.paper.map_to_viewport(g.x_of_sample(s1), y).toPoint()
    qtbot.mouseDClick(w.paper.viewport(), L, pos=p)
    qtbot.wait(20)
    assert not w.workflow.is_corrected(MarkTarget("beat", "t_off", beat_r=beat_r))
    assert w.workflow.reading.marked.beat_marks[3].t_off == s0


def _beat_qt(w, beat_r):
    fs = w.record.fs_hz
    for b in w.workflow.reading.measurements.beats:
        if round(b.r_s * fs) == beat_r:
            return b.qt_ms
    return None


def test_dragging_one_leads_j_point_moves_only_that_leads_st(loaded, qtbot):
    # ST deviation is read at the lead's J point (Thygesen et al., Fourth Universal
    # Definition of Myocardial Infarction, 2018): dragging the J dot of one lead corrects that
    # lead's J point and ST levels; the global QRS end and the other leads stay.
    from reviewapp.core.measure.amplitudes import isoelectric_level

    w = loaded
    w.view.show_median(True)
    qtbot.wait(20)
    mv = w.median
    item = mv.j_marks[1]
    lead = item.lead
    before = w.workflow.reading
    rep0 = before.marked.representative
    j0 = rep0.lead_marks[item.lead_index].qrs_off
    vb = mv.plots[1]
    start = mv.mapFromScene(vb.mapViewToScene(item.pos()))
    end = QtCore.QPoint(start.x() + 14, start.y() - 30)  # up-and-right: only time counts
    drag(qtbot, mv.viewport(), start, end, steps=8)
    qtbot.wait(20)
    after = w.workflow.reading
    rep1 = after.marked.representative
    j1 = rep1.lead_marks[item.lead_index].qrs_off
    assert j1 > j0 and rep1.marks.qrs_off == rep0.marks.qrs_off
    assert w.workflow.is_corrected(MarkTarget("representative", "qrs_off", lead=lead))
    lm = next(m for m in after.measurements.leads if m.lead == lead)
    wave = rep1.waveform_mv[:, item.lead_index]
    base = isoelectric_level(wave, rep1.marks.qrs_on, rep1.marks.p_off, w.record.fs_hz)
    assert lm.st_j_mv == pytest.approx(float(wave[j1]) - base, abs=1e-6)
    for a, b in zip(before.measurements.leads, after.measurements.leads, strict=True):
        if a.lead != lead:
            assert (a.st_j_mv, a.st_j60_mv) == (b.st_j_mv, b.st_j60_mv)
    # The dot sits on the curve at the new J point and is drawn as corrected.
    t1 = (j1 - rep1.r_index) / w.record.fs_hz * 1000.0
    assert item.pos().x() == pytest.approx(t1)
    assert item.pos().y() == pytest.approx(item.sign * float(wave[j1]))
    assert "corrected for this lead" in item.toolTip()
    # Undo takes it back to the global QRS end.
    w.act_undo.trigger()
    qtbot.wait(20)
    back = w.workflow.reading.marked.representative
    assert back.lead_marks[item.lead_index].qrs_off == back.marks.qrs_off
