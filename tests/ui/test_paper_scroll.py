"""A page larger than the view at true size: scroll bars show that more paper exists and bring
it into sight, without changing the true-size scale (1 mm of paper = px_per_mm pixels)."""

from __future__ import annotations

import numpy as np
import pytest
from PySide6 import QtCore, QtWidgets

from tests.ui.conftest import keep_marks_in_window


def _visible_scene_rect(paper) -> QtCore.QRectF:
    """The part of the scene the viewport shows (scene coordinates)."""
    return paper.mapToScene(paper.viewport().rect()).boundingRect()


def _label_rects(paper, names: set[str]) -> dict[str, QtCore.QRectF]:
    """Scene rect of each named lead label: its anchor (top-left, placed in paper mm) and its
    text's size in pixels (labels keep a fixed screen size)."""
    out = {}
    for item in paper._furniture:
        text = getattr(item, "textItem", None)
        if text is not None and text.toPlainText() in names:
            top_left = paper.vb.mapViewToScene(item.pos())
            out[text.toPlainText()] = QtCore.QRectF(top_left, text.boundingRect().size())
    return out


def _x_grid_steps_px(paper, lo_mm: float, hi_mm: float) -> np.ndarray:
    minor, major = paper.grid.line_positions("x", lo_mm, hi_mm)
    pos = np.array(sorted(minor + major))
    return np.diff([paper.map_to_viewport(float(v), 0.0).x() for v in pos])


# A 96 dpi screen (the CSS reference pixel: 96 px per inch, 25.4 mm per inch).
SCREEN_PX_PER_MM = 96 / 25.4


@pytest.fixture
def wide_page(qtbot, settings, ptb_12lead, ptb_analysis, monkeypatch):
    """PTB s0010_re at 50 mm/s in a 6 x 2 layout, window 1500 x 980 px on a 96 dpi screen: the
    page (14 mm margin + 10 s at 50 mm/s + 5 mm = 519 mm, about 1960 px) is about twice as wide
    as the paper view."""
    import reviewapp.core.engine as engine
    from reviewapp.ui.main_window import MainWindow

    monkeypatch.setattr(engine, "analyse", lambda rec, **kw: ptb_analysis)
    w = MainWindow(settings, px_per_mm=SCREEN_PX_PER_MM, speed_mm_per_s=50.0, gain_mm_per_mv=10.0)
    w.resize(1500, 980)
    qtbot.addWidget(w)
    w.show()
    qtbot.waitExposed(w)
    w.load_record(ptb_12lead, analyse_now=True)
    w.view.set_layout("6x2")
    w.paper.true_size()
    qtbot.wait(30)
    return w


V_LEADS = {f"V{i}" for i in range(1, 7)}


def test_wide_page_gets_a_scroll_bar_that_reaches_the_chest_leads(wide_page, qtbot):
    w = wide_page
    p = w.paper
    g = p.geom
    assert g.width_mm * SCREEN_PX_PER_MM > p.viewport().width()  # the situation under test
    sb = p.h_scroll
    assert sb.isVisible()
    assert sb.minimum() == 0 and sb.value() == 0
    # The bar's handle is the view's share of the page: page step / (range + page step).
    share = sb.pageStep() / (sb.maximum() - sb.minimum() + sb.pageStep())
    assert share == pytest.approx(p.viewport().width() / (g.width_mm * SCREEN_PX_PER_MM), abs=0.01)
    # Before scrolling the second column (V1..V6) is out of sight: the defect being fixed.
    visible = _visible_scene_rect(p)
    labels = _label_rects(p, V_LEADS)
    assert set(labels) == V_LEADS
    assert not any(visible.contains(r) for r in labels.values())

    sb.setValue(sb.maximum())
    qtbot.wait(10)
    visible = _visible_scene_rect(p)
    labels = _label_rects(p, V_LEADS)
    for name, r in labels.items():
        assert visible.contains(r), name
    # The end of the bar is the right edge of the page (within one pixel).
    assert p.vb.viewRect().right() == pytest.approx(g.width_mm, abs=1.0 / SCREEN_PX_PER_MM)
    # Still true size: grid lines 1 mm apart are px_per_mm pixels apart on screen.
    vr = p.vb.viewRect()
    steps = _x_grid_steps_px(p, vr.left() + 1.0, vr.right() - 1.0)
    assert len(steps) > 100
    assert np.allclose(steps, SCREEN_PX_PER_MM, atol=1e-6)
    assert p.zoom == pytest.approx(1.0)


def test_scroll_bar_follows_drag_pan_and_zoom_and_fit_hides_it(wide_page, qtbot):
    p = wide_page.paper
    sb = p.h_scroll
    # A drag on the paper pans the ViewBox (pyqtgraph translates its range): the bar follows.
    p.vb.translateBy(x=100.0)
    assert sb.value() == round(100.0 * SCREEN_PX_PER_MM)
    p.vb.translateBy(x=-100.0)
    assert sb.value() == 0
    # Zooming in makes the page longer on screen: a longer bar range, same share logic.
    before = sb.maximum()
    p.zoom_by(2.0)
    assert sb.maximum() > before
    # Fit page: the whole page in sight, no bars, zoom below true size.
    wide_page.view.fit_page()
    qtbot.wait(10)
    assert not p.h_scroll.isVisible() and not p.v_scroll.isVisible()
    assert p.zoom < 1.0
    vr = p.vb.viewRect()
    assert vr.left() <= 0.0 and vr.right() >= p.geom.width_mm - 1e-6
    assert vr.top() <= 0.0 and vr.bottom() >= p.geom.height_mm - 1e-6
    # Fitted exactly on one axis: the page fills the view's width or height.
    full = p.viewport().size()
    page_px = (
        p.geom.width_mm * SCREEN_PX_PER_MM * p.zoom,
        p.geom.height_mm * SCREEN_PX_PER_MM * p.zoom,
    )
    assert min(full.width() - page_px[0], full.height() - page_px[1]) == pytest.approx(0, abs=1)
    # Back to true size: the bar is back.
    p.true_size()
    qtbot.wait(10)
    assert p.h_scroll.isVisible()


def test_page_keys_still_move_in_time_with_scroll_bars(window, shared_data, qtbot, monkeypatch):
    from reviewapp.ui.main_window import MainWindow

    # Paging only: the 30-minute analysis and the marks file are not under test.
    monkeypatch.setattr(MainWindow, "analyse", lambda self: None)
    keep_marks_in_window(monkeypatch)
    w = window
    w.resize(1500, 980)
    w.view.set_speed(50.0)
    assert w.open_path(shared_data / "mitdb" / "100.hea")  # MIT-BIH 100: 360 Hz, 30 min
    w.paper.true_size()
    qtbot.wait(20)
    assert w.paper.h_scroll.isVisible()
    # The bars never take the keyboard focus, so the page keys stay with the window's actions.
    assert w.paper.h_scroll.focusPolicy() == QtCore.Qt.FocusPolicy.NoFocus
    w.activateWindow()
    w.paper.setFocus()
    qtbot.waitUntil(lambda: QtWidgets.QApplication.focusWidget() is w.paper)
    qtbot.keyClick(w.paper, QtCore.Qt.Key.Key_PageDown)
    assert w.paper.page_start == round(10.0 * 360)
    qtbot.keyClick(w.paper, QtCore.Qt.Key.Key_PageUp)
    assert w.paper.page_start == 0
