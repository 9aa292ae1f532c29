"""Measurements from marks: intervals, QTc, axes, amplitudes, ST levels, limits and findings.

A pure function of a ``MarkedECG``; nothing measured is ever stored as truth.
"""

from reviewapp.core.measure.compute import compute_measurements
from reviewapp.core.measure.findings import evaluate_findings
from reviewapp.core.measure.limits import normal_range
from reviewapp.core.measure.types import (
    BeatIntervals,
    Finding,
    GlobalIntervals,
    LeadMeasurements,
    Measurements,
    NormalRange,
    ValueReason,
)

__all__ = [
    "BeatIntervals",
    "Finding",
    "GlobalIntervals",
    "LeadMeasurements",
    "Measurements",
    "NormalRange",
    "ValueReason",
    "compute_measurements",
    "evaluate_findings",
    "normal_range",
]
