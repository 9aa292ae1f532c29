"""Display-only filters for the traces. Measurements never see these: they come from
``engine.analyse`` on the record (the engine does its own conditioning)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class DisplayFilters:
    """Which display filters are on; cut-offs in Hz. ``centre``: each lead is drawn with its
    baseline on its row (its median over the page is taken off the drawing only), so a record
    with a large DC offset is never drawn off the page."""

    baseline: bool = False
    mains: bool = False
    lowpass: bool = False
    centre: bool = True
    baseline_hz: float = 0.5
    mains_hz: float = 50.0
    lowpass_hz: float = 40.0

    @property
    def any(self) -> bool:
        """A filter that changes the wave shapes is on (centring only moves a trace)."""
        return self.baseline or self.mains or self.lowpass

    def legend(self) -> str:
        parts = []
        if self.baseline:
            parts.append(f"baseline {self.baseline_hz:g} Hz")
        if self.mains:
            parts.append(f"mains notch {self.mains_hz:g} Hz")
        if self.lowpass:
            parts.append(f"low-pass {self.lowpass_hz:g} Hz")
        text = "Display filters: " + (", ".join(parts) if parts else "off (raw signal)")
        return text + ("; baselines centred on their rows" if self.centre else "")


def baseline_offsets_mv(x_mv: np.ndarray) -> np.ndarray:
    """Each lead's baseline for display: the median of its finite samples (0 where it has
    none). The median ignores the QRS spikes, which are brief, so it is where the isoelectric
    line is drawn (common practice, no source).

    >>> import numpy as np
    >>> x = np.full((500, 2), 4.8, np.float32); x[100:110, 0] = 6.0; x[:, 1] = np.nan
    >>> baseline_offsets_mv(x).round(2).tolist()
    [4.8, 0.0]
    """
    import warnings

    x = np.asarray(x_mv, dtype=np.float64)
    if x.ndim != 2 or x.shape[0] == 0:
        return np.zeros(x.shape[1] if x.ndim == 2 else 0)
    x = np.where(np.isfinite(x), x, np.nan)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # an all-gap lead: no baseline
        out = np.nanmedian(x, axis=0)
    return np.nan_to_num(out, nan=0.0)


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
