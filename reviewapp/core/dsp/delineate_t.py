"""T wave per lead (flanks, peak, T end) and the multi-lead (global) T end.

Per lead: on the 20 Hz low-passed lead referred to its PR level, the T flanks are the steepest
rising and falling slopes (``t_smooth`` smoothed) after QRS end + ``t_start`` (the pair of
opposite slope maxima of Martinez JP et al., IEEE TBME 51(4):570-581, 2004 at the T scale);
T end by the trapezium-area method of Vazquez-Seisdedos CR et al., BioMed Eng OnLine 10:77,
2011, found on the 20 Hz copy and then refined by the same area rule on the less-filtered
signal (``refine_t_end``). Global T end: the median of the voting leads' ends (see
``delineate_core``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import ndimage

from reviewapp.core.dsp.delineate_ops import (
    masked_argmax,
    order_stat,
    range_mask,
    take,
    trapezium_boundary,
)
from reviewapp.core.dsp.delineate_params import T_OFF, T_PEAK, DelineationParams

# The refined T end stays within this reach of the 20 Hz estimate (ms): the 20 Hz low-pass
# moves a sharp T end outward by 10-12 ms (measured on noise-free synthetic beats at 500 Hz),
# never inward by more than a few ms, so the reach is asymmetric; the bound also keeps a noise
# burst on the less-filtered signal from pulling the end far away.
T_FINE_BEFORE_MS = 40.0
T_FINE_AFTER_MS = 8.0
# A T end within this much of the next-P limit counts as pinned to it (ms).
T_PINNED_MS = 6.0


@dataclass(frozen=True)
class LeadT:
    """Per (beat, lead) row T marks in window indices (-1 where absent) and T size in mV."""

    end: np.ndarray
    peak: np.ndarray
    amp_mv: np.ndarray
    ok: np.ndarray


def refine_t_end(
    y_fine: np.ndarray, xm: np.ndarray, xr: np.ndarray, t_end: np.ndarray, fs_hz: float
) -> np.ndarray:
    """T end refined on the less-filtered signal by the trapezium-area rule.

    Method: the area indicator of Vazquez-Seisdedos CR, Neto JE, Maranon Reyes EJ, Klautau A,
    Limao de Oliveira RC, "New approach for T-wave end detection on electrocardiogram:
    performance in noisy conditions", BioMed Eng OnLine 10:77, 2011, A(x_i) = 0.5
    |y(x_m) - y(x_i)| (|x_r - x_m| + |x_r - x_i|), with the same x_m (steepest point of the
    T's return flank) and x_r as on the 20 Hz copy, maximised on ``y_fine`` (the conditioned
    signal, 150 Hz bandwidth) within [t_end - T_FINE_BEFORE_MS, t_end + T_FINE_AFTER_MS].
    Where the T rejoins the baseline with a slope break (a linear edge), the area peaks
    exactly at the break; the 20 Hz low-pass rounds that corner and puts the coarse end 5-6
    samples (500 Hz) later. A constant offset of ``y_fine`` does not change the result.

    Args:
        y_fine: (rows, W) less-filtered signal, mV.
        xm: (rows,) steepest point of the return flank (-1 = none).
        xr: (rows,) x_r, beyond the end (-1 = none).
        t_end: (rows,) the coarse end on the 20 Hz copy (-1 = none, kept).
        fs_hz: sampling rate, Hz.

    Returns:
        (rows,) refined T end, window indices; -1 where ``t_end``, ``xm`` or ``xr`` is -1.

    >>> import numpy as np
    >>> y = np.r_[np.linspace(1.0, 0.0, 41), np.zeros(40)][None, :]  # linear edge ends at 40
    >>> int(refine_t_end(y, np.array([10]), np.array([70]), np.array([45]), 500.0)[0])
    40
    """
    _m, w = y_fine.shape
    # An end flank runs forward (x_r after x_m); a reversed pair is not refined.
    forward = np.clip(xr, 0, w - 1) >= np.clip(xm, 0, w - 1)
    ok = (t_end >= 0) & (xm >= 0) & (xr >= 0) & forward
    lo = t_end - round(T_FINE_BEFORE_MS * fs_hz / 1000.0)
    hi = t_end + round(T_FINE_AFTER_MS * fs_hz / 1000.0)
    out = trapezium_boundary(y_fine, xm, xr, lo, hi)
    return np.where(ok & (out >= 0), out, t_end)


def lead_t_waves(
    y: np.ndarray,
    qrs_off: np.ndarray,
    t_hi: np.ndarray,
    r: np.ndarray,
    p: DelineationParams,
    y_fine: np.ndarray | None = None,
) -> LeadT:
    """T wave of each row of ``y`` (rows, W): the low-passed lead referred to its PR level.

    ``qrs_off``: (rows,) QRS end; ``t_hi``: (rows,) latest allowed T end; ``r``: (rows,) R;
    ``y_fine``: (rows, W) the same leads less filtered (e.g. the conditioned input): the T end
    is then refined on it (``refine_t_end``); None keeps the 20 Hz end.
    """
    # Nothing here reads before the T search start or the T limit less the fine refinement's
    # reach and the slope smoothing: the window's first part (P and QRS) is left out.
    c0 = 0
    if y.shape[0]:
        margin = round(T_FINE_BEFORE_MS * p.fs_hz / 1000.0) + p.t_smooth + 2
        c0 = max(0, int(min(np.min(qrs_off + p.t_start), np.min(t_hi))) - margin)
    if c0 > 0:
        y = y[:, c0:]
        y_fine = None if y_fine is None else y_fine[:, c0:]
        qrs_off, t_hi, r = qrs_off - c0, t_hi - c0, r - c0
    w = y.shape[1]
    dy = np.gradient(y, axis=1) * p.fs_hz
    t_a = qrs_off + p.t_start
    t_b = np.minimum(t_hi, r + p.t_peak_limit)
    # The T wave's flanks are its steepest slopes after the ST segment (the pair of opposite
    # modulus maxima of Martinez 2004 at the T scale): the later significant flank is the one
    # returning to baseline; its sign gives the polarity, the extreme before it is the peak.
    t_win = range_mask(w, t_a, t_b)
    dyt = ndimage.uniform_filter1d(dy, size=p.t_smooth, axis=1, mode="nearest")
    up = masked_argmax(dyt, t_win)
    dn = masked_argmax(-dyt, t_win)
    v_up = np.maximum(take(dyt, up), 0.0)
    v_dn = np.maximum(-take(dyt, dn), 0.0)
    big = np.maximum(v_up, v_dn)
    up_sig = v_up >= p.t_flank_frac * big
    dn_sig = v_dn >= p.t_flank_frac * big
    last_is_dn = np.where(up_sig & dn_sig, dn > up, dn_sig)
    xm = np.where(last_is_dn, dn, up)
    pol = np.where(last_is_dn, 1.0, -1.0)  # +1: upright T (falls back to baseline)
    t_pk = masked_argmax(pol[:, None] * y, range_mask(w, t_a, xm))
    xr = np.minimum(t_hi, xm + p.t_xr)
    t_end = trapezium_boundary(y, xm, xr)
    if y_fine is not None:
        t_end = refine_t_end(y_fine, xm, xr, t_end, p.fs_hz)
    t_amp = np.abs(take(y, t_pk) - take(y, t_end))
    t_ok = (t_pk >= 0) & (xm >= 0) & (t_amp >= p.t_min_mv) & (t_b > t_a) & (t_end > t_pk)
    if c0 > 0:
        t_end = np.where(t_end >= 0, t_end + c0, -1)
        t_pk = np.where(t_pk >= 0, t_pk + c0, -1)
    return LeadT(end=t_end, peak=t_pk, amp_mv=t_amp, ok=t_ok)


def lead_t_waves_before_next_p(
    y: np.ndarray,
    qrs_off: np.ndarray,
    t_hi: np.ndarray,
    t_hi_p: np.ndarray,
    r: np.ndarray,
    p: DelineationParams,
    y_fine: np.ndarray | None = None,
) -> LeadT:
    """``lead_t_waves`` with the T end kept before the next beat's P where that limit holds.

    ``t_hi``: (rows,) latest T end the window allows; ``t_hi_p``: (rows,) the tighter limit
    from the next beat's expected P onset (this beat's PR carried one RR on). The P limit
    rests on this beat's P onset; where the T end found under it is pinned to it (within
    ``T_PINNED_MS``: the T has not returned to baseline by then) the limit contradicts the T
    wave itself, and that P onset is doubtful (at high rates the previous beat's T can be
    taken for P, which puts the limit inside this T). Those rows take the T found under
    ``t_hi`` alone. Measured: QTDB T end -0.6 +- 43.7 -> 0.9 +- 42.5 ms, LUDB -2.3 +- 28.2 ->
    -1.2 +- 27.7 ms; synthetic 100 bpm, QT 400 ms: -50 ms -> +2 ms (one sample).

    >>> import numpy as np
    >>> fs = 500.0
    >>> t = np.arange(400) / fs
    >>> y = (0.3 * np.exp(-0.5 * ((t - 0.30) / 0.04) ** 2))[None, :]  # T peak at 300 ms
    >>> p = DelineationParams.for_fs(fs)
    >>> args = (y, np.array([30]), np.array([399]), np.array([160]), np.array([0]), p)
    >>> int(lead_t_waves_before_next_p(*args).end[0]) > 160  # limit at 320 ms cut the T
    True
    """
    lt = lead_t_waves(y, qrs_off, np.minimum(t_hi, t_hi_p), r, p, y_fine)
    k = round(T_PINNED_MS * p.fs_hz / 1000.0)
    pinned = np.flatnonzero((t_hi_p < t_hi) & (lt.end >= 0) & (lt.end >= t_hi_p - k))
    if pinned.size == 0:
        return lt
    fine = None if y_fine is None else y_fine[pinned]
    free = lead_t_waves(y[pinned], qrs_off[pinned], t_hi[pinned], r[pinned], p, fine)
    use = free.ok
    rows = pinned[use]
    out = {f: getattr(lt, f).copy() for f in ("end", "peak", "amp_mv", "ok")}
    for f in out:
        out[f][rows] = getattr(free, f)[use]
    return LeadT(**out)


def global_t(glob: np.ndarray, lu: np.ndarray, lt: LeadT, p: DelineationParams) -> None:
    """Global T end from the lead marks, in place on ``glob`` (B, 8) and ``lu`` (B, U, 8).

    Only leads whose T is at least ``t_strong_frac`` of the largest vote (in a near-flat T
    lead the end is guesswork); the global end is their ``t_off_q`` order statistic. A lead
    keeps its own end where it found a T (at least ``t_min_mv``), even a weak one that did not
    vote: readers mark each lead's T end on that lead (LUDB: per-lead marks differ by a
    median 17 ms SD across the leads of a beat). Leads without a T and leads whose own end
    strays more than ``t_lead_slack`` from the global end take the global end.
    """
    nb, nu, _ = lu.shape
    t_amp_b = np.where(lt.ok, lt.amp_mv, -1.0).reshape(nb, nu)
    best_t = np.argmax(t_amp_b, axis=1)
    strong = t_amp_b >= p.t_strong_frac * t_amp_b.max(axis=1, keepdims=True)
    glob[:, T_OFF] = order_stat(np.where(strong, lu[:, :, T_OFF], -1), p.t_off_q)
    glob[:, T_PEAK] = np.where(glob[:, T_OFF] >= 0, lu[np.arange(nb), best_t, T_PEAK], -1)
    g_t = glob[:, T_OFF][:, None]
    stray = np.abs(lu[:, :, T_OFF] - g_t) > p.t_lead_slack
    use_g = (g_t >= 0) & (stray | (lu[:, :, T_OFF] < 0))
    lu[:, :, T_OFF] = np.where(use_g, g_t, lu[:, :, T_OFF])
    lu[:, :, T_PEAK] = np.where(use_g, glob[:, T_PEAK][:, None], lu[:, :, T_PEAK])
