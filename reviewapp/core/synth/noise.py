"""Artefacts added to the independent leads (I, II, V1-V6) of a synthetic ECG.

Each lead gets its own realisation (electrodes pick up noise separately); the remaining limb
leads are derived afterwards, so Einthoven's and Goldberger's relations survive the noise.
"""

from __future__ import annotations

import numpy as np

# Muscle (EMG) noise band. Common practice, no source: surface EMG power lies mostly in
# 20-250 Hz, overlapping the QRS spectrum, which is what makes it hard to filter.
EMG_BAND_HZ = (20.0, 250.0)


def baseline_wander(
    n: int, fs_hz: float, n_leads: int, peak_mv: float, rng: np.random.Generator
) -> np.ndarray:
    """Respiration-like wander: 0.15-0.35 Hz plus a slower 0.03-0.08 Hz drift, |w| <= peak_mv."""
    t = np.arange(n) / fs_hz
    f1 = rng.uniform(0.15, 0.35, n_leads)
    f2 = rng.uniform(0.03, 0.08, n_leads)
    ph1 = rng.uniform(0, 2 * np.pi, n_leads)
    ph2 = rng.uniform(0, 2 * np.pi, n_leads)
    gain = rng.uniform(0.6, 1.0, n_leads)
    w = 0.6 * np.sin(2 * np.pi * t[:, None] * f1 + ph1) + 0.4 * np.sin(
        2 * np.pi * t[:, None] * f2 + ph2
    )
    return peak_mv * gain * w


def mains(
    n: int, fs_hz: float, n_leads: int, freq_hz: float, peak_mv: float, rng: np.random.Generator
) -> np.ndarray:
    """Mains interference: a sinusoid of ``peak_mv`` at ``freq_hz``, random phase per lead."""
    t = np.arange(n) / fs_hz
    ph = rng.uniform(0, 2 * np.pi, n_leads)
    return peak_mv * np.sin(2 * np.pi * freq_hz * t[:, None] + ph)


def emg(clean: np.ndarray, fs_hz: float, snr_db: float, rng: np.random.Generator) -> np.ndarray:
    """Band-limited Gaussian noise scaled so each lead's SNR is exactly ``snr_db``.

    SNR = 10 log10(mean(clean**2) / mean(noise**2)) per lead (power ratio over the whole record).
    """
    from scipy import signal as sps  # only noisy records need it; scipy.signal loads slowly

    n, n_leads = clean.shape
    white = rng.standard_normal((n, n_leads))
    hi = min(EMG_BAND_HZ[1], 0.45 * fs_hz)
    sos = sps.butter(4, [EMG_BAND_HZ[0], hi], btype="bandpass", fs=fs_hz, output="sos")
    band = sps.sosfiltfilt(sos, white, axis=0)
    p_sig = np.mean(clean**2, axis=0)
    p_band = np.mean(band**2, axis=0)
    scale = np.sqrt(p_sig / (p_band * 10.0 ** (snr_db / 10.0)))
    return band * scale


def fibrillatory_waves(
    n: int, fs_hz: float, peak_mv: float, rng: np.random.Generator
) -> np.ndarray:
    """Atrial f-waves as a heart-vector component (n, 3): 5-7 Hz with slowly varying rate and size.

    Direction rightward-inferior-anterior so that V1 and the inferior leads show them best
    (common practice, no source).
    """
    t = np.arange(n) / fs_hz
    f0 = rng.uniform(5.0, 7.0)
    drift = 0.6 * np.sin(2 * np.pi * rng.uniform(0.1, 0.3) * t + rng.uniform(0, 2 * np.pi))
    phase = 2 * np.pi * np.cumsum(f0 + drift) / fs_hz
    env = 0.75 + 0.25 * np.sin(2 * np.pi * rng.uniform(0.2, 0.5) * t + rng.uniform(0, 2 * np.pi))
    direction = np.array([-0.3, 0.6, -0.75])
    direction /= np.linalg.norm(direction)
    return (peak_mv * env * np.sin(phase))[:, None] * direction[None, :]
