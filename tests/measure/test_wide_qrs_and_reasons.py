"""Wide QRS: JT, JTc and a QRS-adjusted QT beside a QTc marked not comparable; ST findings
backed by J+60; ST without a P wave referred to the level before QRS onset; every reason in
the reading and in the ``reviewapp measure`` JSON (validated against its JSON Schema)."""

from __future__ import annotations

import jsonschema
import pytest

from reviewapp.core.engine import analyse
from reviewapp.core.measure import (
    GlobalIntervals,
    LeadMeasurements,
    Measurements,
    evaluate_findings,
)
from reviewapp.core.measure.output import MEASURE_JSON_SCHEMA, csv_row, reading_to_dict, table_text
from reviewapp.core.measure.qt_wide_qrs import jt_ms, jtc_bazett, qt_bogossian
from reviewapp.core.record import SubjectFacts
from reviewapp.core.synth import SynthParams, generate


def test_published_formulas_worked_by_hand() -> None:
    # JT = QT - QRS (Rautaharju et al., AHA/ACCF/HRS 2009 Part IV; from memory).
    assert jt_ms(480.0, 160.0) == 320.0
    # JTc by Bazett's square root (Bazett 1920): 320 / sqrt(0.81) = 355.6 ms.
    assert jtc_bazett(480.0, 160.0, 810.0) == pytest.approx(320.0 / 0.9)
    # Bogossian et al., Heart Rhythm 2014 (from memory): QTm = QT - 48.5 % of QRS:
    # 480 - 0.485 x 160 = 480 - 77.6 = 402.4 ms.
    assert qt_bogossian(480.0, 160.0) == pytest.approx(402.4)


@pytest.fixture(scope="module")
def wide():
    # Synthetic bundle-branch-like QRS of 140 ms and QT 480 ms at 75 bpm (exact truth).
    syn = generate(SynthParams(hr_bpm=75, wide_qrs=True, qrs_ms=140.0, qt_ms=480.0, seed=2))
    an = analyse(syn.record)
    return an, an.reading()


def test_wide_qrs_qtc_shown_but_not_comparable(wide) -> None:
    _, reading = wide
    iv = reading.measurements.intervals
    assert iv.qrs_ms is not None and iv.qrs_ms >= 120.0
    assert iv.qtc_bazett_ms is not None  # still shown
    nc = {r.quantity for r in reading.reasons if r.kind == "not_comparable"}
    assert {"qtc_bazett_ms", "qtc_fridericia_ms", "qtc_framingham_ms", "qtc_hodges_ms"} <= nc
    assert not any(f.quantity.startswith("qtc") for f in reading.findings)
    assert iv.jt_ms == pytest.approx(iv.qt_ms - iv.qrs_ms)
    assert iv.jtc_bazett_ms == pytest.approx(iv.jt_ms / (iv.rr_ms / 1000.0) ** 0.5)
    assert iv.qt_bogossian_ms == pytest.approx(iv.qt_ms - 0.485 * iv.qrs_ms)
    gated = {r.quantity for r in reading.reasons if r.kind == "gated"}
    assert {"st_j_mv", "q_ms"} <= gated


def test_reasons_reach_measure_json_csv_and_table(wide) -> None:
    an, reading = wide
    d = reading_to_dict(an, reading, path="wide")
    jsonschema.validate(d, MEASURE_JSON_SCHEMA)
    kinds = {(r["quantity"], r["kind"]) for r in d["reasons"]}
    assert ("qtc_bazett_ms", "not_comparable") in kinds and ("st_j_mv", "gated") in kinds
    assert all(r["text"] for r in d["reasons"])
    assert d["global"]["jt_ms"] == pytest.approx(reading.measurements.intervals.jt_ms, abs=1e-3)
    row = csv_row(d)
    assert row["jt_ms"] == d["global"]["jt_ms"] and "qtc_bazett_ms" in row["not_comparable"]
    text = table_text(d)
    assert "not comparable" in text and "JT (QT - QRS)" in text


def test_narrow_qrs_qtc_is_comparable() -> None:
    syn = generate(SynthParams(hr_bpm=70, qrs_ms=90.0, qt_ms=400.0, seed=3))
    reading = analyse(syn.record).reading()
    assert not any(r.kind == "not_comparable" for r in reading.reasons)
    # every value left null has its reason, once as "not_measured"
    nm = {r.quantity for r in reading.reasons if r.kind == "not_measured"}
    assert nm == {q for q, _ in reading.measurements.unmeasured}


def _st(j: float, j60: float | None, j80: float | None = None) -> tuple[LeadMeasurements, ...]:
    return tuple(
        LeadMeasurements(n, st_j_mv=j, st_j60_mv=j60, st_j80_mv=j80) for n in ("II", "III", "aVF")
    )


@pytest.mark.parametrize(
    ("j", "j60", "j80", "flagged"),
    [
        (0.20, 0.18, None, True),  # J and J+60 elevated: ST elevation
        (0.20, 0.02, 0.02, False),  # J inside a slurred QRS end, ST segment at baseline
        (0.20, None, 0.15, True),  # J+60 beyond the window: J+80 backs it
        (0.20, None, None, False),  # J alone never makes the finding
        (-0.10, -0.08, None, True),  # depression backed by J+60
        (-0.10, 0.10, None, False),  # opposite directions
    ],
)
def test_st_finding_needs_j60_or_j80(j, j60, j80, flagged) -> None:
    # 4th UDMI (Thygesen et al., 2018; from memory): ST deviation in two contiguous leads; the
    # deviation must be in the ST segment (J+60/J+80: common practice, no single source).
    m = Measurements(GlobalIntervals(qrs_ms=90.0), leads=_st(j, j60, j80))
    found = [
        f
        for f in evaluate_findings(m, SubjectFacts(sex="male", age_years=60))
        if f.quantity == "st_j_mv"
    ]
    assert bool(found) is flagged


def test_st_without_a_p_wave_is_referred_to_the_level_before_qrs_onset() -> None:
    # Atrial fibrillation (synthetic, fibrillatory waves of 0.08 mV): no PR segment, but the f
    # waves are not locked to the QRS and average out in the median beat. The generating
    # model's ST segment is isoelectric (reviewapp/core/synth/truth.py), so ST at J is 0 mV
    # in every lead; within 0.05 mV (0.5 mm at 10 mm/mV, the reading resolution: common
    # practice, no source), and the reading says what ST is referred to.
    syn = generate(SynthParams(af=True, f_wave_mv=0.08, seed=4))
    reading = analyse(syn.record).reading()
    assert reading.marked.representative.marks.p_on is None
    st = [m.st_j_mv for m in reading.measurements.leads]
    assert all(v is not None and abs(v) <= 0.05 for v in st), st
    (caution,) = [r for r in reading.reasons if r.quantity == "st_j_mv" and r.kind == "caution"]
    assert "no P wave" in caution.text
    assert not any(f.quantity == "st_j_mv" for f in reading.findings)
