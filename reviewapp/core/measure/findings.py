"""Findings: measured values outside their normal limits. Flags for the reader, not diagnoses.

Global values (rate, intervals, QTc, axes, voltages) are compared with ``normal_range``.
ST levels and Q waves follow the Fourth Universal Definition of Myocardial Infarction
(Thygesen et al., 2018): a lead is flagged only when a *contiguous* lead meets the same
criterion. Contiguity, as the 4th UDMI describes lead groups (anterior V1-V6, inferior II, III,
aVF, lateral/apical I and aVL — from memory), is implemented as:

- limb groups: any two leads of {II, III, aVF} or of {I, aVL};
- chest leads: neighbours in the sequence V1-V2-...-V6 (and V7-V8-V9, V3R-V4R), which is how
  "contiguous" chest leads are commonly read (common practice, no source).

aVR belongs to no group. ST depression is flagged on level alone; the ST slope the 4th UDMI
asks for (horizontal or downsloping) is not assessed, and the text says so. An ST deviation
at J counts only where J+60 ms (else J+80 ms) deviates the same way past the same limit: a J
point inside a slurred QRS end must not make an ST finding on its own.

QTc with a QRS >= 120 ms or a paced rhythm is shown but not compared with the QTc limits
(``Measurements.reasons``, kind "not_comparable"; JT, JTc and a QRS-adjusted QT are reported
beside it, ``qt_wide_qrs``).

Neither the ST nor the Q-wave criteria are applied when the QRS is 120 ms or longer or the
rhythm is paced: the 4th UDMI notes that left bundle branch block and ventricular pacing
confound the ECG diagnosis of infarction (secondary ST-T changes, QRS morphology altered;
from memory). ``infarct_criteria_skipped`` gives the reason, and ``compute_measurements`` puts
it into ``Measurements.notes``.

In a paced rhythm the conduction limits are not applied either (``PACED_NOT_ASSESSED``: PR,
QRS duration, QRS axis, Sokolow-Lyon and Cornell voltage): the QRS is the paced activation,
wide and with an axis set by the lead's position; the "PR" of a beat paced after a sensed P is
the pacemaker's programmed AV delay; the voltage criteria assume intrinsic conduction (common
practice, no source). The values are still measured and shown; ``paced_criteria_skipped``
gives the note.

Every limit is compared with the value *as displayed* (1 ms, 1 bpm, 1 deg, 0.01 mV), so a
flag never contradicts the printed number (a QTc of 389.6 ms prints as 390 ms and is flagged:
390 is outside the normal "> 390"). The sentences come from ``limit_text``. When several QTc
formulas flag in the same direction, one ``qtc_ms`` finding lists them; each formula's own
limit stays available via ``normal_range``.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Iterable

from reviewapp.core.measure.limit_text import finding_text, merged_text, shown
from reviewapp.core.measure.limits import normal_range
from reviewapp.core.measure.types import (
    Finding,
    LeadMeasurements,
    Measurements,
    NormalRange,
    ValueReason,
)
from reviewapp.core.record import SubjectFacts

LABELS: dict[str, str] = {
    "hr_bpm": "Heart rate",
    "ventricular_rate_bpm": "Ventricular rate",
    "rr_ms": "RR",
    "p_ms": "P duration",
    "pr_ms": "PR",
    "qrs_ms": "QRS duration",
    "qt_ms": "QT",
    "qtc_bazett_ms": "QTc (Bazett)",
    "qtc_fridericia_ms": "QTc (Fridericia)",
    "qtc_framingham_ms": "QTc (Framingham)",
    "qtc_hodges_ms": "QTc (Hodges)",
    "p_axis_deg": "P axis",
    "qrs_axis_deg": "QRS axis",
    "t_axis_deg": "T axis",
    "sokolow_lyon_mv": "Sokolow-Lyon voltage",
    "cornell_mv": "Cornell voltage",
    "st_j_mv": "ST at J",
    "q_ms": "Q duration",
    "rr_sd_ms": "RR SD",
    "jt_ms": "JT (QT - QRS)",
    "jtc_bazett_ms": "JTc (Bazett)",
    "qt_bogossian_ms": "QT adj. (Bogossian)",
    # Values that have a reason but no row of their own: named in words, never by field.
    "qrs_t_angle_deg": "QRS-T angle",
    "peguero_mv": "Peguero-Lo Presti voltage",
    "cornell_product_mm_ms": "Cornell product",
}

GLOBAL_CHECKS: tuple[str, ...] = (
    "hr_bpm",
    "p_ms",
    "pr_ms",
    "qrs_ms",
    "qtc_bazett_ms",
    "qtc_fridericia_ms",
    "qtc_framingham_ms",
    "qtc_hodges_ms",
    "p_axis_deg",
    "qrs_axis_deg",
)

LIMB_GROUPS: tuple[tuple[str, ...], ...] = (("II", "III", "aVF"), ("I", "aVL"))
CHEST_SEQUENCES: tuple[tuple[str, ...], ...] = (
    ("V1", "V2", "V3", "V4", "V5", "V6"),
    ("V7", "V8", "V9"),
    ("V3R", "V4R"),
)


def contiguous_pairs() -> tuple[tuple[str, str], ...]:
    """Every pair of leads counted as contiguous (see module docstring).

    >>> ("V2", "V3") in contiguous_pairs(), ("V1", "V3") in contiguous_pairs()
    (True, False)
    >>> ("II", "III") in contiguous_pairs(), ("I", "II") in contiguous_pairs()
    (True, False)
    """
    pairs: list[tuple[str, str]] = []
    for grp in LIMB_GROUPS:
        pairs += [(a, b) for i, a in enumerate(grp) for b in grp[i + 1 :]]
    for seq in CHEST_SEQUENCES:
        pairs += list(itertools.pairwise(seq))
    return tuple(pairs)


CONTIGUOUS: tuple[tuple[str, str], ...] = contiguous_pairs()


# QRS duration from which the infarct ST and Q criteria are not applied (4th UDMI: bundle
# branch block and paced rhythm confound them; 120 ms is the complete-block threshold of
# AHA/ACCF/HRS 2009 Part III, Surawicz et al.; from memory).
WIDE_QRS_MS = 120.0
QTC_ORDER: tuple[str, ...] = (
    "qtc_bazett_ms",
    "qtc_fridericia_ms",
    "qtc_framingham_ms",
    "qtc_hodges_ms",
)


def displayed(value: float, unit: str) -> float:
    """``value`` rounded as it is printed: 0.01 mV, else whole units (ms, bpm, deg).

    Negative zero becomes 0.0, so "-0.00 mV" is never shown.

    >>> displayed(389.6, "ms"), displayed(-0.004, "mV"), displayed(0.126, "mV")
    (390.0, 0.0, 0.13)
    """
    return shown(value, unit)


PACED_NOT_ASSESSED: frozenset[str] = frozenset(
    {"pr_ms", "qrs_ms", "qrs_axis_deg", "sokolow_lyon_mv", "cornell_mv"}
)


def judged(measurements: Measurements, quantity: str) -> bool:
    """Whether ``quantity`` is compared with its normal limits for this reading (not one of a
    paced rhythm's conduction values, ``PACED_NOT_ASSESSED``).

    >>> from reviewapp.core.measure.types import GlobalIntervals
    >>> m = Measurements(GlobalIntervals(), paced=True)
    >>> judged(m, "qrs_ms"), judged(m, "qtc_bazett_ms")
    (False, True)
    """
    if measurements.paced and quantity in PACED_NOT_ASSESSED:
        return False
    # A value shown but not comparable with its limits (QTc with a wide or paced QRS).
    return not any(
        r.quantity == quantity and r.kind == "not_comparable" for r in measurements.reasons
    )


def gated_reasons(measurements: Measurements) -> tuple[ValueReason, ...]:
    """Why criteria are not applied to this reading, one entry per quantity concerned (kind
    "gated"): a paced rhythm's conduction values, and the ST and Q-wave infarct criteria with
    a paced rhythm or a QRS >= 120 ms (the texts of ``paced_criteria_skipped`` and
    ``infarct_criteria_skipped``, which name the reason)."""
    out: list[ValueReason] = []
    paced = paced_criteria_skipped(measurements)
    if paced is not None:
        text = f"{paced}, {PACED_WHY}"
        out += [ValueReason(q, "gated", text) for q in sorted(PACED_NOT_ASSESSED)]
    infarct = infarct_criteria_skipped(measurements)
    if infarct is not None:
        text = f"{infarct}; {INFARCT_GATE_WHY}"
        out += [ValueReason(q, "gated", text) for q in ("st_j_mv", "q_ms")]
    return tuple(out)


# What the reader reads after the gate's note (``gated_reasons``). The 4th UDMI states that
# left bundle branch block and ventricular pacing confound the ECG diagnosis of infarction
# (Thygesen K et al., Circulation 2018;138:e618-e651); gating every QRS >= 120 ms (right
# bundle branch block too) is this program's choice, so the text does not claim the 4th UDMI
# says so (``infarct_criteria_skipped``). The paced-rhythm limits: no published
# statement is cited for them, so the text says why in words only (common practice, no source).
INFARCT_GATE_WHY = (
    "the universal definition of infarction names left bundle branch block and ventricular "
    "pacing as confounders of these criteria (Thygesen et al., Circulation 2018)"
)
PACED_WHY = "the QRS is the pacemaker's activation and the PR its programmed AV delay"


def paced_criteria_skipped(measurements: Measurements) -> str | None:
    """The note for a paced rhythm's conduction values, or None when the rhythm is not paced."""
    if not measurements.paced:
        return None
    return "PR, QRS duration, QRS axis and voltage criteria not applied: paced rhythm"


def infarct_criteria_skipped(measurements: Measurements) -> str | None:
    """Why the ST and Q-wave infarct criteria are not applied here, or None when they are."""
    qrs = measurements.intervals.qrs_ms
    if measurements.paced:
        return "ST/Q criteria not applied: paced rhythm"
    if measurements.pre_excitation:
        return "ST/Q criteria not applied: ventricular pre-excitation"
    if qrs is not None and displayed(qrs, "ms") >= WIDE_QRS_MS:
        return f"ST/Q criteria not applied: QRS >= {WIDE_QRS_MS:.0f} ms"
    return None


def _check(
    quantity: str, value: float | None, nr: NormalRange | None, lead: str | None = None
) -> Finding | None:
    if value is None or nr is None:
        return None
    value = displayed(value, nr.unit)
    label = LABELS.get(quantity, quantity)
    if lead:
        label = f"{label} in {lead}"
    if nr.is_above(value):
        assert nr.high is not None
        return Finding(
            quantity,
            value,
            nr.unit,
            nr.high,
            "above",
            nr.source,
            finding_text(label, value, nr, "above"),
            lead,
        )
    if nr.is_below(value):
        assert nr.low is not None
        return Finding(
            quantity,
            value,
            nr.unit,
            nr.low,
            "below",
            nr.source,
            finding_text(label, value, nr, "below"),
            lead,
        )
    return None


def _contiguous_flags(
    leads: Iterable[LeadMeasurements],
    flag: Callable[[LeadMeasurements], Finding | None],
) -> list[Finding]:
    """Flags of leads that have a contiguous partner also flagged, with the partner named."""
    hits: dict[str, Finding] = {}
    for m in leads:
        f = flag(m)
        if f is not None:
            hits[m.lead] = f
    partners: dict[str, list[str]] = {}
    for a, b in CONTIGUOUS:
        if a in hits and b in hits and hits[a].direction == hits[b].direction:
            partners.setdefault(a, []).append(b)
            partners.setdefault(b, []).append(a)
    out = []
    for lead, f in hits.items():
        if lead in partners:
            with_ = ", ".join(partners[lead])
            out.append(
                Finding(
                    f.quantity,
                    f.value,
                    f.unit,
                    f.limit,
                    f.direction,
                    f.source,
                    f"{f.text}; contiguous with {with_}",
                    f.lead,
                )
            )
    return out


def evaluate_findings(measurements: Measurements, subject: SubjectFacts) -> tuple[Finding, ...]:
    """Every measured value outside its limit, as reader flags (not diagnoses).

    Order: global intervals and axes, voltages, ST levels (two contiguous leads), Q waves.
    """
    out: list[Finding] = []
    iv = measurements.intervals
    for q in GLOBAL_CHECKS:
        if not judged(measurements, q):
            continue
        f = _check(q, getattr(iv, q), normal_range(q, subject))
        if f is not None:
            out.append(f)
    out = _merge_qtc(out, subject)
    for q in ("sokolow_lyon_mv", "cornell_mv"):
        if not judged(measurements, q):
            continue
        f = _check(q, getattr(measurements, q), normal_range(q, subject))
        if f is not None:
            out.append(f)

    if infarct_criteria_skipped(measurements) is not None:
        return tuple(out)
    return tuple(out) + infarct_findings(measurements, subject)


def infarct_findings(measurements: Measurements, subject: SubjectFacts) -> tuple[Finding, ...]:
    """The ST and Q-wave criteria of the 4th UDMI on every lead, without the gating of
    ``infarct_criteria_skipped`` (``evaluate_findings`` applies it; the interpretation
    statements apply their own, e.g. Q waves stay readable in right bundle branch block).
    Order: ST levels (two contiguous leads), then Q waves."""

    def st_flag(m: LeadMeasurements) -> Finding | None:
        nr = normal_range("st_j_mv", subject, m.lead)
        f = _check("st_j_mv", m.st_j_mv, nr, m.lead)
        if f is None:
            return None
        # Backed by the ST segment itself: a J point inside a slurred QRS end is not ST
        # deviation, so J+60 (else J+80) ms must deviate the same way past the same limit
        # (common practice to confirm at J+60/J+80, no single source).
        later = m.st_j60_mv if m.st_j60_mv is not None else m.st_j80_mv
        g = _check("st_j_mv", later, nr, m.lead)
        if g is None or g.direction != f.direction:
            return None
        word = "ST elevation" if f.direction == "above" else "ST depression (slope not assessed)"
        return Finding(
            f.quantity, f.value, f.unit, f.limit, f.direction, f.source, f"{word}: {f.text}", f.lead
        )

    out = _contiguous_flags(measurements.leads, st_flag)

    def q_flag(m: LeadMeasurements) -> Finding | None:
        nr = normal_range("q_ms", subject, m.lead)
        if nr is None or m.q_ms is None or m.q_mv is None or m.q_ms == 0.0:
            return None
        # Outside V2-V3 the 4th UDMI also asks for depth >= 0.1 mV.
        if m.lead not in ("V2", "V3") and -m.q_mv < 0.1:
            return None
        return _check("q_ms", m.q_ms, nr, m.lead)

    v2v3 = [m for m in measurements.leads if m.lead in ("V2", "V3")]
    others = [m for m in measurements.leads if m.lead not in ("V2", "V3")]
    # V2-V3: any Q wave > 20 ms counts on its own (4th UDMI, from memory).
    out += [f for m in v2v3 if (f := q_flag(m)) is not None]
    out += _contiguous_flags(others, q_flag)
    return tuple(out)


def finding_for_value(
    quantity: str,
    value: float | None,
    nr: NormalRange | None,
    findings: Iterable[Finding],
    lead: str | None = None,
) -> Finding | None:
    """The finding that flags this value, if any: its own (``quantity`` and ``lead``), or for
    one QTc formula the merged ``qtc_ms`` finding, which merges exactly the formulas whose
    value as displayed is past their own limit on its side (``_merge_qtc``). Every table that
    flags a value (summary dock, per-lead grid, report) asks this, so a cell is never flagged
    by a rule of its own.

    >>> nr = normal_range("qtc_fridericia_ms", SubjectFacts(sex="male", age_years=50))
    >>> merged = Finding("qtc_ms", 470.0, "ms", 450.0, "above", "", "QTc above normal by ...")
    >>> finding_for_value("qtc_fridericia_ms", 455.2, nr, [merged]) is merged
    True
    >>> finding_for_value("qtc_fridericia_ms", 440.0, nr, [merged]) is None
    True
    """
    if value is None:
        return None
    for f in findings:
        if f.quantity == quantity and f.lead == lead:
            return f
    if lead is None and quantity in QTC_ORDER and nr is not None:
        v = displayed(value, nr.unit)
        side = "above" if nr.is_above(v) else "below" if nr.is_below(v) else ""
        return next((f for f in findings if f.quantity == "qtc_ms" and f.direction == side), None)
    return None


def _merge_qtc(findings: list[Finding], subject: SubjectFacts) -> list[Finding]:
    """One ``qtc_ms`` finding for the QTc formulas that flag in the same direction.

    A single flagging formula keeps its own finding. The merged finding's value is the
    first flagging formula's (order of ``QTC_ORDER``) and takes that finding's place; the
    text lists every formula with its value.
    """
    replace_at: dict[int, Finding] = {}  # id of the first member -> merged finding
    drop: set[int] = set()
    for direction in ("above", "below"):
        same = [f for f in findings if f.quantity in QTC_ORDER and f.direction == direction]
        if len(same) < 2:
            continue
        same.sort(key=lambda f: QTC_ORDER.index(f.quantity))
        first = same[0]
        by = [(LABELS[f.quantity][5:-1], f.value) for f in same]
        nr = normal_range(first.quantity, subject)
        assert nr is not None  # it flagged, so it has a range
        replace_at[id(first)] = Finding(
            "qtc_ms",
            first.value,
            first.unit,
            first.limit,
            first.direction,
            first.source,
            merged_text("QTc", by, nr, direction),
        )
        drop.update(id(f) for f in same[1:])
    return [replace_at.get(id(f), f) for f in findings if id(f) not in drop]
