"""File > Open folder on folder trees built here: a folder with records of its own lists
those and names the subfolders it leaves out; a folder of folders lists every record below it
with a Folder column; the Subfolders box switches between the two. Everything through the
menu, the mouse and the keyboard; the expected listing is known by construction."""

from __future__ import annotations

from pathlib import Path

import pytest
from PySide6 import QtCore, QtWidgets

from reviewapp.core.synth import SynthParams, generate
from reviewapp.core.synth.wfdb_out import write_synthetic
from reviewapp.ui.worklist import COLUMNS
from tests.ui.conftest import keep_marks_in_window

FOLDER_COL = [k for k, _t in COLUMNS].index("folder")


@pytest.fixture(autouse=True)
def _no_marks(monkeypatch):
    keep_marks_in_window(monkeypatch)


def _write(folder: Path, name: str) -> Path:
    syn = generate(SynthParams(duration_s=4.0, seed=len(name)), name=name)
    return write_synthetic(syn, folder, name)


@pytest.fixture(scope="module")
def tree(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """lab/: r1, r2 of its own; site-b/ b1, b2; site-c/visit1/ c1. sites/: only subfolders."""
    lab = tmp_path_factory.mktemp("lab")
    paths = {n: _write(lab, n) for n in ("r1", "r2")}
    paths |= {n: _write(lab / "site-b", n) for n in ("b1", "b2")}
    paths["c1"] = _write(lab / "site-c" / "visit1", "c1")
    paths["lab"] = lab
    paths["sites"] = lab / "site-c"
    return paths


def _menu_action(w, path: str):
    *menus, text = path.split("/")
    actions = w.menuBar().actions()
    for title in menus:
        m = next(a for a in actions if a.text().replace("&", "") == title)
        actions = m.menu().actions()
    return next(a for a in actions if a.text().replace("&", "") == text)


def _open_folder(window, qtbot, monkeypatch, folder: Path) -> None:
    monkeypatch.setattr(
        QtWidgets.QFileDialog, "getExistingDirectory", staticmethod(lambda *a, **k: str(folder))
    )
    with qtbot.waitSignal(window.worklist.scanFinished, timeout=20_000):
        _menu_action(window, "File/Open folder…").trigger()


def _click_box(qtbot, box) -> None:
    """Click a check box once it is shown and laid out (it appears with the listing)."""
    qtbot.waitUntil(lambda: box.isVisible() and box.rect().contains(box.rect().center()))
    qtbot.wait(20)
    qtbot.mouseClick(box, QtCore.Qt.MouseButton.LeftButton)


def test_a_folder_with_its_own_records_lists_them_and_names_the_rest(
    window, qtbot, monkeypatch, tree
):
    _open_folder(window, qtbot, monkeypatch, tree["lab"])
    wl = window.worklist
    assert wl.visible_paths() == [tree["r1"], tree["r2"]]
    assert window.record.source_path == tree["r1"]
    assert not wl.subfolders_box.isChecked() and wl.table.isColumnHidden(FOLDER_COL)
    assert wl.count_label.text() == "2 records, 2 unread; 3 more in subfolders site-b, site-c"

    with qtbot.waitSignal(wl.scanFinished, timeout=20_000):
        _click_box(qtbot, wl.subfolders_box)
    expected = [tree[n] for n in ("r1", "r2", "b1", "b2", "c1")]
    assert wl.visible_paths() == expected
    assert not wl.table.isColumnHidden(FOLDER_COL)
    folders = [wl.proxy.index(r, FOLDER_COL).data() for r in range(wl.proxy.rowCount())]
    assert folders == ["", "", "site-b", "site-b", "site-c/visit1"]
    assert wl.count_label.text() == "5 records, 5 unread"
    # The page's record stays highlighted after the list was redone.
    qtbot.waitUntil(lambda: wl.current_path() == tree["r1"], timeout=5000)

    # A record of a subfolder opens from the list (a click on its row) and the list stays
    # whole: it is not replaced by that subfolder's own records.
    rect = wl.table.visualRect(wl.proxy.index(expected.index(tree["b2"]), 0))
    qtbot.mouseClick(wl.table.viewport(), QtCore.Qt.MouseButton.LeftButton, pos=rect.center())
    qtbot.waitUntil(lambda: window.record.source_path == tree["b2"], timeout=10_000)
    assert wl.visible_paths() == expected and wl.current_path() == tree["b2"]

    # Unticked: back to the folder's own records, the subfolders named again.
    with qtbot.waitSignal(wl.scanFinished, timeout=20_000):
        _click_box(qtbot, wl.subfolders_box)
    assert wl.visible_paths() == [tree["r1"], tree["r2"]]
    assert wl.table.isColumnHidden(FOLDER_COL)
    assert "3 more in subfolders site-b, site-c" in wl.count_label.text()


def test_a_folder_of_folders_lists_every_record_below_it(window, qtbot, monkeypatch, tree):
    _open_folder(window, qtbot, monkeypatch, tree["sites"])
    wl = window.worklist
    assert wl.visible_paths() == [tree["c1"]]
    assert wl.subfolders_box.isChecked() and not wl.table.isColumnHidden(FOLDER_COL)
    assert wl.proxy.index(0, FOLDER_COL).data() == "visit1"
    assert window.record.source_path == tree["c1"]


def test_an_empty_folder_says_so_in_words(window, qtbot, monkeypatch, tmp_path):
    (tmp_path / "empty" / "deeper").mkdir(parents=True)
    _open_folder(window, qtbot, monkeypatch, tmp_path / "empty")
    box = window.last_error_box
    assert isinstance(box, QtWidgets.QMessageBox)
    assert "no ECG records in this folder or its subfolders" in box.text()
    assert "Traceback" not in box.text()
    # The reader answers the box (a modal box left open would take the next tests' keys).
    ok = box.button(QtWidgets.QMessageBox.StandardButton.Ok)
    qtbot.mouseClick(ok, QtCore.Qt.MouseButton.LeftButton)
    qtbot.waitUntil(lambda: not box.isVisible(), timeout=5000)
