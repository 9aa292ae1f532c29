"""Soak: hundreds of repaints of twelve plots with InfiniteLine and mark items, with drags.

Guards the PySide6 pin (pyproject.toml): PySide6 6.12.0 with pyqtgraph 0.14.0 aborted after a
few hundred such repaints. This test must run to the end without a crash on the pinned version.
"""

from __future__ import annotations

import pytest
from PySide6 import QtCore

from tests.ui.test_calipers import L

REPAINTS = 400


@pytest.mark.slow
def test_soak_repaints_and_drags(loaded, qtbot):
    w = loaded
    w.resize(1400, 900)
    # Twelve median-beat plots, each with five InfiniteLine marks.
    w.view.show_median(True)
    qtbot.wait(10)
    assert len(w.median.plots) == 12 and all(len(v) == 12 for v in w.median.lines.values())
    mv = w.median
    vp = mv.viewport()
    fids = list(mv.lines)
    for i in range(REPAINTS // 2):
        if i % 10 == 0:
            # A real drag of a fiducial line, which moves twelve lines and recomputes the reading.
            fid = fids[(i // 10) % len(fids)]
            a = mv.line_point(fid, plot_index=i % 12, frac_y=0.4)
            b = QtCore.QPoint(a.x() + (12 if (i // 10) % 2 == 0 else -12), a.y())
            qtbot.mousePress(vp, L, pos=a)
            for k in (4, 8, 12):
                qtbot.wait(17)
                qtbot.mouseMove(vp, QtCore.QPoint(a.x() + (b.x() - a.x()) * k // 12, a.y()))
            qtbot.mouseRelease(vp, L, pos=b)
        img = w.grab()
        assert not img.isNull()
    assert w.workflow.engine_overrides  # the drags did correct marks
    # The paper: twelve stacked leads with per-beat marks and calipers, dragged and repainted.
    w.view.show_median(False)
    w.view.set_layout("12x1")
    c = w.paper.add_caliper("time", row=0, center_sample=3000)
    for i in range(REPAINTS // 2):
        c.nudge(1 if i % 2 == 0 else -1)
        if i % 25 == 0 and w.paper.marks:
            m = w.paper.marks[i % len(w.paper.marks)]
            m.set_sample(m.sample + 1)
            w.workflow.preview(m.target, m.sample)
        w.paper.viewport().repaint()
        img = w.paper.grab()
        assert not img.isNull()
    assert c.readout().interval_ms == pytest.approx(400.0)
