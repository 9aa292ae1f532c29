"""Everyday use: opening, errors as dialogs, drag and drop, state, help, About, CLI."""

from __future__ import annotations

import argparse

import pytest
from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp import CLINICAL_CAUTION
from tests.ui.conftest import keep_marks_in_window


@pytest.fixture(autouse=True)
def _no_sidecar_in_shared_folders(monkeypatch):
    """Opening records here must not lock or write marks beside the shared data or the
    repository's samples (tests/ui/test_sidecar.py covers the sidecar on a copy)."""
    keep_marks_in_window(monkeypatch)


def _click_box(qtbot, box) -> None:
    """Click a check box once it is shown and laid out (it appears with the listing)."""
    qtbot.waitUntil(lambda: box.isVisible() and box.rect().contains(box.rect().center()))
    qtbot.wait(20)
    qtbot.mouseClick(box, QtCore.Qt.MouseButton.LeftButton)


def test_launch_without_a_path_shows_the_demo_worklist_and_names_the_study(
    window, sample_records_dir, qtbot
):
    """README command 1 (``reviewapp`` with no argument): the demo worklist's own records, the
    QT study in study/ named on the count line and one tick away. Demo data, checked as the
    demo only (what a newcomer sees), not as a reference for any value."""
    if not sample_records_dir.is_dir():
        pytest.skip("no sample_records folder in this checkout")
    from reviewapp.core.io import find_records
    from reviewapp.ui.app import open_at_launch
    from reviewapp.ui.worklist import COLUMNS, PathRole

    wl = window.worklist
    with qtbot.waitSignal(wl.scanFinished, timeout=20_000):
        assert open_at_launch(window, None)
    own = find_records(sample_records_dir, recursive=False)
    study = find_records(sample_records_dir / "study", recursive=True)
    assert len(own) == 11 and len(study) == 75
    assert wl.visible_paths() == own
    assert window.record is not None and window.record.name == own[0].stem
    assert not wl.subfolders_box.isChecked()
    assert "; 75 more in subfolder study" in wl.count_label.text()
    folder_col = [k for k, _t in COLUMNS].index("folder")
    assert wl.table.isColumnHidden(folder_col)

    # One tick lists the study too, each study record with its folder; the demo stays first.
    with qtbot.waitSignal(wl.scanFinished, timeout=20_000):
        _click_box(qtbot, wl.subfolders_box)
    listed = wl.visible_paths()
    assert listed[:11] == own and sorted(listed[11:]) == study
    assert not wl.table.isColumnHidden(folder_col)
    assert {wl.proxy.index(r, folder_col).data() for r in range(11, len(listed))} == {"study"}

    # Opening a study record from that list keeps the list as it is.
    row = next(
        r
        for r in range(wl.proxy.rowCount())
        if wl.proxy.index(r, 0).data(PathRole).endswith("s103_3h_1.hea")
    )
    rect = wl.table.visualRect(wl.proxy.index(row, 0))
    wl.table.scrollTo(wl.proxy.index(row, 0))
    rect = wl.table.visualRect(wl.proxy.index(row, 0))
    qtbot.mouseClick(wl.table.viewport(), QtCore.Qt.MouseButton.LeftButton, pos=rect.center())
    qtbot.waitUntil(
        lambda: window.record is not None and window.record.name == "s103_3h_1", timeout=10_000
    )
    assert wl.visible_paths() == listed and wl.subfolders_box.isChecked()


def test_open_ptb_by_path_matches_wfdb(window, shared_data, qtbot):
    import wfdb

    hea = shared_data / "ptbdb" / "s0010_re.hea"
    assert window.open_path(hea, analyse_now=True)
    ref = wfdb.rdheader(str(hea.with_suffix("")))
    assert window.record.fs_hz == ref.fs and window.record.n_samples == ref.sig_len
    # 38.4 s record, 10 s page: the overview strip appears to move through it.
    assert not window.overview.isHidden()
    qtbot.keyClick(window, QtCore.Qt.Key.Key_PageDown)
    assert window.paper.page_start == round(10.0 * ref.fs)


def test_bad_file_shows_the_review_error_in_a_dialog(window, tmp_path, qtbot):
    bad = tmp_path / "broken.hea"
    bad.write_text("this is not a WFDB header\n")
    assert not window.open_path(bad)
    box = window.last_error_box
    assert isinstance(box, QtWidgets.QMessageBox)
    assert "broken.hea" in box.text()
    assert "Traceback" not in box.text()
    box.close()


def test_drop_a_file_opens_it(window, shared_data, qtbot):
    mime = QtCore.QMimeData()
    mime.setUrls([QtCore.QUrl.fromLocalFile(str(shared_data / "ptbdb" / "s0010_re.hea"))])
    pos = QtCore.QPointF(200, 200)
    actions = QtCore.Qt.DropAction.CopyAction
    enter = QtGui.QDragEnterEvent(
        pos.toPoint(),
        actions,
        mime,
        QtCore.Qt.MouseButton.LeftButton,
        QtCore.Qt.KeyboardModifier.NoModifier,
    )
    QtWidgets.QApplication.sendEvent(window, enter)
    assert enter.isAccepted()
    drop = QtGui.QDropEvent(
        pos, actions, mime, QtCore.Qt.MouseButton.LeftButton, QtCore.Qt.KeyboardModifier.NoModifier
    )
    QtWidgets.QApplication.sendEvent(window, drop)
    assert window.record is not None and window.record.name == "s0010_re"


def test_window_state_and_view_settings_are_restored(settings, qtbot):
    from reviewapp.ui.main_window import MainWindow

    w = MainWindow(settings, px_per_mm=4.0)
    qtbot.addWidget(w)
    w.show()
    qtbot.waitExposed(w)
    w.resize(700, 520)  # fits the offscreen 800 x 600 screen, so restore is not clamped
    qtbot.wait(10)
    w.view.set_speed(50.0)
    w.view.set_gain(20.0)
    w.view.set_layout("6x2")
    w.view.set_theme("dark")
    w.close()
    w2 = MainWindow(settings, px_per_mm=4.0)
    qtbot.addWidget(w2)
    w2.show()
    qtbot.waitExposed(w2)
    assert w2.view.scale.speed_mm_per_s == 50.0 and w2.view.scale.gain_mm_per_mv == 20.0
    assert w2.paper.layout_key == "6x2" and w2.view.theme.name == "dark"
    assert w2.size() == QtCore.QSize(700, 520)
    w2.view.set_theme("light")


def test_help_lists_every_shortcut_and_about_shows_caution(window):
    from reviewapp.ui.help_panel import SHORTCUTS, about_text

    listed = " ".join(k for k, _ in SHORTCUTS)
    for action in window.actions():
        seq = action.shortcut().toString(QtGui.QKeySequence.SequenceFormat.PortableText)
        if not seq or seq in (
            "Ctrl+O",
            "Ctrl+Q",
            "Del",
            "Tab",
            "PgUp",
            "PgDown",
            "Home",
            "End",
            "Left",
            "Right",
            "Up",
            "Down",
        ):
            continue
        assert seq in listed or seq.replace("Ctrl+Shift+Z", "Ctrl+Shift+Z") in listed, seq
    assert CLINICAL_CAUTION in about_text()


def test_summary_flags_in_words_and_glyph_with_source_tooltip(loaded):
    from reviewapp.core.measure import normal_range

    w = loaded
    t = w.summary.table
    iv = w.workflow.reading.measurements.intervals
    rows = {t.item(r, 0).text().rstrip(" ✎"): r for r in range(t.rowCount())}
    for f in w.workflow.reading.findings:
        if f.lead is not None or f.quantity not in ("qrs_ms", "qtc_bazett_ms", "pr_ms", "hr_bpm"):
            continue
        label = {
            "qrs_ms": "QRS",
            "qtc_bazett_ms": "QTc Bazett",
            "pr_ms": "PR",
            "hr_bpm": "Heart rate",
        }[f.quantity]
        flag = t.item(rows[label], 3).text()
        assert flag == ("▲ high" if f.direction == "above" else "▼ low")
        tip = t.item(rows[label], 1).toolTip()
        assert "Source:" in tip and "How computed" in tip
    rng = normal_range("pr_ms", w.record.subject)
    assert rng is not None and t.item(rows["PR"], 2).text().startswith(f"{rng.low:g}")
    assert w.summary.value_text("qt_ms") == f"{iv.qt_ms:.0f} ms"


def test_open_command_parser_and_platform_message():
    from reviewapp.commands import open as open_cmd
    from reviewapp.ui.layouts import LAYOUTS
    from reviewapp.ui.paper import GAINS_MM_PER_MV, SPEEDS_MM_PER_S

    assert open_cmd.SPEEDS == SPEEDS_MM_PER_S and open_cmd.GAINS == GAINS_MM_PER_MV
    assert set(open_cmd.LAYOUT_CHOICES) == {*LAYOUTS, "median"}
    p = argparse.ArgumentParser()
    sub = p.add_subparsers(dest="command")
    open_cmd.add_parser(sub)
    args = p.parse_args(["open", "x.hea", "--speed", "50", "--gain", "20", "--layout", "3x4+1"])
    assert args.speed == 50.0 and args.gain == 20.0 and args.layout == "3x4+1"
    with pytest.raises(SystemExit):
        p.parse_args(["open", "--speed", "30"])
    msg = open_cmd.qt_platform_problem({}, "linux")
    assert msg and "DISPLAY" in msg and "QT_QPA_PLATFORM=offscreen" in msg
    assert open_cmd.qt_platform_problem({"QT_QPA_PLATFORM": "offscreen"}, "linux") is None


def test_cli_without_display_exits_2_with_words(monkeypatch, capsys):
    from reviewapp.cli import main

    monkeypatch.delenv("DISPLAY", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    monkeypatch.delenv("QT_QPA_PLATFORM", raising=False)
    monkeypatch.setattr("sys.platform", "linux")
    assert main([]) == 2
    err = capsys.readouterr().err
    assert "cannot open the window" in err and "Traceback" not in err
    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")


def test_excepthook_shows_message_not_traceback(qtbot, capsys, monkeypatch):
    import sys

    from reviewapp.core.errors import RecordError
    from reviewapp.ui.app import install_excepthook

    monkeypatch.setattr(sys, "excepthook", sys.excepthook)
    install_excepthook(lambda: None)
    try:
        raise RecordError("the header names 3 signal files but 2 exist", "/data/x.hea")
    except RecordError as e:
        sys.excepthook(type(e), e, e.__traceback__)
    err = capsys.readouterr().err
    assert "/data/x.hea: the header names 3 signal files" in err and "Traceback" not in err
