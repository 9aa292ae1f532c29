"""Replicate averaging, change from baseline with its 90 % CI, and ICH E14 categories.

The expected numbers are computed by hand below (the arithmetic is written out beside each),
not by the code under test; t(0.95, 2) = 2.919986 is from Student's t table (two-sided 90 %,
2 degrees of freedom). Categories: ICH E14, "The Clinical Evaluation of QT/QTc Interval
Prolongation and Proarrhythmic Potential for Non-Antiarrhythmic Drugs", 2005: QTc > 450,
> 480, > 500 ms and increases > 30, > 60 ms, each limit strict.
"""

from __future__ import annotations

import pytest

from reviewapp.core.study.analysis import ANY_ON_DRUG, BASELINE, analyse_study
from reviewapp.core.study.ich_e14 import absolute_categories, increase_categories
from reviewapp.core.study.table import StudyRow


def _row(record: str, subject: str, timepoint: str, qtcf: float, hr: float) -> StudyRow:
    rr = 60000.0 / hr
    return StudyRow(
        record=record,
        path=f"{record}.hea",
        subject=subject,
        timepoint=timepoint,
        values={
            "qtc_fridericia_ms": qtcf,
            "hr_bpm": hr,
            "rr_ms": rr,
            "qt_ms": qtcf * (rr / 1000.0) ** (1.0 / 3.0),
            "qtc_bazett_ms": None,
        },
        provenance={"status": "signed_off"},
    )


# (subject, timepoint, QTcF triplicate, HR triplicate)
HAND_TABLE = [
    ("A", "pre-dose", (400.0, 404.0, 402.0), (60.0, 62.0, 61.0)),
    ("A", "post-dose 2 h", (410.0, 414.0, 415.0), (64.0, 66.0, 65.0)),
    ("B", "pre-dose", (420.0, 418.0, 425.0), (70.0, 72.0, 71.0)),
    ("B", "post-dose 2 h", (440.0, 436.0, 441.0), (70.0, 70.0, 73.0)),
    ("C", "pre-dose", (390.0, 392.0, 391.0), (55.0, 57.0, 56.0)),
    ("C", "post-dose 2 h", (395.0, 391.0, 396.0), (60.0, 58.0, 59.0)),
]


@pytest.fixture(scope="module")
def hand():
    rows = [
        _row(f"{s}_{tp}_{k}", s, tp, q, h)
        for s, tp, qs, hs in HAND_TABLE
        for k, (q, h) in enumerate(zip(qs, hs, strict=True))
    ]
    return analyse_study(rows)


def test_replicates_are_averaged_per_subject_and_timepoint(hand):
    # A pre-dose: (400 + 404 + 402) / 3 = 402; SD = sqrt((4 + 4 + 0) / 2) = 2.
    m = hand.mean("A", "pre-dose", "qtc_fridericia_ms")
    assert (m.n, m.mean, m.sd) == (3, pytest.approx(402.0), pytest.approx(2.0))
    # B post-dose 2 h: (440 + 436 + 441) / 3 = 439; HR (70 + 70 + 73) / 3 = 71.
    assert hand.mean("B", "post-dose 2 h", "qtc_fridericia_ms").mean == pytest.approx(439.0)
    assert hand.mean("B", "post-dose 2 h", "hr_bpm").mean == pytest.approx(71.0)


def test_change_from_baseline_per_subject(hand):
    got = {
        (c.subject, c.quantity): c.change
        for c in hand.changes
        if c.timepoint == "post-dose 2 h" and c.quantity in ("qtc_fridericia_ms", "hr_bpm")
    }
    # QTcF: A 413 - 402 = 11; B 439 - 421 = 18; C 394 - 391 = 3.
    # HR:   A 65 - 61 = 4;    B 71 - 71 = 0;    C 59 - 56 = 3.
    assert got == pytest.approx(
        {
            ("A", "qtc_fridericia_ms"): 11.0,
            ("B", "qtc_fridericia_ms"): 18.0,
            ("C", "qtc_fridericia_ms"): 3.0,
            ("A", "hr_bpm"): 4.0,
            ("B", "hr_bpm"): 0.0,
            ("C", "hr_bpm"): 3.0,
        }
    )


def test_mean_change_and_two_sided_90_percent_ci(hand):
    # dQTcF 11, 18, 3: mean 32/3 = 10.6667; deviations 0.3333, 7.3333, -7.6667, squares sum
    # 0.1111 + 53.7778 + 58.7778 = 112.6667, variance 56.3333, SD 7.5056, SE 7.5056 / sqrt(3)
    # = 4.3333; half width 2.919986 * 4.3333 = 12.6533: CI -1.9866 to 23.3200.
    s = hand.summary("post-dose 2 h", "qtc_fridericia_ms")
    assert s.n == 3
    assert s.mean == pytest.approx(10.6667, abs=1e-4)
    assert s.sd == pytest.approx(7.5056, abs=1e-4)
    assert (s.ci_low, s.ci_high) == (
        pytest.approx(-1.9866, abs=1e-3),
        pytest.approx(23.3200, abs=1e-3),
    )
    # dHR 4, 0, 3: mean 2.3333; squares 2.7778 + 5.4444 + 0.4444 = 8.6667, variance 4.3333,
    # SE sqrt(4.3333 / 3) = 1.20185; half width 2.919986 * 1.20185 = 3.5094: -1.1760 to 5.8427.
    s = hand.summary("post-dose 2 h", "hr_bpm")
    assert s.mean == pytest.approx(2.3333, abs=1e-4)
    assert (s.ci_low, s.ci_high) == (
        pytest.approx(-1.1760, abs=1e-3),
        pytest.approx(5.8427, abs=1e-3),
    )


@pytest.mark.parametrize(
    ("qtc", "expected"),
    [
        (450.0, (False, False, False)),
        (450.1, (True, False, False)),
        (480.0, (True, False, False)),
        (480.1, (True, True, False)),
        (500.0, (True, True, False)),
        (500.1, (True, True, True)),
    ],
)
def test_absolute_categories_at_their_limits(qtc, expected):
    assert absolute_categories(qtc) == expected


@pytest.mark.parametrize(
    ("change", "expected"),
    [(30.0, (False, False)), (30.1, (True, False)), (60.0, (True, False)), (60.1, (True, True))],
)
def test_increase_categories_at_their_limits(change, expected):
    assert increase_categories(change) == expected


def test_categories_count_subjects_on_replicate_means():
    """Each subject's mean at a timepoint decides; limits are strict, baseline 400 ms.
    P: 450.0 (=, no) at 1 h, 450.1 at 2 h; Q: 480.1 and an increase of 80.1; R: 430.0 (+30.0)."""
    base = 400.0
    rows = []
    design = {
        "P": {"post-dose 1 h": 450.0, "post-dose 2 h": 450.1},
        "Q": {"post-dose 1 h": 480.1, "post-dose 2 h": 420.0},
        "R": {"post-dose 1 h": 430.0, "post-dose 2 h": 425.0},
    }
    for s, tps in design.items():
        rows += [_row(f"{s}b{k}", s, "pre-dose", base + d, 60.0) for k, d in enumerate((-1, 1))]
        for tp, v in tps.items():
            rows += [_row(f"{s}{tp}{k}", s, tp, v + d, 60.0) for k, d in enumerate((-0.5, 0.5))]
    a = analyse_study(rows)
    f = "qtc_fridericia_ms"
    assert a.category(f, "QTc > 450 ms", "post-dose 1 h").subjects == ("Q",)
    assert a.category(f, "QTc > 450 ms", "post-dose 2 h").subjects == ("P",)
    assert a.category(f, "QTc > 450 ms", ANY_ON_DRUG).subjects == ("P", "Q")
    assert a.category(f, "QTc > 480 ms", ANY_ON_DRUG).subjects == ("Q",)
    assert a.category(f, "QTc > 500 ms", ANY_ON_DRUG).subjects == ()
    assert a.category(f, "increase > 30 ms", ANY_ON_DRUG).subjects == ("P", "Q")  # R: 30.0
    assert a.category(f, "increase > 60 ms", ANY_ON_DRUG).subjects == ("Q",)
    assert a.category(f, "QTc > 450 ms", BASELINE).n_subjects == 3
    assert a.category(f, "QTc > 450 ms", ANY_ON_DRUG).n_subjects == 3
