"""P wave per lead and the multi-lead (global) P boundaries.

Per lead: in the ``p_max`` before QRS onset - ``p_gap``, with the straight line joining the
window ends removed, the largest deflection is the P peak (present if >= ``p_min_mv``); onset
and end by the trapezium-area rule of Vazquez-Seisdedos CR et al., BioMed Eng OnLine 10:77,
2011 on each side. Where the less-filtered lead shows a true corner there (a two-segment
fit explains it far better than a smooth cubic, ``delineate_corner``), the mark moves to the
corner: the 20 Hz low-pass puts the trapezium mark 4-7 samples outside a sharp boundary,
while on a gradually rising P the trapezium mark sits where readers put theirs. Global P:
multi-lead rules over the lead marks after Laguna P, Jane R, Caminal P, Comput Biomed Res
27(1):45-60, 1994 (see ``delineate_core`` for the exact rule).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from reviewapp.core.dsp.delineate_corner import hinge_corner
from reviewapp.core.dsp.delineate_ops import (
    detrend_between,
    masked_argmax,
    order_stat,
    range_mask,
    take,
    trapezium_boundary,
)
from reviewapp.core.dsp.delineate_params import N_MARKS, P_OFF, P_ON, P_PEAK, DelineationParams

# Corner refinement of each lead's P onset/end (``delineate_corner.hinge_corner``): join
# points tried within P_CORNER_SEARCH_MS of the trapezium mark, fitted over P_CORNER_WIN_MS
# more on each side. The 20 Hz low-pass the trapezium rule works on moves a corner outward by
# ~10 ms, the search must reach past that; the window must outlast the 40 Hz filter's
# smoothing (a few ms) yet stay short against a P wave's ~50 ms half-width.
P_CORNER_SEARCH_MS = 20.0
P_CORNER_WIN_MS = 20.0
# A corner counts as true where the two-segment fit leaves at most this fraction of the
# residual of a smooth cubic over the same window. Measured on median beats: synthetic
# lobes with linear edges (noise-free and 20 dB SNR) 0.04-0.14 (median 0.06-0.14); real P
# boundaries (LUDB, QTDB) median 0.23-0.39, most above 0.15 (a gradual bend, no corner).
P_CORNER_MAX_RATIO = 0.15


@dataclass(frozen=True)
class LeadP:
    """Per (beat, lead) row P marks in window indices (-1 where absent) and P size in mV."""

    on: np.ndarray
    off: np.ndarray
    peak: np.ndarray
    amp_mv: np.ndarray
    ok: np.ndarray
    # Whether the onset / end was moved to a true corner of the less-filtered lead (False:
    # the trapezium mark on the 20 Hz copy, or no less-filtered copy given).
    on_corner: np.ndarray | None = None
    off_corner: np.ndarray | None = None


def lead_p_waves(
    y: np.ndarray,
    pre_on: np.ndarray,
    p_lo: np.ndarray,
    k_iso: int,
    p: DelineationParams,
    y_fine: np.ndarray | None = None,
) -> LeadP:
    """P wave of each row of ``y`` (rows, W): the low-passed lead referred to its PR level.

    ``pre_on``: (rows,) QRS onset (or pacing spike) before which P is sought; ``p_lo``: (rows,)
    earliest allowed P onset; ``k_iso``: samples averaged for a window-end level;
    ``y_fine``: (rows, W) the same leads less low-passed, on which each boundary is moved to
    the corner of a two-segment line fit (``hinge_corner``) near its trapezium mark.

    Example: a 0.15 mV half-sine P, non-zero on samples 100..148 at 500 Hz, QRS onset at 260:

    >>> import numpy as np
    >>> y = np.zeros((1, 400))
    >>> y[0, 100:149] = 0.15 * np.sin(np.pi * np.arange(1, 50) / 50)
    >>> lp = lead_p_waves(y, np.array([260]), np.array([0]), 5, DelineationParams.for_fs(500.0),
    ...                   y_fine=y)
    >>> int(lp.on[0]), int(lp.off[0]), bool(lp.ok[0])
    (100, 148, True)
    """
    if y.shape[0]:
        # Nothing here reads past the QRS onset (plus a level's samples): the rest of the
        # window (QRS and T) is left out of the array work.
        reach = min(y.shape[1], int(np.max(pre_on)) + k_iso + 2)
        y = y[:, : max(1, reach)]
        y_fine = None if y_fine is None else y_fine[:, : y.shape[1]]
    w = y.shape[1]
    fs = p.fs_hz
    p_b = pre_on - p.p_gap
    p_a = np.maximum(p_lo, p_b - p.p_max)
    p_win = range_mask(w, p_a, p_b)
    # Remove the straight line joining the window ends so a sloping baseline is not a P wave.
    yp = detrend_between(y, p_a, p_b, k_iso)
    p_pk = masked_argmax(np.abs(yp), p_win)
    p_amp = np.abs(take(yp, p_pk))
    p_ok = (p_pk >= 0) & (p_amp >= p.p_min_mv) & (p_b - p_a > 2 * p.p_gap)
    sgn = np.sign(take(yp, p_pk))[:, None]
    dyp = np.gradient(yp, axis=1) * fs
    xm_on = masked_argmax(sgn * dyp, range_mask(w, np.maximum(p_a, p_pk - p.p_xm_max), p_pk))
    xr_on = np.maximum(p_a, xm_on - p.p_xr)
    p_on = trapezium_boundary(yp, xm_on, xr_on)
    xm_off = masked_argmax(-sgn * dyp, range_mask(w, p_pk, np.minimum(p_b, p_pk + p.p_xm_max)))
    xr_off = np.minimum(p_b + p.p_gap, xm_off + p.p_xr_off)
    p_off = trapezium_boundary(yp, xm_off, xr_off)
    on_c = off_c = np.zeros(p_on.shape, dtype=bool)
    if y_fine is not None:
        p_on, p_off, on_c, off_c = _corners(
            y_fine, p_on, p_off, xm_on, xm_off, p_a, p_b + p.p_gap - 1, fs
        )
    p_ok &= (p_on >= 0) & (p_off > p_on)
    return LeadP(p_on, p_off, p_pk, p_amp, p_ok, on_c, off_c)


def global_p(glob: np.ndarray, lu: np.ndarray, lp: LeadP, p: DelineationParams) -> None:
    """Global P marks from the lead marks, in place on ``glob`` (B, 8) and ``lu`` (B, U, 8).

    ``lu`` must already hold each lead's own P marks (-1 absent). Only leads whose P is at
    least ``p_strong_frac`` of the largest vote; onset/end are the ``p_on_q``/``p_off_q``
    order statistics of their marks; a global P needs a P in ``p_min_lead_frac`` of the
    leads. Weak-P leads and leads whose own mark strays more than ``p_lead_slack`` take the
    global mark.
    """
    nb, nu, _ = lu.shape
    n_p = (lu[:, :, P_ON] >= 0).sum(axis=1)
    has_p = n_p >= np.maximum(1, np.ceil(p.p_min_lead_frac * nu))
    p_amp_b = np.where(lp.ok, lp.amp_mv, -1.0).reshape(nb, nu)
    best_p = np.argmax(p_amp_b, axis=1)
    p_strong = p_amp_b >= p.p_strong_frac * p_amp_b.max(axis=1, keepdims=True)
    glob[:, P_ON] = np.where(
        has_p, order_stat(np.where(p_strong, lu[:, :, P_ON], -1), p.p_on_q), -1
    )
    glob[:, P_OFF] = np.where(
        has_p, order_stat(np.where(p_strong, lu[:, :, P_OFF], -1), p.p_off_q), -1
    )
    glob[:, P_PEAK] = np.where(has_p, lu[np.arange(nb), best_p, P_PEAK], -1)
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


def _corners(
    yf: np.ndarray,
    on: np.ndarray,
    off: np.ndarray,
    xm_on: np.ndarray,
    xm_off: np.ndarray,
    lo: np.ndarray,
    hi: np.ndarray,
    fs: float,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """P onset/end moved to the slope corners of ``yf`` near the trapezium marks; also
    whether each was moved (a true corner found)."""
    search = max(1, round(P_CORNER_SEARCH_MS * fs / 1000.0))
    win = max(2, round(P_CORNER_WIN_MS * fs / 1000.0))
    # The slope changes towards the wave: its sign is the side the wave lies on.
    s_on = np.sign(take(yf, xm_on) - take(yf, on))
    s_off = np.sign(take(yf, xm_off) - take(yf, off))
    c_on, r_on = hinge_corner(
        yf, on, search, win, s_on, True, lo, np.maximum(xm_on, on), lo, hi, with_ratio=True
    )
    c_off, r_off = hinge_corner(
        yf, off, search, win, s_off, False, np.minimum(xm_off, off), hi, lo, hi, with_ratio=True
    )
    # Only a true corner moves the mark; a gradual bend keeps the trapezium mark.
    sharp_on = (r_on <= P_CORNER_MAX_RATIO) & (on >= 0) & (xm_on >= 0)
    sharp_off = (r_off <= P_CORNER_MAX_RATIO) & (off >= 0) & (xm_off >= 0)
    c_on = np.where(r_on <= P_CORNER_MAX_RATIO, c_on, on - 1)
    c_off = np.where(r_off <= P_CORNER_MAX_RATIO, c_off, off + 1)
    # The join point is the last baseline sample: the wave starts one sample after it.
    c_on = np.where((on >= 0) & (xm_on >= 0), c_on + 1, on)
    c_off = np.where((off >= 0) & (xm_off >= 0), c_off - 1, off)
    return c_on, c_off, sharp_on, sharp_off
