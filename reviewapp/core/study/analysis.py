"""The analysis a drug-safety QT study reports, computed from the study table.

Input: the rows of ``records.csv`` (with their beats). Steps (sources in each module):

1. Which ECGs count: rows without error that have a subject, a timepoint, QT and RR (and,
   with ``signed_only``, a signed or adjudicated final reading). The others are listed with
   the reason.
2. Timepoint roles (``timepoints.plan_timepoints``): baseline, drug-free, on drug.
3. QT/RR fits (``qt_rr``): each subject's QT = a * RR^b on their drug-free ECGs (one point per
   ECG) gives QTcI; all subjects' drug-free ECGs pooled give QTcP.
4. Replicates averaged per subject and timepoint, baseline, change from baseline, mean change
   per timepoint with its 90 % CI (``change``), for QTcF, QTcB, QTcI, QTcP and heart rate.
5. ICH E14 categorical outliers (``ich_e14``) per formula: at each on-drug timepoint and at
   any on-drug timepoint, counted in subjects; the baseline categories beside them.
6. One QT/RR cloud per subject: beat-to-beat QT and RR of the dominant beats, drug-free and on
   drug, each ECG's final values, and the subject's fit.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from reviewapp.core.study.change import (
    Change,
    EcgValues,
    ReplicateMean,
    TimepointSummary,
    baseline_means,
    changes_from_baseline,
    replicate_means,
    summaries,
)
from reviewapp.core.study.ich_e14 import (
    ABSOLUTE_LIMITS_MS,
    INCREASE_LIMITS_MS,
    absolute_categories,
    absolute_label,
    increase_categories,
    increase_label,
)
from reviewapp.core.study.qt_rr import FitError, QtRrFit, fit_qt_rr
from reviewapp.core.study.table import StudyRow
from reviewapp.core.study.timepoints import TimepointPlan, plan_timepoints

# Corrected QT values the analysis reports, and their short names (ICH E14 usage).
FORMULAS: Mapping[str, str] = {
    "qtc_fridericia_ms": "QTcF",
    "qtc_bazett_ms": "QTcB",
    "qtc_individual_ms": "QTcI",
    "qtc_population_ms": "QTcP",
}
AVERAGED: tuple[str, ...] = ("qt_ms", "rr_ms", "hr_bpm", *FORMULAS)
ANY_ON_DRUG = "any on-drug timepoint"
BASELINE = "baseline"


@dataclass(frozen=True)
class CategoryCount:
    """Subjects meeting one ICH E14 category for one formula at one timepoint.

    timepoint: a label, ``ANY_ON_DRUG`` or ``BASELINE``; n_subjects: subjects with a value
    there; subjects: those who meet the category.
    """

    formula: str
    category: str
    timepoint: str
    n_subjects: int
    subjects: tuple[str, ...]

    @property
    def n_meeting(self) -> int:
        return len(self.subjects)


@dataclass(frozen=True, eq=False)
class SubjectCloud:
    """What one subject's QT/RR picture shows (ms): beats (rows of rr, qt), ECGs, the fit."""

    subject: str
    drug_free_beats: np.ndarray
    on_drug_beats: np.ndarray
    drug_free_ecgs: np.ndarray
    on_drug_ecgs: np.ndarray
    fit: QtRrFit | None
    fit_error: str


@dataclass(frozen=True, eq=False)
class StudyAnalysis:
    plan: TimepointPlan
    subjects: tuple[str, ...]
    n_records: int
    used: tuple[StudyRow, ...]
    excluded: tuple[tuple[str, str], ...]  # (record, reason)
    status_counts: Mapping[str, int]
    flagged: tuple[StudyRow, ...]
    ecgs: tuple[EcgValues, ...]
    fits: Mapping[str, QtRrFit]
    fit_errors: Mapping[str, str]
    population_fit: QtRrFit | None
    population_error: str
    means: tuple[ReplicateMean, ...]
    baselines: Mapping[tuple[str, str], ReplicateMean]
    changes: tuple[Change, ...]
    summaries: tuple[TimepointSummary, ...]
    categories: tuple[CategoryCount, ...]
    clouds: tuple[SubjectCloud, ...]
    signed_only: bool
    notes: tuple[str, ...]

    def summary(self, timepoint: str, quantity: str) -> TimepointSummary | None:
        return next(
            (s for s in self.summaries if s.timepoint == timepoint and s.quantity == quantity),
            None,
        )

    def category(self, formula: str, category: str, timepoint: str) -> CategoryCount | None:
        return next(
            (
                c
                for c in self.categories
                if (c.formula, c.category, c.timepoint) == (formula, category, timepoint)
            ),
            None,
        )

    def mean(self, subject: str, timepoint: str, quantity: str) -> ReplicateMean | None:
        return next(
            (
                m
                for m in self.means
                if (m.subject, m.timepoint, m.quantity) == (subject, timepoint, quantity)
            ),
            None,
        )


def _exclusion(row: StudyRow, signed_only: bool) -> str | None:
    if row.error:
        return row.error
    if not row.subject:
        return "no subject (header or mapping)"
    if not row.timepoint:
        return "no timepoint (header comment 'timepoint:' or mapping)"
    if row.value("qt_ms") is None or row.value("rr_ms") is None:
        return "QT or RR not measured"
    if signed_only and not row.signed:
        return f"final reading not signed ({row.status})"
    return None


def _values(rows: Sequence[StudyRow], name: str) -> list[float]:
    """One value of each row (rows are only used when they have QT and RR)."""
    return [float("nan") if r.values.get(name) is None else float(r.values[name]) for r in rows]  # type: ignore[arg-type]


def _fit_or_error(rr: Sequence[float], qt: Sequence[float]) -> tuple[QtRrFit | None, str]:
    try:
        return fit_qt_rr(np.asarray(rr, dtype=float), np.asarray(qt, dtype=float)), ""
    except FitError as err:
        return None, str(err)


def _points(rows: Iterable[StudyRow]) -> np.ndarray:
    pts = [(b.rr_ms, b.qt_ms) for r in rows for b in r.beats]
    return np.asarray(pts, dtype=float).reshape(-1, 2)


def _ecg_points(rows: Iterable[StudyRow]) -> np.ndarray:
    pts = [(r.value("rr_ms"), r.value("qt_ms")) for r in rows]
    return np.asarray(pts, dtype=float).reshape(-1, 2)


def _labels_in_time_order(rows: Sequence[StudyRow]) -> list[str]:
    """Timepoint labels by the earliest acquisition time of their ECGs (labels without one
    after, in table order): drug-free labels keep the order they were recorded in."""
    first: dict[str, tuple[str, int]] = {}
    for i, r in enumerate(rows):
        key = (r.acquired_at or "~", i)
        label = str(r.timepoint)
        if label not in first or key < first[label]:
            first[label] = key
    return sorted(first, key=lambda label: first[label])


def analyse_study(
    rows: Sequence[StudyRow],
    *,
    baseline: Sequence[str] = (),
    drug_free: Sequence[str] = (),
    signed_only: bool = False,
) -> StudyAnalysis:
    """Run every step of the module docstring on the study table's rows."""
    used: list[StudyRow] = []
    excluded: list[tuple[str, str]] = []
    for row in rows:
        why = _exclusion(row, signed_only)
        if why is None:
            used.append(row)
        else:
            excluded.append((row.record, why))
    plan = plan_timepoints(_labels_in_time_order(used), baseline=baseline, drug_free=drug_free)
    subjects = tuple(sorted({str(r.subject) for r in used}))
    free = {t.label for t in plan.timepoints if t.drug_free}
    notes: list[str] = []
    if used and not plan.baseline_labels:
        notes.append(
            "no baseline timepoint (a label starting with 'pre-dose' or 'baseline', or one given "
            "with --baseline): change from baseline and the increase categories are not computed"
        )

    fits: dict[str, QtRrFit] = {}
    fit_errors: dict[str, str] = {}
    for s in subjects:
        mine = [r for r in used if r.subject == s and r.timepoint in free]
        fit, err = _fit_or_error(_values(mine, "rr_ms"), _values(mine, "qt_ms"))
        if fit is not None:
            fits[s] = fit
        else:
            fit_errors[s] = err
    pool = [r for r in used if r.timepoint in free]
    population_fit, population_error = _fit_or_error(_values(pool, "rr_ms"), _values(pool, "qt_ms"))

    ecgs = []
    for r in used:
        qt, rr = float(r.values["qt_ms"]), float(r.values["rr_ms"])  # type: ignore[arg-type]
        fit = fits.get(str(r.subject))
        vals = {
            "qt_ms": qt,
            "rr_ms": rr,
            "hr_bpm": r.value("hr_bpm"),
            "qtc_fridericia_ms": r.value("qtc_fridericia_ms"),
            "qtc_bazett_ms": r.value("qtc_bazett_ms"),
            "qtc_individual_ms": None if fit is None else fit.qtc_ms(qt, rr),
            "qtc_population_ms": None if population_fit is None else population_fit.qtc_ms(qt, rr),
        }
        ecgs.append(EcgValues(r.record, str(r.subject), str(r.timepoint), vals))

    order = [t.label for t in plan.timepoints]
    means = replicate_means(ecgs, AVERAGED)
    bases = baseline_means(ecgs, plan.baseline_labels, AVERAGED)
    on_drug = list(plan.on_drug_labels)
    changes = changes_from_baseline(means, bases, on_drug) if plan.baseline_labels else []
    no_base = sorted({s for s in subjects if (s, "qtc_fridericia_ms") not in bases})
    if plan.baseline_labels and no_base:
        notes.append(f"no baseline ECG for {', '.join(no_base)}: no change from baseline there")
    categories = _categories(means, bases, changes, on_drug)
    clouds = tuple(
        SubjectCloud(
            s,
            _points(r for r in used if r.subject == s and r.timepoint in free),
            _points(r for r in used if r.subject == s and r.timepoint not in free),
            _ecg_points(r for r in used if r.subject == s and r.timepoint in free),
            _ecg_points(r for r in used if r.subject == s and r.timepoint not in free),
            fits.get(s),
            fit_errors.get(s, ""),
        )
        for s in subjects
    )
    status_counts: dict[str, int] = {}
    for r in rows:
        status_counts[r.status] = status_counts.get(r.status, 0) + 1
    flagged = tuple(
        r
        for r in rows
        if not r.error
        and any(r.flag(f) for f in ("not_signed", "readers_differ", "no_adjudication"))
    )
    return StudyAnalysis(
        plan=plan,
        subjects=subjects,
        n_records=len(rows),
        used=tuple(used),
        excluded=tuple(excluded),
        status_counts=status_counts,
        flagged=flagged,
        ecgs=tuple(ecgs),
        fits=fits,
        fit_errors=fit_errors,
        population_fit=population_fit,
        population_error=population_error,
        means=tuple(
            sorted(means.values(), key=lambda m: (m.subject, order.index(m.timepoint), m.quantity))
        ),
        baselines=bases,
        changes=tuple(changes),
        summaries=tuple(summaries(changes, on_drug)),
        categories=tuple(categories),
        clouds=clouds,
        signed_only=signed_only,
        notes=tuple(notes),
    )


def _categories(
    means: Mapping[tuple[str, str, str], ReplicateMean],
    bases: Mapping[tuple[str, str], ReplicateMean],
    changes: Sequence[Change],
    on_drug: Sequence[str],
) -> list[CategoryCount]:
    out: list[CategoryCount] = []
    for formula in FORMULAS:
        # Absolute QTc: at each on-drug timepoint, at any of them, and at baseline.
        per_tp = {
            tp: {s: m.mean for (s, t, q), m in means.items() if t == tp and q == formula}
            for tp in on_drug
        }
        base = {s: m.mean for (s, q), m in bases.items() if q == formula}
        for i, limit in enumerate(ABSOLUTE_LIMITS_MS):
            label = absolute_label(limit)
            any_subjects: set[str] = set()
            with_value: set[str] = set()
            for tp in on_drug:
                hit = tuple(sorted(s for s, v in per_tp[tp].items() if absolute_categories(v)[i]))
                out.append(CategoryCount(formula, label, tp, len(per_tp[tp]), hit))
                any_subjects.update(hit)
                with_value.update(per_tp[tp])
            out.append(
                CategoryCount(
                    formula, label, ANY_ON_DRUG, len(with_value), tuple(sorted(any_subjects))
                )
            )
            hit = tuple(sorted(s for s, v in base.items() if absolute_categories(v)[i]))
            out.append(CategoryCount(formula, label, BASELINE, len(base), hit))
        # Increase from baseline: at each on-drug timepoint and at any of them.
        deltas = [c for c in changes if c.quantity == formula]
        for i, limit in enumerate(INCREASE_LIMITS_MS):
            label = increase_label(limit)
            any_subjects = set()
            with_value = set()
            for tp in on_drug:
                here = {c.subject: c.change for c in deltas if c.timepoint == tp}
                hit = tuple(sorted(s for s, v in here.items() if increase_categories(v)[i]))
                out.append(CategoryCount(formula, label, tp, len(here), hit))
                any_subjects.update(hit)
                with_value.update(here)
            out.append(
                CategoryCount(
                    formula, label, ANY_ON_DRUG, len(with_value), tuple(sorted(any_subjects))
                )
            )
    return out
