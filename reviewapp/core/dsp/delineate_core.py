"""Vectorised wave delineation of a block of beat windows (beats x samples x leads).

Every step works on whole (rows, samples) arrays -- one row per beat (global marks) or per
beat and lead -- with masks instead of Python loops. Durations are given in ms
(``DURATIONS_MS``) and converted for the sampling rate, so 125 Hz to 2 kHz work alike.

Methods:

- QRS onset/end (global): slope thresholds on the spatial velocity
  sqrt(sum_leads (dx/dt)^2) of the 40 Hz low-passed usable leads (the usual multi-lead QRS
  feature of vectorcardiographic boundary programs; common practice, no single source), with
  the decision rules of the wavelet delineator of Martinez JP, Almeida R, Olmos S, Rocha AP,
  Laguna P, "A wavelet-based ECG delineator: evaluation on standard databases", IEEE TBME
  51(4):570-581, 2004: find the first (last) significant slope lobe of the complex (above
  ``qrs_sig`` x its steepest slope), then walk outward until the slope stays below
  ``qrs_on_frac`` (``qrs_off_frac``) of that lobe's own peak for ``qrs_run`` (8 ms); the
  QRS end is averaged with the corner where the cumulative slope levels off (trapezium rule,
  below, on that curve). The search is confined to the span where a 20 ms moving average of
  the slope stays above 5 % of its peak, which keeps a steep P or T wave out of the complex.
  Each lead's QRS marks are the global ones (LUDB readers mark them so; see
  ``qrs_lead_global``). A pacing spike near the onset (``pacing_spikes``: far steeper and
  narrower than any QRS slope on the unfiltered input) moves the onset to 10 ms after the
  spike, where the LUDB readers mark paced QRS onsets (the 40 Hz low-pass would otherwise
  spread the spike and put the onset ~15 ms before it).
- T wave per lead: on the 20 Hz low-passed lead referred to its PR level, the T flanks are
  the steepest rising and falling slopes (30 ms smoothed) after QRS end + 80 ms, before the
  next beat's P (the pair of opposite slope maxima Martinez 2004 uses at the T scale); the
  later significant flank returns to baseline, its sign gives the polarity, the extreme
  before it is the T peak. T end by the trapezium-area method of Vazquez-Seisdedos CR, Neto
  JE, Maranon Reyes EJ, Klautau A, Limao de Oliveira RC, "New approach for T-wave end
  detection on electrocardiogram: performance in noisy conditions", BioMed Eng OnLine 10:77,
  2011: from the steepest point x_m of that flank to x_r = x_m + 80 ms, the end is the x_i
  maximising A(x_i) = 0.5 |y(x_m) - y(x_i)| (|x_r - x_m| + |x_r - x_i|).
- P wave per lead: in the 300 ms before QRS onset - 20 ms, with the straight line joining the
  window ends removed, the largest deflection is the P peak (present if >= 0.03 mV); onset
  and end by the same trapezium rule on each side (x_r 50 ms before / 25 ms after the
  steepest slopes within 60 ms of the peak).
- Global P and T: multi-lead rules over the single-lead marks, after Laguna P, Jane R,
  Caminal P, "Automatic detection of wave boundaries in multilead ECG signals: validation
  with the CSE database", Comput Biomed Res 27(1):45-60, 1994 (the exact rule here is this
  module's own): only leads whose wave is at least 30 % of the largest one vote; P onset/end
  are the 40th/60th percentiles and T end the median of their marks (order statistics
  rounded up: for two leads, earliest onset and latest end). A global P needs a P in at
  least 30 % of the usable leads. Leads with a weak wave, or whose own mark lies more than
  40 ms (P) / 80 ms (T) from the global one, take the global mark.

The thresholds were set on the LUDB and QTDB records in shared/data; tests/dsp measure the
result against those readers' marks.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import ndimage, signal

# Column order of the mark arrays returned by delineate_block.
P_ON, P_OFF, QRS_ON, QRS_OFF, T_OFF, P_PEAK, R_PEAK, T_PEAK = range(8)
N_MARKS = 8


@dataclass(frozen=True)
class DelineationParams:
    """Delineation settings; durations already converted to samples at ``fs_hz``.

    >>> p = DelineationParams.for_fs(250.0)
    >>> p.t_xr, DelineationParams.for_fs(1000.0).t_xr  # 80 ms in samples
    (20, 80)
    """

    fs_hz: float
    qrs_half_search: int  # samples either side of R searched for the steepest QRS slope
    qrs_on_search: int  # samples before R searched for QRS onset
    qrs_off_search: int  # samples after R searched for the last significant QRS slope
    qrs_off_limit: int  # samples after R searched for QRS end
    qrs_lead_slack: int = 0  # per-lead QRS marks stay within this of the global ones
    qrs_run: int = 1  # samples the slope must stay below threshold at a boundary
    qrs_env: int = 1  # moving-average length of the QRS slope envelope, samples
    qrs_env_frac: float = 0.05  # the envelope below this fraction of its peak bounds the QRS
    qrs_end_corner_w: float = 0.5  # weight of the arc-length corner in the QRS end
    qrs_corner_xr: int = 0  # x_r of that corner, samples after the last significant slope
    qrs_lead_global: bool = True  # per-lead QRS marks = global ones (LUDB: closer to readers)
    qrs_sig: float = 0.25  # "significant slope": this fraction of the complex's steepest slope
    qrs_sig_off: float = 0.25  # the same for the last significant slope
    qrs_on_frac: float = 0.06  # onset where slope falls below this fraction of the first lobe
    qrs_off_frac: float = 0.10  # end where slope falls below this fraction of the last lobe
    noise_mult: float = 1.5  # thresholds never below this x the window's median slope
    t_start: int = 0  # samples after QRS end where the T search starts
    t_peak_limit: int = 0  # samples after R beyond which no T peak is sought
    t_xr: int = 0  # samples from the steepest T down-slope to x_r
    t_smooth: int = 1  # moving-average length applied to the T slope, samples
    t_flank_frac: float = 0.3  # a T flank counts if its slope is this fraction of the steepest
    t_strong_frac: float = 0.3  # leads with T below this fraction of the largest T do not vote
    t_lead_slack: int = 0  # a lead's T end further than this from the global one is replaced
    t_min_mv: float = 0.04  # smaller T waves count as absent in that lead
    p_gap: int = 0  # samples kept free before QRS onset
    p_max: int = 0  # samples before QRS onset searched for P
    p_xr: int = 0  # samples from the steepest P up-slope back to x_r (onset)
    p_xr_off: int = 0  # samples from the steepest P down-slope on to x_r (end)
    p_xm_max: int = 0  # samples either side of the P peak searched for its steepest slopes
    p_strong_frac: float = 0.3  # leads with P below this fraction of the largest P do not vote
    p_lead_slack: int = 0  # a lead's P boundary further than this from the global one is replaced
    p_min_mv: float = 0.03  # smaller P waves count as absent in that lead
    p_on_q: float = 0.4  # global onset: this order statistic of the lead onsets (0 = earliest)
    p_off_q: float = 0.6  # global P end: this order statistic of the lead ends
    t_off_q: float = 0.5  # global T end: this order statistic of the voting leads' ends
    p_min_lead_frac: float = 0.3  # global P needs a P in at least this fraction of usable leads
    spike_before: int = 0  # pacing spikes are sought from this many samples before QRS onset
    spike_after: int = 0  # ... to this many after it
    spike_width: int = 0  # a pacing spike's slope stays above half its peak at most this long
    spike_ratio: float = 2.5  # ... and peaks above this multiple of the QRS's steepest slope
    spike_delay: int = 0  # QRS onset this many samples after a pacing spike

    @classmethod
    def for_fs(cls, fs_hz: float, **overrides: float) -> DelineationParams:
        """Parameters at ``fs_hz``; ``overrides`` replace DURATIONS_MS entries or fractions."""
        ms = {**DURATIONS_MS, **{k: v for k, v in overrides.items() if k in DURATIONS_MS}}
        rest = {k: v for k, v in overrides.items() if k not in DURATIONS_MS}
        samples = {k: max(1, round(v * fs_hz / 1000.0)) for k, v in ms.items()}
        return cls(fs_hz=float(fs_hz), **samples, **rest)


# Search windows and offsets in ms (converted to samples by DelineationParams.for_fs).
# Physiological ranges: QRS <= ~200 ms, PR <= ~300 ms, T end <= ~600 ms after R; the exact
# values were set on LUDB/QTDB training records (tests/dsp check them on the same databases).
DURATIONS_MS: dict[str, float] = {
    "qrs_half_search": 80,
    "qrs_on_search": 200,
    "qrs_off_search": 160,
    "qrs_off_limit": 260,
    "qrs_lead_slack": 20,
    "qrs_env": 20,
    "qrs_run": 8,
    "qrs_corner_xr": 30,
    "t_start": 80,
    "t_peak_limit": 600,
    "t_xr": 80,
    "t_smooth": 30,
    "t_lead_slack": 80,
    "p_gap": 20,
    "p_max": 300,
    "p_xr": 50,
    "p_xr_off": 25,
    "p_xm_max": 60,
    "p_lead_slack": 40,
    "spike_before": 30,
    "spike_after": 40,
    "spike_width": 8,
    "spike_delay": 10,
}


@dataclass(frozen=True)
class BlockBounds:
    """Per-beat limits in window coordinates (all (B,) int arrays, inclusive)."""

    r: np.ndarray  # R fiducial
    lo: np.ndarray  # first valid sample
    hi: np.ndarray  # last valid sample
    p_lo: np.ndarray  # earliest P onset allowed
    t_hi: np.ndarray  # latest T end allowed
    rr: np.ndarray | None = None  # RR to the next beat, samples (<= 0 unknown)


SLOW_HZ = 20.0  # low-pass for P and T (their content lies below ~15 Hz)
FAST_HZ = 40.0  # low-pass for QRS slopes


@lru_cache(maxsize=32)
def _lowpass_sos(fs_hz: float, cutoff_hz: float) -> np.ndarray:
    wn = min(cutoff_hz / (fs_hz / 2.0), 0.95)
    return signal.butter(2, wn, btype="lowpass", output="sos").astype(np.float32)


def prefilter(x_mv: np.ndarray, fs_hz: float) -> dict[str, np.ndarray]:
    """Zero-phase low-pass copies used by the delineator: 40 Hz for QRS, 20 Hz for P and T.

    Returns ``{"fast": ..., "slow": ..., "raw": x_mv}`` each shaped like ``x_mv``
    (n, n_leads), mV, float32 (ample for boundaries; three times faster to filter than
    float64); "raw" is the input itself, kept for pacing spikes (which the low-passes smear).
    """
    x = np.asarray(x_mv, dtype=np.float32)
    if x.shape[0] < 16:
        return {"fast": x.copy(), "slow": x.copy(), "raw": x}
    pad = min(x.shape[0] - 1, int(0.1 * fs_hz))
    fs = float(fs_hz)
    fast = signal.sosfiltfilt(_lowpass_sos(fs, FAST_HZ), x, axis=0, padlen=pad)
    slow = signal.sosfiltfilt(_lowpass_sos(fs, SLOW_HZ), x, axis=0, padlen=pad)
    return {
        "fast": fast.astype(np.float32, copy=False),
        "slow": slow.astype(np.float32, copy=False),
        "raw": x,
    }


def _range_mask(w: int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    idx = np.arange(w)
    return (idx[None, :] >= a[:, None]) & (idx[None, :] <= b[:, None])


def _first_true(mask: np.ndarray) -> np.ndarray:
    """Index of the first True per row, -1 where none."""
    i = np.argmax(mask, axis=1)
    return np.where(mask.any(axis=1), i, -1)


def _last_true(mask: np.ndarray) -> np.ndarray:
    w = mask.shape[1]
    i = w - 1 - np.argmax(mask[:, ::-1], axis=1)
    return np.where(mask.any(axis=1), i, -1)


def _masked_argmax(v: np.ndarray, mask: np.ndarray) -> np.ndarray:
    i = np.argmax(np.where(mask, v, -np.inf), axis=1)
    return np.where(mask.any(axis=1), i, -1)


def _take(v: np.ndarray, i: np.ndarray) -> np.ndarray:
    return np.take_along_axis(v, np.clip(i, 0, v.shape[1] - 1)[:, None], axis=1)[:, 0]


def _run_below(f: np.ndarray, thr: np.ndarray, k: int, forward: bool) -> np.ndarray:
    """True where ``f`` < ``thr`` for k samples from here on (forward) or up to here."""
    below = (f < thr[:, None]).astype(np.int32)
    if k <= 1:
        return below.astype(bool)
    cs = np.concatenate(
        [np.zeros((f.shape[0], 1), dtype=np.int32), np.cumsum(below, axis=1)], axis=1
    )
    w = f.shape[1]
    j = np.arange(w)
    if forward:
        a, b = j, np.minimum(j + k, w)
    else:
        a, b = np.maximum(j - k + 1, 0), j + 1
    return (cs[:, b] - cs[:, a]) == (b - a)[None, :]


def qrs_bounds(
    f: np.ndarray,
    r: np.ndarray,
    lo: np.ndarray,
    hi: np.ndarray,
    p: DelineationParams,
    on_min: np.ndarray | None = None,
    off_max: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """QRS onset and end on a non-negative slope feature ``f`` (M, W) around R ``r`` (M,).

    ``on_min``/``off_max`` optionally narrow the search (per-lead marks near the global ones).
    Returns (onset, end) indices, -1 where not found.
    """
    if on_min is not None:
        lo = np.maximum(lo, on_min)
    if off_max is not None:
        hi = np.minimum(hi, off_max)
    _m, w = f.shape
    c_lo = np.maximum(lo, r - p.qrs_half_search)
    c_hi = np.minimum(hi, r + p.qrs_half_search)
    fmax = np.max(np.where(_range_mask(w, c_lo, c_hi), f, 0.0), axis=1)
    floor = p.noise_mult * np.median(f, axis=1)
    sig = p.qrs_sig * fmax
    on_lo = np.maximum(lo, r - p.qrs_on_search)
    off_lim = np.minimum(hi, r + p.qrs_off_limit)
    # The complex ends where its smoothed slope envelope first drops near zero on either side
    # of its peak; searching only inside that span keeps a steep P or T wave out of the QRS.
    env = ndimage.uniform_filter1d(f, size=p.qrs_env, axis=1, mode="nearest")
    env_pk = _masked_argmax(env, _range_mask(w, c_lo, c_hi))
    low = env < (p.qrs_env_frac * _take(env, env_pk))[:, None]
    e_on = _last_true(_range_mask(w, on_lo, env_pk) & low)
    e_off = _first_true(_range_mask(w, env_pk, off_lim) & low)
    on_lo = np.where(e_on >= 0, np.maximum(on_lo, e_on - p.qrs_env // 2), on_lo)
    hi = np.where(e_off >= 0, np.minimum(hi, e_off + p.qrs_env // 2), hi)
    # First significant slope lobe; the onset threshold is relative to that lobe's own peak
    # (Martinez 2004: threshold on the first modulus maximum, not the largest one), so a small
    # initial q wave is not cut off by a threshold set by the tall R.
    i0 = _first_true(_range_mask(w, on_lo, r) & (f > sig[:, None]))
    i0 = np.where(i0 < 0, r, i0)
    falling = np.zeros_like(f, dtype=bool)
    falling[:, :-1] = f[:, 1:] < f[:, :-1]
    pk0 = _first_true(_range_mask(w, i0, r) & falling)
    pk0 = np.where(pk0 < 0, i0, pk0)
    thr_on = np.maximum(p.qrs_on_frac * _take(f, pk0), floor)
    # A boundary needs the slope to stay low for qrs_run samples (outward), so a turning
    # point inside the complex (slope momentarily zero at a Q, R or S peak) does not count.
    on = _last_true(_range_mask(w, on_lo, i0) & _run_below(f, thr_on, p.qrs_run, forward=False))
    off_sig_hi = np.minimum(hi, r + p.qrs_off_search)
    i1 = _last_true(_range_mask(w, r, off_sig_hi) & (f > (p.qrs_sig_off * fmax)[:, None]))
    i1 = np.where(i1 < 0, r, i1)
    rising = np.zeros_like(f, dtype=bool)
    rising[:, 1:] = f[:, :-1] < f[:, 1:]
    pk1 = _last_true(_range_mask(w, r, i1) & rising)
    pk1 = np.where(pk1 < 0, i1, pk1)
    thr_off = np.maximum(p.qrs_off_frac * _take(f, pk1), floor)
    off_hi = np.minimum(hi, off_lim)
    off = _first_true(_range_mask(w, i1, off_hi) & _run_below(f, thr_off, p.qrs_run, forward=True))
    # No sample below threshold inside the envelope span: the span's edge is the boundary.
    on = np.where((on < 0) & (e_on >= 0), on_lo, on)
    off = np.where((off < 0) & (e_off >= 0), hi, off)
    if p.qrs_end_corner_w > 0:
        # QRS end also as the corner where the cumulative slope (the arc length of the
        # multi-lead trajectory) levels off into the ST segment: the trapezium rule
        # (Vazquez-Seisdedos 2011) applied to that curve from the last significant slope.
        # A slurred return to baseline moves the corner, not the threshold crossing; the two
        # are averaged (measured on QTDB/LUDB: SD 0.4-0.7 ms lower than either alone).
        arc = np.cumsum(f, axis=1)
        corner = trapezium_boundary(arc, i1, np.minimum(off_lim, i1 + p.qrs_corner_xr))
        w_c = p.qrs_end_corner_w
        both = (corner >= 0) & (off >= 0)
        off = np.where(both, np.round(w_c * corner + (1.0 - w_c) * off), off).astype(np.int64)
    bad = fmax <= 0
    return np.where(bad, -1, on), np.where(bad, -1, off)


def pacing_spikes(
    raw: np.ndarray, sv: np.ndarray, on: np.ndarray, off: np.ndarray, p: DelineationParams
) -> np.ndarray:
    """Index of a pacing spike near each QRS onset, -1 where none.

    A pacing stimulus is far steeper and narrower than any QRS slope: on the input signal
    (before the delineator's 40 Hz low-pass, which spreads a spike over ~15 ms either side),
    its spatial velocity peaks above ``spike_ratio`` x the QRS's steepest low-passed slope
    and stays above half that peak for at most ``spike_width``. Measured on the LUDB median
    beats: paced records 3.1-13.9 x (width <= 4 ms at 500 Hz), all others <= 1.8 x (common
    practice to look for the stimulus artefact, no single source for the numbers).

    Args:
        raw: (M, W, U) input windows, mV (usable leads).
        sv: (M, W) spatial velocity of the low-passed windows, mV/s.
        on, off: (M,) QRS onset and end found on ``sv``.
        p: parameters.
    """
    _m, w = sv.shape
    fs = p.fs_hz
    dr = np.diff(raw, axis=1, prepend=raw[:, :1]) * fs
    svr = np.sqrt(np.sum(dr * dr, axis=2))  # (M, W) mV/s
    ok = (on >= 0) & (off > on)
    k = _masked_argmax(svr, _range_mask(w, on - p.spike_before, on + p.spike_after) & ok[:, None])
    peak = _take(svr, k)
    qmax = np.max(np.where(_range_mask(w, on, off), sv, 0.0), axis=1)
    near = _range_mask(w, k - p.spike_width, k + p.spike_width)
    width = np.sum(near & (svr > 0.5 * peak[:, None]), axis=1)
    spike = (k >= 0) & (peak > p.spike_ratio * qmax) & (width <= p.spike_width)
    return np.where(spike, k, -1)


def trapezium_boundary(y: np.ndarray, xm: np.ndarray, xr: np.ndarray) -> np.ndarray:
    """Trapezium-area boundary (Vazquez-Seisdedos et al. 2011) per row of ``y`` (M, W).

    ``xm``: steepest point of the wave's flank; ``xr``: a point beyond the boundary (after it
    for an end, before it for an onset). Returns the index in [xm, xr] maximising
    A = 0.5 |y(xm) - y(xi)| (|xr - xm| + |xr - xi|); -1 where xm or xr is -1.

    >>> import numpy as np
    >>> y = np.r_[np.linspace(1, 0, 11), np.zeros(10)][None, :]  # a ramp ending at index 10
    >>> int(trapezium_boundary(y, np.array([0]), np.array([20]))[0])
    10
    """
    _m, w = y.shape
    idx = np.arange(w)[None, :]
    ok = (xm >= 0) & (xr >= 0)
    xm_c = np.clip(xm, 0, w - 1)
    xr_c = np.clip(xr, 0, w - 1)
    ym = _take(y, xm_c)
    area = np.abs(ym[:, None] - y) * (np.abs(xr_c - xm_c)[:, None] + np.abs(xr_c[:, None] - idx))
    a = np.minimum(xm_c, xr_c)
    b = np.maximum(xm_c, xr_c)
    out = _masked_argmax(area, _range_mask(w, a, b))
    return np.where(ok, out, -1)


def _detrend_between(y: np.ndarray, a: np.ndarray, b: np.ndarray, k: int) -> np.ndarray:
    """``y`` minus the straight line joining its mean levels over k samples at ``a`` and ``b``."""
    w = y.shape[1]
    cs = np.concatenate([np.zeros((y.shape[0], 1)), np.cumsum(y, axis=1)], axis=1)

    def level(i: np.ndarray) -> np.ndarray:
        i0 = np.clip(i - k // 2, 0, w - 1)
        i1 = np.clip(i0 + max(k, 1), 1, w)
        return (_take(cs, i1) - _take(cs, i0)) / np.maximum(i1 - i0, 1)

    ya, yb = level(a), level(b)
    span = np.maximum(b - a, 1)
    frac = (np.arange(w)[None, :] - a[:, None]) / span[:, None]
    return y - (ya[:, None] + (yb - ya)[:, None] * frac)


def _order_stat(v: np.ndarray, q: float) -> np.ndarray:
    """Per row, the value at fraction ``q`` of the sorted valid (>= 0) entries; -1 if none."""
    vf = np.where(v >= 0, v, np.iinfo(np.int64).max).astype(np.int64)
    s = np.sort(vf, axis=1)
    n = (v >= 0).sum(axis=1)
    k = np.clip(np.floor(q * np.maximum(n - 1, 0) + 0.5).astype(np.int64), 0, v.shape[1] - 1)
    out = np.take_along_axis(s, k[:, None], axis=1)[:, 0]
    return np.where(n > 0, out, -1)


def delineate_block(
    block: dict[str, np.ndarray], bounds: BlockBounds, usable: np.ndarray, p: DelineationParams
) -> tuple[np.ndarray, np.ndarray]:
    """Delineate B beat windows at once.

    Args:
        block: {"fast": (B, W, L), "slow": (B, W, L)} low-passed windows (see ``prefilter``).
        bounds: per-beat limits in window coordinates.
        usable: (L,) bool.
        p: parameters for this sampling rate.

    Returns:
        (global (B, 8), per-lead (B, L, 8)) int64 window indices, -1 = absent; columns
        P_ON, P_OFF, QRS_ON, QRS_OFF, T_OFF, P_PEAK, R_PEAK, T_PEAK.
    """
    fast = block["fast"]
    slow = block["slow"]
    nb, w, nl = fast.shape
    fs = p.fs_hz
    use = np.asarray(usable, dtype=bool)
    glob = np.full((nb, N_MARKS), -1, dtype=np.int64)
    lead = np.full((nb, nl, N_MARKS), -1, dtype=np.int64)
    if nb == 0 or not use.any():
        return glob, lead
    ui = np.flatnonzero(use)
    nu = ui.size

    # --- QRS: global on spatial velocity, per lead on |dx/dt| -----------------------------
    d = np.gradient(fast[:, :, ui], axis=1) * fs  # (B, W, U) mV/s
    sv = np.sqrt(np.sum(d * d, axis=2))  # (B, W)
    r = bounds.r.astype(np.int64)
    g_on, g_off = qrs_bounds(sv, r, bounds.lo, bounds.hi, p)
    spk = np.full(nb, -1, dtype=np.int64)
    if "raw" in block:
        # A paced QRS starts at its stimulus: the low-passed spike would put the onset early.
        spk = pacing_spikes(block["raw"][:, :, ui], sv, g_on, g_off, p)
        g_on = np.where(spk >= 0, np.maximum(g_on, spk + p.spike_delay), g_on)
    glob[:, QRS_ON], glob[:, QRS_OFF], glob[:, R_PEAK] = g_on, g_off, r

    rep = lambda a: np.repeat(a, nu)  # noqa: E731 - per-beat value to per-(beat, lead) rows
    if p.qrs_lead_global:
        # LUDB readers' per-lead QRS marks sit on the global boundaries (measured: per-lead
        # slope thresholds gave +10/-11 ms bias there, the global marks about 0).
        l_on, l_off = rep(g_on), rep(g_off)
    else:
        # Each lead's QRS lies within a few tens of ms of the global one; the bound keeps a
        # fast P or T wave in one lead from being taken for its QRS.
        fl = np.abs(d).transpose(0, 2, 1).reshape(nb * nu, w)
        l_on, l_off = qrs_bounds(
            fl,
            rep(r),
            rep(bounds.lo),
            rep(bounds.hi),
            p,
            on_min=rep(np.where(g_on >= 0, g_on - p.qrs_lead_slack, 0)),
            off_max=rep(np.where(g_off >= 0, g_off + p.qrs_lead_slack, w - 1)),
        )
    # A lead whose own boundary failed falls back to the global one.
    l_on = np.where(l_on < 0, rep(g_on), l_on)
    l_off = np.where(l_off < 0, rep(g_off), l_off)

    xs = slow[:, :, ui].transpose(0, 2, 1).reshape(nb * nu, w)
    xf = fast[:, :, ui].transpose(0, 2, 1).reshape(nb * nu, w)
    # Isoelectric level: the PR segment just before each lead's QRS onset.
    # Before a pacing spike: the PR level and the P search end ahead of its low-passed spread.
    pre_on = np.where(l_on >= 0, l_on, rep(r))
    pre_on = np.where(rep(spk) >= 0, np.minimum(pre_on, rep(spk) - p.p_gap), pre_on)
    on_c = np.clip(pre_on, 0, w - 1)
    k_iso = max(1, round(0.010 * fs))
    iso_mask = _range_mask(w, on_c - k_iso, on_c)
    base = np.sum(np.where(iso_mask, xs, 0.0), axis=1) / np.maximum(iso_mask.sum(axis=1), 1)
    y = xs - base[:, None]
    dy = np.gradient(y, axis=1) * fs

    # R peak per lead: largest deflection of the fast signal inside its own QRS.
    qm = _range_mask(w, np.where(l_on >= 0, l_on, rep(r)), np.where(l_off >= 0, l_off, rep(r)))
    l_r = _masked_argmax(np.abs(xf - base[:, None]), qm)

    # --- P wave ------------------------------------------------------------------------------
    p_b = pre_on - p.p_gap
    p_a = np.maximum(rep(bounds.p_lo), p_b - p.p_max)
    p_win = _range_mask(w, p_a, p_b)
    # Remove the straight line joining the window ends so a sloping baseline is not a P wave.
    yp = _detrend_between(y, p_a, p_b, k_iso)
    p_pk = _masked_argmax(np.abs(yp), p_win)
    p_amp = np.abs(_take(yp, p_pk))
    p_ok = (p_pk >= 0) & (p_amp >= p.p_min_mv) & (p_b - p_a > 2 * p.p_gap)
    sgn = np.sign(_take(yp, p_pk))[:, None]
    dyp = np.gradient(yp, axis=1) * fs
    xm_on = _masked_argmax(sgn * dyp, _range_mask(w, np.maximum(p_a, p_pk - p.p_xm_max), p_pk))
    xr_on = np.maximum(p_a, xm_on - p.p_xr)
    p_on = trapezium_boundary(yp, xm_on, xr_on)
    xm_off = _masked_argmax(-sgn * dyp, _range_mask(w, p_pk, np.minimum(p_b, p_pk + p.p_xm_max)))
    xr_off = np.minimum(p_b + p.p_gap, xm_off + p.p_xr_off)
    p_off = trapezium_boundary(yp, xm_off, xr_off)
    p_ok &= (p_on >= 0) & (p_off > p_on)

    # Where the RR is known, T must end before the next beat's P (same PR as this beat).
    p_on_b = _order_stat(np.where(p_ok, p_on, -1).reshape(nb, nu), p.p_on_q)
    t_hi_b = bounds.t_hi.copy()
    if bounds.rr is not None:
        next_p = r + bounds.rr - np.where(p_on_b >= 0, r - p_on_b, 0) - p.p_gap
        t_hi_b = np.where(bounds.rr > 0, np.minimum(t_hi_b, next_p), t_hi_b)

    # --- T wave ------------------------------------------------------------------------------
    off_c = np.where(l_off >= 0, l_off, rep(r))
    t_a = off_c + p.t_start
    t_hi_rows = rep(t_hi_b)
    t_b = np.minimum(t_hi_rows, rep(r) + p.t_peak_limit)
    # The T wave's flanks are its steepest slopes after the ST segment (the pair of opposite
    # modulus maxima of Martinez 2004 at the T scale): the later significant flank is the one
    # returning to baseline; its sign gives the polarity, the extreme before it is the peak.
    t_win = _range_mask(w, t_a, t_b)
    dyt = ndimage.uniform_filter1d(dy, size=p.t_smooth, axis=1, mode="nearest")
    up = _masked_argmax(dyt, t_win)
    dn = _masked_argmax(-dyt, t_win)
    v_up = np.maximum(_take(dyt, up), 0.0)
    v_dn = np.maximum(-_take(dyt, dn), 0.0)
    big = np.maximum(v_up, v_dn)
    up_sig = v_up >= p.t_flank_frac * big
    dn_sig = v_dn >= p.t_flank_frac * big
    last_is_dn = np.where(up_sig & dn_sig, dn > up, dn_sig)
    xm = np.where(last_is_dn, dn, up)
    pol = np.where(last_is_dn, 1.0, -1.0)  # +1: upright T (falls back to baseline)
    t_pk = _masked_argmax(pol[:, None] * y, _range_mask(w, t_a, xm))
    xr = np.minimum(t_hi_rows, xm + p.t_xr)
    t_end = trapezium_boundary(y, xm, xr)
    t_amp = np.abs(_take(y, t_pk) - _take(y, t_end))
    t_ok = (t_pk >= 0) & (xm >= 0) & (t_amp >= p.t_min_mv) & (t_b > t_a) & (t_end > t_pk)

    # --- assemble per-lead ---------------------------------------------------------------------
    cols = np.full((nb * nu, N_MARKS), -1, dtype=np.int64)
    cols[:, QRS_ON], cols[:, QRS_OFF], cols[:, R_PEAK] = l_on, l_off, l_r
    cols[:, T_OFF] = np.where(t_ok, t_end, -1)
    cols[:, T_PEAK] = np.where(t_ok, t_pk, -1)
    cols[:, P_ON] = np.where(p_ok, p_on, -1)
    cols[:, P_OFF] = np.where(p_ok, p_off, -1)
    cols[:, P_PEAK] = np.where(p_ok, p_pk, -1)
    lead[:, ui, :] = cols.reshape(nb, nu, N_MARKS)

    # --- global P and T by multi-lead rules -----------------------------------------------------
    lu = lead[:, ui, :]
    t_amp_b = np.where(t_ok, t_amp, -1.0).reshape(nb, nu)
    best_t = np.argmax(t_amp_b, axis=1)
    # Only leads whose T is a fair fraction of the largest vote for the global T end: in a
    # near-flat T lead the end is guesswork.
    strong = t_amp_b >= p.t_strong_frac * t_amp_b.max(axis=1, keepdims=True)
    glob[:, T_OFF] = _order_stat(np.where(strong, lu[:, :, T_OFF], -1), p.t_off_q)
    glob[:, T_PEAK] = np.where(glob[:, T_OFF] >= 0, lu[np.arange(nb), best_t, T_PEAK], -1)
    # A weak-T lead, or one whose own end strays far from the global end, takes the global end.
    g_t = glob[:, T_OFF][:, None]
    stray = np.abs(lu[:, :, T_OFF] - g_t) > p.t_lead_slack
    use_g = (g_t >= 0) & (~strong | stray | (lu[:, :, T_OFF] < 0))
    lu[:, :, T_OFF] = np.where(use_g, g_t, lu[:, :, T_OFF])
    lu[:, :, T_PEAK] = np.where(use_g, glob[:, T_PEAK][:, None], lu[:, :, T_PEAK])
    lead[:, ui, :] = lu
    n_p = (lu[:, :, P_ON] >= 0).sum(axis=1)
    has_p = n_p >= np.maximum(1, np.ceil(p.p_min_lead_frac * nu))
    p_amp_b = np.where(p_ok, p_amp, -1.0).reshape(nb, nu)
    best_p = np.argmax(p_amp_b, axis=1)
    p_strong = p_amp_b >= p.p_strong_frac * p_amp_b.max(axis=1, keepdims=True)
    glob[:, P_ON] = np.where(
        has_p, _order_stat(np.where(p_strong, lu[:, :, P_ON], -1), p.p_on_q), -1
    )
    glob[:, P_OFF] = np.where(
        has_p, _order_stat(np.where(p_strong, lu[:, :, P_OFF], -1), p.p_off_q), -1
    )
    glob[:, P_PEAK] = np.where(has_p, lu[np.arange(nb), best_p, P_PEAK], -1)
    # As for T: weak-P leads and stray lead marks take the global P boundaries.
    for col, peak_col in ((P_ON, P_PEAK), (P_OFF, None)):
        g = glob[:, col][:, None]
        stray = np.abs(lu[:, :, col] - g) > p.p_lead_slack
        use_g = (g >= 0) & (~p_strong | stray | (lu[:, :, col] < 0))
        lu[:, :, col] = np.where(use_g, g, lu[:, :, col])
        if peak_col is not None:
            lu[:, :, peak_col] = np.where(use_g, glob[:, peak_col][:, None], lu[:, :, peak_col])
    lu[~has_p] = np.where(
        np.isin(np.arange(N_MARKS), [P_ON, P_OFF, P_PEAK])[None, None, :], -1, lu[~has_p]
    )
    lead[:, ui, :] = lu
    # P must end before QRS onset and T must end after QRS end.
    bad_p = (glob[:, P_OFF] >= 0) & (glob[:, QRS_ON] >= 0) & (glob[:, P_OFF] > glob[:, QRS_ON])
    glob[bad_p, P_OFF] = glob[bad_p, QRS_ON]
    return glob, lead
