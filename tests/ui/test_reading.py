"""The reader's identity, reading status and sign-off, notes, the blinded second read and the
comparison/adjudication view, driven through the window with real clicks and keys.

Records are copies of the sample WFDB record; the marks sidecar is read back as plain JSON
(what an auditor would read), independently of the window.
"""

from __future__ import annotations

import json

import pytest
from PySide6 import QtCore, QtWidgets

from reviewapp.core.workflow import MarkTarget
from tests.ui.conftest import answer_modal, set_mark
from tests.ui.test_marks import _median_drag

L = QtCore.Qt.MouseButton.LeftButton


def _sidecar(hea):
    p = hea.with_name(hea.stem + ".marks.json")
    return json.loads(p.read_text()) if p.exists() else None


def _ok_button(dlg) -> QtWidgets.QPushButton:
    box = dlg.findChild(QtWidgets.QDialogButtonBox)
    for b in box.buttons():
        if box.buttonRole(b) == QtWidgets.QDialogButtonBox.ButtonRole.AcceptRole:
            return b
    raise AssertionError("no OK button")


def _type_and_ok(qtbot, text: str, seen: dict):
    """Answer a text dialog (reader id or note) by typing ``text`` and clicking OK."""

    def act(dlg) -> None:
        edit = dlg.findChild(QtWidgets.QLineEdit, "reader_id") or dlg.findChild(
            QtWidgets.QPlainTextEdit
        )
        seen["initial"] = edit.text() if isinstance(edit, QtWidgets.QLineEdit) else ""
        edit.selectAll()
        qtbot.keyClick(edit, QtCore.Qt.Key.Key_Delete)
        qtbot.keyClicks(edit, text)
        qtbot.mouseClick(_ok_button(dlg), L)

    return act


def _first_reader_moves_t_end(path, delta_s: float, reviewer="reader1", role="first", note=""):
    """A reading made through the marks store (as another reader's window would)."""
    from reviewapp.core.engine import analyse
    from reviewapp.core.io import open_record
    from reviewapp.core.marks import MarksStore

    rec = open_record(path)
    an = analyse(rec)
    rep = an.representative
    t_rel_s = (rep.marks.t_off - rep.r_index) / an.fs_hz
    with MarksStore.open(rec, reviewer, role=role) as st:
        st.do(st.edits.move_fiducial("t_off", t_rel_s + delta_s))
        if note:
            st.do(st.edits.add_note(note))
        st.do(st.edits.sign_off())
        reading = st.reading
    return an, reading


def test_reader_is_asked_at_first_edit_not_taken_from_login(window, qtbot, sample_copy, settings):
    w = window
    assert w.open_path(sample_copy, analyse_now=True)
    st = w.workflow.store
    assert st is not None and st.read_only  # nobody identified: nothing can be written yet
    assert "Reader not set" in w.reader_label.text()
    k0 = w.workflow.reading.marked.representative.marks.t_off
    # Cancel: the correction is dropped and nothing is written.
    answer_modal(lambda dlg: dlg.reject())
    _median_drag(w, qtbot, "t_off", 40)
    assert w.workflow.reading.marked.representative.marks.t_off == k0
    assert _sidecar(sample_copy) is None
    # Give an id: the dialog starts empty (the login name is only offered on a button).
    seen: dict = {}
    answer_modal(_type_and_ok(qtbot, "reader7", seen))
    k1, _ = _median_drag(w, qtbot, "t_off", 40)
    assert seen["initial"] == ""
    assert k1 != k0 and settings.value("reader/id") == "reader7"
    side = _sidecar(sample_copy)
    assert [o["fiducial"] for o in side["readings"]["reader7"]["overrides"]] == ["t_off"]
    assert w.reader_label.text().startswith("Reader reader7 · first reader")


def test_sign_off_shows_values_reopen_is_recorded_and_undo_restores(
    window, qtbot, sample_copy, settings
):
    w = window
    settings.setValue("reader/id", "reader1")
    assert w.open_path(sample_copy, analyse_now=True)
    assert w.reading_panel.banner.text() == "○ Unread"
    iv = w.workflow.reading.measurements.intervals
    seen: dict = {}

    def confirm(dlg) -> None:
        seen["values"] = dlg.values.text()
        qtbot.mouseClick(dlg.ok, L)

    answer_modal(confirm)
    w.act_sign_off.trigger()
    assert f"QT: {iv.qt_ms:.0f} ms" in seen["values"]
    assert f"QTc Fridericia: {iv.qtc_fridericia_ms:.0f} ms" in seen["values"]
    r = _sidecar(sample_copy)["readings"]["reader1"]
    assert r["status"] == "signed_off" and r["signed_off_by"] == "reader1"
    assert w.reading_panel.banner.text().startswith("✔ Signed off by reader1 at ")
    assert r["signed_off_at"][:10] in w.reading_panel.banner.text()
    assert not w.act_sign_off.isEnabled()
    # A correction after sign-off reopens the reading: recorded, and the reader is told.
    _median_drag(w, qtbot, "t_off", 40)
    side = _sidecar(sample_copy)
    assert side["readings"]["reader1"]["status"] == "in_progress"
    assert "reopen" in [e["action"] for e in side["audit"]]
    assert w.reading_panel.notice.isVisible()
    assert "Reopened" in w.reading_panel.notice.text()
    assert w.reading_panel.banner.text() == "◐ In progress"
    # Ctrl+Z undoes the correction and restores the sign-off (audited too).
    w.activateWindow()  # focus is back on the window after the dialog
    qtbot.waitUntil(w.isActiveWindow, timeout=2000)
    qtbot.keyClick(w, QtCore.Qt.Key.Key_Z, QtCore.Qt.KeyboardModifier.ControlModifier)
    side = _sidecar(sample_copy)
    assert side["readings"]["reader1"]["status"] == "signed_off"
    assert side["audit"][-1]["action"] == "restore_sign_off"


def test_notes_add_edit_delete_are_undoable(window, qtbot, sample_copy, settings):
    w = window
    settings.setValue("reader/id", "reader1")
    assert w.open_path(sample_copy, analyse_now=True)
    panel = w.reading_panel
    answer_modal(_type_and_ok(qtbot, "T end taken from V5", {}), QtWidgets.QInputDialog)
    qtbot.mouseClick(panel.add_button, L)
    assert panel.note_texts() == ["T end taken from V5"]
    notes = _sidecar(sample_copy)["readings"]["reader1"]["notes"]
    assert [n["text"] for n in notes] == ["T end taken from V5"]
    panel.notes.setCurrentRow(0)
    answer_modal(_type_and_ok(qtbot, "T end taken from II", {}), QtWidgets.QInputDialog)
    qtbot.mouseClick(panel.edit_button, L)
    assert panel.note_texts() == ["T end taken from II"]
    w.act_undo.trigger()
    assert panel.note_texts() == ["T end taken from V5"]
    panel.notes.setCurrentRow(0)
    qtbot.mouseClick(panel.delete_button, L)
    assert panel.note_texts() == [] and _sidecar(sample_copy)["readings"]["reader1"]["notes"] == []
    w.act_undo.trigger()
    assert panel.note_texts() == ["T end taken from V5"]
    actions = [e["action"] for e in _sidecar(sample_copy)["audit"]]
    assert {"add_note", "edit_note", "undo:edit_note", "delete_note"} <= set(actions)


def test_blinded_second_reader_never_sees_the_first_reading(
    window, qtbot, sample_copy, settings, monkeypatch
):
    from reviewapp.core.marks import overrides_for

    an, first = _first_reader_moves_t_end(sample_copy, 0.040, note="first reader private note")
    first_qt = an.reading(
        overrides_for(first, an.fs_hz, an.representative.r_index)
    ).measurements.intervals.qt_ms
    auto_qt = an.reading(()).measurements.intervals.qt_ms
    assert first_qt - auto_qt == pytest.approx(40.0, abs=1000.0 / an.fs_hz)
    settings.setValue("reader/id", "reader2")
    monkeypatch.setattr(
        QtWidgets.QFileDialog, "getOpenFileName", lambda *a, **k: (str(sample_copy), "")
    )
    w = window
    w.act_open_second.trigger()  # File ▸ Open as second reader (blinded)…
    qtbot.waitUntil(lambda: w.workflow is not None, timeout=5000)  # analysed after first paint
    st = w.workflow.store
    assert st.role == "second" and st.blinded and st.reviewer == "reader2"
    rep = w.workflow.reading.marked.representative
    assert rep.marks.t_off == an.representative.marks.t_off  # the automatic T end
    assert not w.workflow.is_corrected(MarkTarget("representative", "t_off"))
    assert w.summary.value_text("qt_ms") == f"{auto_qt:.0f} ms"
    assert w.workflow.reading.measurements.intervals.qt_ms == pytest.approx(auto_qt)
    assert w.reading_panel.note_texts() == []
    assert w.reading_panel.banner.text() == "○ Unread"
    assert "second reader (blinded)" in w.reader_label.text()
    shown = " ".join(
        [w.reading_panel.banner.text(), w.reader_label.text(), *w.summary.finding_texts()]
    )
    assert "reader1" not in shown and "private" not in shown
    # Compare readings is disabled, and says why (not a silent no-op).
    assert not w.act_compare.isEnabled() and "blinded" in w.act_compare.toolTip()
    w.act_compare.trigger()
    assert w.adapter.compare_dialog is None


def test_compare_flags_beyond_tolerance_and_adjudicator_picks_a_value(
    window, qtbot, sample_copy, settings
):
    from reviewapp.ui.reader import ADJUDICATOR

    an, first = _first_reader_moves_t_end(sample_copy, 0.040)
    _an, _second = _first_reader_moves_t_end(sample_copy, -0.010, "reader2", "second")
    settings.setValue("reader/id", "adj1")
    w = window
    w.act_roles[ADJUDICATOR].trigger()
    assert w.open_path(sample_copy, analyse_now=True)
    assert w.act_compare.isEnabled()
    w.act_compare.trigger()  # Tools ▸ Compare readings…
    dlg = w.adapter.compare_dialog
    assert dlg is not None and dlg.isVisible()
    assert dlg.a_box.currentData() == "reader1" and dlg.b_box.currentData() == "reader2"
    t = dlg.table
    rows = {t.item(r, 0).data(QtCore.Qt.ItemDataRole.UserRole): r for r in range(t.rowCount())}
    # Both readers keep the automatic QRS onset, so QT differs exactly as T end does:
    # QT = T end - QRS onset (definition); -10 ms - (+40 ms) = -50 ms.
    assert t.item(rows["t_off"], 3).text() == "-50 ms"
    assert t.item(rows["qt_ms"], 3).text() == "-50 ms"
    verdict = t.item(rows["qt_ms"], 5)
    assert verdict.text() == "▲ differs by more than 10 ms" and verdict.font().bold()
    assert t.item(rows["qrs_ms"], 5).text() == "within tolerance"
    # A wider QT tolerance set by the adjudicator clears the QT flag (words, not colour).
    dlg.tol["qt_ms"].setValue(60.0)
    rows = {t.item(r, 0).data(QtCore.Qt.ItemDataRole.UserRole): r for r in range(t.rowCount())}
    assert t.item(rows["qt_ms"], 5).text() == "within tolerance"
    # Pick reader A's T end: click its row, then the button.
    rect = t.visualItemRect(t.item(rows["t_off"], 0))
    qtbot.mouseClick(t.viewport(), L, pos=rect.center())
    assert dlg.use_a.isEnabled()
    qtbot.mouseClick(dlg.use_a, L)
    side = _sidecar(sample_copy)
    adj = side["readings"]["adj1"]
    assert adj["role"] == "adjudicator"
    want = next(o.new_s for o in first.overrides if o.fiducial == "t_off")
    assert [(o["fiducial"], o["new_s"]) for o in adj["overrides"]] == [("t_off", want)]
    ev = side["audit"][-1]
    assert ev["action"] == "adjudicate" and "chosen from reader1" in ev["target"]
    assert ev["reviewer"] == "adj1"
    first_qt = an.reading(
        __import__("reviewapp.core.marks", fromlist=["x"]).overrides_for(
            first, an.fs_hz, an.representative.r_index
        )
    ).measurements.intervals.qt_ms
    assert w.workflow.reading.measurements.intervals.qt_ms == pytest.approx(first_qt)
    rows = {t.item(r, 0).data(QtCore.Qt.ItemDataRole.UserRole): r for r in range(t.rowCount())}
    assert t.item(rows["t_off"], 6).text() == f"{want * 1000:.0f} ms"
    # Undo in the window takes the final value back (audited as undo:adjudicate).
    w.act_undo.trigger()
    assert _sidecar(sample_copy)["readings"]["adj1"]["overrides"] == []
    dlg.close()


def test_compare_buttons_need_the_adjudicator_role(window, qtbot, sample_copy, settings):
    _first_reader_moves_t_end(sample_copy, 0.040)
    _first_reader_moves_t_end(sample_copy, -0.010, "reader2", "second")
    settings.setValue("reader/id", "reader1")
    w = window
    assert w.open_path(sample_copy, analyse_now=True)
    w.act_compare.trigger()
    dlg = w.adapter.compare_dialog
    dlg.select_item("t_off")
    assert not dlg.use_a.isEnabled() and not dlg.set_value.isEnabled()
    assert "adjudicator" in dlg.adj_note.text()
    dlg.close()


def test_summary_lists_findings_in_words_with_source(loaded):
    w = loaded
    findings = w.workflow.reading.findings
    texts = w.summary.finding_texts()
    if not findings:
        assert texts == ["No value outside its limits."]
        return
    assert len(texts) == len(findings)
    for i, f in enumerate(findings):
        glyph = "▲" if f.direction == "above" else "▼"
        assert texts[i] == f"{glyph} {f.text}"
        assert w.summary.findings.item(i).toolTip() == f"Source: {f.source}"


def test_median_beats_fill_a_tall_window_below_the_true_size_page(window, qtbot, sample_copy):
    w = window
    w.resize(1500, 1150)
    qtbot.wait(20)
    w.view.set_layout("3x4+1")
    assert w.open_path(sample_copy, analyse_now=True)
    w.paper.true_size()
    w.view.auto_median()
    room = w.view.median_room_px()
    if room + (w.median.height() if w.median.isVisible() else 0) < 240:
        pytest.skip("the offscreen screen is too small for this window")
    assert w.median.isVisible()
    assert w.paper.zoom == pytest.approx(1.0)  # true scale kept
    # The page takes what it needs; the rest of the height is the median beats, not blank.
    g = w.paper.geom
    page_px = g.height_mm * w.view.scale.px_per_mm
    assert w.paper.height() - page_px < 60
    # The reader's own choice (B) wins from then on.
    qtbot.keyClick(w, QtCore.Qt.Key.Key_B)
    assert not w.median.isVisible() and not w.view.median_auto
    w.view.set_layout("3x4+3")
    assert not w.median.isVisible()


def test_open_command_second_reader_flags(monkeypatch):
    import argparse

    from reviewapp.commands import open as open_cmd
    from reviewapp.core.errors import ReviewError

    p = argparse.ArgumentParser()
    sub = p.add_subparsers(dest="command")
    open_cmd.add_parser(sub)
    seen: dict = {}
    monkeypatch.setattr("reviewapp.ui.app.run_app", lambda path, **kw: seen.update(kw) or 0)
    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")
    args = p.parse_args(["open", "--second-reader", "--hide-automatic"])
    assert open_cmd.run(args) == 0
    assert seen["second_reader"] is True and seen["hide_automatic"] is True
    with pytest.raises(ReviewError, match="--second-reader"):
        open_cmd.run(p.parse_args(["open", "--hide-automatic"]))


def test_hidden_automatic_values_appear_only_once_the_reader_set_the_marks(
    window, qtbot, sample_copy, settings
):
    from reviewapp.ui.reader import ReadMode

    settings.setValue("reader/id", "reader2")
    w = window
    w.act_roles[ReadMode("second", True, False)].trigger()
    assert w.open_path(sample_copy, analyse_now=True)
    st = w.workflow.store
    assert st.blinded and not st.show_automatic and st.automatic is None
    assert w.summary.value_text("qt_ms") == "set marks"
    assert w.summary.value_text("hr_bpm").endswith("bpm")  # from R peaks, not from marks
    s = w.workflow
    rep = s.reading.marked.representative.marks
    set_mark(w, "qrs_on", rep.qrs_on - 2)
    assert w.summary.value_text("qt_ms") == "set marks"  # T end still the automatic one
    set_mark(w, "t_off", rep.t_off + 10)
    qt = s.reading.measurements.intervals.qt_ms
    # QT = T end - QRS onset: both moved by the reader, 12 samples longer than automatic.
    assert qt == pytest.approx((rep.t_off + 10 - (rep.qrs_on - 2)) * 1000.0 / s.fs_hz)
    assert w.summary.value_text("qt_ms") == f"{qt:.0f} ms"


def test_a_refused_role_change_keeps_the_reading_saved(window, qtbot, sample_copy, settings):
    from reviewapp.ui.reader import ADJUDICATOR, FIRST

    settings.setValue("reader/id", "reader1")
    w = window
    assert w.open_path(sample_copy, analyse_now=True)
    w.adapter.add_note("first read note")
    # reader1 is this record's first reader: the store refuses them as adjudicator.
    w.act_roles[ADJUDICATOR].trigger()
    assert "first" in w.last_error_box.text() and "adjudicator" in w.last_error_box.text()
    w.last_error_box.close()
    assert w.adapter.mode == FIRST and w.act_roles[FIRST].isChecked()
    st = w.workflow.store
    assert st is not None and not st.read_only and st.role == "first"
    assert w.reading_panel.note_texts() == ["first read note"]


def test_a_caliper_after_sign_off_reopens_with_notice(window, qtbot, sample_copy, settings):
    settings.setValue("reader/id", "reader1")
    w = window
    assert w.open_path(sample_copy, analyse_now=True)
    answer_modal(lambda dlg: qtbot.mouseClick(dlg.ok, L))
    w.act_sign_off.trigger()
    assert w.workflow.marks.status == "signed_off"
    assert "signed off" in w.windowTitle()
    w.activateWindow()
    qtbot.waitUntil(w.isActiveWindow, timeout=2000)
    qtbot.keyClick(w, QtCore.Qt.Key.Key_C)  # new time caliper
    side = _sidecar(sample_copy)
    assert side["readings"]["reader1"]["status"] == "in_progress"
    assert [e["action"] for e in side["audit"]][-2:] == ["reopen", "add_caliper"]
    assert "Reopened" in w.reading_panel.notice.text()
    assert w.reading_panel.banner.text() == "◐ In progress"


def test_hidden_automatic_marks_are_not_drawn_until_the_reader_places_them(
    window, qtbot, sample_records_dir, tmp_path, settings
):
    # A blinded second read "without the automatic marks" must show nothing the engine placed
    # (common practice in two-reader QT studies, no source): the median beat's lines start at
    # fixed positions, the strip shows no automatic beat marks, J dots and per-lead values
    # wait until the reader has set the marks they come from.
    import shutil

    from reviewapp.ui.median_view import UNPLACED_MS
    from reviewapp.ui.reader import ReadMode
    from reviewapp.ui.summary import MARK_FREE, finding_line

    # The demo record whose automatic QTc is flagged (so there is a finding to keep hidden).
    for f in sample_records_dir.glob("s003_post6h.*"):
        if not f.name.endswith(".json"):
            shutil.copy(f, tmp_path / f.name)
    settings.setValue("reader/id", "reader2")
    w = window
    w.act_roles[ReadMode("second", True, False)].trigger()
    assert w.open_path(tmp_path / "s003_post6h.hea", analyse_now=True)
    w.view.show_median(True)
    qtbot.wait(50)
    s = w.workflow
    rep = s.reading.marked.representative
    fs = s.fs_hz
    assert any(f.quantity not in MARK_FREE for f in s.reading.findings)
    for fid, ms in UNPLACED_MS.items():
        line = w.median.lines[fid][0]
        assert line.value() == pytest.approx(round(ms * fs / 1000.0) * 1000.0 / fs)
        assert line.pen.style() == QtCore.Qt.PenStyle.DotLine
    assert not w.paper.marks  # no automatic beat marks on the strip
    # No finding from the automatic marks either: only those from R peaks alone may show.
    allowed = {finding_line(f) for f in s.reading.findings if f.quantity in MARK_FREE}
    waiting, *shown = w.summary.finding_texts()  # first, what the values wait for
    assert waiting.startswith("Values and findings wait for your marks: set P onset")
    assert set(shown) <= allowed
    # Nor in an exported page: exports are refused with a message, no file is written.
    assert w.exports.export_pdf(tmp_path / "page.pdf") is None
    assert not (tmp_path / "page.pdf").exists() and "blinded read" in w.last_error_box.text()
    w.last_error_box.close()  # a modal box left open takes the next tests' keys
    assert not any(j.isVisible() for j in w.median.j_marks)
    w.summary._show_leads(True)
    col = {h: c for c, h in enumerate(["lead", "P", "Q", "R", "S", "T", "ST J", "ST J+60"])}

    def cell(name: str) -> str:
        return w.summary.leads_table.item(0, col[name]).text()

    assert cell("ST J") == "set marks" and cell("R") == "set marks"
    set_mark(w, "t_off", rep.marks.t_off + 5)
    qtbot.wait(50)
    line = w.median.lines["t_off"][0]
    assert line.value() == pytest.approx((rep.marks.t_off + 5 - rep.r_index) * 1000.0 / fs)
    assert line.pen.style() == QtCore.Qt.PenStyle.DashLine  # placed by the reader
    assert w.median.lines["p_on"][0].pen.style() == QtCore.Qt.PenStyle.DotLine
    assert not any(j.isVisible() for j in w.median.j_marks)  # QRS end still not set
    set_mark(w, "qrs_off", rep.marks.qrs_off + 3)
    set_mark(w, "qrs_on", rep.marks.qrs_on - 1)
    qtbot.wait(50)
    assert all(j.isVisible() for j in w.median.j_marks)
    assert cell("ST J") != "set marks" and cell("T") != "set marks"
    assert cell("P") == "set marks"  # P onset and end still not set
    # The strip shows the beats' marks that follow the reader's median corrections only if
    # the reader set them beat by beat: carried marks would reveal the automatic positions.
    assert not w.paper.marks


def test_status_says_what_happened_and_a_repeated_final_value_is_no_change(
    window, qtbot, sample_copy, settings
):
    # Opening writes nothing, so the status bar must not say the marks were saved.
    from reviewapp.ui.reader import ADJUDICATOR

    _first_reader_moves_t_end(sample_copy, 0.040)
    _first_reader_moves_t_end(sample_copy, -0.036, "reader2", "second")
    before = sample_copy.with_name(sample_copy.stem + ".marks.json").read_bytes()
    settings.setValue("reader/id", "adj1")
    w = window
    w.act_roles[ADJUDICATOR].trigger()
    assert w.open_path(sample_copy, analyse_now=True)
    status = w.statusBar().currentMessage()
    assert "saved" not in status and f"marks file {sample_copy.stem}.marks.json" in status
    assert sample_copy.with_name(sample_copy.stem + ".marks.json").read_bytes() == before
    w.act_compare.trigger()
    dlg = w.adapter.compare_dialog
    dlg.select_item("t_off")
    qtbot.mouseClick(dlg.use_b, L)
    audit = _sidecar(sample_copy)["audit"]
    assert audit[-1]["action"] == "adjudicate"
    b_ms = dlg.comparison.row("t_off").b_ms
    assert dlg.result_label.text().startswith(f"Adjudicate T end: {b_ms:.0f} ms from reader2")
    # Reader B's value again: it is the final value already; nothing recorded, nothing audited.
    dlg.select_item("t_off")
    qtbot.mouseClick(dlg.use_b, L)
    assert len(_sidecar(sample_copy)["audit"]) == len(audit)
    text = f"No change: the final T end is {b_ms:.0f} ms already."
    assert dlg.result_label.text() == text == w.statusBar().currentMessage()
    assert w.act_undo.text() == f"Undo Adjudicate T end: {b_ms:.0f} ms from reader2"
    dlg.close()
