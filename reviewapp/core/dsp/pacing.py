"""Paced-beat labelling: a ventricular pacing stimulus just before a beat's QRS.

Method. A pacemaker stimulus is recorded as an artefact far steeper and narrower than any
physiological ECG slope (a step or pulse lasting a few ms; unipolar stimuli are large,
bipolar ones small). It is sought per beat, on the conditioned signal (``filters.condition``:
0.5-150 Hz, zero phase), near the beat's own QRS onset, with two tests:

1. Steep: the spatial velocity sqrt(sum_leads (dx/dt)^2) of the conditioned usable leads
   (sample-to-sample slope) peaks within 30 ms before to 40 ms after QRS onset above 2.5 x the
   QRS's steepest slope on the 40 Hz low-passed copy, and stays above half that peak at most
   8 ms (``delineate_qrs.pacing_spikes``, the test the delineator uses to move a paced QRS
   onset to its stimulus; it is imported, not repeated, here).
2. Narrow: at the spike, the sample-to-sample slope is at least ``SHARPNESS_MIN`` x the
   40 Hz low-passed slope within +-4 ms. A physiological wave has little content above
   40 Hz, so its slope survives the low-pass (LUDB non-paced beats, steepest point near QRS
   onset: median 1.25, 99th centile 2.3; larger values only where the slopes are tiny, and
   at most 2.5 among the 94 beats steep enough to come near test 1); an ideal sampled step
   after the 150 Hz conditioning gives 4.5 at 500 Hz and 1000 Hz, 3.6 at 360 Hz and 2.7 at
   250 Hz (computed with ``condition`` and the 40 Hz low-pass on a unit step); LUDB paced
   beats 3.3 (bipolar) to 20. The threshold 2.5 lies near the geometric middle of 1.25 and
   4.5. Test 1 alone already separates LUDB (non-paced steepness at most 2.2); test 2 guards
   against steep but smooth physiological slopes on other records.

The window is tied to the QRS onset (after the delineator has placed it), not to R: the
detector's R may sit on the spike itself or deep inside a wide paced QRS, and an atrial
stimulus (before the P wave, a whole AV delay before the QRS) must not label the beat.
Both tests are the usual way the stimulus artefact is found (common practice, no single
source); the numbers were measured on LUDB (Kalyakulina AI et al., IEEE Access
8:186181-186190, 2020).

What it can and cannot see:
- 500 Hz and above, with the recorder's own bandwidth at least ~150 Hz (LUDB): unipolar and
  bipolar ventricular stimuli. LUDB (``tests/dsp/test_pacing.py``): the 8 records whose
  "Cardiac pacing" field is filled have 73 of 88 beats PACED (the others are intrinsic beats
  of demand pacing or edge beats without a QRS onset), and no beat of the 134 others.
- 360 Hz: a step still shows (ideal sharpness 3.6); MIT-BIH 100 (no pacemaker): no beat.
- 250 Hz, or any recording whose chain band-limits below ~100 Hz (QTDB sel102/sel104, i.e.
  MIT-BIH 102/104 from analog Holter tape): the stimulus is spread over 10-20 ms and is no
  sharper than a QRS (sel102: median steepness 1.4, sharpness 1.9, the same as non-paced
  QTDB QRS onsets); nearly all paced beats stay unlabelled there. Not forced, by design:
  a looser test would label sharp intrinsic QRS complexes.
- Noise: with white noise of 0.05 mV RMS added to every LUDB lead, still no false label
  (66 of 87 paced beats found); at 0.1 mV, 2 false labels in 1,500 beats and the paced beats
  are lost in the noise slopes.
- Beats without a QRS onset and end (cut by the record's edges) are not labelled.
- Fusion beats (stimulus and intrinsic activation together) show the stimulus and are
  labelled PACED.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
from scipy import signal

from reviewapp.core.dsp.delineate_core import FAST_HZ, lowpass_sos
from reviewapp.core.dsp.delineate_ops import range_mask
from reviewapp.core.dsp.delineate_params import DelineationParams
from reviewapp.core.dsp.delineate_qrs import pacing_spikes
from reviewapp.core.fiducials import Beat, BeatKind, WaveMarks

# Spike slope / 40 Hz low-passed slope at the spike (see the module docstring).
SHARPNESS_MIN = 2.5
SHARPNESS_HALF_MS = 4.0  # +-4 ms: where the low-pass moves a step's steepest slope
# Window margin before the spike search and after QRS end, so the 40 Hz low-pass of the
# window has settled where it is read (its impulse response lasts about +-15 ms).
MARGIN_MS = 40.0
CHUNK_BEATS = 2048


def ventricular_stimuli(
    conditioned_mv: np.ndarray,
    fs_hz: float,
    qrs_on: np.ndarray,
    qrs_off: np.ndarray,
    usable: np.ndarray,
) -> np.ndarray:
    """Record index of the ventricular pacing stimulus of each beat, -1 where none.

    Args:
        conditioned_mv: (n_samples, n_leads) conditioned signal, mV (``filters.condition``).
        fs_hz: sampling rate, Hz.
        qrs_on, qrs_off: (n_beats,) each beat's global QRS onset and end, record indices,
            -1 where absent (such beats get -1).
        usable: (n_leads,) bool, leads fit for global boundaries.

    Vectorised over beats: (beats, samples, leads) blocks of up to ``CHUNK_BEATS`` beats; see
    the module docstring for the tests and what they can resolve.

    >>> fs = 500.0
    >>> x = np.zeros((2000, 1), np.float32)
    >>> x[980:1040, 0] = np.hanning(60)  # a 120 ms wide complex, onset at 980
    >>> ventricular_stimuli(x, fs, np.array([980]), np.array([1040]), np.array([True]))
    array([-1])
    >>> x[975, 0] = 1.5  # a 2 ms stimulus 10 ms before it
    >>> ventricular_stimuli(x, fs, np.array([980]), np.array([1040]), np.array([True]))
    array([975])
    """
    x = np.asarray(conditioned_mv, dtype=np.float32)
    on = np.asarray(qrs_on, dtype=np.int64)
    off = np.asarray(qrs_off, dtype=np.int64)
    usable = np.asarray(usable, dtype=bool)
    out = np.full(on.size, -1, dtype=np.int64)
    n = x.shape[0]
    ok = (on >= 0) & (off > on) & (off < n)
    if not ok.any() or not usable.any() or n < 16:
        return out
    p = DelineationParams.for_fs(fs_hz)
    xu = x[:, np.flatnonzero(usable)]
    b = np.flatnonzero(ok)
    for c in range(0, b.size, CHUNK_BEATS):  # bounded memory on long records
        bc = b[c : c + CHUNK_BEATS]
        out[bc] = _block_stimuli(xu, fs_hz, on[bc], off[bc], p)
    return out


def _block_stimuli(
    xu: np.ndarray, fs_hz: float, on: np.ndarray, off: np.ndarray, p: DelineationParams
) -> np.ndarray:
    """``ventricular_stimuli`` for beats that all have a QRS onset and end (usable leads)."""
    n = xu.shape[0]
    margin = round(MARGIN_MS * fs_hz / 1000.0)
    start = on - p.spike_before - margin
    w = int((off - start).max()) + margin + 1
    idx = np.clip(start[:, None] + np.arange(w)[None, :], 0, n - 1)
    raw = xu[idx]  # (B, W, U); edge values repeated past the record's ends
    nb, _, nu = raw.shape
    rows = np.ascontiguousarray(raw.transpose(0, 2, 1)).reshape(nb * nu, w)
    pad = min(w - 1, round(0.1 * fs_hz))
    # The delineator's QRS low-pass, which pacing_spikes' slope ratio is measured against.
    fast = signal.sosfiltfilt(
        lowpass_sos(float(fs_hz), FAST_HZ, "float64"), rows, axis=-1, padlen=pad
    )
    dl = np.gradient(fast.reshape(nb, nu, w), axis=2) * fs_hz
    sv = np.sqrt(np.sum(dl * dl, axis=1))  # (B, W) low-passed spatial velocity, mV/s
    k = pacing_spikes(raw, sv, on - start, off - start, p)
    # Narrowness: the spike's own slope against the low-passed slope around it.
    dr = np.diff(raw, axis=1, prepend=raw[:, :1]) * fs_hz
    svr = np.sqrt(np.sum(dr * dr, axis=2))
    half = max(1, round(SHARPNESS_HALF_MS * fs_hz / 1000.0))
    near = range_mask(w, k - half, k + half) & (k >= 0)[:, None]
    local = np.max(np.where(near, sv, 0.0), axis=1)
    peak = np.take_along_axis(svr, np.maximum(k, 0)[:, None], axis=1)[:, 0]
    sharp = (k >= 0) & (peak >= SHARPNESS_MIN * local)
    return np.where(sharp, k + start, -1)


def label_paced(beats: tuple[Beat, ...], stimuli: np.ndarray) -> tuple[Beat, ...]:
    """``beats`` with every beat that has a stimulus (``stimuli >= 0``) relabelled PACED.

    A paced beat that was part of the dominant rhythm (dominant group, normally timed) keeps
    that place (``Beat.paced_dominant``), so a paced rhythm keeps its median beat, carried
    marks and heart rate; a paced beat of another shape (or premature) is PACED only.

    >>> b = label_paced((Beat(10), Beat(90, BeatKind.UNKNOWN, 1)), np.array([5, 85]))
    >>> [(x.kind.value, x.in_dominant_rhythm) for x in b]
    [('paced', True), ('paced', False)]
    """
    st = np.asarray(stimuli, dtype=np.int64)
    if st.size != len(beats):
        raise ValueError(f"{st.size} stimuli for {len(beats)} beats")
    return tuple(
        replace(b, kind=BeatKind.PACED, paced_dominant=b.in_dominant_rhythm) if s >= 0 else b
        for b, s in zip(beats, st, strict=True)
    )


def paced_beats(
    conditioned_mv: np.ndarray,
    fs_hz: float,
    beats: tuple[Beat, ...],
    beat_marks: tuple[WaveMarks, ...],
    usable: np.ndarray,
) -> tuple[Beat, ...]:
    """``beats`` with the ventricular-paced ones labelled PACED, from each beat's global QRS
    onset and end (``beat_marks``, record indices) and the conditioned signal."""
    if not beats:
        return beats
    on = np.array([-1 if m.qrs_on is None else m.qrs_on for m in beat_marks], dtype=np.int64)
    off = np.array([-1 if m.qrs_off is None else m.qrs_off for m in beat_marks], dtype=np.int64)
    return label_paced(beats, ventricular_stimuli(conditioned_mv, fs_hz, on, off, usable))
