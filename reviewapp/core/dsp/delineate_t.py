"""T wave per lead (flanks, peak, T end) and the multi-lead (global) T end.

Per lead: on the 20 Hz low-passed lead referred to its PR level, the T flanks are the steepest
rising and falling slopes (``t_smooth`` smoothed) after QRS end + ``t_start`` (the pair of
opposite slope maxima of Martinez JP et al., IEEE TBME 51(4):570-581, 2004 at the T scale);
T end by the trapezium-area method of Vazquez-Seisdedos CR et al., BioMed Eng OnLine 10:77,
2011. Global T end: the median of the voting leads' ends (see ``delineate_core``).
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


@dataclass(frozen=True)
class LeadT:
    """Per (beat, lead) row T marks in window indices (-1 where absent) and T size in mV."""

    end: np.ndarray
    peak: np.ndarray
    amp_mv: np.ndarray
    ok: np.ndarray


def lead_t_waves(
    y: np.ndarray, qrs_off: np.ndarray, t_hi: np.ndarray, r: np.ndarray, p: DelineationParams
) -> LeadT:
    """T wave of each row of ``y`` (rows, W): the low-passed lead referred to its PR level.

    ``qrs_off``: (rows,) QRS end; ``t_hi``: (rows,) latest allowed T end; ``r``: (rows,) R.
    """
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
    t_amp = np.abs(take(y, t_pk) - take(y, t_end))
    t_ok = (t_pk >= 0) & (xm >= 0) & (t_amp >= p.t_min_mv) & (t_b > t_a) & (t_end > t_pk)
    return LeadT(end=t_end, peak=t_pk, amp_mv=t_amp, ok=t_ok)


def global_t(glob: np.ndarray, lu: np.ndarray, lt: LeadT, p: DelineationParams) -> None:
    """Global T end from the lead marks, in place on ``glob`` (B, 8) and ``lu`` (B, U, 8).

    Only leads whose T is at least ``t_strong_frac`` of the largest vote (in a near-flat T
    lead the end is guesswork); the global end is their ``t_off_q`` order statistic. Weak-T
    leads and leads whose own end strays more than ``t_lead_slack`` take the global end.
    """
    nb, nu, _ = lu.shape
    t_amp_b = np.where(lt.ok, lt.amp_mv, -1.0).reshape(nb, nu)
    best_t = np.argmax(t_amp_b, axis=1)
    strong = t_amp_b >= p.t_strong_frac * t_amp_b.max(axis=1, keepdims=True)
    glob[:, T_OFF] = order_stat(np.where(strong, lu[:, :, T_OFF], -1), p.t_off_q)
    glob[:, T_PEAK] = np.where(glob[:, T_OFF] >= 0, lu[np.arange(nb), best_t, T_PEAK], -1)
    g_t = glob[:, T_OFF][:, None]
    stray = np.abs(lu[:, :, T_OFF] - g_t) > p.t_lead_slack
    use_g = (g_t >= 0) & (~strong | stray | (lu[:, :, T_OFF] < 0))
    lu[:, :, T_OFF] = np.where(use_g, g_t, lu[:, :, T_OFF])
    lu[:, :, T_PEAK] = np.where(use_g, glob[:, T_PEAK][:, None], lu[:, :, T_PEAK])
