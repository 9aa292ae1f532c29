"""Fixtures for the window tests: a real 12-lead record (PTB s0010_re via wfdb) and a window
with its own settings file and a fixed screen scale."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

PX_PER_MM = 4.0  # a round scale so pixel arithmetic in the tests is easy to follow


@pytest.fixture(scope="session")
def ptb_12lead(shared_data: Path):
    """PTB s0010_re, the 12 standard leads, 10 s at 1000 Hz, read with wfdb (the reference
    reader) and wrapped with ``record_from_array``."""
    import wfdb

    from reviewapp.core.record import record_from_array

    w = wfdb.rdrecord(str(shared_data / "ptbdb" / "s0010_re"), sampto=10_000)
    names = [n for n in w.sig_name][:12]
    return record_from_array(
        np.asarray(w.p_signal[:, :12], dtype=np.float32),
        float(w.fs),
        names,
        name="s0010_re",
        source_format="WFDB",
    )


@pytest.fixture(scope="session")
def ptb_analysis(ptb_12lead):
    from reviewapp.core.engine import analyse

    return analyse(ptb_12lead)


@pytest.fixture
def sample_copy(sample_records_dir, tmp_path):
    """A copy of the first WFDB sample record (header + signal), so marks sidecars are written
    beside the copy, never beside the repository's samples."""
    import shutil

    if not sample_records_dir.is_dir():
        pytest.skip("no sample_records folder in this checkout")
    heas = sorted(sample_records_dir.glob("*.hea"))
    if not heas:
        pytest.skip("no WFDB sample record")
    hea = heas[0]
    for f in sample_records_dir.glob(hea.stem + ".*"):
        if not f.name.endswith(".marks.json") and not f.name.endswith(".json"):
            shutil.copy(f, tmp_path / f.name)
    return tmp_path / hea.name


def answer_modal(act, cls=None, tries: int = 300) -> None:
    """Run ``act(dialog)`` on the next modal dialog (of class ``cls``) once it is shown: the
    test's way of answering a dialog that ``exec()`` blocks on."""
    from PySide6 import QtCore, QtWidgets

    cls = cls or QtWidgets.QDialog
    state = {"left": tries}

    def poll() -> None:
        dlg = QtWidgets.QApplication.activeModalWidget()
        if isinstance(dlg, cls) and dlg.isVisible():
            act(dlg)
            return
        state["left"] -= 1
        if state["left"] > 0:
            QtCore.QTimer.singleShot(10, poll)

    QtCore.QTimer.singleShot(0, poll)


@pytest.fixture
def settings(tmp_path):
    from PySide6 import QtCore

    return QtCore.QSettings(str(tmp_path / "settings.ini"), QtCore.QSettings.Format.IniFormat)


@pytest.fixture
def window(qtbot, settings):
    from reviewapp.ui.main_window import MainWindow

    w = MainWindow(settings, px_per_mm=PX_PER_MM, speed_mm_per_s=25.0, gain_mm_per_mv=10.0)
    w.resize(1600, 1000)
    qtbot.addWidget(w)
    w.show()
    qtbot.waitExposed(w)
    return w


@pytest.fixture
def loaded(window, ptb_12lead, ptb_analysis, monkeypatch):
    """The window showing PTB s0010_re with its analysis (analysed once per session)."""
    import reviewapp.core.engine as engine

    monkeypatch.setattr(engine, "analyse", lambda rec, **kw: ptb_analysis)
    window.load_record(ptb_12lead, analyse_now=True)
    assert window.workflow is not None
    return window


@pytest.fixture
def worklist_copy(sample_records_dir, tmp_path) -> Path:
    """The demo worklist copied to a temporary folder (records only, no sidecars), so readings
    made in a test land beside the copy."""
    import shutil

    if not sample_records_dir.is_dir():
        pytest.skip("no sample_records folder in this checkout")
    dst = tmp_path / "worklist"
    dst.mkdir()
    for f in sample_records_dir.iterdir():
        if f.is_file() and ".marks." not in f.name:
            shutil.copy(f, dst / f.name)
    return dst


def set_mark(w, fid: str, sample: int, lead: str | None = None) -> None:
    """Drop a median-beat line (or a lead's J point) at ``sample``: the view's own edit
    signal, as a mouse release sends it."""
    from reviewapp.core.workflow import MarkEdit, MarkTarget

    w.median.mark_edit.emit(MarkEdit(MarkTarget("representative", fid, lead=lead), "move", sample))


def keep_marks_in_window(monkeypatch) -> None:
    """Open records without a marks file, so nothing is locked or written beside shared data."""
    import reviewapp.ui.workflow_adapter as adapter
    from reviewapp.core.workflow import MarksOpening

    monkeypatch.setattr(
        adapter, "open_marks", lambda rec, reader, mode: MarksOpening(None, "marks kept here")
    )


def choose_in_box(qtbot, box, text: str) -> None:
    """Open a toolbar box with the mouse, move to ``text`` with the arrow keys, take it with
    Return (a click on an entry right after the list opens is ignored by Qt by design)."""
    from PySide6 import QtCore

    qtbot.mouseClick(box, QtCore.Qt.MouseButton.LeftButton)
    view = box.view()
    qtbot.waitUntil(view.isVisible, timeout=3000)
    steps = box.findText(text) - box.currentIndex()
    key = QtCore.Qt.Key.Key_Down if steps > 0 else QtCore.Qt.Key.Key_Up
    for _ in range(abs(steps)):
        qtbot.keyClick(view, key)
    qtbot.keyClick(view, QtCore.Qt.Key.Key_Return)
    qtbot.waitUntil(lambda: not view.isVisible(), timeout=3000)
