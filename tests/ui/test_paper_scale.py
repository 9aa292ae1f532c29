"""True millimetres on the glass: grid spacing, paper speed and gain in pixels."""

from __future__ import annotations

import numpy as np
import pytest
from PySide6 import QtCore

from reviewapp.ui.paper import (
    GAINS_MM_PER_MV,
    ID1_CARD_WIDTH_MM,
    SPEEDS_MM_PER_S,
    PaperScale,
    screen_key,
    screen_px_per_mm,
    store_px_per_mm,
)
from tests.ui.conftest import PX_PER_MM


def test_paper_scale_math_standard_paper():
    # Standard ECG paper: 25 mm/s and 10 mm/mV (Kligfield et al., AHA/ACCF/HRS recommendations
    # Part I, Circulation 115:1306, 2007). At 96 dpi (3.7795 px/mm): 1 s = 94.49 px,
    # 1 mV = 37.80 px.
    s = PaperScale(px_per_mm=96 / 25.4, speed_mm_per_s=25.0, gain_mm_per_mv=10.0)
    assert s.x_px(1.0) == pytest.approx(94.488, abs=1e-3)
    assert s.y_px(1.0) == pytest.approx(37.795, abs=1e-3)
    assert s.seconds_from_mm(s.x_mm(0.37)) == pytest.approx(0.37)
    with pytest.raises(ValueError):
        PaperScale(px_per_mm=0.0)


def _grid_px_steps(w, axis: str) -> np.ndarray:
    """Pixel distances between successive grid lines as the view draws them."""
    g = w.paper.grid
    minor, major = g.line_positions(axis, 0.0, 60.0)
    pos = np.array(sorted(minor + major))
    if axis == "x":
        px = [w.paper.map_to_viewport(float(v), 0.0).x() for v in pos]
    else:
        px = [w.paper.map_to_viewport(0.0, float(v)).y() for v in pos]
    return np.diff(px), pos


@pytest.mark.parametrize("gain", GAINS_MM_PER_MV)
def test_grid_is_one_mm_and_signal_is_true_scale_at_every_speed_and_gain(loaded, gain):
    w = loaded
    w.view.set_gain(gain)
    for speed in SPEEDS_MM_PER_S:  # one window per gain: the record is drawn once per speed
        w.view.set_speed(speed)
        w.paper.true_size()
        _check_true_scale(w, speed, gain)


def _check_true_scale(w, speed: float, gain: float) -> None:
    ppm = PX_PER_MM
    for axis in ("x", "y"):
        steps, _pos = _grid_px_steps(w, axis)
        assert np.allclose(steps, ppm, atol=1e-6), (speed, gain, axis, steps[:5])
        # Every fifth line is a major (5 mm) line.
        _minor, major = w.paper.grid.line_positions(axis, 0.0, 60.0)
        assert np.allclose(np.diff(major), 5.0)
    # One second of signal spans speed mm; one millivolt spans gain mm (within 2 %).
    g = w.paper.geom
    fs = w.record.fs_hz
    x0 = w.paper.map_to_viewport(g.x_of_sample(1000), 0).x()
    x1 = w.paper.map_to_viewport(g.x_of_sample(1000 + int(fs)), 0).x()
    assert (x1 - x0) == pytest.approx(speed * ppm, rel=0.02), (speed, gain)
    y0 = w.paper.map_to_viewport(0, g.y_of_mv(0, 0.0)).y()
    y1 = w.paper.map_to_viewport(0, g.y_of_mv(0, 1.0)).y()
    assert (y0 - y1) == pytest.approx(gain * ppm, rel=0.02), (speed, gain)
    # Speed and gain are printed on the paper.
    assert f"{speed:g} mm/s" in w.paper.header.textItem.toPlainText()
    assert f"{gain:g} mm/mV" in w.paper.header.textItem.toPlainText()


def test_one_second_is_25_mm_at_standard_paper(loaded):
    w = loaded
    w.view.set_speed(25.0)
    w.view.set_gain(10.0)
    w.paper.true_size()
    g = w.paper.geom
    px = (
        w.paper.map_to_viewport(g.x_of_sample(2000), 0).x()
        - w.paper.map_to_viewport(g.x_of_sample(1000), 0).x()
    )
    assert px / PX_PER_MM == pytest.approx(25.0, rel=0.02)


def test_true_size_survives_resize_and_zoom_returns(loaded, qtbot):
    w = loaded
    w.paper.zoom_by(2.0)
    assert w.paper.zoom == pytest.approx(2.0, rel=1e-3)
    w.resize(1300, 900)
    qtbot.wait(20)
    assert w.paper.zoom == pytest.approx(2.0, rel=1e-3)
    w.paper.true_size()
    steps, _ = _grid_px_steps(w, "x")
    assert np.allclose(steps, PX_PER_MM, atol=1e-6)


def test_calibration_is_stored_per_screen(settings, qtbot):
    from PySide6 import QtGui

    from reviewapp.ui.calibration import CalibrationDialog

    screen = QtGui.QGuiApplication.primaryScreen()
    dlg = CalibrationDialog(screen, settings)
    qtbot.addWidget(dlg)
    # The reader stretched the bar until the ID-1 card (85.60 mm, ISO/IEC 7810) matched 360 px.
    dlg.set_value(360.0 / ID1_CARD_WIDTH_MM)
    assert dlg.bar.bar_width_px() == pytest.approx(360.0, abs=0.01)
    dlg.accept()
    assert screen_px_per_mm(screen, settings) == pytest.approx(360.0 / ID1_CARD_WIDTH_MM, rel=1e-4)
    assert settings.value(f"{screen_key(screen)}/px_per_mm") is not None
    # Another screen (different key) keeps its own value.
    store_px_per_mm(None, 5.0, settings)
    assert screen_px_per_mm(screen, settings) == pytest.approx(360.0 / ID1_CARD_WIDTH_MM, rel=1e-4)


def test_window_uses_stored_calibration(settings, qtbot):
    from PySide6 import QtGui

    from reviewapp.ui.main_window import MainWindow

    store_px_per_mm(QtGui.QGuiApplication.primaryScreen(), 5.5, settings)
    w = MainWindow(settings)
    qtbot.addWidget(w)
    assert w.view.scale.px_per_mm == pytest.approx(5.5)
    assert isinstance(w.paper.vb.viewRect(), QtCore.QRectF)
