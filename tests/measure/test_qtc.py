"""QTc formulas against published worked examples and the formulas' own definitions."""

from __future__ import annotations

import pytest

from reviewapp.core.measure.qtc import qtc_bazett, qtc_framingham, qtc_fridericia, qtc_hodges

# Worked examples: Sci Rep 2021, PMC8275798, Fig. 1 (QT in ms, HR in bpm, QTc in ms).
FIG1 = [
    # (qt_ms, hr_bpm, bazett_ms, fridericia_ms)
    (405.0, 52.7, 379.4, 387.7),
    (395.0, 85.9, 472.7, 445.2),
]


@pytest.mark.parametrize(("qt", "hr", "bazett", "fridericia"), FIG1)
def test_bazett_fridericia_match_published_worked_examples(qt, hr, bazett, fridericia):
    rr_ms = 60000.0 / hr
    # Source: Sci Rep 2021 (PMC8275798), Fig. 1; tolerance 0.5 ms covers the figure's rounding.
    assert qtc_bazett(qt, rr_ms) == pytest.approx(bazett, abs=0.5)
    assert qtc_fridericia(qt, rr_ms) == pytest.approx(fridericia, abs=0.5)


@pytest.mark.parametrize(("qt", "hr"), [(q, h) for q, h, _, _ in FIG1])
def test_linear_formulas_match_their_published_definitions(qt, hr):
    rr_s = 60.0 / hr
    # Sagie et al., Am J Cardiol 1992;70:797-801: QTc = QT + 0.154 (1 - RR), QT and RR in s.
    expected_framingham_s = qt / 1000.0 + 0.154 * (1.0 - rr_s)
    assert qtc_framingham(qt, rr_s * 1000.0) == pytest.approx(expected_framingham_s * 1000.0)
    # Hodges et al., JACC 1983;1:694: QTc = QT + 1.75 (HR - 60), QT in ms, HR in bpm.
    assert qtc_hodges(qt, rr_s * 1000.0) == pytest.approx(qt + 1.75 * (hr - 60.0), rel=1e-9)


@pytest.mark.parametrize("formula", [qtc_bazett, qtc_fridericia, qtc_framingham, qtc_hodges])
@pytest.mark.parametrize("qt", [300.0, 412.0, 520.0])
def test_identity_at_rr_one_second(formula, qt):
    # Every correction is defined so that QTc = QT at RR = 1 s (HR 60 bpm).
    assert formula(qt, 1000.0) == pytest.approx(qt, abs=1e-9)


@pytest.mark.parametrize("formula", [qtc_bazett, qtc_fridericia, qtc_framingham, qtc_hodges])
def test_direction_of_correction(formula):
    # Faster rate (short RR) lengthens QTc; slower rate shortens it (all four papers).
    assert formula(400.0, 600.0) > 400.0 > formula(400.0, 1400.0)


@pytest.mark.parametrize("formula", [qtc_bazett, qtc_fridericia, qtc_framingham, qtc_hodges])
def test_rejects_non_positive_rr(formula):
    with pytest.raises(ValueError):
        formula(400.0, 0.0)
