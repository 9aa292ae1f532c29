"""Caliper add / move / delete / march-out are undo steps in the window (Ctrl+Z,
Ctrl+Shift+Z), driven with real keys and mouse drags; with a marks sidecar each step is saved
once, with one audit event, and the file's calipers always equal the paper's.

The reference outside the window is the sidecar itself, read back as plain JSON (what an
auditor reads); positions are compared as record sample indices (exact integers).
"""

from __future__ import annotations

import json

import pytest
from PySide6 import QtCore, QtWidgets

from tests.ui.conftest import answer_modal
from tests.ui.test_calipers import drag
from tests.ui.test_workbench_polish import listed_names, paper_names

Key = QtCore.Qt.Key
CTRL = QtCore.Qt.KeyboardModifier.ControlModifier
SHIFT = QtCore.Qt.KeyboardModifier.ShiftModifier
CALIPER_ACTIONS = {"add_caliper", "move_caliper", "delete_caliper"}


def undo(w, qtbot) -> None:
    qtbot.keyClick(w, Key.Key_Z, CTRL)


def redo(w, qtbot) -> None:
    qtbot.keyClick(w, Key.Key_Z, CTRL | SHIFT)


def legs(c) -> tuple:
    return (c.a, c.b, c.at, c.a_mv, c.b_mv, c.name)


def drag_leg_b(w, qtbot, c, to_sample: int) -> None:
    """Grab leg b in the lower part of its row (away from the bar) and drop it at a sample."""
    g = w.paper.geom
    top, bottom = g.row_band(c.row)
    y_mm = top + 0.8 * (bottom - top)
    start = w.paper.map_to_viewport(g.x_of_sample(c.b), y_mm).toPoint()
    end = w.paper.map_to_viewport(g.x_of_sample(to_sample), y_mm).toPoint()
    drag(qtbot, w.paper.viewport(), start, end)


def _back_to(w, qtbot) -> None:
    """After a dialog: the offscreen platform keeps the closed dialog as the active window,
    so the window's shortcuts would not see the keys; close it for good and reactivate."""
    for top in QtWidgets.QApplication.topLevelWidgets():
        if isinstance(top, QtWidgets.QDialog) and not top.isVisible():
            top.deleteLater()
    qtbot.wait(10)
    w.activateWindow()
    qtbot.waitUntil(lambda: QtWidgets.QApplication.activeWindow() is w, timeout=2000)


def _sidecar(hea) -> dict:
    return json.loads(hea.with_name(hea.stem + ".marks.json").read_text())


def _saved(hea, reader="reader1") -> list[tuple]:
    return sorted(
        (c["kind"], c["lead"], c["t1_s"], c["t2_s"], c["v1_mv"], c["v2_mv"], c["label"])
        for c in _sidecar(hea)["readings"][reader]["calipers"]
    )


def _shown(w) -> list[tuple]:
    fs = w.record.fs_hz
    out = []
    for c in w.paper.calipers:
        if c.kind == "time":
            t1, t2, v1, v2 = round(c.a) / fs, round(c.b) / fs, 0.0, 0.0
        else:
            t1 = t2 = c.at / fs
            v1, v2 = c.a_mv, c.b_mv
        out.append((c.kind, c.lead, t1, t2, v1, v2, c.name))
    return sorted(out)


def _caliper_events(hea) -> list[str]:
    return [
        e["action"] for e in _sidecar(hea)["audit"] if e["action"].split(":")[-1] in CALIPER_ACTIONS
    ]


def test_add_with_c_undo_removes_redo_restores_same_place(loaded, qtbot):
    w = loaded
    w.view.set_layout("12x1")
    w.activateWindow()
    qtbot.keyClick(w, Key.Key_C)
    assert paper_names(w) == ["C1"] == listed_names(w)
    c = w.paper.calipers[0]
    placed = legs(c)
    undo(w, qtbot)
    assert paper_names(w) == [] == listed_names(w)
    redo(w, qtbot)
    assert paper_names(w) == ["C1"] == listed_names(w)
    assert legs(w.paper.calipers[0]) == placed


def test_leg_drag_is_one_step_and_undo_restores_exact_sample(loaded, qtbot):
    w = loaded
    w.view.set_layout("12x1")
    w.activateWindow()
    c = w.paper.add_caliper("time", row=1, center_sample=2000)
    steps0 = len(w.workflow.history)
    a0, b0 = c.a, c.b
    drag_leg_b(w, qtbot, c, b0 + 300)
    dropped = c.b
    assert dropped != b0 and c.a == a0
    # Many mouse moves, one undo step.
    assert len(w.workflow.history) == steps0 + 1
    undo(w, qtbot)
    assert (c.a, c.b) == (a0, b0)
    assert listed_names(w) == ["C1"] and "  400 ms  " in w.calipers.lines()[0]
    redo(w, qtbot)
    assert (c.a, c.b) == (a0, dropped)


def test_delete_then_undo_restores_it(loaded, qtbot):
    w = loaded
    w.view.set_layout("12x1")
    w.activateWindow()
    c = w.paper.add_caliper("amplitude", row=3, center_sample=2500)
    c.set_levels(a_mv=-0.2, b_mv=1.35)
    w.calipers.flush()
    before = legs(c)
    w.paper._select(c)
    qtbot.keyClick(w, Key.Key_Delete)
    assert c not in w.paper.calipers and listed_names(w) == []
    undo(w, qtbot)
    assert w.paper.calipers == [c] and legs(c) == before and c.row == 3
    assert listed_names(w) == ["C1"]
    redo(w, qtbot)
    assert w.paper.calipers == []


def test_nudges_merge_into_one_step_and_shift_draw_is_one_add(loaded, qtbot):
    w = loaded
    w.view.set_layout("12x1")
    w.activateWindow()
    g, vp = w.paper.geom, w.paper.viewport()
    y = g.baseline_y(2) + 3.0
    a = w.paper.map_to_viewport(g.x_of_sample(1200), y).toPoint()
    b = w.paper.map_to_viewport(g.x_of_sample(2000), y).toPoint()
    n0 = len(w.workflow.history)
    qtbot.mousePress(vp, QtCore.Qt.MouseButton.LeftButton, SHIFT, pos=a)
    for k in range(1, 5):
        qtbot.wait(20)
        qtbot.mouseMove(vp, QtCore.QPoint(a.x() + (b.x() - a.x()) * k // 4, a.y()))
    qtbot.mouseRelease(vp, QtCore.Qt.MouseButton.LeftButton, SHIFT, pos=b)
    c = w.paper.calipers[0]
    drawn = legs(c)
    assert len(w.workflow.history) == n0 + 1
    c.part = "b"
    for _ in range(3):
        qtbot.keyClick(w, Key.Key_Right)
    assert c.b == drawn[1] + 3
    undo(w, qtbot)  # the three nudges are one step
    assert legs(c) == drawn
    undo(w, qtbot)  # the drawn caliper goes as a whole
    assert w.paper.calipers == []
    redo(w, qtbot)
    assert legs(w.paper.calipers[0]) == drawn


def test_march_out_is_undoable(loaded, qtbot):
    w = loaded
    w.view.set_layout("12x1")
    w.activateWindow()
    qtbot.keyClick(w, Key.Key_C)
    c = w.paper.calipers[0]
    qtbot.keyClick(w, Key.Key_M)
    assert c.march
    undo(w, qtbot)
    assert not c.march and c in w.paper.calipers
    redo(w, qtbot)
    assert c.march


def test_sidecar_follows_every_step_once(window, qtbot, sample_copy, settings):
    w = window
    settings.setValue("reader/id", "reader1")
    assert w.open_path(sample_copy, analyse_now=True)
    w.view.set_layout("12x1")
    w.activateWindow()
    n_events = 0

    def check(expect_last: str) -> None:
        nonlocal n_events
        events = _caliper_events(sample_copy)
        # Exactly one audited event for each step, none for the debounce afterwards.
        assert len(events) == n_events + 1 and events[-1] == expect_last
        n_events += 1
        assert _saved(sample_copy) == _shown(w)

    qtbot.keyClick(w, Key.Key_C)
    check("add_caliper")
    c = w.paper.calipers[0]
    a0, b0 = c.a, c.b
    drag_leg_b(w, qtbot, c, b0 + 250)
    check("move_caliper")
    dropped = c.b
    qtbot.keyClick(w, Key.Key_Delete)
    check("delete_caliper")
    undo(w, qtbot)
    check("undo:delete_caliper")
    assert (c.a, c.b) == (a0, dropped)
    undo(w, qtbot)
    check("undo:move_caliper")
    assert (c.a, c.b) == (a0, b0)
    redo(w, qtbot)
    check("redo:move_caliper")
    qtbot.wait(700)  # past the old save delay: nothing more is written
    assert len(_caliper_events(sample_copy)) == n_events
    # Reopen: the caliper comes back where the last step left it.
    assert w.open_path(sample_copy, analyse_now=True)
    back = w.paper.calipers
    assert len(back) == 1 and (back[0].a, back[0].b) == (a0, dropped)


def test_without_reader_id_caliper_waits_and_is_not_lost(window, qtbot, sample_copy, settings):
    from tests.ui.test_reading import _type_and_ok

    w = window
    assert w.open_path(sample_copy, analyse_now=True)
    w.view.set_layout("12x1")
    w.activateWindow()
    # Cancel the "who is reading?" question: the caliper stays (window only) and undoes.
    answer_modal(lambda dlg: dlg.reject())
    qtbot.keyClick(w, Key.Key_C)
    assert paper_names(w) == ["C1"]
    assert not sample_copy.with_name(sample_copy.stem + ".marks.json").exists()
    assert len(w.workflow.history) == 1, len(w.workflow.history)
    _back_to(w, qtbot)
    undo(w, qtbot)
    assert paper_names(w) == []
    redo(w, qtbot)
    assert paper_names(w) == ["C1"]
    # Give an id at the next caliper: both are saved under it, once each.
    answer_modal(_type_and_ok(qtbot, "reader7", {}))
    qtbot.keyClick(w, Key.Key_A)
    _back_to(w, qtbot)
    assert sorted(paper_names(w)) == ["C1", "C2"]
    assert _saved(sample_copy, "reader7") == _shown(w)
    assert _caliper_events(sample_copy) == ["add_caliper", "add_caliper"]
    undo(w, qtbot)
    assert paper_names(w) == ["C1"] and _saved(sample_copy, "reader7") == _shown(w)


@pytest.mark.parametrize("kind", ["time", "amplitude"])
def test_rename_is_one_step(loaded, qtbot, kind):
    w = loaded
    c = w.paper.add_caliper(kind, center_sample=3000)
    w.calipers.rename(c, "QT")
    assert c.name == "QT"
    undo(w, qtbot)
    assert c.name == "C1" and listed_names(w) == ["C1"]
