"""Categorical QTc outliers as ICH E14 defines them.

ICH E14, "The Clinical Evaluation of QT/QTc Interval Prolongation and Proarrhythmic Potential
for Non-Antiarrhythmic Drugs", International Conference on Harmonisation, 2005, the section on
categorical analyses (3.2.2, section number from memory): the number and percentage of
subjects with QTc above 450, 480 and 500 ms, and with an increase of QTc from baseline above
30 and 60 ms. Each limit is strict ("> 450 ms"): a value equal to the limit is not an outlier.
Values are judged as computed (replicate means, not rounded), for each correction formula
separately.

>>> absolute_categories(450.0), absolute_categories(450.5)
((False, False, False), (True, False, False))
>>> increase_categories(60.0), increase_categories(60.2)
((True, False), (True, True))
"""

from __future__ import annotations

ICH_E14 = "ICH E14, 2005"
ABSOLUTE_LIMITS_MS: tuple[float, ...] = (450.0, 480.0, 500.0)
INCREASE_LIMITS_MS: tuple[float, ...] = (30.0, 60.0)


def absolute_label(limit_ms: float) -> str:
    return f"QTc > {limit_ms:g} ms"


def increase_label(limit_ms: float) -> str:
    return f"increase > {limit_ms:g} ms"


CATEGORY_LABELS: tuple[str, ...] = (
    *(absolute_label(x) for x in ABSOLUTE_LIMITS_MS),
    *(increase_label(x) for x in INCREASE_LIMITS_MS),
)


def absolute_categories(qtc_ms: float) -> tuple[bool, ...]:
    """For each of 450, 480, 500 ms: is QTc above it?"""
    return tuple(qtc_ms > limit for limit in ABSOLUTE_LIMITS_MS)


def increase_categories(change_ms: float) -> tuple[bool, ...]:
    """For each of 30, 60 ms: is the increase from baseline above it?"""
    return tuple(change_ms > limit for limit in INCREASE_LIMITS_MS)
