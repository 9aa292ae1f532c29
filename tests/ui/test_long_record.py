"""Long records: the overview strip moves the page through the whole recording."""

from __future__ import annotations

import pytest
from PySide6 import QtCore

from tests.ui.conftest import keep_marks_in_window


@pytest.fixture
def no_analysis_no_sidecar(monkeypatch):
    from reviewapp.ui.main_window import MainWindow

    # Paging and drawing only: the 30-minute analysis and the marks file are not under test.
    monkeypatch.setattr(MainWindow, "analyse", lambda self: None)
    keep_marks_in_window(monkeypatch)


def test_overview_moves_page_through_30_minutes(window, shared_data, qtbot, no_analysis_no_sidecar):
    import wfdb

    hea = shared_data / "mitdb" / "100.hea"
    ref = wfdb.rdheader(str(hea.with_suffix("")))  # MIT-BIH 100: 650000 samples at 360 Hz
    window.view.set_layout("12x1")
    assert window.open_path(hea)
    rec = window.record
    assert rec.n_samples == ref.sig_len and rec.fs_hz == ref.fs
    assert not window.overview.isHidden()
    t_lo, t_hi = window.overview.region.getRegion()
    assert (t_lo, t_hi) == pytest.approx((0.0, 10.0))
    # Drag the page region to 20 minutes: the paper shows 20:00-20:10.
    window.overview.region.setRegion((1200.0, 1210.0))
    window.overview._moved()
    assert window.paper.page_start == round(1200.0 * ref.fs)
    x, _y = window.paper.traces[0].getOriginalDataset()
    assert len(x) == round(10.0 * ref.fs)
    assert "20:00.0" in window.paper.header.textItem.toPlainText()
    # Last page, then keyboard paging back by one page (10 s).
    qtbot.keyClick(window, QtCore.Qt.Key.Key_End)
    assert window.paper.page_start == rec.n_samples - round(10.0 * ref.fs)
    qtbot.keyClick(window, QtCore.Qt.Key.Key_PageUp)
    assert window.paper.page_start == rec.n_samples - round(20.0 * ref.fs)
    t_lo, _ = window.overview.region.getRegion()
    assert t_lo == pytest.approx(window.paper.page_start / ref.fs)
    # Zooming out far keeps drawing cheap: pyqtgraph peak-decimates what it draws.
    window.paper.zoom_by(0.1)
    qtbot.wait(20)
    tr = window.paper.traces[0]
    assert tr.opts["autoDownsample"] and tr.opts["clipToView"]
