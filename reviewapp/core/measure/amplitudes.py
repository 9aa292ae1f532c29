"""Per-lead amplitudes, Q duration and ST levels on the representative beat; voltage criteria.

Sign convention: every amplitude is signed mV relative to the lead's isoelectric level, so
``q_mv`` and ``s_mv`` are <= 0 and ``r_mv``, ``r_prime_mv`` >= 0. A wave that is looked for but
not present measures 0.0 (e.g. no Q wave: ``q_mv == 0.0``, ``q_ms == 0.0``); None means the
quantity could not be measured at all (no marks, flat lead, outside the window).

Isoelectric level: mean of a short segment just before QRS onset (the PR segment), common
practice, no source. ``ISO_WINDOW_MS`` long, ending at the global QRS onset, and starting no
earlier than the P end when the PR segment is long enough.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from reviewapp.core.fiducials import WaveMarks
from reviewapp.core.measure.types import LeadMeasurements

ISO_WINDOW_MS = 20.0  # common practice, no source
# Shorter PR segments: use the full window anyway (common practice, no source).
MIN_PR_SEGMENT_MS = 6.0
# Smallest deflection counted as a QRS wave (20 uV), from memory (the minimum-wave rule of the
# CSE measurement conventions); smaller wiggles belong to no wave.
MIN_WAVE_MV = 0.02
ST_OFFSETS_MS = (60.0, 80.0)


def isoelectric_window(qrs_on: int, p_off: int | None, fs_hz: float) -> tuple[int, int]:
    """Sample range [start, stop) of the isoelectric segment before ``qrs_on``."""
    n = max(1, round(ISO_WINDOW_MS * fs_hz / 1000.0))
    start = qrs_on - n
    min_seg = max(2, round(MIN_PR_SEGMENT_MS * fs_hz / 1000.0))
    if p_off is not None and qrs_on - p_off >= min_seg:
        start = max(start, p_off)
    return max(0, start), qrs_on


def isoelectric_levels(
    wave: np.ndarray, qrs_on: int, p_off: int | None, fs_hz: float
) -> np.ndarray | None:
    """``isoelectric_level`` of every column of ``wave`` (n_samples, n_leads) at once."""
    start, stop = isoelectric_window(qrs_on, p_off, fs_hz)
    if start >= stop or stop > wave.shape[0]:
        return None
    return wave[start:stop].astype(np.float64).mean(axis=0)


def isoelectric_level(x: np.ndarray, qrs_on: int, p_off: int | None, fs_hz: float) -> float | None:
    """Mean of the ``ISO_WINDOW_MS`` before ``qrs_on`` (not reaching back past P end).

    >>> x = np.r_[np.full(50, 0.1), np.full(10, 0.3), np.ones(10)]
    >>> round(isoelectric_level(x, 60, None, 500.0), 6)  # 20 ms = 10 samples of 0.3 mV
    0.3
    """
    start, stop = isoelectric_window(qrs_on, p_off, fs_hz)
    if start >= stop or stop > x.shape[0]:
        return None
    return float(np.mean(x[start:stop]))


@dataclass(frozen=True)
class Lobe:
    sign: int  # +1 or -1
    peak_mv: float  # signed, relative to the isoelectric level
    first: int  # sample index (within the slice) of the lobe's first supra-threshold sample
    last: int


def qrs_lobes(y: np.ndarray) -> list[Lobe]:
    """Alternating-sign deflections of a baseline-corrected QRS ``y`` (|y| >= MIN_WAVE_MV).

    Sub-threshold samples belong to no lobe; consecutive supra-threshold runs of the same sign
    (even across a sub-threshold gap) form one lobe.

    >>> [(lb.sign, lb.peak_mv) for lb in qrs_lobes(np.array([0, -0.1, -0.2, 0, 1.0, 0.5, -0.3, 0]))]
    [(-1, -0.2), (1, 1.0), (-1, -0.3)]
    """
    s = np.where(y >= MIN_WAVE_MV, 1, np.where(y <= -MIN_WAVE_MV, -1, 0))
    idx = np.flatnonzero(s)
    if idx.size == 0:
        return []
    sv = s[idx]
    cut = np.flatnonzero(sv[1:] != sv[:-1]) + 1
    starts = np.concatenate(([0], cut))
    lasts = np.concatenate((cut - 1, [idx.size - 1]))
    signs = sv[starts]
    peaks = np.maximum.reduceat(y[idx] * sv, starts) * signs
    return [
        Lobe(int(sg), float(pk), int(f), int(la))
        for sg, pk, f, la in zip(
            signs.tolist(), peaks.tolist(), idx[starts].tolist(), idx[lasts].tolist(), strict=True
        )
    ]


@dataclass(frozen=True)
class QRSWaves:
    q_mv: float
    r_mv: float
    s_mv: float
    r_prime_mv: float
    q_samples: int  # Q duration in samples (0 when no Q)


def qrs_waves(y: np.ndarray) -> QRSWaves:
    """Q, R, S, R' of a baseline-corrected QRS slice ``y`` (from QRS onset to QRS end).

    R is the first positive lobe; Q a negative lobe before it; S the first negative lobe after
    it; R' the next positive lobe after S. A complex without a positive lobe is a QS complex,
    reported as Q (its depth and its duration). A final lobe whose extreme is the QRS end itself
    (the QRS running into an elevated or depressed J point) is ST deviation, not S or R'.
    Q duration runs from QRS onset to the first
    sample after the Q peak where the signal is back at or above the isoelectric level.

    >>> w = qrs_waves(np.array([0, -0.1, -0.2, 0, 1.0, 0.5, -0.3, 0]))
    >>> w.q_mv, w.r_mv, w.s_mv, w.r_prime_mv, w.q_samples
    (-0.2, 1.0, -0.3, 0.0, 3)
    """
    lobes = qrs_lobes(y)
    if len(lobes) > 1 and _is_junction_offset(y, lobes[-1]):
        lobes = lobes[:-1]
    q = r = s = rp = 0.0
    q_end = 0
    pos = [i for i, lb in enumerate(lobes) if lb.sign > 0]
    if not lobes:
        return QRSWaves(0.0, 0.0, 0.0, 0.0, 0)
    if not pos:  # QS complex
        q_lobe = min(lobes, key=lambda lb: lb.peak_mv)
        q = q_lobe.peak_mv
        q_end = _back_to_baseline(y, q_lobe)
        return QRSWaves(q, 0.0, 0.0, 0.0, q_end)
    ir = pos[0]
    r = lobes[ir].peak_mv
    if ir > 0:
        q_lobe = min(lobes[:ir], key=lambda lb: lb.peak_mv)
        q = q_lobe.peak_mv
        q_end = _back_to_baseline(y, q_lobe)
    if ir + 1 < len(lobes):
        s = lobes[ir + 1].peak_mv
        if ir + 2 < len(lobes):
            rp = max(lb.peak_mv for lb in lobes[ir + 2 :] if lb.sign > 0)
    return QRSWaves(q, r, s, rp, q_end)


# Q, R, S and R' of the QRS slices measured lately, by the slice's bytes: dragging a P or T
# mark recomputes every lead while no QRS slice changes, and the lobe search is the largest
# part of a lead's measurement. The key is the content itself, so a hit is always right.
_WAVES_SEEN: dict[bytes, QRSWaves] = {}
_WAVES_SEEN_MAX = 512


def qrs_waves_of_slice(y: np.ndarray) -> QRSWaves:
    """``qrs_waves`` of a float64 slice, remembered for the slices measured lately."""
    key = np.ascontiguousarray(y, dtype=np.float64).tobytes()
    hit = _WAVES_SEEN.get(key)
    if hit is None:
        hit = qrs_waves(y)
        if len(_WAVES_SEEN) >= _WAVES_SEEN_MAX:
            _WAVES_SEEN.clear()
        _WAVES_SEEN[key] = hit
    return hit


def _is_junction_offset(y: np.ndarray, lobe: Lobe) -> bool:
    """A last lobe that only runs into an elevated/depressed J point is ST, not S or R'.

    Its extreme is the final sample (QRS end): no turning point inside the QRS.
    """
    return lobe.last == y.shape[0] - 1 and abs(float(y[-1])) >= abs(lobe.peak_mv)


def _back_to_baseline(y: np.ndarray, lobe: Lobe) -> int:
    after = np.flatnonzero(y[lobe.last :] >= 0.0)
    return int(lobe.last + after[0]) if after.size else int(y.shape[0])


def _signed_extreme(y: np.ndarray) -> float | None:
    if y.size == 0:
        return None
    k = int(np.argmax(np.abs(y)))
    return float(y[k])


def _pick(lead: WaveMarks | None, glob: WaveMarks, name: str) -> int | None:
    v = lead.get(name) if lead is not None else None
    return glob.get(name) if v is None else v


def lead_measurements(
    name: str,
    x: np.ndarray,
    glob: WaveMarks,
    own: WaveMarks | None,
    fs_hz: float,
    base_mv: float | None = None,
    extra: Mapping[str, Any] | None = None,
) -> tuple[LeadMeasurements, list[tuple[str, str]]]:
    """Measure one lead of the representative beat.

    Args:
        name: lead name.
        x: that lead's representative waveform, mV (window samples).
        glob: global marks (window indices).
        own: the lead's own marks (window indices) or None; each absent own mark falls back to
            the global one.
        fs_hz: sampling rate, Hz.
        base_mv: the isoelectric level if already known (else computed here).
        extra: further fields of the result (the wave shapes), set when a level is found.

    Returns:
        The measurements and a list of (quantity, reason) for everything left None.
    """
    missing: list[tuple[str, str]] = []
    x = np.asarray(x, dtype=np.float64)
    n = x.shape[0]
    qrs_on_g = glob.qrs_on if glob.qrs_on is not None else _pick(own, glob, "qrs_on")
    if qrs_on_g is None or not 0 < qrs_on_g <= n:
        missing.append((f"{name}", "no QRS onset marked: no isoelectric level"))
        return LeadMeasurements(lead=name), missing
    base = base_mv
    if base is None:
        base = isoelectric_level(x, qrs_on_g, glob.p_off, fs_hz)
    if base is None:
        missing.append((f"{name}", "QRS onset at the window start: no isoelectric level"))
        return LeadMeasurements(lead=name), missing
    y = x - base
    values: dict[str, Any] = {}

    p_on, p_off = _pick(own, glob, "p_on"), _pick(own, glob, "p_off")
    if p_on is None or p_off is None or p_off < p_on:
        values["p_mv"] = None
        missing.append((f"{name}.p_mv", "no P wave marked"))
    else:
        values["p_mv"] = _signed_extreme(y[max(0, p_on) : min(n, p_off + 1)])
        if values["p_mv"] is None:
            missing.append((f"{name}.p_mv", "P wave marks outside the beat window"))

    qrs_on, qrs_off = _pick(own, glob, "qrs_on"), _pick(own, glob, "qrs_off")
    if qrs_on is None or qrs_off is None or qrs_off <= qrs_on or qrs_off >= n or qrs_on < 0:
        for q in ("q_mv", "r_mv", "s_mv", "r_prime_mv", "q_ms"):
            values[q] = None
        missing.append((f"{name}.qrs", "QRS onset or end not marked"))
    else:
        w = qrs_waves_of_slice(y[qrs_on : qrs_off + 1])
        values.update(
            q_mv=w.q_mv,
            r_mv=w.r_mv,
            s_mv=w.s_mv,
            r_prime_mv=w.r_prime_mv,
            q_ms=w.q_samples * 1000.0 / fs_hz,
        )

    t_off = _pick(own, glob, "t_off")
    if qrs_off is None or t_off is None or t_off <= qrs_off:
        values["t_mv"] = None
        missing.append((f"{name}.t_mv", "no T end marked"))
    else:
        values["t_mv"] = _signed_extreme(y[max(0, qrs_off + 1) : min(n, t_off + 1)])
        if values["t_mv"] is None:
            missing.append((f"{name}.t_mv", "T wave marks outside the beat window"))

    if qrs_off is None or not 0 <= qrs_off < n:
        for q in ("st_j_mv", "st_j60_mv", "st_j80_mv"):
            values[q] = None
        missing.append((f"{name}.st", "no QRS end (J point) marked"))
    else:
        values["st_j_mv"] = float(y[qrs_off])
        for off_ms, key in zip(ST_OFFSETS_MS, ("st_j60_mv", "st_j80_mv"), strict=True):
            k = qrs_off + round(off_ms * fs_hz / 1000.0)
            if k < n:
                values[key] = float(y[k])
            else:
                values[key] = None
                missing.append((f"{name}.{key}", f"J+{off_ms:.0f} ms is beyond the beat window"))
    return LeadMeasurements(lead=name, **values, **(extra or {})), missing


def s_depth_mv(m: LeadMeasurements | None) -> float | None:
    """Depth (positive mV) of the S wave, or of the QS deflection when there is no R wave."""
    if m is None or m.s_mv is None or m.r_mv is None:
        return None
    if m.r_mv == 0.0 and m.q_mv is not None:
        return -min(m.q_mv, m.s_mv)
    return -m.s_mv


def sokolow_lyon_mv(
    v1: LeadMeasurements | None, v5: LeadMeasurements | None, v6: LeadMeasurements | None
) -> float | None:
    """Sokolow-Lyon voltage: S in V1 + the larger R of V5 and V6, in mV.

    Sokolow M, Lyon TP, "The ventricular complex in left ventricular hypertrophy as obtained by
    unipolar precordial and limb leads", Am Heart J 37:161-186, 1949.

    >>> v1 = LeadMeasurements("V1", r_mv=0.2, s_mv=-1.5, q_mv=0.0)
    >>> v5 = LeadMeasurements("V5", r_mv=2.1, s_mv=0.0, q_mv=0.0)
    >>> v6 = LeadMeasurements("V6", r_mv=1.8, s_mv=0.0, q_mv=0.0)
    >>> round(sokolow_lyon_mv(v1, v5, v6), 3)
    3.6
    """
    s1 = s_depth_mv(v1)
    rs = [m.r_mv for m in (v5, v6) if m is not None and m.r_mv is not None]
    if s1 is None or not rs:
        return None
    return s1 + max(rs)


def cornell_mv(avl: LeadMeasurements | None, v3: LeadMeasurements | None) -> float | None:
    """Cornell voltage: R in aVL + S in V3, in mV.

    Casale PN, Devereux RB, Kligfield P, et al., "Electrocardiographic detection of left
    ventricular hypertrophy: development and prospective validation of improved criteria",
    J Am Coll Cardiol 6:572-580, 1985.

    >>> avl = LeadMeasurements("aVL", r_mv=1.1)
    >>> v3 = LeadMeasurements("V3", r_mv=0.5, s_mv=-1.4, q_mv=0.0)
    >>> round(cornell_mv(avl, v3), 3)
    2.5
    """
    s3 = s_depth_mv(v3)
    if avl is None or avl.r_mv is None or s3 is None:
        return None
    return avl.r_mv + s3


def peguero_mv(leads: Iterable[LeadMeasurements]) -> float | None:
    """Peguero-Lo Presti voltage: the deepest S wave in any single lead (SD) plus the S wave
    in V4, in mV. When V4 holds the deepest S, SD is V4's own (it counts twice).

    Peguero JG, Lo Presti S, Perez J, et al., "Electrocardiographic criteria for the diagnosis
    of left ventricular hypertrophy", J Am Coll Cardiol 69:1694-1703, 2017 (from memory).

    >>> leads = (LeadMeasurements("V2", r_mv=0.3, s_mv=-2.1, q_mv=0.0),
    ...          LeadMeasurements("V4", r_mv=1.2, s_mv=-0.9, q_mv=0.0))
    >>> round(peguero_mv(leads), 3)
    3.0
    """
    depths = {m.lead: s_depth_mv(m) for m in leads}
    s4 = depths.get("V4")
    known = [d for d in depths.values() if d is not None]
    if s4 is None or not known:
        return None
    return max(known) + s4
