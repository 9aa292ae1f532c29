"""Opening records the way a reader does: File menu, toolbar button, Ctrl+O, Open folder, a
click in the records list. The native file dialogs are replaced only at their static-call
boundary (QFileDialog.getOpenFileName / getExistingDirectory), which would block offscreen.

After any failure the window stays consistent: the highlighted record is the one on the page,
and the title names that record and its subject.
"""

from __future__ import annotations

from pathlib import Path

from PySide6 import QtCore, QtWidgets

L = QtCore.Qt.MouseButton.LeftButton


def _pick_file(monkeypatch, path: Path | None) -> None:
    monkeypatch.setattr(
        QtWidgets.QFileDialog,
        "getOpenFileName",
        staticmethod(lambda *a, **k: (str(path) if path else "", "")),
    )


def _pick_folder(monkeypatch, path: Path | None) -> None:
    monkeypatch.setattr(
        QtWidgets.QFileDialog,
        "getExistingDirectory",
        staticmethod(lambda *a, **k: str(path) if path else ""),
    )


def _menu_action(w, menu_title: str, text: str):
    for m in w.menuBar().actions():
        if m.menu() is not None and m.text().replace("&", "") == menu_title:
            for a in m.menu().actions():
                if a.text().replace("&", "").startswith(text):
                    return a
    raise AssertionError(f"no {menu_title} > {text}")


def test_file_open_toolbar_and_ctrl_o_open_a_record(window, qtbot, monkeypatch, worklist_copy):
    w = window
    records = sorted(worklist_copy.glob("*.hea"))
    # File > Open record…
    _pick_file(monkeypatch, records[0])
    _menu_action(w, "File", "Open record").trigger()
    assert w.record is not None and w.record.name == records[0].stem
    # The toolbar's Open button, clicked.
    _pick_file(monkeypatch, records[1])
    button = w.toolbar.widgetForAction(w.act_open)
    qtbot.mouseClick(button, L)
    assert w.record.name == records[1].stem
    # Ctrl+O.
    _pick_file(monkeypatch, records[2])
    w.activateWindow()
    qtbot.keyClick(w, QtCore.Qt.Key.Key_O, QtCore.Qt.KeyboardModifier.ControlModifier)
    assert w.record.name == records[2].stem
    # Cancelled dialog: nothing changes.
    _pick_file(monkeypatch, None)
    w.act_open.trigger()
    assert w.record.name == records[2].stem
    # Open folder still works afterwards and lists the folder.
    _pick_folder(monkeypatch, worklist_copy)
    with qtbot.waitSignal(w.worklist.scanFinished, timeout=20_000):
        _menu_action(w, "File", "Open folder").trigger()
    assert w.records_dock.isVisible()
    assert w.record.name == records[0].stem
    qtbot.waitUntil(lambda: w.worklist.current_path() == records[0], timeout=5000)
    assert records[0].stem in w.windowTitle() and "S-001" in w.windowTitle()


def _click_row(qtbot, wl, stem: str) -> None:
    t = wl.table
    paths = wl.visible_paths()
    r = [p.stem for p in paths].index(stem)
    rect = t.visualRect(wl.proxy.index(r, 0))
    qtbot.mouseClick(t.viewport(), L, pos=rect.center())


def test_a_click_in_the_list_opens_that_record_and_a_failure_keeps_the_page_highlighted(
    window, qtbot, monkeypatch, worklist_copy
):
    w = window
    # A damaged record in the folder: its signal file is cut short.
    hea = (worklist_copy / "s001_predose.hea").read_text().replace("s001_predose", "zz_broken")
    (worklist_copy / "zz_broken.hea").write_text(hea)
    cut = (worklist_copy / "s001_predose.dat").read_bytes()[:1000]
    (worklist_copy / "zz_broken.dat").write_bytes(cut)
    with qtbot.waitSignal(w.worklist.scanFinished, timeout=20_000):
        assert w.open_path(worklist_copy)
    qtbot.waitUntil(lambda: w.worklist.current_path() is not None, timeout=5000)
    _click_row(qtbot, w.worklist, "s003_post6h")
    assert w.record.name == "s003_post6h"
    assert w.worklist.current_path().stem == "s003_post6h"
    assert "s003_post6h" in w.windowTitle() and "S-003" in w.windowTitle()
    _click_row(qtbot, w.worklist, "zz_broken")
    box = w.last_error_box
    assert "zz_broken.dat" in box.text() and "truncated" in box.text()
    box.close()
    # The page still shows s003_post6h, and so do the list and the title.
    assert w.record.name == "s003_post6h"
    assert w.worklist.current_path().stem == "s003_post6h"
    assert "s003_post6h" in w.windowTitle() and "S-003" in w.windowTitle()
