"""Corner (slope-breakpoint) refinement of a wave boundary by a two-segment fit.

A wave leaves (or rejoins) the baseline with a change of slope. Around a candidate boundary,
each sample k of a short search range is tried as the join point of a continuous two-segment
model y(t) = c0 + c1 (t - k) + c2 u + c3 u^2, with u = max(0, t - k) for an onset and
max(0, k - t) for an end: a straight baseline on one side, the same line plus a slope change
(and a curvature, since a wave bends) on the other. Every join point is fitted by weighted
least squares over the same fixed window, so the residuals compare; the join point is the k
with the smallest residual. This is the segmented ("two-phase") regression of Hudson DJ,
"Fitting segmented curves whose join points have to be estimated", J Am Stat Assoc
61(316):1097-1129, 1966, restricted to join points on whole samples. A zero-phase low-pass
keeps straight lines straight, so the corner of such a model seen through it is still found
at its place once the window outlasts the filter's smoothing; the fit over the window
averages noise. Samples beyond given limits (a neighbouring wave) get zero weight.

To tell a true corner from a gradual bend, the residual is compared with that of a smooth
cubic with as many coefficients over the same window (the nested-model comparison behind
Hudson's test for whether a join exists).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np


@lru_cache(maxsize=16)
def _hinge_bases(
    half_search: int, half_win: int, wave_after: bool
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Fixed matrices of the fits on the window t = -(S + h)..(S + h), for K join offsets.

    Returns (outer (H, K*16): per sample the 4x4 products of the hinge basis, summed by a
    weight row into each join point's normal matrix; basis_t (H, K*4): the hinge basis;
    left (H, K): sample lies before the join point; cubic_outer (H, 16); cubic (H, 4)).
    """
    span = half_search + half_win
    sc = max(span, 1)  # scaled to about unit range: well-conditioned normal equations
    t = np.arange(-span, span + 1, dtype=np.float64)
    k = np.arange(-half_search, half_search + 1, dtype=np.float64)[:, None]
    u = (np.maximum(t[None, :] - k, 0.0) if wave_after else np.maximum(k - t[None, :], 0.0)) / sc
    # Baseline side: a line; wave side: that line plus a slope change and a curvature.
    basis = np.stack([np.ones_like(u), (t[None, :] - k) / sc, u, u * u], axis=2)  # (K, H, 4)
    nk, nh = basis.shape[:2]
    outer = np.einsum("khi,khj->hkij", basis, basis).reshape(nh, nk * 16)
    basis_t = basis.transpose(1, 0, 2).reshape(nh, nk * 4)
    left = (t[:, None] < k[:, 0][None, :]).astype(np.float64)
    tt = t / sc
    cubic = np.stack([np.ones_like(tt), tt, tt * tt, tt**3], axis=1)
    cubic_outer = np.einsum("hi,hj->hij", cubic, cubic).reshape(nh, 16)
    return (
        np.ascontiguousarray(outer),
        np.ascontiguousarray(basis_t),
        left,
        cubic_outer,
        cubic,
    )


def hinge_corner(
    y: np.ndarray,
    center: np.ndarray,
    half_search: int,
    half_win: int,
    sign: np.ndarray,
    wave_after: bool,
    lo: np.ndarray | None = None,
    hi: np.ndarray | None = None,
    fit_lo: np.ndarray | None = None,
    fit_hi: np.ndarray | None = None,
    with_ratio: bool = False,
) -> np.ndarray | tuple[np.ndarray, np.ndarray]:
    """Join point of a two-segment fit near ``center`` in each row of ``y`` (M, W).

    Method: two-phase linear regression (Hudson, J Am Stat Assoc 61:1097-1129, 1966) with the
    join point searched over ``center +- half_search`` samples, all fits over the same
    window, ``center +- (half_search + half_win)``.

    Args:
        y: (M, W) signal rows, mV.
        center: (M,) candidate boundary (sample index; -1 = none, returned unchanged).
        half_search: join points tried either side of ``center``, samples.
        half_win: samples the window reaches beyond the outermost join points.
        sign: (M,) required sign of the wave's departure from the baseline line (+1: the
            wave lies above it, as for a positive wave's onset and end; -1: below; 0: either).
        wave_after: True for an onset (the wave lies after the join point), False for an end.
        lo, hi: (M,) optional inclusive limits for the join point.
        fit_lo, fit_hi: (M,) optional inclusive limits for the fitted samples (default
            ``lo``/``hi``): samples beyond them (a neighbouring wave) get zero weight.
        with_ratio: also return, per row, the hinge residual divided by that of a smooth
            cubic fitted over the same window (small: a true corner; near 1 or above: the
            boundary is a gradual bend the hinge explains no better than a smooth curve).

    Returns:
        (M,) int64 join point (sample where the two lines meet); ``center`` where no join
        point with the required sign fits inside the row. With ``with_ratio``: (join, ratio).

    Example (a half-sine wave leaving a flat baseline after sample 40, seen through a
    zero-phase 40 Hz low-pass at 500 Hz; the search starts 5 samples early):
        >>> import numpy as np
        >>> from scipy.signal import butter, sosfiltfilt
        >>> y = np.sin(np.pi * np.clip((np.arange(100.0) - 40.0) / 50.0, 0.0, 1.0))
        >>> y = sosfiltfilt(butter(2, 40.0, fs=500.0, output="sos"), y)[None, :]
        >>> int(hinge_corner(y, np.array([35]), 10, 10, np.array([1.0]), True)[0])
        40
    """
    m, w = y.shape
    center = np.asarray(center, dtype=np.int64)
    out = center.copy()
    if m == 0 or half_win < 2:
        return (out, np.full(m, np.inf)) if with_ratio else out
    outer, basis_t, left, cubic_outer, cubic = _hinge_bases(half_search, half_win, wave_after)
    span = half_search + half_win
    offs = np.arange(-half_search, half_search + 1)
    ks = center[:, None] + offs[None, :]  # (M, K)
    lo_k = np.zeros(m, dtype=np.int64) if lo is None else np.asarray(lo, dtype=np.int64)
    hi_k = np.full(m, w - 1, dtype=np.int64) if hi is None else np.asarray(hi, dtype=np.int64)
    valid = (center[:, None] >= 0) & (ks >= lo_k[:, None]) & (ks <= hi_k[:, None])
    # One window per row for all join points, so their residuals compare; samples beyond
    # lo/hi (the neighbouring wave) get zero weight.
    f_lo = lo_k if fit_lo is None else np.asarray(fit_lo, dtype=np.int64)
    f_hi = hi_k if fit_hi is None else np.asarray(fit_hi, dtype=np.int64)
    pos = center[:, None] + np.arange(-span, span + 1)[None, :]
    wt = ((pos >= f_lo[:, None]) & (pos <= f_hi[:, None]) & (pos >= 0) & (pos < w)).astype(
        np.float64
    )
    seg = np.take_along_axis(y, np.clip(pos, 0, w - 1), axis=1).astype(np.float64) * wt
    # Weighted normal equations of all rows and join points at once as two matrix products
    # (the weights are 0/1, so seg * wt carries them into the right-hand side).
    nk = offs.size
    gram = (wt @ outer).reshape(m, nk, 4, 4) + 1e-9 * np.eye(4)
    rhs = (seg @ basis_t).reshape(m, nk, 4)
    coef = np.linalg.solve(gram, rhs[..., None])[..., 0]  # (M, K, 4)
    sse = np.einsum("mh,mh->m", seg, seg)[:, None] - np.einsum("mki,mki->mk", coef, rhs)
    c2 = coef[:, :, 2]
    # Enough samples on each side of the join point to fit its line.
    n_left = wt @ left
    n_right = wt.sum(axis=1)[:, None] - n_left
    valid &= (n_left >= 3) & (n_right >= 3)
    s = np.asarray(sign, dtype=np.float64)[:, None]
    valid &= (s == 0) | (c2 * s > 0)
    sse = np.where(valid, sse, np.inf)
    best = np.argmin(sse, axis=1)
    found = valid.any(axis=1)
    join = np.where(found, np.take_along_axis(ks, best[:, None], axis=1)[:, 0], out)
    if not with_ratio:
        return join
    # The same window fitted by a smooth cubic (as many coefficients as the hinge model).
    pg = (wt @ cubic_outer).reshape(m, 4, 4) + 1e-9 * np.eye(4)
    prhs = seg @ cubic
    pcoef = np.linalg.solve(pg, prhs[..., None])[..., 0]
    sse_poly = np.einsum("mh,mh->m", seg, seg) - np.einsum("mi,mi->m", pcoef, prhs)
    sse_best = np.take_along_axis(sse, best[:, None], axis=1)[:, 0]
    ratio = np.where(found, np.maximum(sse_best, 0.0) / np.maximum(sse_poly, 1e-12), np.inf)
    return join, ratio
