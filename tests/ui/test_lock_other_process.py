"""A record whose marks lock a real second process holds (tests/lock_holder.py: the marks
store in another interpreter, as another workbench on this computer would hold it).

Through what the reader touches: File > Open (the native file dialog replaced only at its
static-call boundary) and the lock dialog's buttons. Read-only leaves the other process's
lock and its saves alone; once that process has died without releasing the lock (a crash),
the lock is found stale and the record opens for writing without a question, as the lock's
liveness rule says (process id and start time; reviewapp/core/marks/lock.py).
"""

from __future__ import annotations

import json
import socket
from pathlib import Path

from PySide6 import QtCore

from tests.lock_holder import LockHolderProcess
from tests.ui.conftest import answer_modal
from tests.ui.test_lock_takeover import _file_open

L = QtCore.Qt.MouseButton.LeftButton


def _lock(hea: Path) -> dict:
    return json.loads(hea.with_name(hea.stem + ".marks.json.lock").read_text())


def test_read_only_beside_another_process_then_its_lock_is_stale(
    window, qtbot, sample_copy, settings, monkeypatch
):
    from reviewapp.core.io import open_record
    from reviewapp.core.workflow import lock_report
    from reviewapp.ui.conflict_dialog import LockDialog

    settings.setValue("reader/id", "reader2")
    with LockHolderProcess(sample_copy, "reader1") as holder:
        assert holder.command("note held elsewhere") == "saved"
        held = _lock(sample_copy)
        assert held["pid"] == holder.pid

        seen: dict = {}

        def read_only(dlg) -> None:
            seen["title"], seen["text"] = dlg.windowTitle(), dlg.intro.text()
            qtbot.mouseClick(dlg.buttons["read_only"], L)

        answer_modal(read_only, LockDialog)
        _file_open(window, monkeypatch, sample_copy)
        qtbot.waitUntil(lambda: window.workflow is not None, timeout=20_000)
        assert seen["title"] == "Record open in another window"
        assert f"reader1 (process {holder.pid} on {socket.gethostname()}" in seen["text"]
        store = window.workflow.store
        assert store is not None and store.read_only
        assert window.last_error_box is None  # chosen knowingly: no error box on top
        # The other process keeps its lock, untouched, and still saves.
        assert _lock(sample_copy) == held
        assert holder.command("note still mine") == "saved"
        assert holder.vanish() == 0  # gone without releasing its lock

    assert _lock(sample_copy) == held  # the lock file outlived its process
    report = lock_report(open_record(sample_copy))
    assert report is not None and report.state == "stale" and not report.held

    # Opened again for writing: no question, the stale lock is simply taken.
    from reviewapp.ui.main_window import MainWindow

    dialogs: list = []
    answer_modal(lambda dlg: dialogs.append(dlg) or dlg.reject(), LockDialog, tries=30)
    again = MainWindow(settings, px_per_mm=4.0)
    qtbot.addWidget(again)
    again.show()
    _file_open(again, monkeypatch, sample_copy)
    qtbot.waitUntil(lambda: again.workflow is not None, timeout=20_000)
    assert dialogs == []
    assert again.workflow.store is not None and not again.workflow.store.read_only
    assert _lock(sample_copy)["reviewer"] == "reader2"
    again.close()
