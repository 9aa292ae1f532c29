"""A record open for writing in another window: the window says who holds it and since when,
and offers read-only, take over or cancel, each through the dialog's buttons; a window whose
record was taken over says so at its next change and offers to keep its reading as a separate
file.

Everything goes through what the reader touches: File > Open (the native file dialog replaced
only at its static-call boundary), a click in the records list, the Notes panel's button and
its text dialog, and the lock dialogs' buttons. "Another window" is a second MainWindow in the
same process (its lock is live: same process, same start time). The marks file and the lock
file are read back as plain JSON.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from PySide6 import QtCore, QtWidgets

from tests.ui.conftest import answer_modal

L = QtCore.Qt.MouseButton.LeftButton


def _json(path) -> dict:
    return json.loads(path.read_text())


def _sidecar(hea) -> dict:
    return _json(hea.with_name(hea.stem + ".marks.json"))


def _lock(hea) -> dict:
    return _json(hea.with_name(hea.stem + ".marks.json.lock"))


def _notes(hea) -> list[str]:
    return [n["text"] for n in _sidecar(hea)["readings"]["reader1"]["notes"]]


def _file_open(w, monkeypatch, path: Path) -> None:
    """File > Open record…, the file dialog answering ``path``."""
    monkeypatch.setattr(
        QtWidgets.QFileDialog,
        "getOpenFileName",
        staticmethod(lambda *a, **k: (str(path), "")),
    )
    w.act_open.trigger()


def _type_note(qtbot, text: str):
    def act(dlg) -> None:
        edit = dlg.findChild(QtWidgets.QPlainTextEdit) or dlg.findChild(QtWidgets.QLineEdit)
        qtbot.keyClicks(edit, text)
        box = dlg.findChild(QtWidgets.QDialogButtonBox)
        ok = next(
            b
            for b in box.buttons()
            if box.buttonRole(b) == QtWidgets.QDialogButtonBox.ButtonRole.AcceptRole
        )
        qtbot.mouseClick(ok, L)

    return act


def _add_note(qtbot, w, text: str) -> None:
    """The Notes panel's Add note… button, the note typed into its dialog."""
    answer_modal(_type_note(qtbot, text), QtWidgets.QInputDialog)
    qtbot.mouseClick(w.reading_panel.add_button, L)


def _answer(qtbot, key: str, seen: dict):
    def act(dlg) -> None:
        seen["text"] = dlg.intro.text()
        seen["title"] = dlg.windowTitle()
        qtbot.mouseClick(dlg.cancel if key == "cancel" else dlg.buttons[key], L)

    return act


@pytest.fixture
def two_windows(window, qtbot, sample_copy, settings, monkeypatch):
    """reader1's first window holding a demo record's marks (one note saved), and a second
    window of the same reader, empty."""
    from reviewapp.ui.main_window import MainWindow

    settings.setValue("reader/id", "reader1")
    _file_open(window, monkeypatch, sample_copy)
    window.analyse()
    assert window.workflow is not None
    _add_note(qtbot, window, "first window")
    assert _notes(sample_copy) == ["first window"]
    other = MainWindow(settings, px_per_mm=4.0)
    other.resize(1400, 900)
    qtbot.addWidget(other)
    other.show()
    qtbot.waitExposed(other)
    yield window, other
    other.close()


def test_the_dialog_names_the_holder_and_read_only_opens_without_saving(
    two_windows, qtbot, sample_copy, monkeypatch
):
    from reviewapp.ui.conflict_dialog import LockDialog

    first, other = two_windows
    since = _lock(sample_copy)["since"]  # ISO time the first window took the lock
    seen: dict = {}
    answer_modal(_answer(qtbot, "read_only", seen), LockDialog)
    _file_open(other, monkeypatch, sample_copy)
    other.analyse()
    assert other.record is not None and other.record.name == sample_copy.stem
    assert seen["title"] == "Record open in another window"
    # Who holds it and since when, as the lock file says.
    assert "reader1" in seen["text"] and f"since {since[:10]} {since[11:16]} UTC" in seen["text"]
    st = other.workflow.store
    assert st is not None and st.read_only and "read-only" in other.workflow.note
    assert other.last_error_box is None  # chosen knowingly: no error box on top
    # The first window still holds the record and saves.
    assert _lock(sample_copy)["token"] == first.workflow.store._lock.token
    _add_note(qtbot, first, "still mine")
    assert _notes(sample_copy) == ["first window", "still mine"]


def test_cancel_in_the_records_list_keeps_the_page_and_the_highlighted_row(
    window, qtbot, worklist_copy, settings, monkeypatch
):
    """The wrong-patient risk: a click on a record held elsewhere, then Cancel, must leave the
    page, the highlighted row and the title on the record that was shown."""
    from reviewapp.ui.conflict_dialog import LockDialog
    from reviewapp.ui.main_window import MainWindow

    settings.setValue("reader/id", "reader1")
    held = worklist_copy / "s003_post6h.hea"
    _file_open(window, monkeypatch, held)  # the first window holds s003
    window.analyse()
    other = MainWindow(settings, px_per_mm=4.0)
    other.resize(1400, 900)
    qtbot.addWidget(other)
    other.show()
    qtbot.waitExposed(other)
    with qtbot.waitSignal(other.worklist.scanFinished, timeout=20_000):
        assert other.open_path(worklist_copy)  # lists the folder, opens its first record
    first_stem = sorted(worklist_copy.glob("*.hea"))[0].stem
    qtbot.waitUntil(lambda: other.worklist.current_path() is not None, timeout=5000)
    assert other.record.name == first_stem
    seen: dict = {}
    answer_modal(_answer(qtbot, "cancel", seen), LockDialog)
    t, wl = other.worklist.table, other.worklist
    row = [p.stem for p in wl.visible_paths()].index("s003_post6h")
    qtbot.mouseClick(t.viewport(), L, pos=t.visualRect(wl.proxy.index(row, 0)).center())
    assert "s003_post6h is open for writing in another window" in seen["text"]
    assert other.record.name == first_stem
    assert other.worklist.current_path().stem == first_stem
    assert first_stem in other.windowTitle() and "s003_post6h" not in other.windowTitle()
    assert other.statusBar().currentMessage().startswith("Not opened: s003_post6h")
    # The holder is untouched: same lock, still saving.
    assert _lock(held)["token"] == window.workflow.store._lock.token
    other.close()


def test_take_over_then_the_displaced_window_keeps_its_reading_aside(
    two_windows, qtbot, sample_copy, monkeypatch
):
    from reviewapp.ui.conflict_dialog import DisplacedDialog, LockDialog

    first, other = two_windows
    answer_modal(_answer(qtbot, "take_over", {}), LockDialog)
    _file_open(other, monkeypatch, sample_copy)
    other.analyse()
    st = other.workflow.store
    assert st is not None and not st.read_only and st.took_over is not None
    # The warning is on the taker's screen; the store made the audit entry.
    assert "can no longer save" in other.reading_panel.notice.text()
    audit = _sidecar(sample_copy)["audit"]
    assert audit[-1]["action"] == "take_over_lock" and audit[-1]["old"]["reviewer"] == "reader1"
    assert _lock(sample_copy)["token"] == st._lock.token
    before = sample_copy.with_name(sample_copy.stem + ".marks.json").read_bytes()
    # The displaced window's next change: refused, said plainly, offered to keep aside.
    shown: dict = {}
    answer_modal(_answer(qtbot, "keep_aside", shown), DisplacedDialog)
    _add_note(qtbot, first, "written after the take-over")
    qtbot.waitUntil(lambda: "title" in shown, timeout=5000)
    assert shown["title"] == "This window can no longer save"
    assert "took this record over in another window" in shown["text"]
    assert sample_copy.with_name(sample_copy.stem + ".marks.json").read_bytes() == before
    (kept,) = sample_copy.parent.glob(f"{sample_copy.stem}.marks.reader1.*.json")
    mine = [n["text"] for n in _json(kept)["readings"]["reader1"]["notes"]]
    assert mine == ["first window", "written after the take-over"]  # nothing lost
    # From now on the displaced window reads the record read-only, and says so.
    assert first.workflow.store.read_only
    assert "read-only" in first.reading_panel.notice.text()
    assert kept.name in first.statusBar().currentMessage()
    # The taker saves on.
    _add_note(qtbot, other, "second window")
    assert _notes(sample_copy) == ["first window", "second window"]


def test_the_displaced_window_can_continue_read_only(two_windows, qtbot, sample_copy, monkeypatch):
    from reviewapp.ui.conflict_dialog import DisplacedDialog, LockDialog

    first, other = two_windows
    answer_modal(_answer(qtbot, "take_over", {}), LockDialog)
    _file_open(other, monkeypatch, sample_copy)
    other.analyse()
    shown: dict = {}
    answer_modal(_answer(qtbot, "read_only", shown), DisplacedDialog)
    _add_note(qtbot, first, "dropped on purpose")
    qtbot.waitUntil(lambda: "title" in shown, timeout=5000)
    assert not list(sample_copy.parent.glob(f"{sample_copy.stem}.marks.reader1.*.json"))
    assert first.workflow.store.read_only
    assert _notes(sample_copy) == ["first window"]
