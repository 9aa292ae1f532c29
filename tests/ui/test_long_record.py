"""Long records: the overview strip moves the page through the whole recording."""

from __future__ import annotations

import pytest


@pytest.fixture
def no_analysis_no_sidecar(monkeypatch):
    from reviewapp.ui.main_window import MainWindow

    # Paging and drawing only: the 30-minute analysis and the marks file are not under test.
    monkeypatch.setattr(MainWindow, "analyse", lambda self: None)
    monkeypatch.setattr(MainWindow, "_open_store", lambda self, rec: None)


def test_overview_moves_page_through_30_minutes(window, shared_data, qtbot, no_analysis_no_sidecar):
    import wfdb

    hea = shared_data / "mitdb" / "100.hea"
    ref = wfdb.rdheader(str(hea.with_suffix("")))  # MIT-BIH 100: 650000 samples at 360 Hz
    window.set_layout("12x1")
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
    window._go_page(10**12)
    assert window.paper.page_start == rec.n_samples - round(10.0 * ref.fs)
    window._step_page(-1)
    assert window.paper.page_start == rec.n_samples - round(20.0 * ref.fs)
    t_lo, _ = window.overview.region.getRegion()
    assert t_lo == pytest.approx(window.paper.page_start / ref.fs)
    # Zooming out far keeps drawing cheap: pyqtgraph peak-decimates what it draws.
    window.paper.zoom_by(0.1)
    qtbot.wait(20)
    tr = window.paper.traces[0]
    assert tr.opts["autoDownsample"] and tr.opts["clipToView"]
