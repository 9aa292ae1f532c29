"""The statement catalogue: own identifiers (words, no number system), trade terms, criteria
that name the thresholds the rules use, sources a reader can look up, and what the reader
sees never saying "from memory" (that marker is for code and tests only; RULES)."""

from __future__ import annotations

import re

import pytest

from reviewapp.core.interpret import (
    CATALOGUE,
    CATEGORY_NAMES,
    ENTRIES,
    chamber,
    conduction,
    repolarization,
    rhythm,
    search,
)
from reviewapp.core.interpret.sources import COMMON_PRACTICE, FROM_MEMORY


def test_codes_are_words_not_numbers_and_unique():
    codes = [d.code for d in ENTRIES]
    assert len(codes) == len(set(codes))
    for d in ENTRIES:
        assert re.fullmatch(r"[a-z_]+\.[a-z0-9_]+", d.code), d.code
        # Numbers only as a threshold in ms (the QTc categories), never as a code system.
        assert not re.search(r"\d", re.sub(r"qtc_over_\d+$", "", d.code)), d.code
        assert d.category in CATEGORY_NAMES and d.code.startswith(d.category + ".")


def test_what_the_reader_sees_cites_and_never_says_from_memory():
    for d in ENTRIES:
        for text in (d.text, d.criteria, d.source):
            low = text.lower()
            assert FROM_MEMORY not in low and COMMON_PRACTICE not in low, (d.code, text)
            assert "no source" not in low or "no single published source" in low, d.code
        # A published source names a year (authors, journal, year), or says it is conventional
        # or the program's own measurement.
        assert (
            re.search(r"(19|20)\d\d", d.source)
            or "conventional" in d.source
            or ("this program" in d.source)
        ), (d.code, d.source)
        for s in d.sources:
            assert s.basis in (FROM_MEMORY, COMMON_PRACTICE), d.code


def test_trade_terms_as_the_statement_list_writes_them():
    # Mason JW et al., Circulation 2007 (Part II): the statement list's own wording.
    assert CATALOGUE["conduction.rbbb"].text == "complete right bundle branch block"
    assert CATALOGUE["conduction.lbbb"].text == "complete left bundle branch block"
    assert CATALOGUE["rhythm.atrial_fibrillation"].text == "atrial fibrillation"
    assert CATALOGUE["conduction.first_degree_av_block"].text == "first-degree AV block"


@pytest.mark.parametrize(
    ("code", "numbers"),
    [
        ("rhythm.sinus_bradycardia", ["50 bpm"]),
        ("rhythm.sinus_tachycardia", ["100 bpm"]),
        ("rhythm.sinus_arrhythmia", [f"{rhythm.SINUS_ARRHYTHMIA_MS:.0f} ms"]),
        ("rhythm.atrial_flutter", ["240-340", "0.43"]),
        ("conduction.first_degree_av_block", [f"{conduction.FIRST_DEGREE_PR_MS:.0f} ms"]),
        ("conduction.rbbb", ["120 ms", "50 ms", "40 ms"]),
        ("conduction.lbbb", ["120 ms", "60 ms"]),
        ("conduction.lafb", ["-45", "45 ms"]),
        ("conduction.ivcd", ["110 ms"]),
        ("conduction.preexcitation", ["120 ms", "25 ms", "0.1 mV"]),
        ("chamber.lvh", ["35 y", "3.5 mV", "2.8 mV", "2.0 mV", "2440", "2.3 mV"]),
        ("chamber.left_atrial", ["120 ms", "0.04"]),
        ("chamber.right_atrial", ["0.25 mV", "0.15 mV"]),
        ("repolarization.qtc_over_480", ["480 ms"]),
        ("repolarization.wide_qrs_t_angle", [f"{repolarization.QRS_T_ANGLE_DEG:.0f} deg"]),
        ("repolarization.poor_r_progression", ["0.3 mV"]),
        ("repolarization.early_repolarization", ["0.1 mV"]),
        ("repolarization.brugada_coved", ["0.2 mV"]),
    ],
)
def test_criteria_name_the_thresholds_the_rules_use(code, numbers):
    for n in numbers:
        assert n in CATALOGUE[code].criteria, (code, n)


def test_rule_constants_match_the_criteria_texts():
    assert rhythm.BRADYCARDIA_BPM == 50.0 and rhythm.TACHYCARDIA_BPM == 100.0
    assert rhythm.FLUTTER_RATE_PER_MIN == (240.0, 340.0) and rhythm.FLUTTER_ORGANISATION == 0.43
    assert conduction.LBBB_RPT_MS == 60.0 and conduction.RBBB_V1_RPT_MS == 50.0
    assert chamber.LVH_MIN_AGE_YEARS == 35.0 and chamber.CORNELL_PRODUCT_MM_MS == 2440.0
    assert chamber.PEGUERO_MV == {"male": 2.8, "female": 2.3}


def test_search_by_words_and_abbreviations():
    assert [d.code for d in search("lbbb")] == ["conduction.lbbb", "conduction.incomplete_lbbb"]
    assert "rhythm.atrial_fibrillation" in [d.code for d in search("AF")]
    assert [d.code for d in search("fascicular posterior")] == ["conduction.lpfb"]
    assert len(search("")) == len(ENTRIES)
    assert search("no such statement anywhere") == []


def test_the_catalogue_holds_every_statement_the_issue_lists():
    wanted = {
        "rhythm.sinus", "rhythm.sinus_bradycardia", "rhythm.sinus_tachycardia",
        "rhythm.sinus_arrhythmia", "rhythm.atrial_fibrillation", "rhythm.atrial_flutter",
        "rhythm.paced_atrial", "rhythm.paced_ventricular", "rhythm.paced_dual",
        "rhythm.junctional", "rhythm.ectopic_atrial", "rhythm.premature_atrial",
        "rhythm.premature_ventricular", "rhythm.undetermined",
        "conduction.first_degree_av_block", "conduction.rbbb", "conduction.incomplete_rbbb",
        "conduction.lbbb", "conduction.incomplete_lbbb", "conduction.lafb", "conduction.lpfb",
        "conduction.ivcd", "conduction.preexcitation",
        "axis.left_deviation", "axis.right_deviation", "axis.extreme", "axis.indeterminate",
        "chamber.lvh", "chamber.lvh_repolarization", "chamber.rvh", "chamber.left_atrial",
        "chamber.right_atrial", "chamber.low_voltage_limb", "chamber.low_voltage_precordial",
        "repolarization.qtc_over_450", "repolarization.qtc_over_480",
        "repolarization.qtc_over_500", "repolarization.wide_qrs_t_angle",
        "repolarization.t_inversion", "repolarization.u_wave",
        "repolarization.poor_r_progression", "repolarization.early_repolarization",
        "repolarization.brugada_coved", "lead_check.limb_reversal",
        "lead_check.precordial_sequence",
    }  # fmt: skip
    assert wanted <= set(CATALOGUE)
    assert all(CATALOGUE[c].automatic for c in wanted)
