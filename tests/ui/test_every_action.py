"""Every command of the window, the way a reader gives it: each QAction triggered from its menu,
each toolbar button clicked, each shortcut pressed, each toolbar box used.

``CHECKS`` names one check per action of the window (menus, toolbar, window shortcuts, the
docks' show/hide entries, the toolbar's boxes). ``test_every_action_of_the_window_has_a_check``
enumerates what the window really has and fails when an action has no check; the group tests
run every check. Native dialogs are replaced only at their static-call boundary
(``QFileDialog.get*``), which would block offscreen; Qt's own dialogs are answered by clicking
their buttons.

References outside the code: the demo worklist's files and the marks file read back as plain
JSON; PDF and PNG files recognised by their published signatures (ISO 32000-1 7.5.2 "%PDF-",
PNG specification 5.2 signature bytes).
"""

from __future__ import annotations

import json
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import pytest
from PySide6 import QtCore, QtGui, QtWidgets
from shiboken6 import isValid

from reviewapp.core.workflow import ADJUDICATOR, FIRST, SECOND_BLINDED, SECOND_HIDDEN, MarkTarget
from tests.ui.conftest import answer_modal, choose_in_box
from tests.ui.test_marks import _median_drag

L = QtCore.Qt.MouseButton.LeftButton
PDF_MAGIC = b"%PDF-"
PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


@dataclass
class Ctx:
    w: QtWidgets.QMainWindow
    qtbot: object
    monkeypatch: pytest.MonkeyPatch
    folder: Path
    out: Path

    @property
    def wf(self):
        return self.w.workflow

    def sidecar(self) -> dict:
        src = self.w.record.source_path
        return json.loads(src.with_name(src.stem + ".marks.json").read_text())


def active(c: Ctx) -> None:
    """The window takes the keys again (offscreen keeps a closed dialog as the active one)."""
    for top in QtWidgets.QApplication.topLevelWidgets():
        if isinstance(top, QtWidgets.QDialog) and not top.isVisible():
            top.deleteLater()
    c.qtbot.wait(5)
    c.w.activateWindow()
    c.qtbot.waitUntil(lambda: QtWidgets.QApplication.activeWindow() is c.w, timeout=3000)


def press(c: Ctx, keys: str | QtGui.QKeySequence.StandardKey | QtCore.Qt.Key) -> None:
    active(c)
    c.qtbot.keySequence(c.w, QtGui.QKeySequence(keys))


def menu_action(w, path: str) -> QtGui.QAction:
    """The entry at ``"File/Export reading/Report page as image…"`` of the menu bar."""
    actions = w.menuBar().actions()
    *menus, text = path.split("/")
    for title in menus:
        m = next(a for a in actions if a.text().replace("&", "") == title)
        actions = m.menu().actions()
    return next(a for a in actions if a.text().replace("&", "") == text)


def click_tool(c: Ctx, name: str) -> None:
    button = c.w.toolbar.widgetForAction(c.w.acts[name])
    assert button is not None and button.isVisible(), name
    c.qtbot.mouseClick(button, L)


def pick_file(c: Ctx, path: Path | None) -> None:
    c.monkeypatch.setattr(
        QtWidgets.QFileDialog,
        "getOpenFileName",
        staticmethod(lambda *a, **k: (str(path) if path else "", "")),
    )


def save_as(c: Ctx, path: Path | None) -> None:
    c.monkeypatch.setattr(
        QtWidgets.QFileDialog,
        "getSaveFileName",
        staticmethod(lambda *a, **k: (str(path) if path else "", "")),
    )


def wait_reading(c: Ctx, name: str) -> None:
    c.qtbot.waitUntil(
        lambda: c.wf is not None and c.w.record is not None and c.wf.record is c.w.record,
        timeout=10_000,
    )
    assert c.w.record.name == name


def consistent(c: Ctx) -> None:
    """The page, the highlighted row and the title name the same record and its subject."""
    rec = c.w.record
    assert c.w.records.highlighted() == rec.source_path
    assert rec.name in c.w.windowTitle()
    sid = rec.subject.subject_id
    assert (sid or "subject not stated") in c.w.windowTitle()


def type_into(c: Ctx, text: str) -> Callable[[QtWidgets.QDialog], None]:
    """Answer a text dialog (reader id, note) by typing ``text`` and clicking OK."""

    def act(dlg: QtWidgets.QDialog) -> None:
        edit = dlg.findChild(QtWidgets.QLineEdit, "reader_id") or dlg.findChild(
            QtWidgets.QPlainTextEdit
        )
        edit.selectAll()
        c.qtbot.keyClick(edit, QtCore.Qt.Key.Key_Delete)
        c.qtbot.keyClicks(edit, text)
        box = dlg.findChild(QtWidgets.QDialogButtonBox)
        ok = next(
            b
            for b in box.buttons()
            if box.buttonRole(b) == QtWidgets.QDialogButtonBox.ButtonRole.AcceptRole
        )
        c.qtbot.mouseClick(ok, L)

    return act


# --- File -------------------------------------------------------------------------------------
def c_open_folder(c: Ctx) -> None:
    c.monkeypatch.setattr(
        QtWidgets.QFileDialog, "getExistingDirectory", staticmethod(lambda *a, **k: str(c.folder))
    )
    with c.qtbot.waitSignal(c.w.worklist.scanFinished, timeout=20_000):
        press(c, "Ctrl+Shift+O")
    first = sorted(c.folder.glob("*.hea"))[0]
    assert c.w.records.isVisible() and c.w.record.source_path == first
    wait_reading(c, first.stem)
    c.qtbot.waitUntil(lambda: c.w.records.highlighted() == first, timeout=5000)
    consistent(c)


def c_open(c: Ctx) -> None:
    pick_file(c, c.folder / "s003_post6h.hea")
    menu_action(c.w, "File/Open record…").trigger()
    wait_reading(c, "s003_post6h")
    consistent(c)


def c_next_unread(c: Ctx) -> None:
    paths = c.w.worklist.visible_paths()  # every record is unread
    following = paths[paths.index(c.w.record.source_path) + 1]
    press(c, "N")
    wait_reading(c, following.stem)
    consistent(c)


def c_prev_unread(c: Ctx) -> None:
    press(c, "Shift+N")
    wait_reading(c, "s003_post6h")
    consistent(c)


def _role(c: Ctx, i: int, mode) -> None:
    menu_action(c.w, f"File/Reading role/{c.w.acts[f'role_{i}'].text()}").trigger()
    st = c.wf.store
    assert c.w.adapter.mode == mode and c.w.acts[f"role_{i}"].isChecked()
    assert (st.role, st.blinded, st.show_automatic) == (
        mode.role,
        mode.blinded,
        mode.show_automatic,
    )
    assert mode.text in c.w.reader_label.text()
    assert c.w.acts["compare"].isEnabled() == (not mode.blinded)


def c_role_3(c: Ctx) -> None:
    _role(c, 3, ADJUDICATOR)


def c_role_1(c: Ctx) -> None:
    _role(c, 1, SECOND_BLINDED)


def c_role_2(c: Ctx) -> None:
    _role(c, 2, SECOND_HIDDEN)
    assert c.wf.hide_automatic and c.w.summary.value_text("qt_ms") == "set marks"
    # No automatic statement shows in a read that hides the automatic marks.
    panel = c.w.interpretation_panel
    assert panel.automatic_lines() == [] and panel.automatic.count() == 0
    assert "hidden" in panel.auto_label.text() and not panel.auto_button.isEnabled()


def c_role_0(c: Ctx) -> None:
    _role(c, 0, FIRST)


def c_open_second(c: Ctx) -> None:
    pick_file(c, c.folder / "s001_predose.hea")
    menu_action(c.w, "File/Open as second reader (blinded)…").trigger()
    wait_reading(c, "s001_predose")
    assert c.wf.store.blinded and c.w.adapter.mode == SECOND_BLINDED
    _role(c, 0, FIRST)


def c_reader(c: Ctx) -> None:
    answer_modal(type_into(c, "reader9"))
    menu_action(c.w, "File/Reader…").trigger()
    assert c.w.reader_label.text().startswith("Reader reader9")
    assert c.wf.store.reviewer == "reader9" and not c.wf.store.read_only


def c_export_pdf(c: Ctx) -> None:
    save_as(c, c.out / "page.pdf")
    press(c, "Ctrl+E")
    assert (c.out / "page.pdf").read_bytes().startswith(PDF_MAGIC)
    assert c.w.statusBar().currentMessage() == f"report written to {c.out / 'page.pdf'}"


def c_export_image(c: Ctx) -> None:
    save_as(c, c.out / "page.png")
    menu_action(c.w, "File/Export reading/Report page as image…").trigger()
    assert (c.out / "page.png").read_bytes().startswith(PNG_MAGIC)


def c_export_csv(c: Ctx) -> None:
    save_as(c, c.out / "values.csv")
    menu_action(c.w, "File/Export reading/Measurements as CSV…").trigger()
    text = (c.out / "values.csv").read_text()
    qt = c.wf.reading.measurements.intervals.qt_ms
    assert str(round(qt)) in text
    # The file says whose reading it is, in which role, and that it is the one on screen.
    st = c.wf.store
    if st is not None:
        role = {"first": "first reader", "second": "second reader"}.get(st.role, st.role)
        assert f"# Printed: {st.reviewer}'s own reading ({role}), as on screen." in text


def c_export_wfdb(c: Ctx) -> None:
    menu_action(c.w, "File/Export reading/Marks as WFDB annotations").trigger()
    src = c.w.record.source_path
    ann = src.with_suffix(".rvw")
    assert ann.exists() and f"WFDB annotations written to {ann}" in c.w.statusBar().currentMessage()
    import wfdb

    # wfdb reads back what was written: one QRS-type label per detected beat.
    read = wfdb.rdann(str(src.with_suffix("")), "rvw")
    assert len(read.sample) >= len(c.wf.analysis.beats)


def c_print(c: Ctx) -> None:
    from PySide6.QtPrintSupport import QPrintDialog

    target = c.out / "printed.pdf"

    def to_file(dlg: QPrintDialog) -> None:
        # Qt's own print dialog: "Print to File (PDF)" with the file name typed in.
        name = dlg.findChild(QtWidgets.QLineEdit, "filename")
        name.selectAll()
        c.qtbot.keyClicks(name, str(target))
        box = dlg.findChild(QtWidgets.QDialogButtonBox)
        ok = next(
            b
            for b in box.buttons()
            if box.buttonRole(b) == QtWidgets.QDialogButtonBox.ButtonRole.AcceptRole
        )
        c.qtbot.mouseClick(ok, L)

    answer_modal(to_file, QPrintDialog)
    press(c, QtGui.QKeySequence.StandardKey.Print)
    assert target.read_bytes().startswith(PDF_MAGIC)


def c_quit(c: Ctx) -> None:
    press(c, "Ctrl+Q")
    assert not c.w.isVisible()
    assert c.w.settings.value("window/geometry") is not None


# --- Edit ---------------------------------------------------------------------------------------
def c_time_cal(c: Ctx) -> None:
    press(c, "C")
    assert [x.kind for x in c.w.paper.calipers] == ["time"]
    assert [x["kind"] for x in c.sidecar()["readings"]["reader1"]["calipers"]] == ["time"]


def c_amp_cal(c: Ctx) -> None:
    click_tool(c, "amp_cal")
    assert [x.kind for x in c.w.paper.calipers] == ["time", "amplitude"]


def c_march(c: Ctx) -> None:
    time_cal = c.w.paper.calipers[0]
    g = c.w.paper.geom
    top, bottom = g.row_band(time_cal.row)
    # Its first leg, low in the row: clear of the amplitude caliper drawn at the same place.
    leg = c.w.paper.map_to_viewport(g.x_of_sample(time_cal.a), top + 0.9 * (bottom - top))
    c.qtbot.mouseClick(c.w.paper.viewport(), L, pos=leg.toPoint())
    assert c.w.paper.selected is time_cal
    press(c, "M")
    assert time_cal.march and time_cal.store_id in c.wf.marching


def c_delete(c: Ctx) -> None:
    selected = c.w.paper.selected
    press(c, QtCore.Qt.Key.Key_Delete)
    assert selected not in c.w.paper.calipers
    assert len(c.sidecar()["readings"]["reader1"]["calipers"]) == 1


def c_undo(c: Ctx) -> None:
    assert c.w.acts["undo"].text().startswith("Undo Delete caliper")
    press(c, QtGui.QKeySequence.StandardKey.Undo)
    assert len(c.w.paper.calipers) == 2
    assert len(c.sidecar()["readings"]["reader1"]["calipers"]) == 2


def c_redo(c: Ctx) -> None:
    press(c, "Ctrl+Shift+Z")
    assert len(c.w.paper.calipers) == 1
    assert c.sidecar()["audit"][-1]["action"] == "redo:delete_caliper"


def c_reset_marks(c: Ctx) -> None:
    t_end = MarkTarget("representative", "t_off")
    qt0 = c.wf.reading.measurements.intervals.qt_ms
    k0 = c.wf.shown_sample(t_end)
    k1, _ = _median_drag(c.w, c.qtbot, "t_off", 30)
    # QT = T end - QRS onset (definition): the drag of N samples moves QT by N / fs.
    qt1 = c.wf.reading.measurements.intervals.qt_ms
    assert qt1 - qt0 == pytest.approx((k1 - k0) / c.w.record.fs_hz * 1000.0, abs=1e-6)
    assert c.wf.is_corrected(t_end)
    assert c.w.statusBar().currentMessage().startswith("Move T end (median beat): saved to ")
    press(c, "Ctrl+Shift+R")
    assert not c.wf.is_corrected(t_end)
    assert c.sidecar()["readings"]["reader1"]["overrides"] == []


def c_add_note(c: Ctx) -> None:
    answer_modal(type_into(c, "T end read in II"), QtWidgets.QInputDialog)
    menu_action(c.w, "Edit/Add note…").trigger()
    assert [n["text"] for n in c.sidecar()["readings"]["reader1"]["notes"]] == ["T end read in II"]


def _statements(c: Ctx) -> list[dict]:
    return c.sidecar()["readings"]["reader1"]["statements"]


def show_tab(c: Ctx, title: str) -> None:
    """Click a dock's tab (the Interpretation dock is a tab beside the Reading dock)."""
    bar = next(
        b
        for b in c.w.findChildren(QtWidgets.QTabBar)
        if title in [b.tabText(i) for i in range(b.count())] and b.isVisible()
    )
    i = [bar.tabText(k) for k in range(bar.count())].index(title)
    c.qtbot.mouseClick(bar, L, pos=bar.tabRect(i).center())
    c.qtbot.waitUntil(
        c.w.interpretation_panel.isVisible
        if title == "Interpretation"
        else c.w.reading_panel.isVisible,
        timeout=3000,
    )


def _select_mine(c: Ctx, row: int) -> None:
    """Click one of the reader's statements in the Interpretation dock."""
    show_tab(c, "Interpretation")
    lst = c.w.interpretation_panel.mine
    item = lst.item(row)
    lst.scrollToItem(item)
    c.qtbot.mouseClick(lst.viewport(), L, pos=lst.visualItemRect(item).center())
    assert lst.currentRow() == row


def c_stmt_auto(c: Ctx) -> None:
    auto = c.wf.automatic_interpretation()
    assert auto is not None and auto.statements
    shown = c.w.interpretation_panel.automatic_lines()
    assert shown == [x.line for x in auto.statements]
    menu_action(c.w, "Edit/Interpretation/Start from automatic statements").trigger()
    side = _statements(c)
    assert [x["code"] for x in side] == [x.code for x in auto.statements]
    assert {x["origin"] for x in side} == {"automatic"}
    assert c.w.interpretation_panel.mine_texts() == [x["text"] for x in side]
    # LUDB record 1 runs at 45 bpm with upright P waves in II: sinus bradycardia, < 50 bpm
    # (Kusumoto et al., Circulation 2019; from memory).
    assert "rhythm.sinus_bradycardia" in [x["code"] for x in side]
    assert c.sidecar()["audit"][-1]["action"] == "add_statement"


def c_stmt_add(c: Ctx) -> None:
    from reviewapp.ui.interpretation_panel import StatementPickerDialog

    def pick(dlg: StatementPickerDialog) -> None:
        c.qtbot.keyClicks(dlg.search_edit, "abnormal ecg")
        assert dlg.chosen() is not None and dlg.chosen().code == "other.abnormal_ecg"
        c.qtbot.mouseClick(dlg.add_button, L)

    answer_modal(pick, StatementPickerDialog)
    press(c, "Ctrl+I")
    last = _statements(c)[-1]
    assert (last["code"], last["text"], last["origin"]) == (
        "other.abnormal_ecg",
        "abnormal ECG",
        "catalogue",
    )


def c_stmt_free(c: Ctx) -> None:
    answer_modal(type_into(c, "Compare with an earlier tracing"), QtWidgets.QInputDialog)
    menu_action(c.w, "Edit/Interpretation/Add statement in own words…").trigger()
    last = _statements(c)[-1]
    assert (last["code"], last["text"], last["origin"]) == (
        "other.free_text",
        "Compare with an earlier tracing",
        "free_text",
    )


def c_stmt_edit(c: Ctx) -> None:
    n = len(_statements(c))
    _select_mine(c, n - 1)
    answer_modal(type_into(c, "No earlier tracing on file"), QtWidgets.QInputDialog)
    menu_action(c.w, "Edit/Interpretation/Edit statement…").trigger()
    last = _statements(c)[-1]
    assert last["text"] == "No earlier tracing on file" and last["origin"] == "free_text"
    assert c.sidecar()["audit"][-1]["action"] == "edit_statement"


def c_stmt_up(c: Ctx) -> None:
    before = [x["id"] for x in _statements(c)]
    menu_action(c.w, "Edit/Interpretation/Move statement up").trigger()
    after = [x["id"] for x in _statements(c)]
    assert after == [*before[:-2], before[-1], before[-2]]
    assert c.w.interpretation_panel.selected_id() == before[-1]


def c_stmt_down(c: Ctx) -> None:
    before = [x["id"] for x in _statements(c)]
    menu_action(c.w, "Edit/Interpretation/Move statement down").trigger()
    assert [x["id"] for x in _statements(c)] == [*before[:-2], before[-1], before[-2]]


def c_stmt_remove(c: Ctx) -> None:
    n = len(_statements(c))
    _select_mine(c, n - 1)
    gone = _statements(c)[-1]["id"]
    menu_action(c.w, "Edit/Interpretation/Remove statement").trigger()
    assert gone not in [x["id"] for x in _statements(c)] and len(_statements(c)) == n - 1
    assert c.w.interpretation_panel.mine.count() == n - 1
    assert c.sidecar()["audit"][-1]["action"] == "delete_statement"
    show_tab(c, "Reading")


def c_sign_off(c: Ctx) -> None:
    seen: dict = {}

    def confirm(dlg) -> None:
        seen["values"] = dlg.values.text()
        c.qtbot.mouseClick(dlg.ok, L)

    answer_modal(confirm)
    click_tool(c, "sign_off")
    qt = c.wf.reading.measurements.intervals.qt_ms
    assert f"QT: {qt:.0f} ms" in seen["values"]
    assert c.sidecar()["readings"]["reader1"]["status"] == "signed_off"
    assert "signed off" in c.w.windowTitle() and not c.w.acts["sign_off"].isEnabled()


# --- View ---------------------------------------------------------------------------------------
def _layout(c: Ctx, key: str, n: int) -> None:
    press(c, str(n))
    assert c.w.paper.layout_key == key and c.w.acts[f"layout_{key}"].isChecked()
    assert c.w.view.layout_box.currentData() == key


def c_layout_12x1(c: Ctx) -> None:
    _layout(c, "12x1", 1)


def c_layout_6x2(c: Ctx) -> None:
    _layout(c, "6x2", 2)


def c_layout_3x4_1(c: Ctx) -> None:
    _layout(c, "3x4+1", 3)


def c_layout_3x4_3(c: Ctx) -> None:
    _layout(c, "3x4+3", 4)


def c_median(c: Ctx) -> None:
    shown = c.w.median.isVisible()
    click_tool(c, "median")
    assert c.w.median.isVisible() != shown and not c.w.view.median_auto
    press(c, "B")
    assert c.w.median.isVisible() == shown


def c_median_auto(c: Ctx) -> None:
    press(c, "B")  # hidden by the reader
    assert not c.w.median.isVisible()
    menu_action(c.w, "View/Median beat sized to the page").trigger()
    assert c.w.view.median_auto and c.w.median.isVisible()


def c_superimpose(c: Ctx) -> None:
    press(c, "Shift+B")
    assert c.w.median.superimpose
    press(c, "Shift+B")
    assert not c.w.median.superimpose


def c_cabrera(c: Ctx) -> None:
    press(c, "Ctrl+L")
    assert c.w.paper.lead_order == "cabrera" and c.w.median.lead_order == "cabrera"
    press(c, "Ctrl+L")
    assert c.w.paper.lead_order == "standard"


def c_faster(c: Ctx) -> None:
    press(c, "]")
    assert c.w.view.scale.speed_mm_per_s == 50.0


def c_slower(c: Ctx) -> None:
    press(c, "[")
    assert c.w.view.scale.speed_mm_per_s == 25.0


def c_gain_up(c: Ctx) -> None:
    press(c, "=")
    assert c.w.view.scale.gain_mm_per_mv == 20.0


def c_gain_down(c: Ctx) -> None:
    press(c, "-")
    assert c.w.view.scale.gain_mm_per_mv == 10.0


def c_zoom_in(c: Ctx) -> None:
    z = c.w.paper.zoom
    press(c, "Ctrl+=")
    assert c.w.paper.zoom == pytest.approx(z * 1.25)


def c_zoom_out(c: Ctx) -> None:
    z = c.w.paper.zoom
    press(c, "Ctrl+-")
    assert c.w.paper.zoom == pytest.approx(z * 0.8)


def c_fit(c: Ctx) -> None:
    press(c, "F")
    g = c.w.paper.geom
    # The whole page fits the view: neither side is larger than the view at this zoom.
    ppm = c.w.view.scale.px_per_mm * c.w.paper.zoom
    assert g.width_mm * ppm <= c.w.paper.vb.width() + 1
    assert g.height_mm * ppm <= c.w.paper.vb.height() + 1


def c_true(c: Ctx) -> None:
    click_tool(c, "true")
    assert c.w.paper.zoom == pytest.approx(1.0)
    assert "true size" in c.w.view.scale_label.text()


def _page_s(c: Ctx) -> float:
    return c.w.paper.page_start / c.w.record.fs_hz


def c_next(c: Ctx) -> None:
    press(c, QtCore.Qt.Key.Key_PageDown)
    assert _page_s(c) == pytest.approx(10.0)


def c_prev(c: Ctx) -> None:
    press(c, QtCore.Qt.Key.Key_PageUp)
    assert _page_s(c) == 0.0


def c_last(c: Ctx) -> None:
    press(c, QtCore.Qt.Key.Key_End)
    rec = c.w.record
    assert c.w.paper.page_start == rec.n_samples - round(c.w.paper.page_s * rec.fs_hz)


def c_first(c: Ctx) -> None:
    press(c, QtCore.Qt.Key.Key_Home)
    assert c.w.paper.page_start == 0


def c_theme(c: Ctx) -> None:
    press(c, "Ctrl+T")
    assert c.w.view.theme.name == "dark" and c.w.settings.value("view/theme") == "dark"
    press(c, "Ctrl+T")
    assert c.w.view.theme.name == "light"


def _filter(c: Ctx, keys: str, attr: str) -> None:
    press(c, keys)
    assert getattr(c.w.view.filters, attr)
    assert c.w.view.filters_button.text() == "Filters (1 on)"
    press(c, keys)
    assert not getattr(c.w.view.filters, attr) and c.w.view.filters_button.text() == "Filters"


def c_f_base(c: Ctx) -> None:
    _filter(c, "Alt+1", "baseline")


def c_f_mains(c: Ctx) -> None:
    _filter(c, "Alt+2", "mains")


def c_f_low(c: Ctx) -> None:
    _filter(c, "Alt+3", "lowpass")


def c_f_centre(c: Ctx) -> None:
    """QTDB sel100 sits about +4.8 mV from zero (a DC offset in the file): centred, every
    trace is drawn inside its own row; off, the page says which leads are off their rows.
    Amplitudes read off the paper stay the signal's own either way."""
    import numpy as np

    def inside_rows() -> bool:
        g = c.w.paper.geom
        for t in c.w.paper.traces:
            _x, y = t.getData()
            top, bottom = g.row_band(t.cell.row)
            if not (top - g.pitch_mm <= np.nanmedian(y) <= bottom + g.pitch_mm):
                return False
        return True

    assert c.w.view.filters.centre and c.w.acts["f_centre"].isChecked() and inside_rows()
    raw = c.w.record.window(c.w.paper.page_start, c.w.paper.page_start + 2500)
    assert abs(float(np.median(raw[:, 0]))) > 2.0  # the offset this check is about
    press(c, "Alt+4")
    assert not c.w.view.filters.centre and not inside_rows()
    assert "baseline off its row: MLII" in c.w.paper.footer.textItem.toPlainText()
    assert c.w.settings.value("view/filters/centre", type=bool) is False
    press(c, "Alt+4")
    assert c.w.view.filters.centre and inside_rows()
    assert c.w.settings.value("view/filters/centre", type=bool) is True


def _dock(c: Ctx, title: str, dock: QtWidgets.QDockWidget) -> None:
    shown = dock.isVisible()
    menu_action(c.w, f"View/{title}").trigger()
    assert dock.isVisible() != shown
    menu_action(c.w, f"View/{title}").trigger()
    assert dock.isVisible() == shown


def c_dock_reading(c: Ctx) -> None:
    _dock(c, "Reading", c.w.reading_dock)


def c_dock_interpretation(c: Ctx) -> None:
    show_tab(c, "Interpretation")  # a tab beside the Reading dock
    _dock(c, "Interpretation", c.w.interpretation_dock)
    show_tab(c, "Reading")


def c_dock_measurements(c: Ctx) -> None:
    _dock(c, "Measurements", c.w.summary_dock)


def c_dock_records(c: Ctx) -> None:
    _dock(c, c.w.records.windowTitle(), c.w.records)


def c_dock_keyboard(c: Ctx) -> None:
    _dock(c, "Keyboard", c.w.help_dock)


def _choose(c: Ctx, box: QtWidgets.QComboBox, text: str) -> None:
    choose_in_box(c.qtbot, box, text)


def c_widget_toolbar_view_group(c: Ctx) -> None:
    v = c.w.view
    _choose(c, v.speed_box, "50 mm/s")
    assert v.scale.speed_mm_per_s == 50.0
    _choose(c, v.gain_box, "5 mm/mV")
    assert v.scale.gain_mm_per_mv == 5.0
    _choose(c, v.layout_box, v.layout_box.itemText(v.layout_box.findData("3x4+1")))
    assert c.w.paper.layout_key == "3x4+1"
    if c.w.record.n_leads <= 3:
        # Every lead is a full strip (no rhythm strip to choose): the box says so, disabled.
        assert not v.rhythm_box.isEnabled() and "full strip" in v.rhythm_box.toolTip()
        return
    other = v.rhythm_box.itemText(1)
    _choose(c, v.rhythm_box, other)
    assert c.w.paper.rhythm_leads[0] == other


def c_widget_toolbar_filters(c: Ctx) -> None:
    button = c.w.view.filters_button

    def pick() -> None:
        menu = QtWidgets.QApplication.activePopupWidget()
        if not isinstance(menu, QtWidgets.QMenu):
            QtCore.QTimer.singleShot(10, pick)
            return
        entry = next(a for a in menu.actions() if a.text() == "Low-pass filter")
        c.qtbot.mouseClick(menu, L, pos=menu.actionGeometry(entry).center())

    QtCore.QTimer.singleShot(0, pick)
    c.qtbot.mouseClick(button, L)
    c.qtbot.waitUntil(lambda: c.w.view.filters.lowpass, timeout=3000)
    assert button.text() == "Filters (1 on)"
    press(c, "Alt+3")


# --- Tools, Help, keys of the paper ---------------------------------------------------------------
def c_compare(c: Ctx) -> None:
    menu_action(c.w, "Tools/Compare readings…").trigger()
    dlg = c.w.adapter.compare_dialog
    assert dlg is not None and dlg.isVisible()
    assert dlg.a_box.currentData() == "reader1" and dlg.b_box.currentData() == "reader2"
    assert dlg.table.rowCount() > 0
    dlg.close()


def c_calibrate(c: Ctx) -> None:
    from reviewapp.ui.calibration import CalibrationDialog

    def set_4_5(dlg: CalibrationDialog) -> None:
        dlg.spin.setValue(4.5)
        dlg.accept()

    answer_modal(set_4_5, CalibrationDialog)
    menu_action(c.w, "Tools/Calibrate screen scale…").trigger()
    assert c.w.view.scale.px_per_mm == pytest.approx(4.5)
    assert c.w.paper.zoom == pytest.approx(1.0)


def c_help(c: Ctx) -> None:
    press(c, "F1")
    assert c.w.help_dock.isVisible()
    press(c, "F1")
    assert not c.w.help_dock.isVisible()


def c_about(c: Ctx) -> None:
    from reviewapp import CLINICAL_CAUTION

    seen: dict = {}

    def read(box: QtWidgets.QMessageBox) -> None:
        seen["text"] = box.text()
        box.accept()

    answer_modal(read, QtWidgets.QMessageBox)
    menu_action(c.w, "Help/About reviewapp").trigger()
    assert CLINICAL_CAUTION in seen["text"]


def c_tab(c: Ctx) -> None:
    press(c, "C")
    cal = c.w.paper.selected
    assert cal.part == "bar"
    press(c, QtCore.Qt.Key.Key_Tab)
    assert cal.part == "a" and "leg 1" in c.w.statusBar().currentMessage()


def c_right(c: Ctx) -> None:
    cal = c.w.paper.selected
    a0 = cal.a
    press(c, QtCore.Qt.Key.Key_Right)
    assert cal.a == a0 + 1


def c_left(c: Ctx) -> None:
    cal = c.w.paper.selected
    a0 = cal.a
    press(c, QtCore.Qt.Key.Key_Left)
    assert cal.a == a0 - 1


def c_up(c: Ctx) -> None:
    press(c, "A")
    cal = c.w.paper.selected
    lo, hi = cal.a_mv, cal.b_mv
    press(c, QtCore.Qt.Key.Key_Up)
    # 10 uV per step, both legs (the whole pair is selected).
    assert (cal.a_mv, cal.b_mv) == pytest.approx((lo + 0.01, hi + 0.01))


def c_down(c: Ctx) -> None:
    cal = c.w.paper.selected
    lo = cal.a_mv
    press(c, QtCore.Qt.Key.Key_Down)
    assert cal.a_mv == pytest.approx(lo - 0.01)


CHECKS: dict[str, Callable[[Ctx], None]] = {
    name[2:].replace("3x4_1", "3x4+1").replace("3x4_3", "3x4+3"): fn
    for name, fn in globals().items()
    if name.startswith("c_") and callable(fn)
}
CHECKS = {
    (
        k.replace("dock_", "dock:").replace("widget_", "widget:")
        if k.startswith(("dock_", "widget_"))
        else k
    ): v
    for k, v in CHECKS.items()
}
FILE_GROUP = (
    "open_folder open next_unread prev_unread role_3 role_1 role_2 role_0 open_second reader "
    "export_pdf export_image export_csv export_wfdb print quit"
).split()
EDIT_GROUP = (
    "time_cal amp_cal march delete undo redo reset_marks add_note stmt_auto stmt_add stmt_free "
    "stmt_edit stmt_up stmt_down stmt_remove sign_off"
).split()
VIEW_GROUP = (
    "layout_12x1 layout_6x2 layout_3x4+1 layout_3x4+3 median median_auto superimpose cabrera "
    "faster slower gain_up gain_down zoom_in zoom_out fit true next prev last first theme "
    "f_base f_mains f_low f_centre dock:reading dock:interpretation dock:measurements "
    "dock:records dock:keyboard "
    "widget:toolbar_view_group widget:toolbar_filters"
).split()
TOOLS_GROUP = "compare calibrate help about tab right left up down".split()


def window_actions(w) -> dict[str, QtGui.QAction]:
    """Every action a reader can reach: the menus (all levels), the toolbar (buttons and
    boxes) and the window's own shortcuts, each by the name its check is filed under."""
    found: dict[str, QtGui.QAction] = {}
    docks = {d.toggleViewAction(): d for d in w.findChildren(QtWidgets.QDockWidget)}

    def name_of(a: QtGui.QAction) -> str:
        if a in docks:
            return "dock:" + docks[a].objectName().removeprefix("dock_")
        if isinstance(a, QtWidgets.QWidgetAction) or (
            w.toolbar.widgetForAction(a) is not None and not a.objectName()
        ):
            return "widget:" + w.toolbar.widgetForAction(a).objectName()
        return a.objectName().removeprefix("act_") or f"unnamed: {a.text()!r}"

    def walk(actions) -> None:
        for a in actions:
            if a.isSeparator():
                continue
            if a.menu() is not None:
                walk(a.menu().actions())
                continue
            found[name_of(a)] = a

    walk(w.menuBar().actions())
    walk(w.toolbar.actions())
    walk(w.actions())
    return found


def test_every_action_of_the_window_has_a_check(window):
    have = window_actions(window)
    untested = sorted(set(have) - set(CHECKS))
    assert not untested, f"actions without a check in CHECKS: {untested}"
    stale = sorted(set(CHECKS) - set(have))
    assert not stale, f"checks for actions the window no longer has: {stale}"
    groups = FILE_GROUP + EDIT_GROUP + VIEW_GROUP + TOOLS_GROUP
    assert sorted(groups) == sorted(CHECKS), "every check runs in exactly one group test"
    assert len(have) >= 60  # the enumeration reaches the menus, toolbar and window keys


def _run(c: Ctx, group: list[str]) -> None:
    for name in group:
        try:
            CHECKS[name](c)
        except Exception as exc:  # name the check that failed
            raise AssertionError(f"check {name!r}: {exc}") from exc


@pytest.fixture
def ctx(window, qtbot, monkeypatch, worklist_copy, settings, tmp_path):
    settings.setValue("reader/id", "reader1")
    out = tmp_path / "out"
    out.mkdir()
    return Ctx(window, qtbot, monkeypatch, worklist_copy, out)


def _open(c: Ctx, name: str) -> None:
    with c.qtbot.waitSignal(c.w.worklist.scanFinished, timeout=20_000):
        assert c.w.open_path(c.folder / f"{name}.hea", analyse_now=True)


def _copy_shared(c: Ctx, shared_data: Path, db: str, stem: str, exts: tuple[str, ...]) -> None:
    """A record of the open reference data, copied beside the demo records (its marks file
    is written beside the copy, never into the reference data)."""
    import shutil

    for ext in exts:
        shutil.copy(shared_data / db / f"{stem}{ext}", c.folder / f"{stem}{ext}")


def test_file_menu_actions_on_the_demo_worklist(ctx):
    _run(ctx, FILE_GROUP)


def test_edit_menu_actions_on_a_ludb_record(ctx, shared_data):
    # LUDB record 1: 12 leads, 500 Hz, 10 s, a subject without an id (age and sex only).
    _copy_shared(ctx, shared_data, "ludb", "1", (".hea", ".dat"))
    _open(ctx, "1")
    assert ctx.w.windowTitle().startswith("1 — subject not stated (female, 51 y)")
    ctx.w.view.set_layout("12x1")
    _run(ctx, EDIT_GROUP)
    assert ctx.w.last_error_box is None


def test_view_and_filter_actions_on_a_2_lead_record(ctx, shared_data):
    # QTDB sel100: 2 leads (MLII, V5), 250 Hz, 15 minutes, so paging has pages.
    _copy_shared(ctx, shared_data, "qtdb", "sel100", (".hea", ".dat"))
    _open(ctx, "sel100")
    assert ctx.w.record.lead_names == ("MLII", "V5")
    _run(ctx, VIEW_GROUP)
    assert ctx.w.last_error_box is None


def test_tools_help_and_paper_keys_on_a_15_lead_record(ctx, shared_data):
    # PTB s0010_re: 15 leads (12 + Frank X, Y, Z), 38.4 s at 1000 Hz; two readings to compare.
    from tests.ui.test_reading import _first_reader_moves_t_end

    _copy_shared(ctx, shared_data, "ptbdb", "s0010_re", (".hea", ".dat", ".xyz"))
    hea = ctx.folder / "s0010_re.hea"
    _first_reader_moves_t_end(hea, 0.040)
    _first_reader_moves_t_end(hea, -0.010, "reader2", "second")
    ctx.w.settings.setValue("reader/id", "adj1")
    ctx.w.acts["role_3"].trigger()
    _open(ctx, "s0010_re")
    assert ctx.w.record.n_leads == 15
    _run(ctx, TOOLS_GROUP)
    assert ctx.w.last_error_box is None


def test_every_shortcut_reaches_its_action(window, qtbot, monkeypatch):
    """Each shortcut pressed on the window fires its own action, once (a shortcut two actions
    shared would fire neither)."""
    for name in ("getOpenFileName", "getSaveFileName"):
        monkeypatch.setattr(QtWidgets.QFileDialog, name, staticmethod(lambda *a, **k: ("", "")))
    monkeypatch.setattr(
        QtWidgets.QFileDialog, "getExistingDirectory", staticmethod(lambda *a, **k: "")
    )
    c = Ctx(window, qtbot, monkeypatch, Path(), Path())
    fired: list[str] = []
    keyed = {n: a for n, a in window.acts.items() if not a.shortcut().isEmpty()}
    for name, act in keyed.items():
        act.triggered.connect(lambda _c=False, n=name: fired.append(n))
    assert len(keyed) >= 40
    last = [n for n in keyed if n == "quit"]
    for name in [n for n in keyed if n != "quit"] + last:
        keyed[name].setEnabled(True)  # undo, sign-off ... wait for a record; the key is tested
        fired.clear()
        press(c, keyed[name].shortcut())
        assert fired == [name], (name, keyed[name].shortcut().toString(), fired)
        box = window.last_error_box  # e.g. "Open a record first." for an export
        if box is not None and isValid(box) and box.isVisible():
            box.close()


def test_every_toolbar_button_fires_its_action(window, qtbot, monkeypatch):
    monkeypatch.setattr(
        QtWidgets.QFileDialog, "getOpenFileName", staticmethod(lambda *a, **k: ("", ""))
    )
    c = Ctx(window, qtbot, monkeypatch, Path(), Path())
    buttons = [
        n
        for n, a in window.acts.items()
        if a in window.toolbar.actions() and window.toolbar.widgetForAction(a) is not None
    ]
    assert set(buttons) == {"open", "median", "time_cal", "amp_cal", "true", "fit", "sign_off"}
    fired: list[str] = []
    for name in buttons:
        window.acts[name].triggered.connect(lambda _c=False, n=name: fired.append(n))
        window.acts[name].setEnabled(True)  # sign-off waits for a record; the click is tested
        click_tool(c, name)
        assert fired[-1:] == [name]
