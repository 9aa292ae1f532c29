"""A marks file changed on disk by another window: the reader's next change is not written
over it; a dialog offers reload, keep mine aside, or merge, and each button does what it says.

"Another window" is a second marks store on the same file that took the record's lock over,
saved and closed. The marks file is read back as plain JSON.
"""

from __future__ import annotations

import json

import pytest
from PySide6 import QtCore, QtWidgets

from reviewapp.core.workflow import MarkTarget
from tests.ui.conftest import answer_modal
from tests.ui.test_marks import _median_drag

L = QtCore.Qt.MouseButton.LeftButton
T_END = MarkTarget("representative", "t_off")


def _sidecar(hea) -> dict:
    return json.loads(hea.with_name(hea.stem + ".marks.json").read_text())


def _notes(hea) -> list[str]:
    return [n["text"] for n in _sidecar(hea)["readings"]["reader1"]["notes"]]


def _other_window(hea, change) -> None:
    from reviewapp.core.io import open_record
    from reviewapp.core.marks import MarksStore

    # Only a lock holder saves: the other window takes the lock over, writes and closes.
    with MarksStore.take_over(open_record(hea), "reader1") as other:
        other.do(change(other))


def _click(qtbot, choice: str, seen: dict | None = None):
    def act(dlg) -> None:
        if seen is not None:
            seen["text"] = dlg.findChild(QtWidgets.QLabel).text()
        qtbot.mouseClick(dlg.buttons[choice], L)

    return act


@pytest.fixture
def reading(window, qtbot, sample_copy, settings):
    """reader1's window on a copy of a demo record, with one note saved."""
    settings.setValue("reader/id", "reader1")
    assert window.open_path(sample_copy, analyse_now=True)
    assert window.adapter.add_note("mine, saved")
    _other_window(sample_copy, lambda st: st.edits.add_note("theirs"))
    return window


@pytest.mark.parametrize("choice", ["reload", "keep_aside", "merge"])
def test_each_resolution_from_the_dialog(reading, qtbot, sample_copy, choice):
    from reviewapp.ui.conflict_dialog import ConflictDialog

    w = reading
    seen: dict = {}
    answer_modal(_click(qtbot, choice, seen), ConflictDialog)
    _median_drag(w, qtbot, "t_off", 30)  # the change that meets the changed file
    assert f"{sample_copy.stem}.marks.json was changed by another window" in seen["text"]
    on_disk = _sidecar(sample_copy)["readings"]["reader1"]
    if choice == "merge":
        # Both: their note and my correction, saved; the audit trail says it was a merge.
        assert _notes(sample_copy) == ["mine, saved", "theirs"]
        assert [o["fiducial"] for o in on_disk["overrides"]] == ["t_off"]
        assert w.workflow.is_corrected(T_END)
        assert _sidecar(sample_copy)["audit"][-1]["action"] == "merge"
        assert w.statusBar().currentMessage().startswith("Merged with the marks file on disk")
    else:
        # The file as the other window left it; my correction is not in it, nor on screen.
        assert _notes(sample_copy) == ["mine, saved", "theirs"]
        assert on_disk["overrides"] == []
        assert not w.workflow.is_corrected(T_END)
        assert w.reading_panel.note_texts() == ["mine, saved", "theirs"]
    aside = sorted(sample_copy.parent.glob(f"{sample_copy.stem}.marks.reader1.*.json"))
    if choice == "keep_aside":
        (kept,) = aside
        mine = json.loads(kept.read_text())["readings"]["reader1"]
        assert [o["fiducial"] for o in mine["overrides"]] == ["t_off"]
        assert kept.name in w.statusBar().currentMessage()
    else:
        assert aside == []
    # The undo history was of the replaced reading: nothing is left to undo.
    assert not w.act_undo.isEnabled()


def test_a_merge_of_the_same_mark_is_refused_in_the_dialog(reading, qtbot, sample_copy):
    from reviewapp.ui.conflict_dialog import ConflictDialog

    w = reading
    rep = w.workflow.analysis.representative
    t_rel_s = (rep.marks.t_off - rep.r_index) / w.workflow.fs_hz
    _other_window(sample_copy, lambda st: st.edits.move_fiducial("t_off", t_rel_s + 0.02))
    seen: dict = {}

    def merge_then_reload(dlg) -> None:
        qtbot.mouseClick(dlg.buttons["merge"], L)
        seen["problem"] = dlg.problem.text()
        seen["merge_enabled"] = dlg.buttons["merge"].isEnabled()
        qtbot.mouseClick(dlg.buttons["reload"], L)

    answer_modal(merge_then_reload, ConflictDialog)
    _median_drag(w, qtbot, "t_off", 30)
    assert seen["problem"].startswith("Not resolved:") and not seen["merge_enabled"]
    # Reloaded: the other window's T end is the one in the file and on screen.
    (ov,) = _sidecar(sample_copy)["readings"]["reader1"]["overrides"]
    assert ov["new_s"] == pytest.approx(t_rel_s + 0.02, abs=1 / w.workflow.fs_hz)
    assert w.workflow.correction(T_END).new_s == ov["new_s"]


def test_decide_later_writes_nothing_and_asks_again(reading, qtbot, sample_copy):
    from reviewapp.ui.conflict_dialog import ConflictDialog

    w = reading
    before = sample_copy.with_name(sample_copy.stem + ".marks.json").read_bytes()
    answer_modal(lambda dlg: dlg.reject(), ConflictDialog)
    _median_drag(w, qtbot, "t_off", 30)
    assert sample_copy.with_name(sample_copy.stem + ".marks.json").read_bytes() == before
    assert "asked again" in w.statusBar().currentMessage()
    answer_modal(_click(qtbot, "merge"), ConflictDialog)
    w.activateWindow()
    qtbot.waitUntil(w.isActiveWindow, timeout=2000)
    qtbot.keyClick(w, QtCore.Qt.Key.Key_C)  # the next change meets the dialog again
    assert _notes(sample_copy) == ["mine, saved", "theirs"]
    saved = _sidecar(sample_copy)["readings"]["reader1"]
    assert [o["fiducial"] for o in saved["overrides"]] == ["t_off"]
    assert len(saved["calipers"]) == 1
