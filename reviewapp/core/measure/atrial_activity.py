"""Atrial activity when there is no P wave, and atrial pacing stimuli.

Atrial rate and organisation (``atrial_activity``)
--------------------------------------------------
Where the representative beat has no P wave, the atrial activity is what remains of the
signal once each beat's QRST is taken away: the representative beat (the median of the
aligned dominant beats), cut from 100 ms before R to the end of its T wave (at most 0.6 RR
and 450 ms after R) with 20 ms tapers, is subtracted at every detected R, with its level
matched to the beat. This is average-beat subtraction, the usual way to see fibrillatory and
flutter waves on a surface ECG (Slocum J et al., Circulation 72(5):1028-1036, 1985; Rieta JJ
et al., IEEE TBME 51(7):1176-1186, 2004; from memory). The remainder of the inferior leads
and V1 (where flutter and fibrillation waves are largest), band-passed 3-20 Hz, gives a
Welch power spectrum; its peak between 3 and 12 Hz is the dominant atrial rate, and the share
of the 3-20 Hz power within 0.5 Hz of that peak and of its second harmonic is the
organisation: a flutter's F waves repeat the same shape at one rate (power at the rate and its
harmonics), fibrillatory waves vary from wave to wave (power spread).

Measured on LUDB (tests/interpret/test_ludb_statements.py): typical flutter 0.50 and 0.82 at
270-289/min, atrial fibrillation 0.20-0.38. The flutter criterion (``interpret``) takes 0.43,
midway between the odd half's highest fibrillation (0.36) and its flutter (0.50).

Atrial pacing stimuli (``count_atrial_stimuli``)
------------------------------------------------
The ventricular stimulus test of ``dsp.pacing`` (a spike far steeper and narrower than the
QRS; its docstring gives the method and the LUDB figures) is run on windows from 340 to 60 ms
before each beat's QRS onset, where an atrial stimulus precedes the paced P wave by the
programmed AV delay. A beat with such a spike counts once.
"""

from __future__ import annotations

import numpy as np

from reviewapp.core.fiducials import Beat, MarkedECG
from reviewapp.core.measure.types import AtrialActivity

ATRIAL_LEADS = ("II", "III", "aVF", "V1")
# Flutter waves: atrial rate 240-340/min (Mason 2007, from memory) and organisation >= 0.43,
# set midway between the highest fibrillation (0.36) and the flutter (0.50) of LUDB's
# odd-numbered records. The flutter statement (``interpret.rhythm``) and the ST rule without
# a P wave (``measure.compute``: flutter waves are locked to the QRS they conduct to and run
# through the ST segment) both take them (``flutter_waves``).
FLUTTER_RATE_PER_MIN = (240.0, 340.0)
ORGANISED_MIN = 0.43
PRE_R_S = 0.10
POST_R_MAX_S = 0.45
POST_R_RR = 0.6
TAPER_S = 0.02
BAND_HZ = (3.0, 20.0)
PEAK_BAND_HZ = (3.0, 12.0)
HALF_WIDTH_HZ = 0.5
WELCH_S = 4.0
# Windows searched for an atrial stimulus, ms before QRS onset: (start offset) each 70 ms
# long (the stimulus test looks 30 ms before to 40 ms after the point it is given).
ATRIAL_STIMULUS_OFFSETS_MS = (100.0, 170.0, 240.0, 310.0)

_LAST: tuple[tuple[Beat, ...], int, AtrialActivity] | None = None


def flutter_waves(at: AtrialActivity | None) -> bool:
    """The atrial activity is flutter waves: its rate (rounded to a whole number per minute)
    within ``FLUTTER_RATE_PER_MIN`` and its organisation (to two decimals, as the reader
    sees it) at least ``ORGANISED_MIN``.

    >>> flutter_waves(AtrialActivity(rate_per_min=290.0, organisation=0.5))
    True
    >>> flutter_waves(AtrialActivity(rate_per_min=386.0, organisation=0.53))
    False
    """
    if at is None or at.rate_per_min is None or at.organisation is None:
        return False
    lo, hi = FLUTTER_RATE_PER_MIN
    return lo <= round(at.rate_per_min) <= hi and round(at.organisation, 2) >= ORGANISED_MIN


def atrial_activity(marked: MarkedECG) -> AtrialActivity | None:
    """Atrial rate, organisation and amplitude of a record without P waves, and its atrial
    pacing stimuli; None without a representative beat or without any of ``ATRIAL_LEADS``.

    Depends only on the detected beats and the signal (not on marks a reader drags), so the
    last result is kept for the same beats.
    """
    global _LAST
    rep = marked.representative
    if rep is None or not marked.beats:
        return None
    last = _LAST
    key = id(marked.conditioned_mv)
    if last is not None and last[0] is marked.beats and last[1] == key:
        return last[2]
    fs = float(marked.fs_hz)
    cols = [
        i
        for i, n in enumerate(marked.lead_names)
        if n in ATRIAL_LEADS and i < len(marked.usable) and marked.usable[i]
    ]
    if not cols:
        return None
    rate, org, rms = _spectrum(marked, cols, fs)
    stimuli = count_atrial_stimuli(marked)
    out = AtrialActivity(rate, org, rms, len(marked.beats), stimuli)
    _LAST = (marked.beats, key, out)
    return out


def _spectrum(
    marked: MarkedECG, cols: list[int], fs: float
) -> tuple[float | None, float | None, float | None]:
    from scipy import signal  # loaded when first needed (the window starts without it)

    rep = marked.representative
    assert rep is not None
    x = np.asarray(marked.conditioned_mv[:, cols], dtype=np.float64)
    n = x.shape[0]
    rr = rep.rr_samples or round(fs)
    pre = round(PRE_R_S * fs)
    post = round(min(POST_R_MAX_S * fs, POST_R_RR * rr))
    w = np.asarray(rep.waveform_mv[:, cols], dtype=np.float64)
    lo_t, hi_t = rep.r_index - pre, rep.r_index + post
    if lo_t < 0 or hi_t >= w.shape[0] or n < round(2 * fs):
        return None, None, None
    tmpl = w[lo_t : hi_t + 1]
    k = max(1, round(TAPER_S * fs))
    taper = np.ones(tmpl.shape[0])
    taper[:k] = np.linspace(0.0, 1.0, k)
    taper[-k:] = np.linspace(1.0, 0.0, k)
    res = x.copy()
    for b in marked.beats:
        a0, a1 = max(b.r - pre, 0), min(b.r + post + 1, n)
        if a1 - a0 < 2:
            continue
        seg = tmpl[a0 - (b.r - pre) : a1 - (b.r - pre)]
        level = (x[a0:a1] - seg).mean(axis=0)
        res[a0:a1] -= (seg + level) * taper[a0 - (b.r - pre) : a1 - (b.r - pre), None]
    sos = signal.butter(4, BAND_HZ, "bandpass", fs=fs, output="sos")
    band = signal.sosfiltfilt(sos, res, axis=0)
    nper = min(n, round(WELCH_S * fs))
    f, p = signal.welch(band, fs=fs, nperseg=nper, nfft=max(nper, round(16 * fs)), axis=0)
    p = p.sum(axis=1)
    sel = (f >= PEAK_BAND_HZ[0]) & (f <= PEAK_BAND_HZ[1])
    total = float(p[(f >= BAND_HZ[0]) & (f <= BAND_HZ[1])].sum())
    if not sel.any() or total <= 0.0:
        return None, None, None
    peak = float(f[sel][int(np.argmax(p[sel]))])

    def near(c: float) -> float:
        return float(p[(f >= c - HALF_WIDTH_HZ) & (f <= c + HALF_WIDTH_HZ)].sum())

    org = (near(peak) + near(2 * peak)) / total
    return peak * 60.0, min(org, 1.0), float(np.sqrt(np.mean(band**2)))


def count_atrial_stimuli(marked: MarkedECG) -> int:
    """Beats with a pacing stimulus 60-340 ms before their QRS onset (module docstring)."""
    from reviewapp.core.dsp.pacing import ventricular_stimuli

    fs = float(marked.fs_hz)
    on = np.array([-1 if m.qrs_on is None else m.qrs_on for m in marked.beat_marks], dtype=np.int64)
    off = np.array(
        [-1 if m.qrs_off is None else m.qrs_off for m in marked.beat_marks], dtype=np.int64
    )
    if on.size == 0:
        return 0
    usable = np.asarray(marked.usable, dtype=bool)
    found = np.zeros(on.size, dtype=bool)
    for ms in ATRIAL_STIMULUS_OFFSETS_MS:
        start = on - round(ms * fs / 1000.0)
        ok = (on >= 0) & (start > 0)
        spikes = ventricular_stimuli(
            marked.conditioned_mv, fs, np.where(ok, start, -1), np.where(ok, off, -1), usable
        )
        found |= spikes >= 0
    return int(found.sum())
