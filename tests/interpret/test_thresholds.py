"""Each statement criterion at its threshold: just above and just below, with its source.

The readings are built from chosen values (tests/interpret/helpers.py: a normal adult ECG
with one value moved), so each case checks one rule. Values are compared as displayed (whole
ms, bpm, degrees; mV to 0.01), as the statements and the limits do. Where a number was
recalled rather than read from the document, the comment says "from memory".
"""

from __future__ import annotations

import pytest

from reviewapp.core.fiducials import BeatKind
from reviewapp.core.measure.types import AtrialActivity, ValueReason
from reviewapp.core.record import SubjectFacts
from tests.interpret.helpers import Case

MAN = SubjectFacts(sex="male", age_years=50)
WOMAN = SubjectFacts(sex="female", age_years=50)


def codes(**kw) -> set[str]:
    return Case(**kw).codes()


# --- rhythm ------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("hr", "code"),
    [
        # Sinus bradycardia < 50 bpm: Kusumoto FM et al., Circulation 2019 (from memory).
        (49.0, "rhythm.sinus_bradycardia"),
        (50.0, "rhythm.sinus"),
        # Sinus tachycardia > 100 bpm: Mason JW et al., Circulation 2007 (from memory).
        (100.0, "rhythm.sinus"),
        (101.0, "rhythm.sinus_tachycardia"),
    ],
)
def test_sinus_rate_limits(hr, code):
    got = codes(glob={"hr_bpm": hr})
    assert code in got
    assert len(got & {"rhythm.sinus", "rhythm.sinus_bradycardia", "rhythm.sinus_tachycardia"}) == 1


@pytest.mark.parametrize(
    ("axis", "code"),
    [
        # A sinus P is upright in lead II (at +60 deg): P axis strictly between -30 and +150
        # deg (common practice, no source).
        (-29.0, "rhythm.sinus"),
        (-30.0, "rhythm.ectopic_atrial"),
        (149.0, "rhythm.sinus"),
        (150.0, "rhythm.ectopic_atrial"),
    ],
)
def test_sinus_p_axis(axis, code):
    assert code in codes(glob={"p_axis_deg": axis})


def test_sinus_arrhythmia_above_120_ms():
    # Longest minus shortest dominant cycle > 120 ms (common practice, no source). At 500 Hz a
    # sample is 2 ms: cycles 800 and 922 ms differ by 122 ms; 800 and 920 by 120 ms.
    base = [400] * 9
    assert "rhythm.sinus_arrhythmia" in codes(rr_samples=[*base[:-1], 461])
    assert "rhythm.sinus_arrhythmia" not in codes(rr_samples=[*base[:-1], 460])


def test_no_p_irregular_is_atrial_fibrillation_regular_narrow_is_junctional():
    # Mason 2007 statement list (from memory): AF without P waves and with an irregular
    # ventricular rhythm; a junctional rhythm without P waves, regular and narrow.
    af = codes(has_p=False, irregular=True, glob={"ventricular_rate_bpm": 97.0})
    assert "rhythm.atrial_fibrillation" in af and not any(c.startswith("rhythm.sinus") for c in af)
    assert "rhythm.junctional" in codes(has_p=False)
    # Junctional up to 100 bpm; above it the engine does not guess (undetermined).
    assert "rhythm.junctional" in codes(has_p=False, glob={"hr_bpm": 100.0})
    assert "rhythm.undetermined" in codes(has_p=False, glob={"hr_bpm": 101.0})
    # A wide regular rhythm without P waves is not called junctional.
    assert "rhythm.undetermined" in codes(has_p=False, glob={"qrs_ms": 120.0})


@pytest.mark.parametrize(
    ("rate", "org", "flutter"),
    [
        # Flutter: atrial rate 240-340/min (Mason 2007, from memory) and organisation >= 0.43
        # (set on LUDB's odd records, measure/atrial_activity.py).
        (240.0, 0.43, True),
        (239.0, 0.80, False),
        (340.0, 0.80, True),
        (341.0, 0.80, False),
        (300.0, 0.42, False),
    ],
)
def test_flutter_rate_and_organisation(rate, org, flutter):
    at = AtrialActivity(rate, org, 0.05, 10, 0)
    got = codes(has_p=False, irregular=True, atrial=at)
    assert ("rhythm.atrial_flutter" in got) == flutter
    assert ("rhythm.atrial_fibrillation" in got) == (not flutter)


def test_ventricular_pacing_more_than_half():
    # A paced rhythm when more than half of the QRS complexes follow a stimulus (the engine's
    # own rule, Measurements.paced); fewer: paced complexes.
    six = {i: BeatKind.PACED for i in range(6)}
    assert "rhythm.paced_ventricular" in codes(kinds=six, paced=True)
    five = {i: BeatKind.PACED for i in range(5)}
    got = codes(kinds=five, paced=False)
    assert "rhythm.paced_complexes" in got and "rhythm.paced_ventricular" not in got


def test_atrial_pacing_needs_half_the_beats_and_three():
    # Atrial stimuli before at least half the beats and at least 3 (engine rule).
    assert "rhythm.paced_atrial" in codes(atrial=AtrialActivity(None, None, None, 10, 5))
    assert "rhythm.paced_atrial" not in codes(atrial=AtrialActivity(None, None, None, 10, 4))
    paced = {i: BeatKind.PACED for i in range(10)}
    both = codes(atrial=AtrialActivity(None, None, None, 10, 5), kinds=paced, paced=True)
    assert "rhythm.paced_dual" in both


def test_premature_ventricular_needs_a_wide_qrs_of_another_shape():
    # Mason 2007 (from memory): a ventricular premature complex is wide and unlike the
    # dominant QRS; 120 ms is the complete-block width (Surawicz 2009).
    kw = dict(kinds={4: BeatKind.PREMATURE}, groups={4: 1})
    assert "rhythm.premature_ventricular" in codes(**kw, beat_qrs_ms={4: 120.0})
    got = codes(**kw, beat_qrs_ms={4: 118.0})
    assert "rhythm.premature_other" in got and "rhythm.premature_ventricular" not in got
    # Same shape as the dominant beats, with P waves: atrial.
    assert "rhythm.premature_atrial" in codes(kinds={4: BeatKind.PREMATURE})


# --- conduction -------------------------------------------------------------------------------
def test_first_degree_av_block_above_200_ms():
    # PR > 200 ms (Mason 2007; the PR limit of measure.limits, 120-200 ms normal).
    assert "conduction.first_degree_av_block" in codes(glob={"pr_ms": 201.0})
    assert "conduction.first_degree_av_block" not in codes(glob={"pr_ms": 200.0})


RBBB_LEADS = {
    "V1": dict(r_mv=0.3, s_mv=-0.4, r_prime_mv=0.8, r_peak_time_ms=90.0),
    "I": dict(r_ms=40.0, s_ms=50.0, s_mv=-0.4),
    "V6": dict(r_ms=40.0, s_ms=50.0, s_mv=-0.4),
}


@pytest.mark.parametrize(
    ("qrs", "code"),
    [
        # Surawicz B et al., Circulation 2009 (Part III; from memory): complete >= 120 ms,
        # incomplete 110-119 ms in adults.
        (120.0, "conduction.rbbb"),
        (119.0, "conduction.incomplete_rbbb"),
        (110.0, "conduction.incomplete_rbbb"),
        (109.0, None),
    ],
)
def test_rbbb_width(qrs, code):
    got = codes(glob={"qrs_ms": qrs}, leads=RBBB_LEADS)
    blocks = {c for c in got if "rbbb" in c}
    assert blocks == ({code} if code else set())


@pytest.mark.parametrize(
    ("i_lead", "yes"),
    [
        # S of greater duration than R, or > 40 ms, in I and V6 (Part III, from memory).
        (dict(r_ms=45.0, s_ms=41.0), True),
        (dict(r_ms=45.0, s_ms=40.0), False),
        (dict(r_ms=28.0, s_ms=30.0), True),
        (dict(r_ms=30.0, s_ms=30.0), False),
    ],
)
def test_rbbb_wide_s_in_i_and_v6(i_lead, yes):
    leads = {**RBBB_LEADS, "I": {**RBBB_LEADS["I"], **i_lead}}
    got = codes(glob={"qrs_ms": 130.0}, leads=leads)
    assert ("conduction.rbbb" in got) == yes
    if not yes:
        assert "conduction.ivcd" in got


def test_rbbb_terminal_r_from_half_a_millimetre():
    # An R' of 0.05 mV (half a millimetre at 10 mm/mV) counts (common practice, no source).
    leads = {**RBBB_LEADS, "V1": dict(r_mv=0.3, s_mv=-0.9, r_prime_mv=0.05, r_peak_time_ms=40.0)}
    assert "conduction.rbbb" in codes(glob={"qrs_ms": 130.0}, leads=leads)
    leads["V1"]["r_prime_mv"] = 0.04
    assert "conduction.rbbb" not in codes(glob={"qrs_ms": 130.0}, leads=leads)


LBBB_LEADS = {
    "V1": dict(q_mv=-1.2, r_mv=0.0, s_mv=0.0, r_peak_time_ms=None),
    "V5": dict(q_mv=0.0, r_peak_time_ms=90.0, s_mv=0.0),
    "V6": dict(q_mv=0.0, r_peak_time_ms=90.0, s_mv=0.0),
    "I": dict(q_mv=0.0),
}


@pytest.mark.parametrize(
    ("rpt", "q_i", "code"),
    [
        # R-peak time > 60 ms in V5 and V6; no q in I, V5, V6 (Part III, from memory); a q
        # shallower than 0.05 mV is not read as one (common practice, no source).
        (61.0, 0.0, "conduction.lbbb"),
        (60.0, 0.0, "conduction.ivcd"),
        (90.0, -0.04, "conduction.lbbb"),
        (90.0, -0.05, "conduction.ivcd"),
    ],
)
def test_lbbb_r_peak_time_and_absent_q(rpt, q_i, code):
    leads = {
        **LBBB_LEADS,
        "V5": {**LBBB_LEADS["V5"], "r_peak_time_ms": rpt},
        "V6": {**LBBB_LEADS["V6"], "r_peak_time_ms": rpt},
        "I": {"q_mv": q_i},
    }
    got = codes(glob={"qrs_ms": 140.0}, leads=leads)
    assert code in got


def test_ivcd_above_110_ms():
    # Nonspecific IVCD: QRS > 110 ms without bundle-branch criteria (Part III, from memory).
    assert "conduction.ivcd" in codes(glob={"qrs_ms": 111.0})
    assert "conduction.ivcd" not in codes(glob={"qrs_ms": 110.0})


LAFB_AVL = {"aVL": dict(q_mv=-0.1, r_mv=0.8, r_peak_time_ms=50.0)}


@pytest.mark.parametrize(
    ("axis", "rpt", "yes"),
    [
        # LAFB: axis -45 to -90 deg, qR in aVL, R-peak time in aVL >= 45 ms (Part III, from
        # memory).
        (-45.0, 50.0, True),
        (-44.0, 50.0, False),
        (-90.0, 50.0, True),
        (-60.0, 45.0, True),
        (-60.0, 44.0, False),
    ],
)
def test_lafb(axis, rpt, yes):
    got = codes(
        glob={"qrs_axis_deg": axis}, leads={"aVL": {**LAFB_AVL["aVL"], "r_peak_time_ms": rpt}}
    )
    assert ("conduction.lafb" in got) == yes


def test_lpfb_axis_from_90():
    # LPFB: axis +90 to +180 deg, rS in I and aVL, qR in III and aVF (Part III, from memory).
    leads = {
        "I": dict(q_mv=0.0, r_mv=0.2, s_mv=-0.6),
        "aVL": dict(q_mv=0.0, r_mv=0.2, s_mv=-0.5),
        "III": dict(q_mv=-0.1, r_mv=1.0),
        "aVF": dict(q_mv=-0.1, r_mv=0.9),
    }
    assert "conduction.lpfb" in codes(glob={"qrs_axis_deg": 90.0}, leads=leads)
    assert "conduction.lpfb" not in codes(glob={"qrs_axis_deg": 89.0}, leads=leads)


def test_preexcitation_needs_short_pr_and_two_delta_leads():
    # Surawicz 2009 (from memory): PR < 120 ms with a delta wave; two leads asked for here.
    d = dict(delta_ms=40.0, delta_mv=0.3, delta_same_way=True)
    from reviewapp.core.measure.preexcitation import is_preexcited
    from tests.interpret.helpers import lead

    two = (lead("V4", **d), lead("V5", **d))
    from reviewapp.core.measure.types import GlobalIntervals

    assert is_preexcited(GlobalIntervals(pr_ms=119.0), two, False)
    assert not is_preexcited(GlobalIntervals(pr_ms=120.0), two, False)
    assert not is_preexcited(GlobalIntervals(pr_ms=100.0), two[:1], False)
    assert not is_preexcited(GlobalIntervals(pr_ms=100.0), two, True)  # paced
    # A slow start of 25 ms and 0.1 mV is a delta wave, 24 ms or 0.09 mV is not (engine rule).
    from reviewapp.core.measure.preexcitation import has_delta_wave

    assert has_delta_wave(lead("V4", delta_ms=25.0, delta_mv=0.1, delta_same_way=True))
    assert not has_delta_wave(lead("V4", delta_ms=24.0, delta_mv=0.1, delta_same_way=True))
    assert not has_delta_wave(lead("V4", delta_ms=25.0, delta_mv=0.09, delta_same_way=True))
    assert not has_delta_wave(lead("V4", delta_ms=40.0, delta_mv=0.3, delta_same_way=False))
    got = Case(pre_excitation=True, glob={"pr_ms": 100.0}, leads={"V4": d, "V5": d}).interpret()
    assert "conduction.preexcitation" in got.codes()
    assert not any(c in got.codes() for c in ("conduction.ivcd", "conduction.lbbb"))


# --- axis ----------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("axis", "code"),
    [
        # Mason 2007; Surawicz 2009 (from memory): left axis deviation -30 to -90 deg (-30
        # itself is the normal range's bound, as in measure.limits), right +90 to +180 deg;
        # between -90 and -180 deg: extreme axis, not left axis deviation.
        (-30.0, None),
        (-31.0, "axis.left_deviation"),
        (-90.0, "axis.left_deviation"),
        (-91.0, "axis.extreme"),
        (-179.0, "axis.extreme"),
        (90.0, None),
        (91.0, "axis.right_deviation"),
        (180.0, "axis.right_deviation"),
    ],
)
def test_axis_ranges(axis, code):
    got = {c for c in codes(glob={"qrs_axis_deg": axis}) if c.startswith("axis.")}
    assert got == ({code} if code else set())


def test_indeterminate_axis():
    reason = (("qrs_axis_deg", "indeterminate: net area near zero"),)
    got = codes(glob={"qrs_axis_deg": None}, unmeasured=reason)
    assert "axis.indeterminate" in got


# --- chambers ----------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("volts", "subject", "yes"),
    [
        # Sokolow M, Lyon TP, Am Heart J 1949: SV1 + RV5/V6 > 3.5 mV (the limit row).
        ({"sokolow_lyon_mv": 3.51}, MAN, True),
        ({"sokolow_lyon_mv": 3.50}, MAN, False),
        # Casale PN et al., JACC 1985: RaVL + SV3 > 2.8 mV men, > 2.0 mV women.
        ({"cornell_mv": 2.81}, MAN, True),
        ({"cornell_mv": 2.80}, MAN, False),
        ({"cornell_mv": 2.01}, WOMAN, True),
        ({"cornell_mv": 2.00}, WOMAN, False),
        # Peguero JG et al., JACC 2017 (from memory): >= 2.8 mV men, >= 2.3 mV women.
        ({"peguero_mv": 2.80}, MAN, True),
        ({"peguero_mv": 2.79}, MAN, False),
        ({"peguero_mv": 2.30}, WOMAN, True),
        ({"peguero_mv": 2.29}, WOMAN, False),
    ],
)
def test_lvh_voltage_criteria(volts, subject, yes):
    # QRS 80 ms keeps the Cornell product below its limit (2.8 mV x 10 x 80 = 2240 mm x ms).
    got = Case(voltages=volts, subject=subject, glob={"qrs_ms": 80.0}).codes()
    assert ("chamber.lvh" in got) == yes


def test_cornell_product():
    # Molloy TJ et al., JACC 1992 (from memory): (RaVL + SV3 [+ 0.6 mV in women]) x QRS >
    # 2440 mm x ms. Men: 2.44 mV x 10 x 100 ms = 2440 (not above); 2.45 -> 2450.
    assert "chamber.lvh" not in Case(voltages={"cornell_mv": 2.44}, glob={"qrs_ms": 100.0}).codes()
    assert "chamber.lvh" in Case(voltages={"cornell_mv": 2.45}, glob={"qrs_ms": 100.0}).codes()
    # Women: (1.84 + 0.6) x 10 x 100 = 2440; 1.85 -> 2450 (Cornell voltage itself below 2.0).
    w = dict(subject=WOMAN, glob={"qrs_ms": 100.0})
    assert "chamber.lvh" not in Case(voltages={"cornell_mv": 1.84}, **w).codes()
    got = Case(voltages={"cornell_mv": 1.85}, **w).interpret()
    assert "chamber.lvh" in got.codes()
    assert [v.label for v in got.get("chamber.lvh").values] == ["Cornell product"]


def test_lvh_age_gate_at_35_years():
    # Voltage criteria not applied under 35 years (Hancock EW et al., Circulation 2009;
    # from memory).
    v = {"sokolow_lyon_mv": 4.0}
    assert "chamber.lvh" in Case(voltages=v, subject=SubjectFacts("m", 35.0, "male")).codes()
    young = Case(voltages=v, subject=SubjectFacts("m", 34.9, "male")).interpret()
    assert "chamber.lvh" not in young.codes()
    assert any("under 35 years" in r.text for r in young.reasons)
    unknown = Case(voltages=v, subject=SubjectFacts()).interpret().get("chamber.lvh")
    assert unknown is not None and any("age not stated" in q for q in unknown.qualifiers)


def test_lvh_not_applied_with_wide_qrs():
    got = Case(voltages={"sokolow_lyon_mv": 4.0}, glob={"qrs_ms": 120.0}).interpret()
    assert "chamber.lvh" not in got.codes()
    assert any(r.quantity == "statement:chamber.lvh" for r in got.reasons)


def test_lvh_strain():
    # ST at J+60 <= -0.05 mV with T <= -0.1 mV in a lateral lead (common practice, no source).
    v = {"sokolow_lyon_mv": 4.0}
    strain = {"V6": dict(st_j60_mv=-0.05, t_mv=-0.10)}
    assert "chamber.lvh_repolarization" in Case(voltages=v, leads=strain).codes()
    mild = {"V6": dict(st_j60_mv=-0.04, t_mv=-0.10)}
    got = Case(voltages=v, leads=mild).codes()
    assert "chamber.lvh" in got and "chamber.lvh_repolarization" not in got


def test_rvh():
    # Hancock 2009 (from memory): axis > +90 deg with a dominant R >= 0.5 mV in V1.
    v1 = {"V1": dict(r_mv=0.5, s_mv=-0.4, q_mv=0.0)}
    assert "chamber.rvh" in codes(glob={"qrs_axis_deg": 91.0}, leads=v1)
    assert "chamber.rvh" not in codes(glob={"qrs_axis_deg": 90.0}, leads=v1)
    small = {"V1": dict(r_mv=0.49, s_mv=-0.3, q_mv=0.0)}
    assert "chamber.rvh" not in codes(glob={"qrs_axis_deg": 100.0}, leads=small)
    # RV1 + SV5/V6 >= 1.05 mV (Sokolow M, Lyon TP, Am Heart J 1949;38, from memory).
    index = {"V1": dict(r_mv=0.45, s_mv=-0.6, q_mv=0.0), "V5": dict(s_mv=-0.6)}
    assert "chamber.rvh" in codes(glob={"qrs_axis_deg": 100.0}, leads=index)
    index["V5"]["s_mv"] = -0.59
    assert "chamber.rvh" not in codes(glob={"qrs_axis_deg": 100.0}, leads=index)


def test_left_atrial_abnormality():
    # Hancock 2009 (from memory): P duration >= 120 ms; P terminal force in V1 >= 0.04 mm x s
    # (Morris JJ et al., Circulation 1964; from memory): 0.1 mV (1 mm) x 40 ms = 0.04.
    assert "chamber.left_atrial" in codes(glob={"p_ms": 120.0})
    assert "chamber.left_atrial" not in codes(glob={"p_ms": 119.0})
    ptf = {"V1": dict(p_terminal_mv=-0.10, p_terminal_ms=40.0)}
    assert "chamber.left_atrial" in codes(leads=ptf)
    ptf = {"V1": dict(p_terminal_mv=-0.10, p_terminal_ms=38.0)}
    assert "chamber.left_atrial" not in codes(leads=ptf)


def test_right_atrial_abnormality():
    # Hancock 2009 (from memory): P >= 0.25 mV in II, III or aVF; >= 0.15 mV in V1 or V2.
    assert "chamber.right_atrial" in codes(leads={"II": dict(p_mv=0.25)})
    assert "chamber.right_atrial" not in codes(leads={"II": dict(p_mv=0.24)})
    assert "chamber.right_atrial" in codes(leads={"V1": dict(p_mv=0.15)})
    assert "chamber.right_atrial" not in codes(leads={"V1": dict(p_mv=0.14)})


def test_low_voltage():
    # Mason 2007 (from memory): QRS < 0.5 mV in every limb lead, < 1.0 mV in every chest lead.
    small = {
        x: dict(q_mv=0.0, r_mv=0.29, s_mv=-0.2) for x in ("I", "II", "III", "aVR", "aVL", "aVF")
    }
    assert "chamber.low_voltage_limb" in codes(leads=small)  # 0.49 mV
    small["aVF"] = dict(q_mv=0.0, r_mv=0.30, s_mv=-0.2)  # one lead at 0.50 mV
    assert "chamber.low_voltage_limb" not in codes(leads=small)
    chest = {x: dict(q_mv=0.0, r_mv=0.5, s_mv=-0.49) for x in ("V1", "V2", "V3", "V4", "V5", "V6")}
    assert "chamber.low_voltage_precordial" in codes(leads=chest)  # 0.99 mV
    chest["V4"] = dict(q_mv=0.0, r_mv=0.5, s_mv=-0.5)
    assert "chamber.low_voltage_precordial" not in codes(leads=chest)


# --- repolarization and QT --------------------------------------------------------------------
@pytest.mark.parametrize(
    ("qtcf", "category"),
    [
        # ICH E14 (2005) categorical QTc: > 450, > 480, > 500 ms (the highest one met).
        (450.0, None),
        (451.0, "repolarization.qtc_over_450"),
        (480.0, "repolarization.qtc_over_450"),
        (481.0, "repolarization.qtc_over_480"),
        (500.0, "repolarization.qtc_over_480"),
        (501.0, "repolarization.qtc_over_500"),
    ],
)
def test_qtc_categories(qtcf, category):
    got = {c for c in codes(glob={"qtc_fridericia_ms": qtcf}) if "qtc_over" in c}
    assert got == ({category} if category else set())


def test_prolonged_and_short_qt():
    # Rautaharju PM et al., Circulation 2009 (Part IV): >= 450 ms men, >= 460 ms women;
    # short <= 340 ms (ESC 2015 short QT criterion used by measure.limits, from memory).
    assert "repolarization.prolonged_qt" in Case(glob={"qtc_fridericia_ms": 450.0}).codes()
    assert "repolarization.prolonged_qt" not in Case(glob={"qtc_fridericia_ms": 449.0}).codes()
    assert (
        "repolarization.prolonged_qt"
        in Case(glob={"qtc_fridericia_ms": 460.0}, subject=WOMAN).codes()
    )
    assert (
        "repolarization.prolonged_qt"
        not in Case(glob={"qtc_fridericia_ms": 459.0}, subject=WOMAN).codes()
    )
    assert "repolarization.short_qt" in Case(glob={"qtc_fridericia_ms": 340.0}).codes()
    assert "repolarization.short_qt" not in Case(glob={"qtc_fridericia_ms": 341.0}).codes()


def test_qt_statements_follow_the_not_comparable_qtc():
    # With a QRS >= 120 ms the QTc is not comparable (measure/compute.py); no QTc statement.
    nc = (ValueReason("qtc_fridericia_ms", "not_comparable", "QTc not comparable: QRS >= 120 ms"),)
    got = Case(glob={"qtc_fridericia_ms": 520.0, "qrs_ms": 130.0}, reasons=nc).interpret()
    assert not any("qt" in c for c in got.codes())
    assert any(r.quantity == "statement:repolarization.qtc" for r in got.reasons)


def test_frontal_qrs_t_angle_above_100():
    # Aro AL et al., Europace 2012 (from memory): frontal QRS-T angle > 100 deg.
    assert "repolarization.wide_qrs_t_angle" in codes(
        glob={"qrs_t_angle_deg": 101.0, "t_axis_deg": -41.0}
    )
    assert "repolarization.wide_qrs_t_angle" not in codes(glob={"qrs_t_angle_deg": 100.0})


def test_t_inversion_two_contiguous_leads():
    # T <= -0.1 mV in two contiguous leads (Rautaharju 2009, from memory); III is excluded.
    assert "repolarization.t_inversion" in codes(
        leads={"V3": dict(t_mv=-0.10), "V4": dict(t_mv=-0.10)}
    )
    assert "repolarization.t_inversion" not in codes(
        leads={"V3": dict(t_mv=-0.09), "V4": dict(t_mv=-0.10)}
    )
    assert "repolarization.t_inversion" not in codes(leads={"V3": dict(t_mv=-0.3)})
    assert "repolarization.t_inversion" not in codes(
        leads={"III": dict(t_mv=-0.3), "aVF": dict(t_mv=-0.3)}
    )
    assert "repolarization.t_inversion" in codes(
        leads={"II": dict(t_mv=-0.2), "aVF": dict(t_mv=-0.2)}
    )


def test_u_wave():
    # A positive wave >= 0.05 mV after T in V2-V4 (Rautaharju 2009, from memory).
    assert "repolarization.u_wave" in codes(leads={"V2": dict(u_mv=0.05)})
    assert "repolarization.u_wave" not in codes(leads={"V2": dict(u_mv=0.04)})


def test_poor_r_wave_progression():
    # R in V3 <= 0.3 mV (Zema MJ, Kligfield P, Arch Intern Med 1982; from memory).
    assert "repolarization.poor_r_progression" in codes(leads={"V3": dict(r_mv=0.30)})
    assert "repolarization.poor_r_progression" not in codes(leads={"V3": dict(r_mv=0.31)})


def test_early_repolarization():
    # Macfarlane PW et al., JACC 2015 (from memory): J peak >= 0.1 mV with a notch or slur in
    # two contiguous inferior or lateral leads.
    er = dict(end_qrs="notch", jp_mv=0.10)
    assert "repolarization.early_repolarization" in codes(leads={"II": er, "III": er})
    low = dict(end_qrs="slur", jp_mv=0.09)
    assert "repolarization.early_repolarization" not in codes(leads={"II": low, "III": low})
    assert "repolarization.early_repolarization" not in codes(leads={"II": er})
    # V4 and V6 are not contiguous; V5 and V6 are.
    assert "repolarization.early_repolarization" not in codes(leads={"V4": er, "V6": er})
    assert "repolarization.early_repolarization" in codes(leads={"V5": er, "V6": er})
    # Not read with a QRS >= 120 ms.
    assert "repolarization.early_repolarization" not in codes(
        glob={"qrs_ms": 120.0}, leads={"II": er, "III": er}
    )


def test_brugada_type1():
    # Priori SG et al., Heart Rhythm 2013 (from memory): coved ST elevation >= 0.2 mV in V1
    # or V2 followed by a negative T.
    coved = dict(st_j_mv=0.20, st_j60_mv=0.15, st_j80_mv=0.10, t_min_mv=-0.05)
    assert "repolarization.brugada_coved" in codes(leads={"V1": coved})
    assert "repolarization.brugada_coved" not in codes(leads={"V1": {**coved, "st_j_mv": 0.19}})
    assert "repolarization.brugada_coved" not in codes(leads={"V1": {**coved, "t_min_mv": -0.04}})
    # Saddle-back (ST rising after J) is not type 1.
    assert "repolarization.brugada_coved" not in codes(leads={"V1": {**coved, "st_j60_mv": 0.25}})


# --- lead checks ----------------------------------------------------------------------------------
def test_limb_lead_reversal():
    # Batchvarov VN et al., Europace 2007 (from memory): P-QRS-T negative in I, positive aVR.
    swapped = {
        "I": dict(q_mv=0.0, r_mv=0.2, s_mv=-0.8, p_mv=-0.1, t_mv=-0.2),
        "aVR": dict(q_mv=0.0, r_mv=0.8, s_mv=-0.2, p_mv=0.1, t_mv=0.2),
    }
    assert "lead_check.limb_reversal" in codes(leads=swapped)
    # P (and T) in I must be negative beyond the smallest wave, 0.02 mV (engine rule).
    swapped["I"]["p_mv"] = -0.01
    swapped["I"]["t_mv"] = 0.1
    assert "lead_check.limb_reversal" not in codes(leads=swapped)
    swapped["I"]["p_mv"] = -0.02
    assert "lead_check.limb_reversal" in codes(leads=swapped)
    # A normal lead I (net QRS positive) never warns.
    assert "lead_check.limb_reversal" not in codes()
