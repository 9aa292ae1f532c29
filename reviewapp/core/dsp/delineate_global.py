"""Global wave boundaries by the standard's definition: earliest onset, latest end over leads.

The resting-ECG standards define a global duration as running from the EARLIEST onset to the
LATEST offset of the wave over the simultaneously recorded leads (AHA/ACCF/HRS
recommendations for the standardization and interpretation of the ECG, Part I: Kligfield P et
al., Circulation 115:1306-1324, 2007; IEC 60601-2-25, global measurements). Taken literally,
one noisy lead would decide it, so the rule here (this module's own) is:

    the global onset is the earliest lead onset that a SECOND lead confirms, i.e. another
    lead's onset lies within ``agree`` of it; the global end is the latest lead end confirmed
    the same way. Leads vote only where their own wave is clear (``votes``). Where no lead
    mark is confirmed, or fewer than three leads vote, the multi-lead mark found before
    (``fallback``) stays.

With two leads a "confirmed" extreme only means that both leads agree, and it is no more
robust than either lead: on the two-lead QT database (QTDB q1c, both leads in view) taking it
moved the QRS end 2 ms further from the readers (mean +3.1 -> +5.3 ms), so the rule needs at
least three voting leads (``DelineationParams.glob_min_votes``).

The confirmed extreme never lies inside the fallback mark (an onset is never later, an end
never earlier, than the multi-lead mark the delineator found first): that mark already
describes where the wave is in most leads, and the standard's boundary can only be wider.

Each lead keeps its own marks; only the global (all-lead) marks change.

Example: onsets of five leads in samples; lead 0 is a stray 30 samples early, so the earliest
confirmed onset is 100 (lead 1, confirmed by lead 2 at 103):

>>> import numpy as np
>>> v = np.array([[70, 100, 103, 110, 112]])
>>> int(confirmed_extreme(v, np.ones((1, 5), bool), 5, True)[0])
100
>>> int(confirmed_extreme(v, np.ones((1, 5), bool), 5, False)[0])
112
"""

from __future__ import annotations

import numpy as np

from reviewapp.core.dsp.delineate_ops import first_true


def confirmed_extreme(
    marks: np.ndarray,
    votes: np.ndarray,
    agree: int,
    earliest: bool,
    min_votes: int = 2,
    confirm: int = 1,
) -> np.ndarray:
    """Per row, the earliest (or latest) voting mark with another voting mark within ``agree``.

    Args:
        marks: (B, U) lead marks, sample indices, -1 = none.
        votes: (B, U) bool, which leads vote.
        agree: samples; two marks at most this far apart confirm each other.
        earliest: True for an onset (earliest), False for an end (latest).
        min_votes: rows with fewer voting marks get -1 (no decision).
        confirm: how many other voting marks must lie within ``agree`` (on the inner side).

    Returns:
        (B,) the confirmed extreme, -1 where fewer than two voting marks agree or fewer than
        ``min_votes`` leads vote.
    """
    ok = votes & (marks >= 0)
    if earliest:
        s = np.sort(np.where(ok, marks, np.iinfo(np.int64).max), axis=1)
    else:
        s = np.sort(np.where(ok, marks, -1), axis=1)[:, ::-1]
    n = ok.sum(axis=1)
    if s.shape[1] < 2:
        return np.full(s.shape[0], -1, dtype=np.int64)
    c = max(1, min(confirm, s.shape[1] - 1))
    gaps = np.abs(s[:, c:] - s[:, :-c])  # sorted from the extreme inward
    k = np.arange(s.shape[1] - c)[None, :]
    good = (gaps <= agree) & (k + c < n[:, None])
    i = first_true(good)
    out = np.take_along_axis(s, np.clip(i, 0, s.shape[1] - 1)[:, None], axis=1)[:, 0]
    return np.where((i >= 0) & (n >= min_votes), out, -1).astype(np.int64)


def widen(fallback: np.ndarray, confirmed: np.ndarray, *, earliest: bool) -> np.ndarray:
    """The global mark: the confirmed extreme where it lies outside ``fallback``, else the
    fallback (-1 entries are absent; an absent fallback stays absent)."""
    have = (fallback >= 0) & (confirmed >= 0)
    better = confirmed < fallback if earliest else confirmed > fallback
    return np.where(have & better, confirmed, fallback)
