"""Replicate averaging, change from baseline, and the mean change per timepoint with its CI.

The steps of the central-tendency analysis of a QT study (ICH E14, 2005):

1. Replicates: the ECGs of one subject at one timepoint (e.g. a triplicate) are averaged,
   value by value (each ECG's QTc first, then the mean): ``replicate_means``.
2. Baseline: the mean of all of a subject's ECGs at the baseline timepoint(s) (pre-dose).
3. Change from baseline: a subject's replicate mean at a timepoint minus their baseline:
   ``changes_from_baseline``.
4. Per timepoint: the mean change over subjects with its two-sided 90 % confidence interval
   from the t distribution with n - 1 degrees of freedom (``scipy.stats.t``); its upper bound
   is the one-sided 95 % upper bound ICH E14 compares with 10 ms: ``summarise``.

>>> s = summarise("post-dose 2 h", "qtc_fridericia_ms", [4.0, 8.0, 12.0])
>>> s.mean, s.sd, round(s.ci_high - s.mean, 4)  # t(0.95, 2) = 2.919986 (Student's t table)
(8.0, 4.0, 6.7434)
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from scipy import stats

CI_LEVEL = 0.90


@dataclass(frozen=True)
class EcgValues:
    """The values of one ECG the analysis uses (ms, bpm); None where not measured."""

    record: str
    subject: str
    timepoint: str
    values: Mapping[str, float | None]


@dataclass(frozen=True)
class ReplicateMean:
    """Mean of one quantity over a subject's ECGs at one timepoint."""

    subject: str
    timepoint: str
    quantity: str
    n: int
    mean: float
    sd: float | None  # None for a single ECG


@dataclass(frozen=True)
class Change:
    """A subject's change from baseline of one quantity at one timepoint."""

    subject: str
    timepoint: str
    quantity: str
    change: float
    n_ecgs: int
    n_baseline_ecgs: int


@dataclass(frozen=True)
class TimepointSummary:
    """Mean change over subjects at one timepoint, SD and the two-sided 90 % CI."""

    timepoint: str
    quantity: str
    n: int
    mean: float
    sd: float | None
    ci_low: float | None
    ci_high: float | None
    level: float = CI_LEVEL


def _mean_sd(values: Sequence[float]) -> tuple[float, float | None]:
    arr = np.asarray(values, dtype=float)
    return float(arr.mean()), (float(arr.std(ddof=1)) if arr.size > 1 else None)


def replicate_means(
    ecgs: Iterable[EcgValues], quantities: Sequence[str]
) -> dict[tuple[str, str, str], ReplicateMean]:
    """``{(subject, timepoint, quantity): ReplicateMean}`` over the ECGs that have the value."""
    groups: dict[tuple[str, str, str], list[float]] = {}
    for e in ecgs:
        for q in quantities:
            v = e.values.get(q)
            if v is not None and math.isfinite(v):
                groups.setdefault((e.subject, e.timepoint, q), []).append(float(v))
    out = {}
    for key, vals in groups.items():
        mean, sd = _mean_sd(vals)
        out[key] = ReplicateMean(*key, n=len(vals), mean=mean, sd=sd)
    return out


def baseline_means(
    ecgs: Iterable[EcgValues], baseline_labels: Sequence[str], quantities: Sequence[str]
) -> dict[tuple[str, str], ReplicateMean]:
    """``{(subject, quantity): mean over all the subject's baseline ECGs}``."""
    labels = set(baseline_labels)
    pooled = [
        EcgValues(e.record, e.subject, "baseline", e.values) for e in ecgs if e.timepoint in labels
    ]
    return {(s, q): m for (s, _t, q), m in replicate_means(pooled, quantities).items()}


def changes_from_baseline(
    means: Mapping[tuple[str, str, str], ReplicateMean],
    baselines: Mapping[tuple[str, str], ReplicateMean],
    timepoints: Sequence[str],
) -> list[Change]:
    """Each subject's change at each of ``timepoints`` (those with a baseline and a value)."""
    wanted = set(timepoints)
    out = []
    for (subject, tp, q), m in means.items():
        base = baselines.get((subject, q))
        if tp in wanted and base is not None:
            out.append(Change(subject, tp, q, m.mean - base.mean, m.n, base.n))
    order = {t: i for i, t in enumerate(timepoints)}
    return sorted(out, key=lambda c: (c.quantity, order[c.timepoint], c.subject))


def summarise(
    timepoint: str, quantity: str, changes: Sequence[float], level: float = CI_LEVEL
) -> TimepointSummary:
    """Mean, SD and two-sided ``level`` CI (t distribution, n - 1 df) of subjects' changes."""
    if not changes:
        raise ValueError("no changes to summarise")
    mean, sd = _mean_sd(changes)
    n = len(changes)
    lo = hi = None
    if sd is not None:
        se = sd / math.sqrt(n)
        if se > 0:
            lo, hi = (float(x) for x in stats.t.interval(level, n - 1, loc=mean, scale=se))
        else:
            lo = hi = mean
    return TimepointSummary(timepoint, quantity, n, mean, sd, lo, hi, level)


def summaries(changes: Iterable[Change], timepoints: Sequence[str]) -> list[TimepointSummary]:
    """``summarise`` for every (timepoint, quantity) with at least one subject."""
    groups: dict[tuple[str, str], list[float]] = {}
    for c in changes:
        groups.setdefault((c.timepoint, c.quantity), []).append(c.change)
    order = {t: i for i, t in enumerate(timepoints)}
    keys = sorted(groups, key=lambda k: (k[1], order.get(k[0], len(order))))
    return [summarise(tp, q, groups[(tp, q)]) for tp, q in keys]
