"""Beat grouping (morphology and timing) and the representative (median) beat.

Beats are grouped by the correlation of their multi-lead QRS windows with group templates
(template matching as in classic arrhythmia monitors; correlation threshold 0.9 is common
practice, no source) and labelled by timing: a beat whose preceding RR is shorter than 85 %
of the local median RR is premature (common practice, no source; AAMI EC57 leaves the
threshold to the algorithm). The dominant group is the largest group of normally timed beats.
``BeatKind.PACED`` is not assigned here: paced beats are grouped by morphology like any other
beat, and ``pacing.paced_beats`` later relabels each beat with a stimulus before its QRS
(keeping a paced dominant rhythm dominant: ``Beat.in_dominant_rhythm``).

The representative beat is the sample-by-sample median of the dominant beats after aligning
each on the dominant QRS template by cross-correlation (the usual way a resting-ECG median
beat is formed: common practice, no source). The median, unlike the mean, ignores a minority
of beats spoilt by artefact.
"""

from __future__ import annotations

import numpy as np
from scipy import ndimage

from reviewapp.core.fiducials import Beat, BeatKind, RepresentativeBeat

# Template window around R for morphology grouping, seconds.
TEMPLATE_PRE_S = 0.10
TEMPLATE_POST_S = 0.12
CORRELATION_MIN = 0.90
AMPLITUDE_RATIO_RANGE = (0.5, 2.0)
PREMATURE_RR_FRACTION = 0.85
LOCAL_RR_BEATS = 9
MAX_GROUPS = 8
SEED_SAMPLE = 400  # beats sampled to pick each group's seed (keeps grouping O(n))

# Representative window: R - min(450 ms, 0.45 RR) .. R + min(900 ms, RR10 - 80 ms), RR = median
# and RR10 = 10th percentile of the RR of all detected beats, so the next QRS complex stays
# outside (its onset lies at most
# about 80 ms before its R: common practice, no source) and at 0.45 RR before R mostly the
# previous T wave too. The window reaches the next beat's P: the T of a long QT ends close to
# it at any rate (at 150 bpm, RR 400 ms, a QT of 300 ms ends 260 ms after R; the earlier
# 0.65 RR cut it at 260 ms), and the delineator keeps the T end before the next P
# (``delineate_core``: this beat's PR carried one RR on). 900 ms after R holds a QT of about
# 850 ms at slow rates (QTDB sel33 at RR 1.7 s).
REP_PRE_S = 0.45
REP_POST_S = 0.90
REP_PRE_RR = 0.45
REP_NEXT_QRS_S = 0.08
REP_FIT_RR = 0.65
ALIGN_MAX_S = 0.010  # cross-correlation refinement of R, +-10 ms (at least +-2 samples)
ALIGN_PRE_S = 0.06
ALIGN_POST_S = 0.06
MAX_REP_BEATS = 120


def _windows(
    x: np.ndarray, r: np.ndarray, pre: int, post: int, leads: np.ndarray | None = None
) -> np.ndarray:
    """(n_beats, pre+post+1, n_leads) windows around r, edge values repeated past the ends.

    ``leads`` (bool mask) selects columns after gathering, so the record is never copied.
    """
    n = x.shape[0]
    idx = np.clip(r[:, None] + np.arange(-pre, post + 1)[None, :], 0, n - 1)
    seg = x[idx]
    if leads is not None and not leads.all():
        seg = seg[..., leads]
    return seg


def median_axis0(a: np.ndarray) -> np.ndarray:
    """``np.median(a, axis=0)`` for finite data, several times faster (one partition pass).

    >>> median_axis0(np.array([[1.0, 5.0], [3.0, 2.0], [2.0, 9.0], [4.0, 0.0]]))
    array([2.5, 3.5])
    """
    n = a.shape[0]
    flat = np.ascontiguousarray(a.reshape(n, -1).T)
    k = n // 2
    if n % 2:
        out = np.partition(flat, k, axis=1)[:, k]
    else:
        part = np.partition(flat, (k - 1, k), axis=1)
        out = 0.5 * (part[:, k - 1] + part[:, k])
    return out.reshape(a.shape[1:])


def _normalise(seg: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Flatten beats to zero-mean unit-norm vectors (per-lead mean removed); also the norms."""
    seg = seg - seg.mean(axis=1, keepdims=True)
    flat = seg.reshape(seg.shape[0], -1)
    norms = np.linalg.norm(flat, axis=1)
    safe = np.where(norms > 0, norms, 1.0)
    return flat / safe[:, None], norms


def local_median_rr(r: np.ndarray) -> np.ndarray:
    """Median of the RR intervals around each beat (``LOCAL_RR_BEATS`` wide), samples.

    Entry i is for the RR ending at beat i (entry 0 copies entry 1).
    """
    if r.size < 2:
        return np.zeros(r.size)
    rr = np.diff(r).astype(np.float64)
    med = ndimage.median_filter(rr, size=min(LOCAL_RR_BEATS, rr.size), mode="mirror")
    return np.concatenate([med[:1], med])


def group_beats(
    conditioned_mv: np.ndarray, fs_hz: float, r: np.ndarray, usable: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Morphology group of each beat (0 = largest group, -1 = unique) and its correlation.

    Greedy template clustering: pick as seed the beat with the most look-alikes (correlation
    >= ``CORRELATION_MIN`` among a sample of the unassigned beats), form the template as the
    median of the seed's look-alikes, then take every unassigned beat that correlates with the
    template at >= ``CORRELATION_MIN`` and whose RMS is within ``AMPLITUDE_RATIO_RANGE`` of it.
    Beats cut by the record's ends join the group whose template they match best over their
    recorded part. Groups are renumbered by size. Returns (group ids, correlation with own
    template).
    """
    nb = r.size
    groups = np.full(nb, -1, dtype=np.int64)
    corr = np.zeros(nb)
    if nb == 0:
        return groups, corr
    pre = round(TEMPLATE_PRE_S * fs_hz)
    post = round(TEMPLATE_POST_S * fs_hz)
    n = conditioned_mv.shape[0]
    seg = _windows(conditioned_mv, r, pre, post, usable).astype(np.float32, copy=False)
    z, norms = _normalise(seg.astype(np.float64))
    cut = (r - pre < 0) | (r + post >= n)
    groups[cut] = -2  # kept out of clustering, matched afterwards
    templates: list[np.ndarray] = []
    rng = np.random.default_rng(0)
    k = 0
    while k < MAX_GROUPS:
        free = np.flatnonzero(groups == -1)
        if free.size == 0:
            break
        sample = free if free.size <= SEED_SAMPLE else np.sort(rng.choice(free, SEED_SAMPLE, False))
        c = z[sample] @ z[sample].T
        counts = (c >= CORRELATION_MIN).sum(axis=1)
        seed_i = int(np.argmax(counts))
        if counts[seed_i] < 1:
            break
        members = sample[c[seed_i] >= CORRELATION_MIN]
        template = median_axis0(seg[members])
        tz, tnorm = _normalise(template[None].astype(np.float64))
        cf = z[free] @ tz[0]
        ratio = norms[free] / tnorm[0] if tnorm[0] > 0 else np.ones(free.size)
        take = (
            (cf >= CORRELATION_MIN)
            & (ratio >= AMPLITUDE_RATIO_RANGE[0])
            & (ratio <= AMPLITUDE_RATIO_RANGE[1])
        )
        take[np.searchsorted(free, sample[seed_i])] = True  # the seed always joins its group
        groups[free[take]] = k
        corr[free[take]] = cf[take]
        templates.append(template)
        k += 1
    groups[cut] = -1
    for b in np.flatnonzero(cut):
        groups[b], corr[b] = _match_cut_beat(seg[b], r[b] - pre, n, templates)
    # Renumber groups by size (largest first); singletons that matched nothing stay -1.
    ids, counts = np.unique(groups[groups >= 0], return_counts=True)
    order = ids[np.argsort(-counts, kind="stable")]
    remap = np.full(MAX_GROUPS + 1, -1, dtype=np.int64)
    remap[order] = np.arange(order.size)
    out = np.where(groups >= 0, remap[np.maximum(groups, 0)], -1)
    return out, corr


def _match_cut_beat(
    window: np.ndarray, start: int, n: int, templates: list[np.ndarray]
) -> tuple[int, float]:
    """Best group for a beat whose window runs past the record: correlate the recorded part."""
    k = np.arange(window.shape[0]) + start
    valid = (k >= 0) & (k < n)
    if valid.sum() < 0.5 * valid.size or not templates:
        return -1, 0.0
    part, _ = _normalise(window[valid][None].astype(np.float64))
    best, best_c = -1, CORRELATION_MIN
    for g, t in enumerate(templates):
        tz, _ = _normalise(t[valid][None].astype(np.float64))
        c = float(part[0] @ tz[0])
        if c >= best_c:
            best, best_c = g, c
    return best, (best_c if best >= 0 else 0.0)


def classify_beats(
    conditioned_mv: np.ndarray, fs_hz: float, r_samples: np.ndarray, usable: np.ndarray
) -> tuple[Beat, ...]:
    """Label each detected beat DOMINANT, PREMATURE or UNKNOWN and give its morphology group.

    - group: ``group_beats`` (multi-lead template correlation); beats matching no group get
      their own group id after the real groups.
    - premature: RR to the previous beat < 85 % of the local median RR; a dominant-group beat
      right after an ectopic beat is timed from the previous dominant-group beat instead
      (so the sinus beat after an interpolated PVC is not premature).
    - dominant group: the group with the most normally timed beats.
    - DOMINANT = dominant group and not premature; PREMATURE = premature (any group);
      UNKNOWN = other morphology, normally timed.

    >>> fs = 250.0
    >>> x = np.zeros((2500, 1), dtype=np.float32)
    >>> r = np.arange(200, 2400, 250)
    >>> for i in r: x[i - 3 : i + 4, 0] += np.hanning(7).astype("f4")
    >>> {b.kind for b in classify_beats(x, fs, r, np.array([True]))} == {BeatKind.DOMINANT}
    True
    """
    r = np.asarray(r_samples, dtype=np.int64)
    usable = np.asarray(usable, dtype=bool)
    if r.size == 0:
        return ()
    if not usable.any():
        usable = np.ones(conditioned_mv.shape[1], dtype=bool)
    groups, _ = group_beats(conditioned_mv, fs_hz, r, usable)
    n_real = int(groups.max()) + 1 if (groups >= 0).any() else 0
    lone = np.flatnonzero(groups < 0)
    groups[lone] = n_real + np.arange(lone.size)
    premature = np.zeros(r.size, dtype=bool)
    local_rr = local_median_rr(r)
    if r.size >= 3:
        rr = np.concatenate([[np.inf], np.diff(r).astype(np.float64)])
        premature = rr < PREMATURE_RR_FRACTION * local_rr
    normal_counts = np.bincount(groups[~premature], minlength=groups.max() + 1)
    dominant = int(np.argmax(normal_counts)) if normal_counts.size else 0
    if r.size >= 3:
        # A dominant-morphology beat that follows an ectopic beat is timed from the previous
        # dominant beat: the sinus beat after an interpolated PVC is on time, not premature.
        is_dom = groups == dominant
        last_dom = np.maximum.accumulate(np.where(is_dom, np.arange(r.size), -1))
        prev_dom = np.concatenate([[-1], last_dom[:-1]])
        after_ectopic = is_dom & (np.concatenate([[True], ~is_dom[:-1]])) & (prev_dom >= 0)
        rr_dom = (r - r[np.maximum(prev_dom, 0)]).astype(np.float64)
        premature[after_ectopic] = (
            rr_dom[after_ectopic] < PREMATURE_RR_FRACTION * local_rr[after_ectopic]
        )
    kinds = np.where(premature, 1, np.where(groups == dominant, 0, 2))
    table = (BeatKind.DOMINANT, BeatKind.PREMATURE, BeatKind.UNKNOWN)
    return tuple(
        Beat(r=int(ri), kind=table[int(ki)], group=int(gi))
        for ri, ki, gi in zip(r, kinds, groups, strict=True)
    )


def _align(
    x: np.ndarray,
    leads: np.ndarray,
    r: np.ndarray,
    template: np.ndarray,
    pre: int,
    post: int,
    max_lag: int,
) -> np.ndarray:
    """Shift of each beat (samples, |shift| <= max_lag) maximising correlation with template."""
    t = template - template.mean(axis=0, keepdims=True)
    tn = np.linalg.norm(t)
    if tn == 0 or r.size == 0:
        return np.zeros(r.size, dtype=np.int64)
    lags = np.arange(-max_lag, max_lag + 1)
    scores = np.empty((r.size, lags.size))
    wide = _windows(x, r, pre + max_lag, post + max_lag, leads).astype(np.float64)
    width = pre + post + 1
    for j in range(lags.size):
        seg = wide[:, j : j + width]
        seg = seg - seg.mean(axis=1, keepdims=True)
        num = np.einsum("bwl,wl->b", seg, t)
        den = np.sqrt(np.einsum("bwl,bwl->b", seg, seg)) * tn
        scores[:, j] = np.where(den > 0, num / np.where(den > 0, den, 1.0), -np.inf)
    best = np.argmax(scores, axis=1)
    # Ties (e.g. identical copies) resolve to the smallest |lag|: argmax takes the first, so
    # prefer lag 0 explicitly when it scores as high as the best.
    zero = max_lag
    keep0 = scores[:, zero] >= scores[np.arange(r.size), best] - 1e-12
    return np.where(keep0, 0, lags[best]).astype(np.int64)


def representative_beat(
    conditioned_mv: np.ndarray, fs_hz: float, beats: tuple[Beat, ...], usable: np.ndarray
) -> RepresentativeBeat | None:
    """Median beat of the dominant-rhythm beats (``Beat.in_dominant_rhythm``: DOMINANT, or
    PACED within the dominant group), per lead, aligned by cross-correlation.

    Window: R - min(450 ms, 0.45 RR) to R + min(900 ms, RR10 - 80 ms), RR = median RR and
    RR10 = its 10th percentile over all detected beats (fixed 450/900 ms with one beat;
    ``rr_samples`` holds RR). Beats whose window (plus the alignment range) does not fit
    in the record are skipped. Each beat's R is refined within +-10 ms by
    maximising the correlation of its QRS (R +-60 ms, usable leads) with the median QRS of the
    unaligned beats; then the median is taken sample by sample. At most ``MAX_REP_BEATS``
    beats are used (those most like the template). Returns None without a usable beat.

    >>> fs = 250.0
    >>> beat = np.hanning(21).astype("f4")
    >>> x = np.zeros((3000, 1), dtype=np.float32)
    >>> r = np.arange(300, 2800, 250)
    >>> for i in r: x[i - 10 : i + 11, 0] = beat
    >>> rep = representative_beat(x, fs, tuple(Beat(int(i)) for i in r), np.array([True]))
    >>> rep.n_beats_used, float(rep.waveform_mv[rep.r_index, 0])
    (10, 1.0)
    """
    x = np.asarray(conditioned_mv, dtype=np.float32)
    usable = np.asarray(usable, dtype=bool)
    if not usable.any():
        usable = np.ones(x.shape[1], dtype=bool)
    n = x.shape[0]
    dom = np.array([b.r for b in beats if b.in_dominant_rhythm], dtype=np.int64)
    if dom.size == 0:
        return None
    all_r = np.array([b.r for b in beats], dtype=np.int64)
    rr = np.diff(np.sort(all_r))
    rr_med = float(np.median(rr)) / fs_hz if rr.size else np.inf
    pre = round(min(REP_PRE_S, REP_PRE_RR * rr_med) * fs_hz)
    # The shortest RRs set where the window ends (10th percentile): in an irregular rhythm
    # the next QRS of the short cycles would otherwise enter the median beat's tail.
    rr_short = float(np.percentile(rr, 10)) / fs_hz if rr.size else np.inf
    classic = round(min(REP_POST_S, REP_FIT_RR * rr_med) * fs_hz)
    post = max(classic, round(min(REP_POST_S, rr_short - REP_NEXT_QRS_S) * fs_hz))
    max_lag = max(2, round(ALIGN_MAX_S * fs_hz))
    # Which beats fit is judged on the classic window (R + min(900 ms, 0.65 RR)), so the
    # median is taken over the same beats; past a record's last samples the longer tail of
    # the last beat repeats its final value (a minority the median ignores).
    fits = (dom - pre - max_lag >= 0) & (dom + classic + max_lag < n)
    dom = dom[fits]
    if dom.size == 0:
        return None
    a_pre = round(ALIGN_PRE_S * fs_hz)
    a_post = round(ALIGN_POST_S * fs_hz)
    qrs = _windows(x, dom, a_pre, a_post, usable)
    template = median_axis0(qrs)
    if dom.size > MAX_REP_BEATS:
        # Long records: keep the beats most like the template (before the costlier alignment).
        z, _ = _normalise(qrs.astype(np.float64))
        tz, _ = _normalise(template[None].astype(np.float64))
        keep = np.argsort(-(z @ tz[0]), kind="stable")[:MAX_REP_BEATS]
        dom = np.sort(dom[keep])
        template = median_axis0(_windows(x, dom, a_pre, a_post, usable))
    aligned = dom + _align(x, usable, dom, template, a_pre, a_post, max_lag)
    seg = _windows(x, aligned, pre, post)
    wave = median_axis0(seg).astype(np.float32)
    rr_samples = round(rr_med * fs_hz) if np.isfinite(rr_med) else None
    return RepresentativeBeat(
        waveform_mv=wave, r_index=pre, n_beats_used=int(aligned.size), rr_samples=rr_samples
    )
