"""Wave-boundary accuracy against cardiologists' marks (QTDB q1c, LUDB), through the engine.

Protocol (shared/data/README.md): QTDB q1c marks (both leads in view) vs the global per-beat
marks; LUDB per-lead marks vs each lead's own per-beat marks, pooled over leads; beats matched
within 150 ms; errors detected minus reference in ms. Tolerances for comparison: CSE Working
Party, Eur Heart J 6:815-825, 1985 (2 x SD between CSE referees; values as used by Martinez et
al., IEEE TBME 51(4):570-581, 2004): P on 10.2, P end 12.7, QRS on 6.5, QRS end 11.6,
T end 30.6 ms.

The limits below hold the line a little above what this engine measured (numbers beside each
limit); they are regression guards, not claims of meeting CSE everywhere -- where the measured
SD is above the CSE tolerance, the comment says so.
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

import numpy as np
import pytest

from reviewapp.core.engine import analyse
from reviewapp.core.record import record_from_array

# tests run with --import-mode=importlib: make the sibling helper module importable.
sys.path.insert(0, str(Path(__file__).resolve().parent))
from reference_marks import (
    CSE_TOLERANCE_MS,
    BeatCounts,
    ErrorPool,
    ludb_record_names,
    qtdb_record_names,
    qtdb_window,
    score_ludb_record,
    score_qtdb_record,
)

pytestmark = pytest.mark.slow  # whole-database accuracy (about 30 s)

# (|mean| limit, SD limit) in ms per fiducial. Measured values in the comments.
QTDB_LIMITS = {
    # P: corner refinement (delineate_corner) + coupling rule; measured 5.2 +- 19.1 (SD above
    # CSE 10.2; QTDB readers mark P onset ~8 ms before a corner fitted on the 40 Hz lead);
    # before: 2.8 +- 18.7
    "p_on": (6.0, 20.0),
    "p_off": (3.0, 22.0),  # measured -1.0 +- 21.0 (above CSE 12.7); before: 1.0 +- 20.8
    "qrs_on": (3.0, 11.0),  # measured 2.1 +- 10.4 (above CSE 6.5; readers' own beat-to-beat
    # scatter within a record alone is 7.7, see delineate_qrs); 1.6 +- 10.1 before the corner
    # step acted at 250 Hz (sel306, sel310, sele0124 moved to their corner, see
    # delineate_refine); before any corner step 1.5 +- 10.0
    "qrs_off": (4.5, 15.0),  # measured 3.1 +- 14.3 (above CSE 11.6; readers' scatter 9.1)
    "t_off": (2.5, 44.0),  # measured 0.9 +- 42.5 (above CSE 30.6: T/U fusion sel45,
    # sel36, sele0114, sel14172 +60..+165 ms; biphasic/flat T sel48, sel223, sel51 -50..-78 ms);
    # before this session's T changes -0.6 +- 43.8 (same QRS/P code)
}
LUDB_LIMITS = {
    "p_on": (3.0, 19.5),  # measured -1.4 +- 18.7 (SD above CSE 10.2); before -3.4 +- 18.4
    "p_off": (3.0, 19.5),  # measured 1.3 +- 18.8 (above CSE 12.7); before 4.2 +- 18.4
    "qrs_on": (2.0, 11.0),  # measured 1.2 +- 10.3 (above CSE 6.5; readers' lead-to-lead
    # spread alone 7.4, see delineate_qrs); before the pacing-spike
    # rule 0.2 +- 11.9 (paced records -27.7 ms early offset a +1.5 ms bias elsewhere)
    "qrs_off": (2.0, 15.0),  # measured 0.9 +- 14.0 (above CSE 11.6; readers' spread 9.6)
    "t_off": (2.5, 29.0),  # measured -1.2 +- 27.7 (within CSE 30.6); before this session's
    # T changes (fine-signal refinement, weak-T leads keep their end, next-P limit) -1.0 +- 28.8
}
# Fraction of reference marks with no detected mark, and detected marks with no reference.
# Measured: QTDB P 4.5 % missed (93 of 2055: sel840 47, whose median beat shows no P;
# sel46 29, a 0.03 mV P the beats do not repeat above noise; paced sel104 16), T 1 of 2350;
# QTDB extra P 60 (sel232, sel310; before the beat-to-beat P check 188, incl. paced sel102);
# LUDB P 1.0 %, T 0.1 % missed; LUDB extra P 13.3 % (before the P-coupling rule 16.3 %,
# before the beat-to-beat P check 20 %; left: paced records 104 and 45, and leads the
# readers left unmarked; flutter record 35 and AF record 101 now get no P), extra T
# 12 %, extra QRS 0.7 %.
QTDB_MISSED_MAX = {"p_on": 0.05, "p_off": 0.05, "qrs_on": 0.0, "qrs_off": 0.0, "t_off": 0.002}
LUDB_MISSED_MAX = {"p_on": 0.015, "p_off": 0.015, "qrs_on": 0.0, "qrs_off": 0.0, "t_off": 0.002}
LUDB_EXTRA_MAX = {"p_on": 0.15, "p_off": 0.15, "qrs_on": 0.01, "qrs_off": 0.01, "t_off": 0.13}


@pytest.fixture(scope="module")
def qtdb_scores(shared_data: Path) -> tuple[ErrorPool, BeatCounts]:
    pool, counts = ErrorPool.empty(), BeatCounts()
    names = qtdb_record_names(shared_data / "qtdb")
    assert names, "no QTDB q1c files found"
    for name in names:
        x, fs, leads, _, ref = qtdb_window(shared_data / "qtdb", name)
        rec = record_from_array(x, fs, leads, name=name, derive_limb_leads=False)
        score_qtdb_record(ref, analyse(rec), pool, counts)
    print(pool.table(f"QTDB q1c vs global per-beat marks ({len(names)} records)"))
    return pool, counts


@pytest.fixture(scope="module")
def ludb_scores(shared_data: Path, ludb_analyses) -> tuple[ErrorPool, BeatCounts]:
    pool, counts = ErrorPool.empty(), BeatCounts()
    names = ludb_record_names(shared_data / "ludb")
    assert names, "no LUDB records found"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for name in names:  # one cached analysis per record for the whole run (conftest)
            score_ludb_record(shared_data / "ludb", name, ludb_analyses[name], pool, counts)
    print(pool.table(f"LUDB per-lead marks vs each lead's own marks ({len(names)} records)"))
    return pool, counts


@pytest.mark.parametrize("fid", list(QTDB_LIMITS))
def test_qtdb_q1c_global_marks(qtdb_scores: tuple[ErrorPool, BeatCounts], fid: str) -> None:
    # Reference: QTDB q1c cardiologist marks (Laguna et al., Computers in Cardiology 1997).
    pool, _ = qtdb_scores
    mean, sd, n = pool.stats()[fid]
    mean_max, sd_max = QTDB_LIMITS[fid]
    assert n > 1500, f"too few {fid} compared: {n}"
    assert abs(mean) <= mean_max, f"{fid}: mean {mean:.1f} ms (CSE tol {CSE_TOLERANCE_MS[fid]})"
    assert sd <= sd_max, f"{fid}: SD {sd:.1f} ms (CSE tol {CSE_TOLERANCE_MS[fid]})"
    assert pool.missed[fid] <= QTDB_MISSED_MAX[fid] * pool.n_ref[fid], (
        f"{fid}: {pool.missed[fid]} of {pool.n_ref[fid]} reference marks without a detected mark"
    )


def test_qtdb_beats_all_found(qtdb_scores: tuple[ErrorPool, BeatCounts]) -> None:
    # Every q1c-annotated beat has a detected beat within 150 ms (README matching rule).
    _, counts = qtdb_scores
    assert counts.matched >= 2300 and counts.missed == 0


@pytest.mark.parametrize("fid", list(LUDB_LIMITS))
def test_ludb_per_lead_marks(ludb_scores: tuple[ErrorPool, BeatCounts], fid: str) -> None:
    # Reference: LUDB per-lead cardiologist marks (Kalyakulina et al., IEEE Access 2020).
    pool, _ = ludb_scores
    mean, sd, n = pool.stats()[fid]
    mean_max, sd_max = LUDB_LIMITS[fid]
    assert n > 7000, f"too few {fid} compared: {n}"
    assert abs(mean) <= mean_max, f"{fid}: mean {mean:.1f} ms (CSE tol {CSE_TOLERANCE_MS[fid]})"
    assert sd <= sd_max, f"{fid}: SD {sd:.1f} ms (CSE tol {CSE_TOLERANCE_MS[fid]})"
    n_ref = pool.n_ref[fid]
    assert pool.missed[fid] <= LUDB_MISSED_MAX[fid] * n_ref, f"{fid}: {pool.missed[fid]} missed"
    assert pool.extra[fid] <= LUDB_EXTRA_MAX[fid] * n_ref, f"{fid}: {pool.extra[fid]} extra"


def test_ludb_beats_found(ludb_scores: tuple[ErrorPool, BeatCounts]) -> None:
    _, counts = ludb_scores
    total = counts.matched + counts.missed
    assert counts.missed <= 0.005 * total and counts.extra <= 0.005 * total


def test_ludb_median_errors_within_cse(ludb_scores: tuple[ErrorPool, BeatCounts]) -> None:
    # The median absolute error stays well inside the CSE tolerance for every fiducial
    # (the SDs above are inflated by a few records with unusual morphology).
    pool, _ = ludb_scores
    for fid, tol in CSE_TOLERANCE_MS.items():
        med = float(np.median(np.abs(pool.errors[fid])))
        assert med <= tol, f"{fid}: median |error| {med:.1f} ms > CSE {tol}"
