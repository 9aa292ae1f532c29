"""Normal limits and findings against the published thresholds they cite."""

from __future__ import annotations

from reviewapp.core.measure import (
    GlobalIntervals,
    LeadMeasurements,
    Measurements,
    evaluate_findings,
    normal_range,
)
from reviewapp.core.record import SubjectFacts

MAN = SubjectFacts(sex="male", age_years=55)
WOMAN = SubjectFacts(sex="female", age_years=55)
YOUNG_MAN = SubjectFacts(sex="male", age_years=32)


def _qtc_findings(value: float, subject: SubjectFacts):
    m = Measurements(GlobalIntervals(qtc_fridericia_ms=value))
    return [f for f in evaluate_findings(m, subject) if f.quantity == "qtc_fridericia_ms"]


def test_qtc_455_flagged_for_men_not_women():
    # AHA/ACCF/HRS 2009 Part IV (Rautaharju et al.): prolonged QTc >= 450 ms men, >= 460 women.
    men = _qtc_findings(455.0, MAN)
    assert len(men) == 1 and men[0].direction == "above" and men[0].limit == 450.0
    assert "Rautaharju" in men[0].source
    assert _qtc_findings(455.0, WOMAN) == []
    assert len(_qtc_findings(460.0, WOMAN)) == 1  # ">= 460": the limit itself is prolonged
    # Judged on the value as displayed (1 ms): 449.4 shows as 449 (normal), 449.6 as 450.
    assert _qtc_findings(449.4, MAN) == []
    assert len(_qtc_findings(449.6, MAN)) == 1


def test_short_qtc_and_text():
    # Short QTc <= 340 ms (Priori et al., Eur Heart J 2015, short QT syndrome; from memory).
    (f,) = _qtc_findings(340.0, WOMAN)
    assert f.direction == "below" and f.limit == 340.0
    (f,) = _qtc_findings(478.0, WOMAN)
    assert f.text == (
        "QTc (Fridericia) 478 ms, above normal (normal > 340 and < 460 ms; female adult)"
    )


def test_unknown_sex_uses_narrowest_limit_and_says_so():
    nr = normal_range("qtc_bazett_ms", SubjectFacts())
    assert nr.high == 450.0 and "not stated" in nr.applies_to


def _leads(st: dict[str, float]) -> tuple[LeadMeasurements, ...]:
    # The ST segment confirms the J level (J+60 as deep or high): see test_st_finding_needs_*.
    return tuple(LeadMeasurements(n, st_j_mv=v, st_j60_mv=v) for n, v in st.items())


def _st_leads(st: dict[str, float], subject: SubjectFacts) -> set[str]:
    m = Measurements(GlobalIntervals(), leads=_leads(st))
    return {f.lead for f in evaluate_findings(m, subject) if f.quantity == "st_j_mv"}


def test_st_elevation_needs_two_contiguous_leads():
    # Fourth Universal Definition of MI (Thygesen et al., 2018): >= 0.1 mV in two contiguous
    # leads other than V2-V3.
    assert _st_leads({"II": 0.12, "III": 0.15, "aVF": 0.02, "I": 0.0}, MAN) == {"II", "III"}
    assert _st_leads({"II": 0.12, "III": 0.05, "aVF": 0.02}, MAN) == set()  # one lead only
    assert _st_leads({"II": 0.12, "aVL": 0.2}, MAN) == set()  # not contiguous
    assert _st_leads({"V4": 0.12, "V5": 0.11, "V6": 0.0}, MAN) == {"V4", "V5"}
    assert _st_leads({"V1": 0.12, "V4": 0.11}, MAN) == set()  # chest leads not adjacent


def test_st_elevation_v2_v3_by_sex_and_age():
    # Same source: V2-V3 >= 0.2 mV men >= 40, >= 0.25 mV men < 40, >= 0.15 mV women.
    st = {"V2": 0.22, "V3": 0.22}
    assert _st_leads(st, MAN) == {"V2", "V3"}
    assert _st_leads(st, YOUNG_MAN) == set()
    assert _st_leads({"V2": 0.16, "V3": 0.16}, WOMAN) == {"V2", "V3"}
    assert _st_leads({"V2": 0.16, "V3": 0.16}, MAN) == set()


def test_st_depression_two_contiguous():
    # Same source: ST depression >= 0.05 mV in two contiguous leads (slope not assessed here).
    m = Measurements(GlobalIntervals(), leads=_leads({"V5": -0.06, "V6": -0.05, "I": -0.2}))
    fs = [f for f in evaluate_findings(m, MAN) if f.quantity == "st_j_mv"]
    assert {f.lead for f in fs} == {"V5", "V6"}
    assert all(f.direction == "below" and "slope not assessed" in f.text for f in fs)


def test_pathological_q_waves():
    # 4th UDMI: Q in V2-V3 > 20 ms; elsewhere >= 30 ms and >= 0.1 mV deep in two contiguous.
    leads = (
        LeadMeasurements("V2", q_mv=-0.05, q_ms=24.0),
        LeadMeasurements("II", q_mv=-0.15, q_ms=32.0),
        LeadMeasurements("aVF", q_mv=-0.12, q_ms=30.0),
        LeadMeasurements("I", q_mv=-0.3, q_ms=40.0),  # no contiguous partner
        LeadMeasurements("V5", q_mv=-0.05, q_ms=36.0),  # too shallow
    )
    fs = evaluate_findings(Measurements(GlobalIntervals(), leads=leads), MAN)
    assert {f.lead for f in fs if f.quantity == "q_ms"} == {"V2", "II", "aVF"}


def test_voltage_limits():
    # Sokolow-Lyon > 3.5 mV; Cornell > 2.8 mV men, > 2.0 mV women (Casale et al. 1985).
    m = Measurements(GlobalIntervals(), sokolow_lyon_mv=3.6, cornell_mv=2.4)
    men = {f.quantity for f in evaluate_findings(m, MAN)}
    women = {f.quantity for f in evaluate_findings(m, WOMAN)}
    assert men == {"sokolow_lyon_mv"} and women == {"sokolow_lyon_mv", "cornell_mv"}


def test_normal_range_for_lead_quantities():
    assert normal_range("st_j_mv", MAN, lead="V2").high == 0.20
    assert normal_range("st_j_mv", YOUNG_MAN, lead="V3").high == 0.25
    assert normal_range("st_j_mv", WOMAN, lead="aVF").high == 0.10
    assert normal_range("st_j_mv", MAN, lead="aVF").low == -0.05
    assert normal_range("r_mv", MAN, lead="V5") is None
