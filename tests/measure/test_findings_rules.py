"""Limits when age/sex are unknown, infarct criteria in wide QRS or paced rhythm, displayed
values, and the merged QTc finding."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from reviewapp.core.measure import (
    GlobalIntervals,
    LeadMeasurements,
    Measurements,
    evaluate_findings,
    normal_range,
)
from reviewapp.core.measure.findings import displayed, infarct_criteria_skipped
from reviewapp.core.measure.output import LEAD_FIELDS, table_text
from reviewapp.core.record import SubjectFacts

UNKNOWN = SubjectFacts()
CHILD = SubjectFacts(sex="female", age_years=6)


def test_unknown_age_uses_adult_qrs_limit():
    # AHA/ACCF/HRS 2009 Part III (Surawicz et al.): QRS > 110 ms adults, > 80 ms under 8 y.
    # A normal adult QRS of 106 ms must not be flagged when the file gives no age.
    m = Measurements(GlobalIntervals(qrs_ms=106.0))
    assert [f for f in evaluate_findings(m, UNKNOWN) if f.quantity == "qrs_ms"] == []
    (f,) = evaluate_findings(Measurements(GlobalIntervals(qrs_ms=116.0)), UNKNOWN)
    assert f.limit == 110.0 and "adult limits assumed" in f.text and "age unknown" in f.text
    # Children's limits only with a known age under 16 y.
    (f,) = evaluate_findings(m, CHILD)
    assert f.limit == 80.0


def test_unknown_sex_qtc_uses_mens_limit_and_says_so():
    # AHA/ACCF/HRS 2009 Part IV (Rautaharju et al.): QTc >= 450 ms men, >= 460 ms women.
    nr = normal_range("qtc_fridericia_ms", UNKNOWN)
    assert nr.high == 450.0 and "sex unknown" in nr.applies_to
    (f,) = evaluate_findings(Measurements(GlobalIntervals(qtc_fridericia_ms=455.0)), UNKNOWN)
    assert "sex unknown" in f.text and f.limit == 450.0


def _infarct_leads() -> tuple[LeadMeasurements, ...]:
    # 4th UDMI (Thygesen et al., 2018): ST >= 0.1 mV in two contiguous leads; Q >= 30 ms and
    # >= 0.1 mV deep in two contiguous leads. Both met in II and aVF.
    return (
        LeadMeasurements("II", st_j_mv=0.2, st_j60_mv=0.18, q_mv=-0.2, q_ms=40.0),
        LeadMeasurements("aVF", st_j_mv=0.25, st_j60_mv=0.2, q_mv=-0.2, q_ms=40.0),
    )


@pytest.mark.parametrize(("qrs_ms", "paced", "applied"), [
    (100.0, False, True),
    (119.4, False, True),  # shows as 119 ms
    (119.6, False, False),  # shows as 120 ms
    (150.0, False, False),
    (100.0, True, False),
])  # fmt: skip
def test_st_and_q_criteria_not_applied_in_wide_qrs_or_paced(qrs_ms, paced, applied):
    # 4th UDMI: LBBB and paced rhythm confound the ST and Q criteria (from memory).
    m = Measurements(GlobalIntervals(qrs_ms=qrs_ms), leads=_infarct_leads(), paced=paced)
    kinds = {f.quantity for f in evaluate_findings(m, SubjectFacts(sex="male", age_years=60))}
    assert ({"st_j_mv", "q_ms"} <= kinds) is applied
    assert (infarct_criteria_skipped(m) is None) is applied


def test_ludb_complete_lbbb_gets_no_st_q_flags_and_a_note(shared_data: Path):
    """LUDB records diagnosed "Complete left bundle branch block" (ludb.csv; Kalyakulina et
    al. 2020): QRS >= 120 ms by definition (Surawicz et al. 2009), so no ST/Q flags."""
    from reviewapp.core.engine import analyse
    from reviewapp.core.io import open_record

    root = shared_data / "ludb"
    with (root / "ludb.csv").open(newline="") as fh:
        ids = [
            r["ID"]
            for r in csv.DictReader(fh)
            if "complete left bundle branch block" in r["Conduction abnormalities"].lower()
            and "incomplete left" not in r["Conduction abnormalities"].lower()
            and (root / f"{r['ID']}.hea").exists()
        ]
    if not ids:
        pytest.skip("no complete-LBBB record in this LUDB copy")
    for rid in ids:
        reading = analyse(open_record(root / f"{rid}.hea")).reading()
        ms = reading.measurements
        assert ms.intervals.qrs_ms is not None and ms.intervals.qrs_ms >= 120.0, rid
        assert not [f for f in reading.findings if f.quantity in ("st_j_mv", "q_ms")], rid
        assert "ST/Q criteria not applied: QRS >= 120 ms" in ms.notes


def test_flag_agrees_with_displayed_value():
    # ESC 2015 (Priori et al., from memory): short QTc <= 340 ms. 339.6 prints as 340 and is
    # flagged as 340, against the normal range that excludes 340.
    woman = SubjectFacts(sex="female", age_years=40)
    (f,) = evaluate_findings(Measurements(GlobalIntervals(qtc_bazett_ms=339.6)), woman)
    assert f.value == 340.0
    assert f.text == "QTc (Bazett) 340 ms, below normal (normal > 340 and < 460 ms; female adult)"
    assert "Rautaharju" in f.source
    # 340.4 prints as 340 as well: same flag, never "341" vs "below 340".
    (g,) = evaluate_findings(Measurements(GlobalIntervals(qtc_bazett_ms=340.4)), woman)
    assert g.value == 340.0
    assert evaluate_findings(Measurements(GlobalIntervals(qtc_bazett_ms=340.6)), woman) == ()


def test_displayed_normalises_negative_zero():
    assert str(displayed(-0.004, "mV")) == "0.0" and str(displayed(-0.4, "ms")) == "0.0"


def test_several_qtc_formulas_give_one_finding():
    m = Measurements(
        GlobalIntervals(qtc_bazett_ms=472.0, qtc_fridericia_ms=455.2, qtc_hodges_ms=440.0)
    )
    man = SubjectFacts(sex="male", age_years=50)
    fs = evaluate_findings(m, man)
    (f,) = [f for f in fs if f.quantity.startswith("qtc")]
    assert f.quantity == "qtc_ms" and f.direction == "above" and f.limit == 450.0
    assert "Bazett 472 ms" in f.text and "Fridericia 455 ms" in f.text
    assert "Hodges" not in f.text
    # Per-formula flags stay available from each formula's normal range.
    assert normal_range("qtc_hodges_ms", man).is_above(440.0) is False
    assert normal_range("qtc_fridericia_ms", man).is_above(455.0) is True


def _minimal_dict() -> dict:
    g = {k: None for k in ("rr_ms", "rr_sd_ms", "hr_bpm", "p_ms", "pr_ms", "qrs_ms", "qt_ms")}
    g["qtc_ms"] = dict.fromkeys(("bazett", "fridericia", "framingham", "hodges"))
    g["axis_deg"] = {"p": None, "qrs": None, "t": None}
    return {
        "record": "r",
        "fs_hz": 500.0,
        "leads": ["I", "V2"],
        "beats": [],
        "global": g,
        "voltages": {"sokolow_lyon_mv": None, "cornell_mv": None},
        "representative": None,
        "leads_measurements": {
            "I": dict.fromkeys(
                ("p_mv", "q_mv", "r_mv", "s_mv", "r_prime_mv", "t_mv", "st_j_mv", "st_j60_mv"),
                -0.001,
            )
            | {"q_ms": 104.0, "st_j80_mv": 123.456},
            "V2": dict.fromkeys(LEAD_FIELDS),
        },
        "findings": [],
        "unmeasured": [
            {"quantity": "hr_bpm", "reason": "fewer than two beats"},
            {"quantity": "V2", "reason": "lead V2 flat, missing or invalid"},
        ],
        "notes": [],
    }


def test_table_reasons_no_negative_zero_and_aligned_columns():
    text = table_text(_minimal_dict(), per_lead=True)
    assert "-0.00" not in text
    hr = next(line for line in text.splitlines() if line.startswith("Heart rate"))
    assert hr.rstrip().endswith("fewer than two beats")
    rows = [ln for ln in text.splitlines() if ln.startswith(("Lead", "I ", "V2 "))]
    head, lead_i, lead_v2 = rows
    # Every cell right-aligned in fixed columns with a space between: 3-digit values and
    # wide numbers never run together.
    assert len(lead_i.split()) == 11 and lead_i.split()[7] == "104"
    assert "123.46" in lead_i.split()
    assert len(head) == len(lead_i)
    assert "flat, missing or invalid" in lead_v2


def test_paced_rhythm_conduction_values_are_shown_but_not_judged():
    # In a ventricular-paced rhythm the QRS is the paced activation and the PR after a sensed
    # P is the programmed AV delay (common practice, no source): PR, QRS duration, QRS axis and
    # the voltage criteria are not judged; QTc and the P wave still are.
    from reviewapp.core.measure.findings import paced_criteria_skipped

    iv = GlobalIntervals(pr_ms=264.0, qrs_ms=146.0, qrs_axis_deg=-48.0, qtc_bazett_ms=480.0)
    subject = SubjectFacts(sex="female", age_years=75)
    for paced in (False, True):
        m = Measurements(iv, sokolow_lyon_mv=4.2, paced=paced)
        kinds = {f.quantity for f in evaluate_findings(m, subject)}
        conduction = {"pr_ms", "qrs_ms", "qrs_axis_deg", "sokolow_lyon_mv"}
        assert (conduction <= kinds) is (not paced), kinds
        assert "qtc_bazett_ms" in kinds
        assert (paced_criteria_skipped(m) is not None) is paced


def test_ludb_paced_records_get_no_conduction_flags_and_a_note(shared_data: Path):
    # LUDB record 104: sinus rhythm, third-degree AV block, pacemaker (ludb.csv; Kalyakulina
    # et al. 2020). Its paced QRS is wide (> 110 ms, measured 146 ms) but not flagged as a
    # conduction delay; the reading says why.
    from reviewapp.core.engine import analyse
    from reviewapp.core.io import open_record

    reading = analyse(open_record(shared_data / "ludb" / "104.hea")).reading()
    ms = reading.measurements
    assert ms.paced and ms.intervals.qrs_ms is not None and ms.intervals.qrs_ms > 110.0
    kinds = {f.quantity for f in reading.findings}
    assert not kinds & {"pr_ms", "qrs_ms", "qrs_axis_deg"}
    assert any("paced rhythm" in n and "QRS duration" in n for n in ms.notes)
