"""Signal conditioning: zero-phase baseline removal, mains notch and low-pass.

Every filter here runs forwards and backwards (``scipy.signal.sosfiltfilt``) so it has zero
phase: wave boundaries do not move and the distortion a high-pass leaves around a QRS is
symmetric, which keeps the ST level relative to the PR segment. The AHA/ACCF/HRS
recommendations allow the diagnostic low-frequency cut-off of 0.05 Hz to be relaxed to
0.67 Hz only for linear digital filters with zero phase distortion, and ask for a
high-frequency response of at least 150 Hz in adolescents and adults (Kligfield P et al.,
"Recommendations for the standardization and interpretation of the electrocardiogram, Part I",
Circulation 2007;115:1306-1324).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import signal

# Baseline (high-pass): Butterworth order 2 at 0.5 Hz, run forward and backward, so the
# -3 dB point of the whole (squared) response is 1.25 x 0.5 = 0.62 Hz, inside the 0.67 Hz a
# zero-phase filter may use (Kligfield 2007), while a 0.2 Hz respiratory wander loses 32 dB.
HIGHPASS_HZ = 0.5
HIGHPASS_ORDER = 2
# Low-pass: the whole response is -3 dB at 150 Hz (Kligfield 2007: at least 150 Hz for
# adolescents and adults) where the sampling rate allows; a forward-backward 2nd-order
# Butterworth is -3 dB at 0.802 x its design corner. At low rates the corner is limited to
# 0.8 x Nyquist (e.g. 100 Hz at 250 Hz sampling).
LOWPASS_HZ = 150.0
LOWPASS_ORDER = 2
_LOWPASS_CORNER_FACTOR = 1.0 / 0.802
LOWPASS_NYQUIST_FRACTION = 0.8
# Notch quality factor (f0 / -3 dB bandwidth). 25 -> 2 Hz wide at 50 Hz: narrow enough to
# leave QRS content, wide enough for mains drift of a few tenths of a Hz. Common practice,
# no source.
NOTCH_Q = 25.0
# Mains counts as present when its spectral line stands this far above the neighbouring
# spectrum (power ratio). Common practice, no source.
MAINS_PROMINENCE = 8.0
MAINS_CANDIDATES_HZ = (50.0, 60.0)
PAD_PERIODS = 1.5  # odd-reflection pad, in periods of the high-pass corner
MAINS_SCAN_S = 20.0


@dataclass(frozen=True)
class FilterPlan:
    """The filters ``condition`` applies for one sampling rate (second-order sections)."""

    fs_hz: float
    highpass_hz: float
    lowpass_hz: float | None
    notch_hz: float | None
    sos: np.ndarray  # (n_sections, 6), applied forward and backward


def detect_mains_hz(signal_mv: np.ndarray, fs_hz: float) -> float | None:
    """Mains frequency (50 or 60 Hz) if its spectral line is present, else None.

    The Welch spectrum (summed over leads) at each candidate frequency is compared with the
    median spectrum 3-8 Hz to either side; the candidate with the larger ratio wins if the
    ratio exceeds ``MAINS_PROMINENCE``. Candidates at or above 0.95 x Nyquist are skipped.

    >>> fs = 500.0
    >>> t = np.arange(5000) / fs
    >>> x = (0.2 * np.sin(2 * np.pi * 60 * t))[:, None].astype(np.float32)
    >>> detect_mains_hz(x, fs)
    60.0
    """
    x = np.asarray(signal_mv)
    if x.ndim == 1:
        x = x[:, None]
    n = min(x.shape[0], int(MAINS_SCAN_S * fs_hz))  # a mains line shows in any 20 s
    nyq = fs_hz / 2.0
    cands = [f for f in MAINS_CANDIDATES_HZ if f < 0.95 * nyq]
    if not cands or n < 64:
        return None
    chunk = np.asarray(x[:n], dtype=np.float64).T
    chunk = np.where(np.isfinite(chunk), chunk, 0.0)
    chunk -= chunk.mean(axis=1, keepdims=True)
    # 0.5 Hz resolution where the record allows; Hann window (its leakage from DC and from
    # the ECG's own low frequencies falls far below any mains line at 50/60 Hz).
    nper = int(min(n, 2 ** int(np.ceil(np.log2(fs_hz * 2.0)))))
    f, p = signal.welch(chunk, fs=fs_hz, nperseg=nper, axis=-1, detrend=False)
    p = p.sum(axis=0)
    best, best_ratio = None, MAINS_PROMINENCE
    df = f[1] - f[0]
    for f0 in cands:
        k = round(f0 / df)
        line = p[max(0, k - 1) : k + 2].max()
        side = (np.abs(f - f0) >= 3.0) & (np.abs(f - f0) <= 8.0)
        if not side.any():
            continue
        ref = float(np.median(p[side]))
        ratio = line / ref if ref > 0 else (np.inf if line > 0 else 0.0)
        if ratio > best_ratio:
            best, best_ratio = f0, ratio
    return best


@lru_cache(maxsize=64)
def filter_plan(fs_hz: float, notch_hz: float | None) -> FilterPlan:
    """Design the zero-phase filter chain for ``fs_hz`` (cached per rate and notch).

    High-pass: Butterworth, ``HIGHPASS_ORDER`` at ``HIGHPASS_HZ``. Notch: ``scipy.signal.iirnotch``
    at ``notch_hz`` when it lies below 0.95 x Nyquist. Low-pass: Butterworth with design corner
    min(187 Hz, 0.8 x Nyquist) (whole response -3 dB at 150 Hz where the rate allows).
    ``lowpass_hz`` is the design corner.

    >>> plan = filter_plan(250.0, 50.0)
    >>> plan.lowpass_hz, plan.notch_hz
    (100.0, 50.0)
    """
    nyq = fs_hz / 2.0
    parts = [signal.butter(HIGHPASS_ORDER, HIGHPASS_HZ, btype="highpass", fs=fs_hz, output="sos")]
    notch = None
    if notch_hz is not None and 0 < notch_hz < 0.95 * nyq:
        b, a = signal.iirnotch(notch_hz, NOTCH_Q, fs=fs_hz)
        parts.append(signal.tf2sos(b, a))
        notch = float(notch_hz)
    lp = min(LOWPASS_HZ * _LOWPASS_CORNER_FACTOR, LOWPASS_NYQUIST_FRACTION * nyq)
    lowpass: float | None = None
    if lp > 20.0:
        parts.append(signal.butter(LOWPASS_ORDER, lp, btype="lowpass", fs=fs_hz, output="sos"))
        lowpass = float(lp)
    sos = np.vstack(parts)
    sos.setflags(write=False)
    return FilterPlan(fs_hz, HIGHPASS_HZ, lowpass, notch, sos)


def condition(signal_mv: np.ndarray, fs_hz: float, mains_hz: float | None = None) -> np.ndarray:
    """Zero-phase conditioning of an ECG: baseline removal, mains notch, low-pass.

    Method: one chain of second-order sections (``filter_plan``) applied forward and backward
    with ``scipy.signal.sosfiltfilt`` (zero phase, as Kligfield et al., Circulation
    2007;115:1306-1324 require for a 0.5-0.67 Hz baseline cut-off). The record is extended
    at both ends by odd reflection over up to 1.5 periods of the high-pass corner (3 s at
    0.5 Hz, shortened for short records) so the ends carry no start-up transient.

    Parameters:
        signal_mv: (n_samples, n_leads) in mV; NaNs must be replaced by the caller.
        fs_hz: sampling rate in Hz (125 Hz to 2 kHz tested).
        mains_hz: 50 or 60 to force the notch; 0 for no notch; None detects mains from the
            spectrum (``detect_mains_hz``) and notches only when a mains line is present.

    Returns the conditioned signal, float32, same shape.

    >>> fs = 500.0
    >>> x = np.ones((5000, 2), dtype=np.float32)  # a pure offset is baseline
    >>> float(np.abs(condition(x, fs)).max()) < 1e-3
    True
    """
    x = np.asarray(signal_mv)
    squeeze = x.ndim == 1
    if squeeze:
        x = x[:, None]
    n = x.shape[0]
    if n < 2:
        out = np.zeros_like(x, dtype=np.float32)
        return out[:, 0] if squeeze else out
    notch = mains_hz if mains_hz is not None else detect_mains_hz(x, fs_hz)
    plan = filter_plan(float(fs_hz), None if notch is None else float(notch))
    padlen = min(n - 1, round(PAD_PERIODS * fs_hz / HIGHPASS_HZ))
    # Filter along contiguous rows (leads x samples): sosfilt is several times faster so.
    xt = np.array(x.T, dtype=np.float64, order="C")
    # Remove each lead's first value so the reflection and the filter state start near zero;
    # the high-pass removes the constant anyway.
    xt -= xt[:, :1]
    y = signal.sosfiltfilt(plan.sos.copy(), xt, axis=-1, padtype="odd", padlen=padlen).T
    out = y.astype(np.float32)
    return out[:, 0] if squeeze else out
