"""Normal limits, each row with its source.

Every row carries two texts. ``source`` is what the reader sees (summary tooltip, report,
``measure`` output): the citation (authors, journal, year) and the rule it states, or, where
the trade has no single citable source, that it is a conventional limit. ``basis`` is for the
code and the tests only: "from memory" where the value was recalled rather than read from the
document here, "common practice, no source" where there is no single source.

Sources:

- Kligfield P et al., "Recommendations for the standardization and interpretation of the
  electrocardiogram. Part I", Circulation 115:1306-1324, 2007; Mason JW et al., "... Part II:
  electrocardiography diagnostic statement list", Circulation 115:1325-1332, 2007 (from
  memory; the axis and rate rows below are common practice, no source, because no single
  number could be checked against these texts here).
- Surawicz B et al., "... Part III: intraventricular conduction disturbances", Circulation
  119:e235-e240, 2009.
- Rautaharju PM et al., "... Part IV: the ST segment, T and U waves, and the QT interval",
  Circulation 119:e241-e250, 2009.
- Thygesen K et al., "Fourth universal definition of myocardial infarction (2018)",
  Circulation 138:e618-e651, 2018; Eur Heart J 40:237-269, 2019.
- Sokolow M, Lyon TP, Am Heart J 37:161-186, 1949; Casale PN et al., J Am Coll Cardiol
  6:572-580, 1985 (Cornell voltage).

Heart rate: 50-100 bpm. The upper limit 100 bpm is common practice, no source. The lower limit
is 50 rather than the traditional 60 bpm because a resting rate of 50-59 bpm is frequent in
healthy adults, and the 2018 ACC/AHA/HRS bradycardia guideline (Kusumoto FM et al., Circulation
140:e382-e482, 2019 — from memory) defines sinus bradycardia as a rate below 50 bpm.

Where the subject's age is not stated, ADULT limits are used (children's limits only when the
age is known and under 16 y): a resting ECG without an age is almost always an adult's, and
child limits would flag normal adult values (a QRS of 106 ms against the < 8 y limit of
80 ms). Among adult rows that still differ by age (ST limits at 30 / 40 y) and where sex is
not stated, the narrowest limit is used (more flags rather than fewer): for QTc that is the
men's 450 ms. ``applies_to`` says which assumption was made.
"""

from __future__ import annotations

from dataclasses import dataclass

from reviewapp.core.measure.types import NormalRange
from reviewapp.core.record import SubjectFacts

# What the reader sees for each source (citation and the rule it states).
_AHA_IV = (
    "Rautaharju PM et al., AHA/ACCF/HRS recommendations Part IV, Circulation "
    "2009;119:e241-e250: QTc prolonged >= 450 ms men, >= 460 ms women; short QTc <= 340 ms "
    "as in Priori SG et al., ESC guidelines for ventricular arrhythmias, Eur Heart J "
    "2015;36:2793-2867 (short QT syndrome)"
)
# Short QTc (both values from memory): the 2009 statement's <= 390 ms flagged 21 % of the
# LUDB records (30 of 140, by any of the four formulas; the cardiologists' own QT gave a
# similar share), which no reader signs as short QT; the 340 ms of the ESC 2015 short QT
# syndrome criteria is used instead.
QTC_SHORT_MS = 340.0
_AHA_III = (
    "Surawicz B et al., AHA/ACCF/HRS recommendations Part III, Circulation "
    "2009;119:e235-e240: nonspecific intraventricular conduction delay QRS > 110 ms adults, "
    "> 90 ms age 8-16, > 80 ms under 8"
)
_UDMI_ST = (
    "Thygesen K et al., Fourth Universal Definition of Myocardial Infarction, Circulation "
    "2018;138:e618-e651: new ST elevation at J in two contiguous leads >= 0.1 mV except V2-V3 "
    "(>= 0.2 mV men >= 40 y, >= 0.25 mV men < 40 y, >= 0.15 mV women); V7-V9 >= 0.05 mV; "
    "V3R-V4R >= 0.05 mV (>= 0.1 mV men < 30 y); ST depression >= 0.05 mV "
    "(horizontal/downsloping) in two contiguous leads"
)
_UDMI_Q = (
    "Thygesen K et al., Fourth Universal Definition of Myocardial Infarction, Circulation "
    "2018;138:e618-e651: Q in V2-V3 > 20 ms; Q >= 30 ms and >= 0.1 mV deep in I, II, aVL, "
    "aVF, V4-V6 in two contiguous leads"
)
_HR_SOURCE = (
    "Kusumoto FM et al., ACC/AHA/HRS bradycardia guideline, Circulation 2019;140:e382-e482: "
    "sinus bradycardia < 50 bpm; upper limit 100 bpm is the conventional one"
)
_SOKOLOW = "Sokolow M, Lyon TP, Am Heart J 1949;37:161-186: SV1 + RV5/V6 > 3.5 mV"
_CASALE = "Casale PN et al., J Am Coll Cardiol 1985;6:572-580: RaVL + SV3 > {} mV {}"
# Where the trade has no single citable source, the reader is told it is a conventional limit.
_CONVENTIONAL = "conventional limit, no single published source: "

# ``basis`` markers (code and tests only, never shown).
FROM_MEMORY = "from memory"
COMMON_PRACTICE = "common practice, no source"

QTC_QUANTITIES = ("qtc_bazett_ms", "qtc_fridericia_ms", "qtc_framingham_ms", "qtc_hodges_ms")
_V2V3 = ("V2", "V3")
_POSTERIOR = ("V7", "V8", "V9")
_RIGHT = ("V3R", "V4R")
# The 2009 statements give adult limits; children are not covered by the QTc rows here.
ADULT_AGE_YEARS = 16.0
_Q_30 = ("I", "II", "aVL", "aVF", "V4", "V5", "V6")


@dataclass(frozen=True)
class LimitRow:
    """One row of the table. ``sex``/ages/``leads`` restrict where it applies (None = any).

    Ages: ``min_age_years <= age < max_age_years``.
    """

    quantity: str
    low: float | None
    high: float | None
    unit: str
    source: str
    sex: str | None = None
    min_age_years: float | None = None
    max_age_years: float | None = None
    leads: tuple[str, ...] | None = None
    exclude_leads: tuple[str, ...] = ()
    low_is_normal: bool = True
    high_is_normal: bool = True
    # How the value is known, for code and tests only: FROM_MEMORY, COMMON_PRACTICE or both.
    basis: str = FROM_MEMORY

    def who(self) -> str:
        parts = []
        if self.sex:
            parts.append(self.sex)
        if self.min_age_years == ADULT_AGE_YEARS and self.max_age_years is None:
            parts.append("adult")
        elif self.min_age_years is not None:
            parts.append(f">= {self.min_age_years:g} y")
        if self.max_age_years is not None:
            parts.append(f"< {self.max_age_years:g} y")
        if self.leads:
            parts.append(",".join(self.leads))
        return " ".join(parts)


def _qtc(q: str, high: float, sex: str) -> LimitRow:
    # The 2009 limits are stated for QTc without naming a formula (the statement prefers a
    # linear correction over Bazett); they are applied to all four formulas alike.
    return LimitRow(q, QTC_SHORT_MS, high, "ms", _AHA_IV, sex=sex, min_age_years=ADULT_AGE_YEARS,
                    low_is_normal=False, high_is_normal=False)  # fmt: skip


def _st(high: float, **where: object) -> LimitRow:
    # ST at J: elevation limit by lead, sex and age; depression limit -0.05 mV everywhere.
    return LimitRow("st_j_mv", -0.05, high, "mV", _UDMI_ST,
                    low_is_normal=False, high_is_normal=False, **where)  # type: ignore[arg-type]  # fmt: skip


# fmt: off
LIMITS: tuple[LimitRow, ...] = (
    LimitRow("hr_bpm", 50.0, 100.0, "bpm", _HR_SOURCE,
             basis=f"lower {FROM_MEMORY}; upper {COMMON_PRACTICE}"),
    LimitRow("pr_ms", 120.0, 200.0, "ms", _CONVENTIONAL + "PR 120-200 ms", basis=COMMON_PRACTICE),
    LimitRow("p_ms", None, 120.0, "ms", _CONVENTIONAL + "P duration < 120 ms",
             high_is_normal=False, basis=COMMON_PRACTICE),
    LimitRow("qrs_ms", None, 110.0, "ms", _AHA_III, min_age_years=ADULT_AGE_YEARS),
    LimitRow("qrs_ms", None, 90.0, "ms", _AHA_III, min_age_years=8, max_age_years=16),
    LimitRow("qrs_ms", None, 80.0, "ms", _AHA_III, max_age_years=8),
    *(_qtc(q, 450.0, "male") for q in QTC_QUANTITIES),
    *(_qtc(q, 460.0, "female") for q in QTC_QUANTITIES),
    LimitRow("qrs_axis_deg", -30.0, 90.0, "deg",
             _CONVENTIONAL + "frontal QRS axis -30 to +90 deg", basis=COMMON_PRACTICE),
    LimitRow("p_axis_deg", 0.0, 75.0, "deg", _CONVENTIONAL + "frontal P axis 0 to +75 deg",
             basis=f"{COMMON_PRACTICE}; {FROM_MEMORY}"),
    LimitRow("sokolow_lyon_mv", None, 3.5, "mV", _SOKOLOW),
    LimitRow("cornell_mv", None, 2.8, "mV", _CASALE.format("2.8", "men"), sex="male"),
    LimitRow("cornell_mv", None, 2.0, "mV", _CASALE.format("2.0", "women"), sex="female"),
    _st(0.20, leads=_V2V3, sex="male", min_age_years=40),
    _st(0.25, leads=_V2V3, sex="male", max_age_years=40),
    _st(0.15, leads=_V2V3, sex="female"),
    _st(0.05, leads=_POSTERIOR),
    _st(0.10, leads=_RIGHT, sex="male", max_age_years=30),
    _st(0.05, leads=_RIGHT, sex="male", min_age_years=30),
    _st(0.05, leads=_RIGHT, sex="female"),
    _st(0.10, exclude_leads=_V2V3 + _POSTERIOR + _RIGHT),
    LimitRow("q_ms", None, 20.0, "ms", _UDMI_Q, leads=_V2V3),
    LimitRow("q_ms", None, 30.0, "ms", _UDMI_Q, leads=_Q_30, high_is_normal=False),
)
# fmt: on


def _applies(row: LimitRow, subject: SubjectFacts, lead: str | None) -> bool:
    if row.leads is not None and lead not in row.leads:
        return False
    if lead is not None and lead in row.exclude_leads:
        return False
    if row.leads is None and lead is None and row.exclude_leads:
        return False  # a lead-specific quantity asked without a lead
    sex = subject.sex if subject.sex in ("male", "female") else None
    if row.sex is not None and sex is not None and row.sex != sex:
        return False
    age = subject.age_years
    if age is not None:
        if row.min_age_years is not None and age < row.min_age_years:
            return False
        if row.max_age_years is not None and age >= row.max_age_years:
            return False
    return True


def _child_only(row: LimitRow) -> bool:
    return row.max_age_years is not None and row.max_age_years <= ADULT_AGE_YEARS


def normal_range(
    quantity: str, subject: SubjectFacts, lead: str | None = None
) -> NormalRange | None:
    """The normal limits of ``quantity`` for this subject (and lead, for per-lead quantities).

    ``quantity`` is a field name of ``GlobalIntervals``, ``LeadMeasurements`` or
    ``Measurements`` (``"qtc_fridericia_ms"``, ``"st_j_mv"``, ``"cornell_mv"``). Returns None
    when the table has no limit for it (or for that lead). Age unknown: adult limits. Sex
    unknown: the narrowest of the applicable limits. ``applies_to`` says so.

    >>> normal_range("qtc_fridericia_ms", SubjectFacts(sex="female", age_years=50)).high
    460.0
    >>> normal_range("st_j_mv", SubjectFacts(sex="male", age_years=35), lead="V2").high
    0.25
    >>> nr = normal_range("qrs_ms", SubjectFacts())
    >>> nr.high, nr.applies_to
    (110.0, 'adult; age unknown: adult limits assumed')
    """
    rows = [r for r in LIMITS if r.quantity == quantity and _applies(r, subject, lead)]
    age_assumed = False
    if subject.age_years is None and any(_child_only(r) for r in rows):
        rows = [r for r in rows if not _child_only(r)]
        age_assumed = True
    if not rows:
        return None
    sex_known = subject.sex in ("male", "female")
    notes: list[str] = []
    if age_assumed:
        notes.append("age unknown: adult limits assumed")
    if len(rows) == 1:
        r = rows[0]
        who = r.who() or ("all leads" if lead else "")
        if lead and r.leads is None:
            who = (who + " " + lead).strip() if who != "all leads" else lead
        return NormalRange(
            quantity,
            r.low,
            r.high,
            r.unit,
            r.source,
            r.low_is_normal,
            r.high_is_normal,
            "; ".join(x for x in (who, *notes) if x),
        )
    lows = [r for r in rows if r.low is not None]
    highs = [r for r in rows if r.high is not None]
    lo = max(lows, key=lambda r: r.low) if lows else None  # type: ignore[arg-type, return-value]
    hi = min(highs, key=lambda r: r.high) if highs else None  # type: ignore[arg-type, return-value]
    sources = " | ".join(dict.fromkeys(r.source for r in rows))
    chosen = hi or lo
    assert chosen is not None
    if not sex_known and len({r.sex for r in rows}) > 1:
        notes.append(f"sex unknown (not stated): narrowest limit used ({chosen.who()})")
    elif subject.age_years is None and len({(r.min_age_years, r.max_age_years) for r in rows}) > 1:
        notes.append(f"age not stated: narrowest limit used ({chosen.who()})")
    else:
        notes.insert(0, chosen.who())
    return NormalRange(
        quantity,
        lo.low if lo else None,
        hi.high if hi else None,
        rows[0].unit,
        sources,
        lo.low_is_normal if lo else True,
        hi.high_is_normal if hi else True,
        "; ".join(x for x in notes if x),
    )
