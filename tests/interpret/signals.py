"""Invented 12-lead test signals with a known shape, for the statement tests that need the
whole engine (analysis, delineation, measurement, statements).

A heart vector (x leftward, y downward, z forward) is a sum of lobes, each a smooth bump along
one direction; every lead is its projection on the lead's direction: the limb leads on the
hexaxial frame (I at 0 deg, II +60, III +120, aVR -150, aVL -30, aVF +90), the chest leads on
directions round the chest from right-anterior (V1) to left-lateral (V6). Invented data for
our own arithmetic, never a clinical reference. The pre-excited beat has a delta wave: a
linear ramp of the ventricular vector for ``delta_ms`` before the main QRS, starting
``pr_ms`` after P onset.
"""

from __future__ import annotations

import math

import numpy as np

from reviewapp.core.record import Record, SubjectFacts, record_from_array

FS = 500.0
LEAD_NAMES = ("I", "II", "III", "aVR", "aVL", "aVF", "V1", "V2", "V3", "V4", "V5", "V6")
_FRONTAL = {"I": 0.0, "II": 60.0, "III": 120.0, "aVR": -150.0, "aVL": -30.0, "aVF": 90.0}
_CHEST = {  # (x, z): rightward-anterior to left-lateral, horizontal plane
    "V1": (-0.55, 0.83),
    "V2": (-0.15, 0.99),
    "V3": (0.30, 0.95),
    "V4": (0.62, 0.78),
    "V5": (0.85, 0.52),
    "V6": (0.97, 0.20),
}


def _lead_dirs() -> np.ndarray:
    out = []
    for n in LEAD_NAMES:
        if n in _FRONTAL:
            a = math.radians(_FRONTAL[n])
            out.append((math.cos(a), math.sin(a), 0.0))
        else:
            x, z = _CHEST[n]
            out.append((x, 0.0, z))
    return np.array(out)


def _bump(t: np.ndarray, centre: float, width: float) -> np.ndarray:
    """A raised-cosine bump of total width ``width`` (s), exactly zero outside it."""
    u = (t - centre) / (width / 2.0)
    return np.where(np.abs(u) < 1.0, 0.5 * (1.0 + np.cos(np.pi * u)), 0.0)


def beat_vector(
    t: np.ndarray, *, pr_ms: float = 160.0, delta_ms: float = 0.0, delta_mv: float = 0.45
) -> np.ndarray:
    """Heart vector (n, 3) of one beat, ``t`` in s from P onset."""
    v = np.zeros((t.size, 3))
    down_left = np.array([0.5, 0.85, -0.15])
    v += 0.15 * _bump(t, 0.05, 0.10)[:, None] * down_left  # P: 100 ms
    q0 = pr_ms / 1000.0
    if delta_ms > 0:  # the delta wave: a slow ramp along the main direction
        d = delta_ms / 1000.0
        ramp = np.clip((t - q0) / d, 0.0, 1.0) * delta_mv
        ramp = np.where(t < q0 + d + 0.04, ramp, 0.0)
        fade = np.clip(1.0 - (t - (q0 + d)) / 0.04, 0.0, 1.0)
        v += (ramp * np.where(t > q0 + d, fade, 1.0))[:, None] * np.array([0.6, 0.75, 0.3])
        q0 += d
    v += 0.25 * _bump(t, q0 + 0.010, 0.020)[:, None] * np.array([-0.4, 0.1, 0.9])  # septal
    v += 1.6 * _bump(t, q0 + 0.040, 0.050)[:, None] * np.array([0.75, 0.55, -0.35])  # main
    v += 0.45 * _bump(t, q0 + 0.075, 0.030)[:, None] * np.array([-0.2, -0.6, -0.75])  # late
    v += 0.35 * _bump(t, q0 + 0.28, 0.20)[:, None] * np.array([0.6, 0.6, 0.5])  # T
    return v


def twelve_lead(
    *,
    hr_bpm: float = 70.0,
    pr_ms: float = 160.0,
    delta_ms: float = 0.0,
    duration_s: float = 10.0,
    subject: SubjectFacts | None = None,
    name: str = "invented",
) -> Record:
    """A 12-lead record of identical beats (module docstring)."""
    rr = 60.0 / hr_bpm
    n = round(duration_s * FS)
    t = np.arange(n) / FS
    v = np.zeros((n, 3))
    start = 0.3
    while start + rr < duration_s + rr:
        v += beat_vector(t - start, pr_ms=pr_ms, delta_ms=delta_ms)
        start += rr
    x = v @ _lead_dirs().T
    return record_from_array(
        x.astype(np.float32), FS, list(LEAD_NAMES), name=name, subject=subject or SubjectFacts()
    )
