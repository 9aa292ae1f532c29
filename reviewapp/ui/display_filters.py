"""Display-only filters for the traces. Measurements never see these: they come from
``engine.analyse`` on the record (the engine does its own conditioning)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class DisplayFilters:
    """Which display filters are on; cut-offs in Hz."""

    baseline: bool = False
    mains: bool = False
    lowpass: bool = False
    baseline_hz: float = 0.5
    mains_hz: float = 50.0
    lowpass_hz: float = 40.0

    @property
    def any(self) -> bool:
        return self.baseline or self.mains or self.lowpass

    def legend(self) -> str:
        parts = []
        if self.baseline:
            parts.append(f"baseline {self.baseline_hz:g} Hz")
        if self.mains:
            parts.append(f"mains notch {self.mains_hz:g} Hz")
        if self.lowpass:
            parts.append(f"low-pass {self.lowpass_hz:g} Hz")
        return "Display filters: " + (", ".join(parts) if parts else "off (raw signal)")


def apply_display_filters(x_mv: np.ndarray, fs_hz: float, f: DisplayFilters) -> np.ndarray:
    """Filter a (n, n_leads) window for display with zero-phase IIR filters.

    Baseline: 2nd-order Butterworth high-pass; mains: IIR notch, Q = 30; low-pass: 4th-order
    Butterworth (scipy.signal.butter / iirnotch, applied forward-backward with sosfiltfilt /
    filtfilt so waves do not shift in time on the screen).

    >>> import numpy as np
    >>> x = np.ones((2000, 1), np.float32)
    >>> y = apply_display_filters(x, 500.0, DisplayFilters(baseline=True))
    >>> bool(abs(y[1000, 0]) < 0.05)
    True
    """
    if not f.any or x_mv.shape[0] < 32:
        return x_mv
    from scipy import signal  # imported on first use: keeps the window's start-up fast

    y = np.nan_to_num(np.asarray(x_mv, dtype=np.float64))
    nyq = fs_hz / 2.0
    pad = min(y.shape[0] - 1, int(fs_hz))
    if f.baseline and f.baseline_hz < nyq:
        sos = signal.butter(2, f.baseline_hz / nyq, "highpass", output="sos")
        y = signal.sosfiltfilt(sos, y, axis=0, padlen=pad)
    if f.mains and f.mains_hz < nyq * 0.95:
        b, a = signal.iirnotch(f.mains_hz, 30.0, fs=fs_hz)
        y = signal.filtfilt(b, a, y, axis=0, padlen=pad)
    if f.lowpass and f.lowpass_hz < nyq * 0.95:
        sos = signal.butter(4, f.lowpass_hz / nyq, "lowpass", output="sos")
        y = signal.sosfiltfilt(sos, y, axis=0, padlen=pad)
    return y.astype(np.float32)
