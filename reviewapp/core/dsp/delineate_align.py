"""Per-beat boundaries by local template matching against the representative beat.

Each boundary found on the representative (median) beat is carried to every dominant beat and
then moved by the lag that maximises the correlation between the beat's own signal and the
median beat around that boundary (all usable leads together, each segment's mean removed):
template matching, as median-beat programs align beats (common practice, no single source).
The median beat has far less noise than a single beat, so its boundaries are steadier; the lag
search lets every beat follow its own signal (e.g. a QT that shortens after a short RR).
Measured on QTDB/LUDB the per-beat errors are then set by the median beat's marks: the lag
ranges below change the pooled error SD by < 0.5 ms.

Segments and lag ranges per boundary (ms, before..after the boundary, +-lag):

========  ===============  =====
boundary  segment          lag
========  ===============  =====
P onset   -40 .. +40       +-24
P end     -40 .. +40       +-24
QRS on    -30 .. +30       +-12
QRS end   -30 .. +30       +-16
T end     -120 .. +40      +-60
========  ===============  =====
"""

from __future__ import annotations

import numpy as np

# (segment before ms, segment after ms, max lag ms, signal key) per column P_ON..T_OFF.
ALIGN_SPEC: tuple[tuple[float, float, float, str], ...] = (
    (40.0, 40.0, 24.0, "slow"),
    (40.0, 40.0, 24.0, "slow"),
    (30.0, 30.0, 12.0, "fast"),
    (30.0, 30.0, 16.0, "fast"),
    (120.0, 40.0, 60.0, "slow"),
)


def align_lags(
    beat_sig: np.ndarray,
    rep_sig: np.ndarray,
    beat_expected: np.ndarray,
    rep_mark: int,
    before: int,
    after: int,
    max_lag: int,
    stride: int = 1,
) -> tuple[np.ndarray, np.ndarray]:
    """Lag (samples) per beat that best matches the beat around ``beat_expected`` to the rep.

    Args:
        beat_sig: (n_samples, n_used_leads) beat-record signal.
        rep_sig: (n_window, n_used_leads) representative-beat signal.
        beat_expected: (B,) record index where each beat's boundary would be with zero lag.
        rep_mark: boundary index in the representative window.
        before, after: segment extent around the boundary, samples.
        max_lag: largest lag tried, samples.
        stride: compare every ``stride``-th segment sample and try every ``stride``-th lag
            (keeps high sampling rates cheap; the lag resolution becomes stride samples).

    Returns:
        (lags (B,), correlation of the matched segments (B,)); lag 0 / correlation 0 where the
        segment does not fit in the record or the representative window.

    >>> import numpy as np
    >>> t = np.arange(400.0)
    >>> rep = np.exp(-0.5 * ((t - 200) / 10) ** 2)[:, None]
    >>> rec = np.exp(-0.5 * ((t - 205) / 10) ** 2)[:, None]
    >>> lag, corr = align_lags(rec, rep, np.array([200]), 200, 30, 30, 10)
    >>> int(lag[0]), bool(corr[0] > 0.99)
    (5, True)
    """
    n, nl = beat_sig.shape
    nb = beat_expected.size
    lags = np.zeros(nb, dtype=np.int64)
    corr = np.zeros(nb)
    if nb == 0 or rep_mark - before < 0 or rep_mark + after >= rep_sig.shape[0]:
        return lags, corr
    step = max(1, int(stride))
    tmpl = rep_sig[rep_mark - before : rep_mark + after + 1 : step]  # (S, L)
    tmpl = tmpl - tmpl.mean(axis=0, keepdims=True)
    tn = float(np.sqrt(np.sum(tmpl * tmpl)))
    if tn == 0.0:
        return lags, corr
    s_len = tmpl.shape[0]
    k = 2 * max_lag + 1
    # Each beat's stretch covering every lag: lag j (0..k-1) uses ext[j : j + step*S : step].
    start = beat_expected - before - max_lag
    span = k + step * (s_len - 1)
    fits = (start >= 0) & (start + span <= n)
    idx = np.clip(start[:, None] + np.arange(span)[None, :], 0, n - 1)
    ext = beat_sig[idx].astype(np.float64)  # (B, span, L)
    num = np.zeros((nb, k))
    var = np.zeros((nb, k))
    # Lags are tried every ``step`` samples (the segment is compared every step-th sample,
    # so finer lags would add nothing at rates far above what the boundaries need); at those
    # lags the comparison is a sliding correlation (direct dot products) and sliding sums
    # (cumulative sums).
    for ph in range(0, min(step, k), step):
        sub = ext[:, ph::step]  # (B, m, L)
        n_lag = len(range(ph, k, step))
        # The template is zero-mean per lead, so the segment mean drops out of the numerator.
        # A direct sliding dot product (the segments are short: an FFT costs more here).
        win = np.lib.stride_tricks.sliding_window_view(sub[:, : n_lag + s_len - 1], s_len, axis=1)
        num[:, ph::step] = np.einsum("bkls,sl->bk", win, tmpl)
        c1 = np.concatenate([np.zeros((nb, 1, nl)), np.cumsum(sub, axis=1)], axis=1)
        c2 = np.concatenate([np.zeros((nb, 1, nl)), np.cumsum(sub * sub, axis=1)], axis=1)
        sx = c1[:, s_len : s_len + n_lag] - c1[:, :n_lag]
        sxx = c2[:, s_len : s_len + n_lag] - c2[:, :n_lag]
        var[:, ph::step] = np.maximum(sxx - sx * sx / s_len, 0.0).sum(axis=2)
    den = np.sqrt(var) * tn
    c = np.where(den > 1e-12 * tn, num / np.where(den > 0, den, 1.0), -np.inf)
    best = np.argmax(c, axis=1)
    all_lags = np.arange(-max_lag, max_lag + 1)
    lags = np.where(fits, all_lags[best], 0)
    corr = np.where(fits, c[np.arange(nb), best], 0.0)
    return lags, corr
