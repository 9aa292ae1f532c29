"""Gating: infarction statements are never made in left bundle branch block, a ventricular
paced rhythm or ventricular pre-excitation; they are qualified in right bundle branch block
and in left ventricular hypertrophy with strain (Thygesen K et al., Fourth Universal
Definition of Myocardial Infarction, Circulation 2018: bundle branch block, pacing and the
like confound the ECG diagnosis; from memory). Pre-excitation also marks the QTc not
comparable, through the same reasons as a wide or paced QRS.

Records: LUDB (Kalyakulina AI et al., IEEE Access 2020) 24 and 44, labelled complete left
bundle branch block; 34, 74 and 111, ventricular pacing; an invented pre-excited 12-lead
(tests/interpret/signals.py: short PR, delta wave by construction).
"""

from __future__ import annotations

import pytest

from reviewapp.core.engine import analyse
from reviewapp.core.fiducials import BeatKind
from reviewapp.core.interpret import interpret
from reviewapp.core.record import SubjectFacts
from tests.interpret.helpers import Case
from tests.interpret.signals import twelve_lead
from tests.interpret.test_thresholds import LBBB_LEADS, RBBB_LEADS

# ST elevation in V2-V3 past the 4th UDMI limit (men >= 40 y: 0.2 mV), backed at J+60, and a
# 40 ms Q wave in II and aVF: infarction statements when nothing gates them.
INFARCT = {
    "V2": dict(st_j_mv=0.3, st_j60_mv=0.3, st_j80_mv=0.3),
    "V3": dict(st_j_mv=0.3, st_j60_mv=0.3, st_j80_mv=0.3),
    "II": dict(q_mv=-0.3, q_ms=40.0),
    "aVF": dict(q_mv=-0.3, q_ms=40.0),
}
INFARCT_CODES = {"infarction.st_elevation", "infarction.st_depression", "infarction.q_waves"}


def infarct_codes(it) -> set[str]:
    return set(it.codes()) & INFARCT_CODES


def test_the_infarct_values_alone_give_infarct_statements():
    it = Case(leads=INFARCT).interpret()
    assert infarct_codes(it) == {"infarction.st_elevation", "infarction.q_waves"}
    st = it.get("infarction.st_elevation")
    assert st.detail.startswith("V2, V3") and "anterior" in st.detail


def test_no_infarct_statement_in_lbbb_paced_or_preexcited_measurements():
    lbbb = Case(glob={"qrs_ms": 140.0}, leads={**INFARCT, **LBBB_LEADS}).interpret()
    assert "conduction.lbbb" in lbbb.codes() and not infarct_codes(lbbb)
    assert any("left bundle branch block" in r.text for r in lbbb.reasons)
    all_paced = {i: BeatKind.PACED for i in range(10)}
    paced = Case(leads=INFARCT, paced=True, kinds=all_paced).interpret()
    assert not infarct_codes(paced) and any("paced" in r.text for r in paced.reasons)
    pre = Case(leads=INFARCT, pre_excitation=True, glob={"pr_ms": 100.0}).interpret()
    assert not infarct_codes(pre) and any("pre-excitation" in r.text for r in pre.reasons)


def test_rbbb_keeps_q_waves_and_drops_v1_v3_st_with_qualifiers():
    leads = {**INFARCT, **RBBB_LEADS}
    it = Case(glob={"qrs_ms": 130.0}, leads=leads).interpret()
    assert "conduction.rbbb" in it.codes()
    assert infarct_codes(it) == {"infarction.q_waves"}
    assert any("right bundle branch block" in q for q in it.get("infarction.q_waves").qualifiers)
    # ST outside V1-V3 is still read, qualified.
    st = dict(st_j_mv=0.2, st_j60_mv=0.2)
    lateral = {**leads, "V5": {**RBBB_LEADS.get("V5", {}), **st}, "V6": {**RBBB_LEADS["V6"], **st}}
    it = Case(glob={"qrs_ms": 130.0}, leads=lateral).interpret()
    st = it.get("infarction.st_elevation")
    assert st is not None and st.detail.startswith("V5, V6")
    assert any("V1-V3" in q for q in st.qualifiers)


def test_lvh_strain_qualifies_lateral_st_depression():
    strain = {x: dict(st_j_mv=-0.1, st_j60_mv=-0.1, t_mv=-0.2) for x in ("V5", "V6")}
    it = Case(voltages={"sokolow_lyon_mv": 4.0}, leads=strain).interpret()
    assert "chamber.lvh_repolarization" in it.codes()
    dep = it.get("infarction.st_depression")
    assert dep is not None and any("hypertrophy" in q for q in dep.qualifiers)


@pytest.mark.parametrize("name", ["24", "44", "34", "74", "111"])
def test_ludb_lbbb_and_paced_records_get_no_infarct_statement(ludb_analyses, name):
    a = ludb_analyses[name]
    it = interpret(a.reading())
    assert not infarct_codes(it)
    assert any(r.quantity == "statement:infarction" for r in it.reasons)
    if name in ("34", "74", "111"):
        assert "rhythm.paced_ventricular" in it.codes()


def test_preexcited_record_gets_no_infarct_statement_and_a_not_comparable_qtc():
    # Invented 12-lead: PR 100 ms from P onset to the delta wave, a 50 ms delta wave.
    rec = twelve_lead(pr_ms=100.0, delta_ms=50.0, subject=SubjectFacts(sex="male", age_years=45))
    reading = analyse(rec).reading()
    m = reading.measurements
    assert m.pre_excitation and m.intervals.pr_ms < 120.0
    it = interpret(reading, rec.subject)
    assert "conduction.preexcitation" in it.codes() and not infarct_codes(it)
    nc = [r for r in reading.reasons if r.kind == "not_comparable"]
    assert {r.quantity for r in nc} >= {"qtc_bazett_ms", "qtc_fridericia_ms"}
    assert all("pre-excitation" in r.text for r in nc)
    assert any(r.quantity == "statement:infarction" for r in it.reasons)
    assert not any(c.startswith("repolarization.qtc") for c in it.codes())
    # The same beats without the delta wave: no pre-excitation, the QTc comparable.
    plain = analyse(twelve_lead(subject=rec.subject)).reading()
    assert not plain.measurements.pre_excitation
    assert not any(r.kind == "not_comparable" for r in plain.reasons)
