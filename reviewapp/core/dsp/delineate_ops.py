"""Row-wise array operations shared by the delineation modules (masks, arg-extremes, the
trapezium-area boundary, order statistics); every function works on (rows, samples) arrays."""

from __future__ import annotations

import numpy as np


def range_mask(w: int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    idx = np.arange(w)
    return (idx[None, :] >= a[:, None]) & (idx[None, :] <= b[:, None])


def first_true(mask: np.ndarray) -> np.ndarray:
    """Index of the first True per row, -1 where none."""
    i = np.argmax(mask, axis=1)
    return np.where(mask.any(axis=1), i, -1)


def last_true(mask: np.ndarray) -> np.ndarray:
    w = mask.shape[1]
    i = w - 1 - np.argmax(mask[:, ::-1], axis=1)
    return np.where(mask.any(axis=1), i, -1)


def masked_argmax(v: np.ndarray, mask: np.ndarray) -> np.ndarray:
    i = np.argmax(np.where(mask, v, -np.inf), axis=1)
    return np.where(mask.any(axis=1), i, -1)


def take(v: np.ndarray, i: np.ndarray) -> np.ndarray:
    return np.take_along_axis(v, np.clip(i, 0, v.shape[1] - 1)[:, None], axis=1)[:, 0]


def run_below(f: np.ndarray, thr: np.ndarray, k: int, forward: bool) -> np.ndarray:
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


def trapezium_boundary(
    y: np.ndarray,
    xm: np.ndarray,
    xr: np.ndarray,
    lo: np.ndarray | None = None,
    hi: np.ndarray | None = None,
) -> np.ndarray:
    """Trapezium-area boundary (Vazquez-Seisdedos et al. 2011) per row of ``y`` (M, W).

    ``xm``: steepest point of the wave's flank; ``xr``: a point beyond the boundary (after it
    for an end, before it for an onset). Returns the index in [xm, xr] maximising
    A = 0.5 |y(xm) - y(xi)| (|xr - xm| + |xr - xi|); -1 where xm or xr is -1, or where the
    optional bounds ``lo``/``hi`` (M,) leave no index of [xm, xr] to search.

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
    ym = take(y, xm_c)
    area = np.abs(ym[:, None] - y) * (np.abs(xr_c - xm_c)[:, None] + np.abs(xr_c[:, None] - idx))
    a = np.minimum(xm_c, xr_c)
    b = np.maximum(xm_c, xr_c)
    if lo is not None:
        a = np.maximum(a, lo)
    if hi is not None:
        b = np.minimum(b, hi)
    out = masked_argmax(area, range_mask(w, a, b))
    return np.where(ok, out, -1)


def detrend_between(y: np.ndarray, a: np.ndarray, b: np.ndarray, k: int) -> np.ndarray:
    """``y`` minus the straight line joining its mean levels over k samples at ``a`` and ``b``."""
    w = y.shape[1]
    cs = np.concatenate([np.zeros((y.shape[0], 1)), np.cumsum(y, axis=1)], axis=1)

    def level(i: np.ndarray) -> np.ndarray:
        i0 = np.clip(i - k // 2, 0, w - 1)
        i1 = np.clip(i0 + max(k, 1), 1, w)
        return (take(cs, i1) - take(cs, i0)) / np.maximum(i1 - i0, 1)

    ya, yb = level(a), level(b)
    span = np.maximum(b - a, 1)
    frac = (np.arange(w)[None, :] - a[:, None]) / span[:, None]
    return y - (ya[:, None] + (yb - ya)[:, None] * frac)


def order_stat(v: np.ndarray, q: float) -> np.ndarray:
    """Per row, the value at fraction ``q`` of the sorted valid (>= 0) entries; -1 if none."""
    vf = np.where(v >= 0, v, np.iinfo(np.int64).max).astype(np.int64)
    s = np.sort(vf, axis=1)
    n = (v >= 0).sum(axis=1)
    k = np.clip(np.floor(q * np.maximum(n - 1, 0) + 0.5).astype(np.int64), 0, v.shape[1] - 1)
    out = np.take_along_axis(s, k[:, None], axis=1)[:, 0]
    return np.where(n > 0, out, -1)
