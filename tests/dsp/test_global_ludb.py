"""Global P duration, PR, QRS duration and QT against the LUDB cardiologists' global values.

Reference (shared/data/README.md; ``reference_global``): a global duration runs from the
earliest onset to the latest offset over the simultaneous leads (AHA/ACCF/HRS 2007 Part I,
Kligfield et al., Circulation 115:1306-1324). LUDB's cardiologists marked each lead on its own
(Kalyakulina et al., IEEE Access 8:186181, 2020): a beat's reference is the SECOND-earliest
onset and the SECOND-latest offset among the leads marked (at least 4), a record's value the
median over its beats. Figures are engine minus reference, record by record, mean and SD in
ms, beside the IEC 60601-2-25 acceptance limits for global durations (recalled, from memory:
P +-10 / 15, PR +-10 / 10, QRS +-6 / 10, QT +-12 / 30 ms).

Tuning split (RULES.md): every threshold of the global rule (``delineate_global``,
``DelineationParams.glob_*``) was set on the ODD-numbered records only; the EVEN-numbered
records were held out and are the honest figures (held-back records score worse still).

Measured (this engine, 0.4.1; "0.4.0": the rule before the lead QRS end was sought at 2 % of
its last slope lobe (4.5 % before) with a 14 ms agreement (10 before); "issue 10": the first
standard-definition rule; "before": the median lead's marks as global marks, engine 0.1.0):

| interval | odd (tuning) | even (held out) | 0.4.0, odd / even | IEC |mean| / SD |
|---|---|---|---|---|
| P | -6.8 +- 12.0 | -6.3 +- 14.5 | -6.8 +- 12.0 / -6.3 +- 14.5 | 10 / 15 |
| PR | 1.1 +- 8.5 | 1.2 +- 10.4 | 1.1 +- 8.5 / 1.4 +- 10.2 | 10 / 10 |
| QRS | -2.2 +- 12.0 | -4.0 +- 12.6 | -5.4 +- 13.7 / -7.5 +- 12.2 | 6 / 10 |
| QT | -9.6 +- 19.4 | -8.3 +- 20.4 | -9.6 +- 19.4 / -8.5 +- 20.2 | 12 / 30 |

Issue 10, odd / even: P -9.4 +- 12.2 / -11.8 +- 18.7, PR -0.0 +- 8.7 / 0.6 +- 10.1, QRS -7.9
+- 13.8 / -8.7 +- 11.7, QT -9.9 +- 19.3 / -8.7 +- 19.9.

0.4.0 -> 0.4.1 on the held-out half: the QRS mean -7.5 -> -4.0 ms (now within 6), its SD
12.2 -> 12.6, the PR SD 10.2 -> 10.4 and the QT SD 20.2 -> 20.4 (the agreement of 14 ms also
moves a few onsets); premature beats -7.0 -> -4.8 ms (27 beats).

Before (median lead's marks), odd / even: P -18.6 +- 10.8 / -20.6 +- 17.9, PR 0.9 +- 6.4 /
0.7 +- 9.4, QRS -20.2 +- 10.8 / -18.3 +- 12.3, QT -29.4 +- 19.3 / -27.0 +- 19.6.

Within the IEC limits: P (mean and SD, both halves), PR (mean both halves, SD on the tuning
half), QT (mean and SD both halves), the QRS mean on both halves. Not reached: the QRS SD
(the readers' own lead marks stray: record 61's V3/V4 QRS ends lie 20 ms after the other
leads'; in atrial fibrillation records 101 and 109 the inferior leads' QRS
ends are marked 40-60 ms after the J point), the PR SD on the held-out half (10.4). The limits
below hold the figures reached so they cannot regress.

Why the global QRS read short (engine 0.4.0, odd half, 60 records; each dominant beat's
global marks against the cardiologists' second-earliest onset / second-latest end of the same
beat, median per record, then mean over records): onset +4.2 +- 7.0 ms (late), end -0.8 +-
9.2 ms, so the QRS -5.0 ms (the record medians: -5.4). The onset is the steady part: the
readers' second-earliest onset lies in V2 (100 of 510 dominant beats), V3 (73) or V1 (64)
most often, and there the engine's own lead onsets are late by +5.2, +6.0 and +3.1 ms (mean;
the limb leads -1.6 to +2.4 ms); the global onset is already 5 ms before the earliest lead mark. A
more sensitive lead onset (``glob_qrs_on_frac`` 0.01 or 0.015: odd QRS -4.3, -1.4 ms) takes
the synthetic onset 24 ms early at 20 dB noise with baseline wander and mains
(test_delineate_synthetic), so it was not taken. The end is where the spread is: by
morphology (ludb.csv labels) the end reads -11.0 ms in atrial fibrillation (5 records; QRS
-29 ms: 101, 109, 95, 129, 51), -8.5 in left bundle branch block (2), -3.1 with left
ventricular hypertrophy (34), +0.3 in right bundle branch block (9; the terminal R' is
found: their QRS -5.0 is the onset's +5.1). The lead's own end sought at 4.5 % of its last
slope lobe stopped on the slurred, low-amplitude terminal part: at 2 % (``glob_qrs_off_frac``)
the end moves to +2.5 +- 7.5 ms. The 10 ms agreement of the confirmation rule refused a lone
early or late lead now and then: 14 ms took the odd QRS SD from 12.7 to 12.0 ms (at 2 %), 18
ms raised it again (12.6), 6 ms shortened the QRS (-7.3 ms at 4.5 %). Premature beats (17 on
the odd half, each delineated on its own, not from the median beat): QRS -20.9 +- 15.7 ms, of
which the onset +14.1 ms (late) and the end -6.8 ms; the global rule does not reach them.
Engine 0.4.1 takes the 2 % end and the 14 ms agreement (chosen on this half, table above):
onset +4.2 +- 7.0, end +2.5 +- 7.5 ms; AF QRS -18.6, LBBB -9.0, LVH -3.3, RBBB -0.3 ms;
premature beats -18.5 +- 15.7 ms (end -4.4; the late onset stays). What is left is mostly
the onset in V1-V3, bounded by noise, and the premature beats' own onset (held, with what
was tried, by ``test_premature_beat_qrs_against_ludb_cardiologists`` below: even half -4.8
+- 17.2 ms per beat).
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

from reviewapp.core.fiducials import BeatKind

sys.path.insert(0, str(Path(__file__).resolve().parent))
from reference_global import (
    GLOBAL_INTERVALS,
    IEC_GLOBAL_LIMITS_MS,
    GlobalComparison,
    has_label,
    ludb_beat_qrs_reference,
    ludb_global_reference,
    ludb_labels,
    tuning_half,
)

pytestmark = pytest.mark.slow  # 140 records (shared cached analyses)

# (|mean| max, SD max) per half: a little above the measured figures in the table above.
HELD = {
    True: {
        "p_ms": (7.5, 13.0),
        "pr_ms": (2.0, 9.5),
        "qrs_ms": (3.0, 12.5),
        "qt_ms": (10.5, 20.5),
    },
    False: {
        "p_ms": (7.5, 15.5),
        "pr_ms": (2.0, 11.0),
        "qrs_ms": (4.5, 13.0),
        "qt_ms": (9.5, 21.0),
    },
}


@pytest.fixture(scope="module")
def ludb_global(shared_data: Path, ludb_analyses) -> tuple[GlobalComparison, dict]:
    root = shared_data / "ludb"
    comp = GlobalComparison.empty()
    readings = {}
    for name in ludb_analyses.names():
        reading = ludb_analyses[name].reading()
        iv = reading.measurements.intervals
        comp.add(
            name, {k: getattr(iv, k) for k in GLOBAL_INTERVALS}, ludb_global_reference(root, name)
        )
        readings[name] = reading
    print(comp.table("LUDB global durations, engine - cardiologists' global (ms)"))
    return comp, readings


@pytest.mark.parametrize("tuning", [True, False], ids=["odd-tuning", "even-held-out"])
@pytest.mark.parametrize("interval", GLOBAL_INTERVALS)
def test_global_durations_against_ludb_cardiologists(ludb_global, tuning, interval) -> None:
    comp, _ = ludb_global
    mean, sd, n = comp.stats(tuning)[interval]
    mean_max, sd_max = HELD[tuning][interval]
    iec = IEC_GLOBAL_LIMITS_MS[interval]
    assert n >= 45, f"{interval}: only {n} records compared"
    assert abs(mean) <= mean_max, f"{interval}: mean {mean:.1f} ms (IEC {iec[0]})"
    assert sd <= sd_max, f"{interval}: SD {sd:.1f} ms (IEC {iec[1]})"


def test_pr_and_qt_means_within_iec_on_the_held_out_half(ludb_global) -> None:
    # IEC 60601-2-25 global-duration acceptance, recalled (from memory): PR +-10, QT +-12 ms
    # mean; the QT spread 30 ms. Held-out (even) records.
    comp, _ = ludb_global
    st = comp.stats(False)
    assert abs(st["pr_ms"][0]) <= IEC_GLOBAL_LIMITS_MS["pr_ms"][0]
    assert abs(st["qt_ms"][0]) <= IEC_GLOBAL_LIMITS_MS["qt_ms"][0]
    assert st["qt_ms"][1] <= IEC_GLOBAL_LIMITS_MS["qt_ms"][1]


def test_bundle_branch_block_reads_a_wide_qrs(shared_data: Path, ludb_global) -> None:
    # ludb.csv "Conduction abnormalities" (the cardiologists' reading): complete right or left
    # bundle branch block needs QRS >= 120 ms (AHA/ACCF/HRS 2009 Part III, Surawicz et al.;
    # from memory). Before: record 108 (complete RBBB) read 86 ms.
    _, readings = ludb_global
    labels = ludb_labels(shared_data / "ludb")
    bbb = [
        n
        for n in readings
        if has_label(
            labels[n], "Conduction abnormalities", "complete right bundle", exclude="incomplete"
        )
        or has_label(
            labels[n], "Conduction abnormalities", "complete left bundle", exclude="incomplete"
        )
    ]
    assert len(bbb) >= 4
    qrs = {n: readings[n].measurements.intervals.qrs_ms for n in bbb}
    assert all(v is not None and v >= 120.0 for v in qrs.values()), qrs


def test_first_degree_av_block_pr(shared_data: Path, ludb_global) -> None:
    # ludb.csv: "I degree av block" (PR > 200 ms, common practice). The cardiologists' own
    # marks give a global PR of only 189-200 ms on 3 of the 5 such records here (15, 61, 131;
    # rule of the module docstring), so the check is: above 200 ms wherever theirs is (78:
    # 230 vs 232, 134: 240 vs 266 ms), and within 10 ms of theirs on the borderline ones.
    # Record 134: the engine's P onset lies within 10 ms of the readers' in 9-10 of 12 leads
    # on every beat; the reference's second-earliest onset comes from V2/V3 marks 88-122 ms
    # earlier on three beats (and III/aVF 50-58 ms earlier on two), where those leads are
    # flat, which makes the reference P 208 ms long.
    comp, readings = ludb_global
    labels = ludb_labels(shared_data / "ludb")
    avb = [
        n for n in readings if has_label(labels[n], "Conduction abnormalities", "i degree av block")
    ]
    assert len(avb) >= 4
    for n in avb:
        pr = readings[n].measurements.intervals.pr_ms
        ref = pr - comp.diffs["pr_ms"][n]
        if ref > 200.0:
            assert pr > 200.0, (n, pr, ref)
        else:
            assert abs(pr - ref) <= 10.0, (n, pr, ref)


def test_short_qtc_is_rare(ludb_global) -> None:
    # At most 1 in 30 LUDB records flagged short QTc (a cardiologist signs short QT rarely;
    # limit <= 340 ms, ESC 2015, Priori et al., from memory). Measured 1 of 140 (record 88).
    # Before: 50 of 140 at <= 390 ms with the median lead's QT, 30 of 140 at <= 390 ms with the
    # global QT.
    _, readings = ludb_global
    short = [
        n
        for n, r in readings.items()
        if any(f.quantity.startswith("qtc") and f.direction == "below" for f in r.findings)
    ]
    assert len(short) <= len(readings) / 30.0, short


def test_no_false_st_infarct_pattern_in_bundle_branch_block(shared_data: Path, ludb_global) -> None:
    # 4th UDMI (Thygesen et al., 2018; from memory): with a QRS >= 120 ms the ST and Q criteria
    # are not applied; the reason is part of the reading. Before: record 108 (RBBB) listed
    # inferior ST elevation, reciprocal depression and Q waves.
    _, readings = ludb_global
    r = readings["108"]
    assert not any(f.quantity in ("st_j_mv", "q_ms") for f in r.findings)
    gated = {x.quantity for x in r.reasons if x.kind == "gated"}
    assert {"st_j_mv", "q_ms"} <= gated
    assert any(x.kind == "not_comparable" and x.quantity.startswith("qtc") for x in r.reasons)
    assert r.measurements.intervals.jt_ms == pytest.approx(
        r.measurements.intervals.qt_ms - r.measurements.intervals.qrs_ms
    )


def test_halves_are_disjoint_and_cover_the_records(ludb_global) -> None:
    comp, readings = ludb_global
    odd = {n for n in readings if int(n) % 2}
    assert odd and len(odd) < len(readings)
    assert np.isfinite(comp.stats(True)["qrs_ms"][0]) and np.isfinite(
        comp.stats(False)["qrs_ms"][0]
    )


# Premature beats (``BeatKind.PREMATURE``; each delineated on its own signal, not from the
# median beat) against the cardiologists' global QRS of the same beat (second-earliest lead
# onset, second-latest lead end, at least 4 leads; ``ludb_beat_qrs_reference``). Measured,
# engine 0.4.1, engine - reference per beat, mean +- SD ms (n beats):
#   odd (tuning):     QRS -18.5 +- 15.7 (17), onset +14.1 +- 14.1, end -4.4 +- 7.5;
#                     mean |error| 21.1, RMS 24.2
#   even (held out):  QRS  -4.8 +- 17.2 (27), onset  +4.4 +- 12.4, end -0.4 +- 12.1;
#                     mean |error| 13.7, RMS 17.9
# Of another QRS shape than the dominant beats (the ventricular-looking ones): odd QRS -30.2
# +- 10.4 (8; onset +24.8), even -5.3 +- 23.2 (3); of the dominant shape: odd -8.0 +- 11.7
# (9), even -4.8 +- 16.3 (24).
# Why the onset is late: the global rule (``_widen_qrs``) widens the spatial onset only to a
# lead onset that another voting lead confirms within 14 ms, and only where at least three
# voting leads have a candidate outside the spatial mark that moves the lead's own signal
# (``confirmed_extreme``'s ``min_votes`` counts those candidates). On a single noisy beat
# fewer candidates pass the movement test than on the median beat: record 105's premature
# beat has V2 and V3 agreeing 2 samples apart, record 109's aVR and V6, and no widening
# follows; record 109's beat at 4.4 s has V4 and V6 at the readers' onset but V4's QRS slope
# is under 0.3 x the largest lead's, so it does not vote. Record 38's premature beat (QRS 112
# ms, the readers' 148 ms; the one ventricular-labelled premature beat read under 120 ms)
# starts with a 30 ms ramp of about 1.5 mV/s in the limb leads, below both the lead onset's
# noise floor (1.5 x the window's median slope, 1.7 mV/s in lead I) and the 5 % slope
# envelope, so no lead finds it.
# Tried on the odd half, beats delineated on their own only (the median beat and the
# dominant-beat table above unchanged in each), per-beat QRS odd / even:
#   three VOTING leads (not three candidates) needed:  -10.1 +- 16.0 / +1.6 +- 18.1 (RMS
#     18.9 / 18.2);
#   the same with leads voting from 0.15 x the largest slope: -4.7 +- 14.2 / +1.9 +- 18.3
#     (RMS 15.0 / 18.4); the onset only: -8.1 +- 15.1 / -1.3 +- 18.1 (RMS 17.2 / 18.2);
#   a lead onset's envelope at 2.5 % (and noise floor 0.75 x): -4.0 +- 19.0 / +8.1 +- 21.7
#     (+12.1 +- 22.8 / +19.4 +- 25.5, mean |error| 19.4 / 25.5: record 38 then 144 ms and all
#     8 ventricular-labelled premature beats >= 120 ms, but 64 and 106 read 16-34 ms wide);
#   premature beats of the dominant QRS shape given the median beat's QRS (carried by the
#     dominant beats' template match): -20.8 +- 13.0 / -13.1 +- 16.8 (their onsets 8-13 ms
#     late: the readers mark these beats' onsets earlier than the median beat's).
# The held-out half's per-beat error fell with none of them (mean |error| 13.7 ms; with the
# vote rules 14.1-14.7 and RMS 17.9 -> 18.2-18.4, though the mean moved toward 0; carried
# 15.3; envelope 18.1 and 25.5), and with the vote rules the ventricular-labelled premature
# beats read >= 120 ms stayed 6 of 8 (record 38 unchanged), so none was taken.
# The limits hold the measured figures.
PREMATURE_HELD = {True: (20.0, 17.0, 15), False: (6.5, 18.5, 24)}  # |mean|, SD, n min


@pytest.fixture(scope="module")
def premature_errors(shared_data: Path, ludb_analyses, ludb_global) -> dict[bool, np.ndarray]:
    """Engine - reference QRS duration (ms) of each matched premature beat, by half."""
    root = shared_data / "ludb"
    out: dict[bool, list[float]] = {True: [], False: []}
    for name in ludb_analyses.names():
        an = ludb_analyses[name]
        prem = [i for i, b in enumerate(an.beats) if b.kind is BeatKind.PREMATURE]
        if not prem:
            continue
        ref = ludb_beat_qrs_reference(root, name, an.fs_hz)
        to_ms = 1000.0 / an.fs_hz
        for i in prem:
            m = an.beat_marks[i]
            k = np.flatnonzero(np.abs(ref[:, 0] - an.beats[i].r) <= 0.150 * an.fs_hz)
            if m.qrs_on is None or m.qrs_off is None or k.size == 0:
                continue
            _, on, off = ref[k[0]]
            if on >= 0 and off > on:
                out[tuning_half(name)].append(((m.qrs_off - m.qrs_on) - (off - on)) * to_ms)
    return {h: np.array(v) for h, v in out.items()}


@pytest.mark.parametrize("tuning", [True, False], ids=["odd-tuning", "even-held-out"])
def test_premature_beat_qrs_against_ludb_cardiologists(premature_errors, tuning) -> None:
    # Reference: LUDB cardiologists' lead marks (Kalyakulina et al., IEEE Access 2020), rule
    # of reference_global; figures in the comment above PREMATURE_HELD.
    err = premature_errors[tuning]
    mean_max, sd_max, n_min = PREMATURE_HELD[tuning]
    assert err.size >= n_min, f"only {err.size} premature beats compared"
    assert abs(err.mean()) <= mean_max, f"QRS mean {err.mean():.1f} ms"
    assert err.std() <= sd_max, f"QRS SD {err.std():.1f} ms"


def test_ventricular_premature_beats_read_wide(shared_data: Path, ludb_analyses) -> None:
    # ludb.csv "Extrasystolies": "Ventricular extrasystole" on records 38, 45, 105, 106, 125
    # (the cardiologists' reading). A ventricular premature complex is wide, QRS >= 120 ms
    # (Mason et al., Circulation 2007 statement list; from memory). Measured with engine
    # 0.4.1: 6 of 8 premature beats on those records read >= 120 ms; the two that do not are
    # on record 38 (112 ms against the readers' 148 ms, see above; and a narrow one, 88 ms
    # against 102 ms, of the dominant QRS shape).
    labels = ludb_labels(shared_data / "ludb")
    wide = total = 0
    for name, row in labels.items():
        if not has_label(row, "Extrasystolies", "ventricular extrasystole"):
            continue
        reading = ludb_analyses[name].reading()
        for b, iv in zip(reading.marked.beats, reading.measurements.beats, strict=False):
            if b.kind is BeatKind.PREMATURE:
                total += 1
                wide += iv.qrs_ms is not None and iv.qrs_ms >= 120.0
    assert total >= 6 and wide >= 6, (wide, total)
