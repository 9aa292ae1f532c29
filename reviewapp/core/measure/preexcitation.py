"""Ventricular pre-excitation: a short PR interval with a delta wave.

Criteria (Surawicz B et al., AHA/ACCF/HRS recommendations Part III, Circulation
119:e235-e240, 2009; from memory): PR interval < 120 ms in adults during sinus rhythm; a delta
wave, the slurred, slowly rising onset of the QRS, in at least one lead; the QRS usually
widened (> 120 ms) with secondary ST-T changes. The QRS width follows from how much of the
ventricles the accessory pathway activates and is not required here (partial pre-excitation
gives a QRS of 100-120 ms); it is reported with the statement.

A lead shows a delta wave (``has_delta_wave``) when its QRS, measured from the global QRS
onset, rises slowly (below 0.3 of its steepest slope, already 0.05 mV from the baseline) for
at least ``DELTA_MIN_MS`` before the slope first reaches half its steepest value, has
deflected at least ``DELTA_MIN_MV`` by then without turning back, and goes on in the same
direction (``morphology.initial_slur``): the slur is the start of the main deflection, not a
small separate wave (a septal q or r). Two such leads are asked for. The numbers are this
program's (common practice, no source): on the odd-numbered LUDB records (no pre-excited
record among them) the second-longest slow start of a record that is not paced is 14 ms, so
25 ms leaves a margin; a delta wave of 40 ms measures about 34 ms.

When pre-excitation is found the QTc is marked not comparable with its limits and the ST and
Q-wave infarct criteria are not applied (the QRS and the ST-T are altered by the early
activation), through the same ``ValueReason`` mechanism as a wide or paced QRS.
"""

from __future__ import annotations

from collections.abc import Iterable

from reviewapp.core.measure.limit_text import shown
from reviewapp.core.measure.types import GlobalIntervals, LeadMeasurements

PREEXCITATION_PR_MS = 120.0  # PR < 120 ms (Part III, from memory)
DELTA_MIN_MS = 25.0
DELTA_MIN_MV = 0.1
DELTA_MIN_LEADS = 2


def has_delta_wave(m: LeadMeasurements) -> bool:
    """Whether this lead's QRS starts with a delta wave (module docstring).

    >>> has_delta_wave(LeadMeasurements("V4", delta_ms=40.0, delta_mv=0.3, delta_same_way=True))
    True
    >>> has_delta_wave(LeadMeasurements("V4", delta_ms=24.0, delta_mv=0.3, delta_same_way=True))
    False
    """
    if m.delta_ms is None or m.delta_mv is None or not m.delta_same_way:
        return False
    return m.delta_ms >= DELTA_MIN_MS and abs(m.delta_mv) >= DELTA_MIN_MV


def delta_leads(leads: Iterable[LeadMeasurements]) -> tuple[str, ...]:
    """The leads with a delta wave."""
    return tuple(m.lead for m in leads if has_delta_wave(m))


def is_preexcited(
    intervals: GlobalIntervals, leads: Iterable[LeadMeasurements], paced: bool
) -> bool:
    """Short PR (as displayed, < 120 ms) with a delta wave in at least two leads; never in a
    paced rhythm (the paced QRS has its own slow start).

    >>> d = LeadMeasurements("V4", delta_ms=40.0, delta_mv=0.3, delta_same_way=True)
    >>> e = LeadMeasurements("V5", delta_ms=44.0, delta_mv=0.4, delta_same_way=True)
    >>> is_preexcited(GlobalIntervals(pr_ms=100.0), (d, e), False)
    True
    >>> is_preexcited(GlobalIntervals(pr_ms=120.0), (d, e), False)
    False
    """
    pr = intervals.pr_ms
    if paced or pr is None or shown(pr, "ms") >= PREEXCITATION_PR_MS:
        return False
    return len(delta_leads(leads)) >= DELTA_MIN_LEADS
