"""``analysis.csv``: every number of the study analysis in one long (tidy) table.

Columns (``ANALYSIS_COLUMNS``): ``section``, ``quantity``, ``category``, ``subject``,
``timepoint``, ``n``, ``value``, ``sd``, ``ci_low``, ``ci_high``, ``ci_level``, ``unit``,
``subjects``, ``source``, ``note``. Sections:

- ``qt_rr_fit``: one row per fitted statistic (quantity ``a_ms``, ``b`` with its 95 % CI,
  ``r2``, ``residual_sd_ms``, ``rr_min_ms``, ``rr_max_ms``) per subject, and for the
  population (subject ``all``); ``n`` = drug-free ECGs; a subject without a fit has one row
  with the reason in ``note``.
- ``replicate_mean``: per subject, timepoint and quantity, ``n`` ECGs, mean (``value``), SD.
- ``baseline``: per subject and quantity, the mean of their baseline ECGs.
- ``change_from_baseline``: per subject, on-drug timepoint and quantity, the change (``value``).
- ``mean_change``: per on-drug timepoint and quantity, ``n`` subjects, mean change, SD and the
  two-sided 90 % CI (``ci_low``, ``ci_high``; t distribution, n - 1 df).
- ``categorical``: per formula (``quantity``), ICH E14 category and timepoint (a label, "any
  on-drug timepoint" or "baseline"): ``n`` subjects with a value, ``value`` subjects meeting
  it, ``subjects`` who.
- ``excluded``: records left out of the analysis, with the reason in ``note``.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Iterator
from typing import Any

from reviewapp import CLINICAL_CAUTION
from reviewapp.core.study.analysis import FORMULAS, StudyAnalysis
from reviewapp.core.study.ich_e14 import ICH_E14
from reviewapp.core.study.qt_rr import MALIK_2002, QtRrFit

ANALYSIS_COLUMNS: tuple[str, ...] = (
    "section",
    "quantity",
    "category",
    "subject",
    "timepoint",
    "n",
    "value",
    "sd",
    "ci_low",
    "ci_high",
    "ci_level",
    "unit",
    "subjects",
    "source",
    "note",
)
SOURCES = {
    "qtc_fridericia_ms": "Fridericia, Acta Med Scand 1920",
    "qtc_bazett_ms": "Bazett, Heart 1920",
    "qtc_individual_ms": MALIK_2002,
    "qtc_population_ms": MALIK_2002,
}
_UNITS = {"hr_bpm": "bpm"}


def _unit(quantity: str) -> str:
    return _UNITS.get(quantity, "ms")


def _fit_rows(subject: str, fit: QtRrFit | None, error: str) -> Iterator[dict[str, Any]]:
    base = {"section": "qt_rr_fit", "subject": subject, "source": MALIK_2002}
    if fit is None:
        yield {**base, "quantity": "b", "note": f"not fitted: {error}"}
        return
    ci = fit.b_ci95 or (None, None)
    yield {
        **base,
        "quantity": "b",
        "n": fit.n,
        "value": fit.b,
        "ci_low": ci[0],
        "ci_high": ci[1],
        "ci_level": 0.95,
        "unit": "",
    }
    for q, v, unit in (
        ("a_ms", fit.a_ms, "ms"),
        ("r2", fit.r2, ""),
        ("residual_sd_ms", fit.residual_sd_ms, "ms"),
        ("rr_min_ms", fit.rr_min_ms, "ms"),
        ("rr_max_ms", fit.rr_max_ms, "ms"),
    ):
        yield {**base, "quantity": q, "n": fit.n, "value": v, "unit": unit}


def analysis_rows(a: StudyAnalysis) -> Iterator[dict[str, Any]]:
    """Every row of ``analysis.csv`` as a dict (see the module docstring)."""
    for s in a.subjects:
        yield from _fit_rows(s, a.fits.get(s), a.fit_errors.get(s, ""))
    yield from _fit_rows("all", a.population_fit, a.population_error)
    for m in a.means:
        yield {
            "section": "replicate_mean",
            "quantity": m.quantity,
            "subject": m.subject,
            "timepoint": m.timepoint,
            "n": m.n,
            "value": m.mean,
            "sd": m.sd,
            "unit": _unit(m.quantity),
            "source": SOURCES.get(m.quantity, ""),
        }
    for (s, q), m in sorted(a.baselines.items()):
        yield {
            "section": "baseline",
            "quantity": q,
            "subject": s,
            "timepoint": "; ".join(a.plan.baseline_labels),
            "n": m.n,
            "value": m.mean,
            "sd": m.sd,
            "unit": _unit(q),
            "source": SOURCES.get(q, ""),
        }
    for c in a.changes:
        yield {
            "section": "change_from_baseline",
            "quantity": c.quantity,
            "subject": c.subject,
            "timepoint": c.timepoint,
            "n": c.n_ecgs,
            "value": c.change,
            "unit": _unit(c.quantity),
            "source": SOURCES.get(c.quantity, ""),
            "note": f"{c.n_ecgs} ECG(s) minus the mean of {c.n_baseline_ecgs} baseline ECG(s)",
        }
    for t in a.summaries:
        yield {
            "section": "mean_change",
            "quantity": t.quantity,
            "timepoint": t.timepoint,
            "n": t.n,
            "value": t.mean,
            "sd": t.sd,
            "ci_low": t.ci_low,
            "ci_high": t.ci_high,
            "ci_level": t.level,
            "unit": _unit(t.quantity),
            "source": "two-sided 90 % CI, t distribution; ICH E14, 2005",
        }
    for cc in a.categories:
        yield {
            "section": "categorical",
            "quantity": cc.formula,
            "category": cc.category,
            "timepoint": cc.timepoint,
            "n": cc.n_subjects,
            "value": cc.n_meeting,
            "unit": "subjects",
            "subjects": " ".join(cc.subjects),
            "source": f"{ICH_E14}; {SOURCES[cc.formula]}",
        }
    for record, why in a.excluded:
        yield {"section": "excluded", "subject": "", "note": f"{record}: {why}"}


def _cell(v: Any) -> Any:
    if v is None:
        return ""
    if isinstance(v, float):
        return round(v, 4) + 0.0 if math.isfinite(v) else ""
    return v


def analysis_csv_text(a: StudyAnalysis) -> str:
    """The whole ``analysis.csv``; its last row carries the clinical caution."""
    buf = io.StringIO()
    w = csv.DictWriter(buf, ANALYSIS_COLUMNS, lineterminator="\n")
    w.writeheader()
    for row in analysis_rows(a):
        w.writerow({c: _cell(row.get(c)) for c in ANALYSIS_COLUMNS})
    w.writerow({c: "" for c in ANALYSIS_COLUMNS} | {"section": "caution", "note": CLINICAL_CAUTION})
    return buf.getvalue()


__all__ = ["ANALYSIS_COLUMNS", "FORMULAS", "analysis_csv_text", "analysis_rows"]
