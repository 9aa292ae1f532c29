"""Amplitudes, Q duration, ST levels and voltage criteria on hand-built beats with known values."""

from __future__ import annotations

import numpy as np
import pytest

from reviewapp.core.fiducials import WaveMarks
from reviewapp.core.measure import LeadMeasurements, compute_measurements
from reviewapp.core.measure.amplitudes import cornell_mv, sokolow_lyon_mv

DC = 0.2  # a baseline offset every amplitude must be measured from (isoelectric = PR segment)


def _beat(kit, *, p=0.15, q=-0.1, r=1.5, s=-0.4, j=0.1, j60=0.12, j80=0.14, t=0.5):
    """Knots at 500 Hz: P 100-160, PR segment 160-200, QRS 200-245 (Q at 205, R at 220,
    S at 236), J = 245, J+60 ms = 275, J+80 ms = 285, T peak 350, T end 420."""
    knots = [
        (0, 0.0), (100, 0.0), (130, p), (160, 0.0), (200, 0.0),
        (205, q), (210, 0.0), (220, r), (230, 0.0), (236, s), (245, j),
        (275, j60), (285, j80), (350, t), (420, 0.0), (599, 0.0),
    ]  # fmt: skip
    return kit.piecewise(knots) + DC


def test_amplitudes_and_st_levels(kit):
    waves = {"V5": _beat(kit), "V1": _beat(kit, q=0.0, r=0.3, s=-1.6, j=-0.08, t=-0.2)}
    m = compute_measurements(kit.marked(waves))
    v5 = m.lead("V5")
    # Construction values (mV from the PR-segment level; knots are exact samples).
    assert v5.p_mv == pytest.approx(0.15, abs=1e-6)
    assert v5.q_mv == pytest.approx(-0.1, abs=1e-6)
    assert v5.r_mv == pytest.approx(1.5, abs=1e-6)
    assert v5.s_mv == pytest.approx(-0.4, abs=1e-6)
    assert v5.r_prime_mv == 0.0  # the rise into an elevated J point is ST, not R'
    assert v5.t_mv == pytest.approx(0.5, abs=1e-6)
    assert v5.st_j_mv == pytest.approx(0.1, abs=1e-6)
    assert v5.st_j60_mv == pytest.approx(0.12, abs=1e-6)
    assert v5.st_j80_mv == pytest.approx(0.14, abs=1e-6)
    # Q from QRS onset (200) back to the isoelectric level (210): 10 samples = 20 ms.
    assert v5.q_ms == pytest.approx(20.0)
    v1 = m.lead("V1")
    assert v1.q_mv == 0.0 and v1.q_ms == 0.0
    assert v1.r_mv == pytest.approx(0.3, abs=1e-6)
    assert v1.s_mv == pytest.approx(-1.6, abs=1e-6)
    assert v1.st_j_mv == pytest.approx(-0.08, abs=1e-6)
    assert v1.t_mv == pytest.approx(-0.2, abs=1e-6)


def test_rsr_prime_and_qs(kit):
    rsr = kit.piecewise([(0, 0), (200, 0), (208, 0.5), (214, 0), (222, -0.3), (230, 0),
                         (238, 0.8), (245, 0), (599, 0)])  # fmt: skip
    qs = kit.piecewise([(0, 0), (200, 0), (222, -1.2), (245, 0), (599, 0)])
    m = compute_measurements(kit.marked({"V1": rsr, "V2": qs}))
    v1, v2 = m.lead("V1"), m.lead("V2")
    assert (v1.r_mv, v1.s_mv, v1.r_prime_mv) == pytest.approx((0.5, -0.3, 0.8), abs=1e-6)
    # QS complex: reported as Q (depth 1.2 mV, lasting the whole QRS: 45 samples = 90 ms).
    assert (v2.q_mv, v2.r_mv) == pytest.approx((-1.2, 0.0), abs=1e-6)
    assert v2.q_ms == pytest.approx(90.0)


def test_lead_own_j_point_overrides_global(kit):
    w = _beat(kit)
    # Lead's own QRS end at 236 (the S nadir): ST at J is the S depth there.
    m = compute_measurements(kit.marked({"V5": w}, lead_marks={"V5": WaveMarks(qrs_off=236)}))
    assert m.lead("V5").st_j_mv == pytest.approx(-0.4, abs=1e-6)


def test_flat_lead_and_missing_p_reported(kit):
    marks = WaveMarks(qrs_on=200, qrs_off=245, t_off=420)
    m = compute_measurements(
        kit.marked({"V3": _beat(kit), "V4": _beat(kit)}, marks=marks, usable={"V3": False})
    )
    assert m.lead("V3").r_mv is None
    assert ("V3", "lead V3 flat, missing or invalid") in m.unmeasured
    assert m.lead("V4").p_mv is None and m.lead("V4").r_mv == pytest.approx(1.5, abs=1e-6)
    assert ("V4.p_mv", "no P wave marked") in m.unmeasured
    assert m.intervals.pr_ms is None and ("pr_ms", "no P wave marked") in m.unmeasured


def test_voltage_criteria_from_hand_built_amplitudes():
    # Sokolow & Lyon, Am Heart J 1949: S V1 + max(R V5, R V6).
    v1 = LeadMeasurements("V1", q_mv=0.0, r_mv=0.2, s_mv=-1.7)
    v5 = LeadMeasurements("V5", q_mv=0.0, r_mv=2.1, s_mv=0.0)
    v6 = LeadMeasurements("V6", q_mv=0.0, r_mv=2.4, s_mv=0.0)
    assert sokolow_lyon_mv(v1, v5, v6) == pytest.approx(1.7 + 2.4)
    assert sokolow_lyon_mv(v1, v5, None) == pytest.approx(1.7 + 2.1)
    assert sokolow_lyon_mv(None, v5, v6) is None
    # Casale et al., JACC 1985 (Cornell): R aVL + S V3.
    avl = LeadMeasurements("aVL", q_mv=0.0, r_mv=1.3, s_mv=0.0)
    v3 = LeadMeasurements("V3", q_mv=0.0, r_mv=0.4, s_mv=-1.2)
    assert cornell_mv(avl, v3) == pytest.approx(2.5)
    # QS in V3: its depth counts as the S.
    assert cornell_mv(avl, LeadMeasurements("V3", q_mv=-1.0, r_mv=0.0, s_mv=0.0)) == pytest.approx(
        2.3
    )


def test_voltage_criteria_through_compute(kit):
    waves = {
        "aVL": _beat(kit, q=0.0, r=1.3, s=0.0),
        "V1": _beat(kit, q=0.0, r=0.2, s=-1.7),
        "V3": _beat(kit, q=0.0, r=0.4, s=-1.2),
        "V5": _beat(kit, q=0.0, r=2.1, s=0.0),
        "V6": _beat(kit, q=0.0, r=2.4, s=0.0),
    }
    m = compute_measurements(kit.marked(waves))
    assert m.sokolow_lyon_mv == pytest.approx(4.1, abs=1e-5)
    assert m.cornell_mv == pytest.approx(2.5, abs=1e-5)


def test_compute_is_pure(kit):
    marked = kit.marked({"V5": _beat(kit)})
    before = np.array(marked.representative.waveform_mv, copy=True)
    a, b = compute_measurements(marked), compute_measurements(marked)
    assert a == b
    assert np.array_equal(before, marked.representative.waveform_mv)


def test_remembered_qrs_waves_follow_the_signal_not_its_place(kit):
    """The QRS waves are remembered by the slice's content (a P or T drag re-measures every
    lead with unchanged QRS slices): a beat with the same marks but another R must give the
    other R, also when measured right after the first (construction values)."""
    first = compute_measurements(kit.marked({"V5": _beat(kit, r=1.5)})).lead("V5")
    second = compute_measurements(kit.marked({"V5": _beat(kit, r=0.9)})).lead("V5")
    again = compute_measurements(kit.marked({"V5": _beat(kit, r=1.5)})).lead("V5")
    assert first.r_mv == pytest.approx(1.5, abs=1e-6)
    assert second.r_mv == pytest.approx(0.9, abs=1e-6)
    assert again == first
