"""The automatic statements follow a median-beat drag when the movement pauses, and a
correction at once: the drag itself does not rebuild the Interpretation dock on every step
(its lists and criteria cost several ms a step; benchmarks/bench_ui.py measures the drag).

Driven with real mouse events on the magnified beat of the demo record whose QTc is flagged.
Reference: the statements the reading's own interpretation gives for the values on screen
(``ReadingWorkflow.automatic_interpretation``), and the QT definition for the values moving.
"""

from __future__ import annotations

from PySide6 import QtCore

L = QtCore.Qt.MouseButton.LeftButton


def test_statements_follow_the_drag_at_its_pause_and_the_correction_at_once(
    window, qtbot, worklist_copy, settings
):
    w = window
    settings.setValue("reader/id", "reader1")
    assert w.open_path(worklist_copy / "s003_post6h.hea", analyse_now=True)
    panel, view = w.interpretation_panel, w.interpretation
    wf = w.workflow

    def expected() -> list[str]:
        return [x.line for x in wf.automatic_interpretation().statements]

    before = panel.automatic_lines()
    assert before == expected() and before
    w.view.show_median(True)
    qtbot.wait(20)
    mv = w.median
    qtbot.mouseClick(mv.viewport(), L, pos=mv.line_point("t_off", plot_index=1, frac_y=0.3))
    qtbot.wait(20)
    assert mv.selected_fid == "t_off"
    start = mv.magnifier_point("t_off", frac_y=0.3)
    qt0 = wf.reading.measurements.intervals.qt_ms
    paused: list[bool] = []  # the reader held still long enough at some step (a slow machine)
    view._pause.timeout.connect(lambda: paused.append(True))
    qtbot.mousePress(mv.viewport(), L, pos=start)
    for k in range(1, 7):
        qtbot.wait(20)
        qtbot.mouseMove(mv.viewport(), QtCore.QPoint(start.x() + 12 * k, start.y()))
    assert wf.reading.measurements.intervals.qt_ms > qt0 + 30  # the values did follow
    assert wf.reading is not wf.committed_reading  # still a drag, not a correction
    if not paused:  # no pause has come yet: the dock still shows the old statements
        assert panel.automatic_lines() == before
    # The reader holds the mark still: the statements follow the values on screen.
    qtbot.waitUntil(lambda: panel.automatic_lines() == expected(), timeout=3000)
    assert panel.automatic_lines() != before
    qtbot.mouseRelease(mv.viewport(), L, pos=QtCore.QPoint(start.x() + 72, start.y()))
    assert wf.reading is wf.committed_reading
    assert panel.automatic_lines() == expected()  # a correction: at once
    assert not view._pause.isActive()
