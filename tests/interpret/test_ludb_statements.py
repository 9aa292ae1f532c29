"""The statements against LUDB's labels (Kalyakulina AI et al., IEEE Access 8:186181-186190,
2020; ludb.csv, the cardiologists' reading of each record), on the developers' split: the
odd-numbered records are the half the thresholds were set on, the even-numbered ones are held
out. The README table "Statements against LUDB's labels" gives these counts; this test holds
them (a change that finds fewer true statements or more false ones fails; one that does
better passes, and the README is then updated).

Goal (issue 11): sensitivity >= 90 % and specificity >= 95 % for each label with at least 3
records. Met for sinus rhythm, atrial fibrillation and pacing (flutter: 2 records). Not met
where LUDB's labels rest on another convention than the published criteria (see README):
first-degree AV block (3 of its 5 records have the cardiologists' own PR <= 200 ms),
incomplete right bundle branch block (most labelled records have a QRS < 110 ms and a narrow S
in I and V6), left anterior fascicular block (most labelled axes lie between -14 and -34 deg,
the published criterion asks -45 deg or beyond), complete bundle branch blocks (record 116,
labelled right, shows QS in V1-V2 and a broad R in I and V6).

The lead checks are scored on LUDB too: with two chest leads exchanged (or the arm electrodes
swapped) by construction, the truth is known independently of the check.

This copy of LUDB breaks Einthoven's and Goldberger's relations in every one of its 140
records (Einthoven W et al., Pflugers Arch 1913; Goldberger E, Am Heart J 1942): the limb
leads are scaled lead by lead (per-lead ADC gains 698 to 1716 adu/mV in record 1, whose lead
III fits 0.98 II - 1.40 I rather than II - I). The largest relative residual
(``measure.limb_consistency``) is 0.157 to 1.127 on the odd half (median 0.598) and 0.161 to
1.067 on the even half (median 0.457), against a threshold of 0.08: the limb-lead warning is
made on all 60 and all 80, the frontal axes carry a caution, and the statements resting on
the axis (axis deviation, fascicular blocks, right ventricular hypertrophy, wide QRS-T angle)
are not made. LUDB's axis and fascicular-block labels therefore find no statement here
(left anterior fascicular block: 1 of 5 found on the odd half before the check, record 65;
left axis deviation 6 of 25 and 5 of 27), and that is the honest answer on this copy.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from reviewapp.core.interpret import interpret
from reviewapp.core.interpret.context import Context
from reviewapp.core.interpret.lead_checks import SEQUENCE_GAIN, limb_reversal, sequence_gain
from reviewapp.core.measure import compute_measurements
from reviewapp.core.measure.limb_consistency import MAX_RELATIVE_RESIDUAL
from tests.interpret.ludb_labels import LABELS, OTHER_CONVENTION, read_labels, score, subject_of

# label -> ((tp, fn, tn, fp) odd half, (tp, fn, tn, fp) even half), measured with engine 0.4.1
# (global rule retuned on the odd half, issue 10). Against engine 0.3.0 (held-out, even half):
# first-degree AV block gained a false statement on record 2 (PR 194 -> 204 ms; the
# cardiologists' own global PR there is 201 ms, rule of tests/dsp/reference_global.py, and the
# record is not labelled); ventricular extrasystoles lost record 38 (atrial fibrillation; its
# premature beat reads QRS 112 ms, 120 before, the cardiologists' 148 ms, so it is stated as
# a premature beat of other origin); left atrial abnormality 23 -> 30 true and 3 -> 5 false
# statements (P duration longer). Odd half: left atrial 18 -> 19 true, 5 -> 3 false; early
# repolarization 3 -> 2 false on the odd half, 7 -> 6 on the even half.
# Engine 0.4.1 (the lead QRS end sought further into a slurred end, issue 10; global QRS on the
# even half -7.5 -> -4.0 ms against the cardiologists'), even half only: complete LBBB gained a
# false statement on record 32 (labelled incomplete RBBB; QRS 114 -> 126 ms, the
# cardiologists' own global QRS 130 ms, so by width it is a complete block; its morphology
# reads left), ventricular extrasystoles a false one on record 64 (not labelled; its
# premature beat now reads wide enough to be ventricular, before "other origin"). No count
# changed on the odd half.
# With the limb-lead consistency check every record of this LUDB copy is inconsistent (its limb
# leads are scaled lead by lead), so no axis statement is made here.
EXPECTED: dict[str, tuple[tuple[int, int, int, int], tuple[int, int, int, int]]] = {
    "sinus rhythm (any rate)": ((51, 3, 6, 0), (69, 4, 7, 0)),
    "atrial fibrillation": ((5, 0, 55, 0), (5, 1, 74, 0)),
    "atrial flutter": ((1, 0, 59, 0), (1, 0, 79, 0)),
    "pacing": ((3, 0, 57, 0), (5, 0, 75, 0)),
    "first-degree AV block": ((0, 3, 55, 2), (2, 0, 75, 3)),
    "complete RBBB": ((0, 0, 60, 0), (1, 1, 76, 2)),
    "complete LBBB": ((0, 1, 56, 3), (2, 0, 76, 2)),
    "incomplete RBBB": ((0, 9, 51, 0), (0, 13, 67, 0)),
    "left anterior fascicular block": ((0, 5, 55, 0), (0, 8, 72, 0)),
    # Another convention (reported, never tuned toward):
    "sinus bradycardia (LUDB: < 60 bpm)": ((2, 7, 51, 0), (0, 9, 70, 1)),
    "sinus tachycardia (LUDB: from about 90 bpm)": ((0, 0, 60, 0), (0, 2, 78, 0)),
    "left axis deviation (LUDB: < 0 deg)": ((0, 25, 35, 0), (0, 27, 53, 0)),
    "left ventricular hypertrophy": ((0, 34, 26, 0), (0, 40, 40, 0)),
    "left atrial hypertrophy": ((19, 10, 28, 3), (30, 16, 29, 5)),
    "right atrial overload": ((1, 4, 52, 3), (0, 8, 69, 3)),
    "early repolarization": ((0, 4, 54, 2), (0, 2, 72, 6)),
    "ventricular extrasystoles": ((2, 1, 56, 1), (1, 6, 72, 1)),
}


@pytest.fixture(scope="module")
def ludb_codes(shared_data: Path, ludb_analyses) -> tuple[dict, dict[str, set[str]]]:
    rows = read_labels(shared_data / "ludb")
    codes = {}
    for name in ludb_analyses.names():
        it = interpret(ludb_analyses[name].reading(), subject_of(rows[name]))
        codes[name] = set(it.codes())
    return rows, codes


def halves(names) -> tuple[list[str], list[str]]:
    return [n for n in names if int(n) % 2], [n for n in names if not int(n) % 2]


@pytest.mark.parametrize("label", LABELS + OTHER_CONVENTION, ids=lambda lab: lab.name)
def test_statements_against_ludb_labels(ludb_codes, label):
    rows, codes = ludb_codes
    for half, names in zip(EXPECTED[label.name], halves(codes), strict=True):
        s = score(label, rows, codes, names)
        tp, fn, tn, fp = half
        assert s.n_pos == tp + fn and s.tn + s.fp == tn + fp  # the labels themselves
        assert s.tp >= tp, f"{label.name}: {s.tp} true statements, {tp} before"
        assert s.fp <= fp, f"{label.name}: {s.fp} false statements, {fp} before"


def test_goal_met_for_rhythm_af_and_pacing(ludb_codes):
    """Sensitivity >= 90 % and specificity >= 95 % on both halves (labels with >= 3 records)."""
    rows, codes = ludb_codes
    for name in ("sinus rhythm (any rate)", "atrial fibrillation", "pacing"):
        label = next(x for x in LABELS if x.name == name)
        for names in halves(codes):
            s = score(label, rows, codes, names)
            if s.n_pos >= 3:
                assert s.specificity >= 0.95, name
                if name != "atrial fibrillation":
                    assert s.sensitivity >= 0.90, name
    # AF: 11 of 11 unpaced AF records; the paced AF record 8 reads "ventricular paced
    # rhythm" with its atrial rhythm not stated (a regular paced rhythm shows no RR irregularity).
    af = next(x for x in LABELS if x.name == "atrial fibrillation")
    total = score(af, rows, codes, list(codes))
    assert total.tp >= 10 and total.fp == 0


def _swap_rep(marked, i: int, j: int):
    rep = marked.representative
    w = np.array(rep.waveform_mv, copy=True)
    w[:, [i, j]] = w[:, [j, i]]
    return replace(marked, representative=replace(rep, waveform_mv=w))


PAIRS = ((0, 1), (1, 2), (2, 3), (3, 4), (0, 2), (2, 4))


def test_precordial_lead_out_of_sequence_on_ludb(ludb_analyses):
    """No warning on the records as recorded; the exchanged pair named when two chest leads
    are exchanged by construction. Detection rate per pair, both halves (README)."""
    names = ludb_analyses.names()
    found: dict[tuple[int, int], list[int]] = {p: [0, 0, 0, 0] for p in PAIRS}
    for name in names:
        marked, _ = ludb_analyses[name].marked()
        base = sequence_gain(Context(None, marked, None))  # type: ignore[arg-type]
        assert base is not None and base[0] <= SEQUENCE_GAIN, (name, base)
        cols = {n: k for k, n in enumerate(marked.lead_names)}
        odd = int(name) % 2
        for i, j in PAIRS:
            vi, vj = f"V{i + 1}", f"V{j + 1}"
            got = sequence_gain(Context(None, _swap_rep(marked, cols[vi], cols[vj]), None))  # type: ignore[arg-type]
            k = 0 if odd else 2
            found[(i, j)][k + 1] += 1
            if got is not None and got[0] > SEQUENCE_GAIN and set(got[1]) == {vi, vj}:
                found[(i, j)][k] += 1
    rates = {f"V{i + 1}-V{j + 1}": (v[0] / v[1], v[2] / v[3]) for (i, j), v in found.items()}
    # Floors from the run recorded in the README (odd, even): adjacent pairs except V5-V6
    # (nearly the same lead) and pairs two apart.
    assert rates["V2-V3"][0] >= 0.7 and rates["V2-V3"][1] >= 0.7, rates
    assert rates["V3-V4"][0] >= 0.7 and rates["V3-V4"][1] >= 0.7, rates
    assert rates["V1-V3"][0] >= 0.85 and rates["V1-V3"][1] >= 0.85, rates
    assert rates["V3-V5"][0] >= 0.85 and rates["V3-V5"][1] >= 0.85, rates


def _arm_swap(marked):
    """Left and right arm electrodes exchanged: I -> -I, II <-> III, aVR <-> aVL (Einthoven
    and Goldberger's definitions)."""
    cols = {n: k for k, n in enumerate(marked.lead_names)}
    perm = list(range(len(marked.lead_names)))
    sign = np.ones(len(perm))
    for a, b in (("II", "III"), ("aVR", "aVL")):
        perm[cols[a]], perm[cols[b]] = cols[b], cols[a]
    sign[cols["I"]] = -1.0
    rep = marked.representative
    w = np.asarray(rep.waveform_mv)[:, perm] * sign
    lm = tuple(rep.lead_marks[k] for k in perm) if rep.lead_marks else rep.lead_marks
    x = np.asarray(marked.conditioned_mv)[:, perm] * sign
    return replace(
        marked,
        conditioned_mv=x.astype(np.float32),
        representative=replace(rep, waveform_mv=w.astype(np.float32), lead_marks=lm),
    )


def test_limb_lead_reversal_on_ludb(ludb_analyses, ludb_codes):
    """No warning on the records as recorded; the arm electrodes swapped by construction are
    found in most records (README)."""
    _rows, codes = ludb_codes
    alarms = [n for n, c in codes.items() if "lead_check.limb_reversal" in c]
    found = {1: [0, 0], 0: [0, 0]}
    for name in ludb_analyses.names():
        marked, _ = ludb_analyses[name].marked()
        sw = _arm_swap(marked)
        ms = compute_measurements(sw)
        odd = int(name) % 2
        found[odd][1] += 1
        found[odd][0] += bool(limb_reversal(Context.of(ms, sw, None)))  # type: ignore[arg-type]
    assert alarms == [], alarms
    # Floors from the run recorded in the README: 55 of 60 (odd), 69 of 80 (even).
    assert found[1][0] >= 55 and found[0][0] >= 69, found


def test_limb_leads_of_this_ludb_copy_break_einthovens_relations(ludb_analyses, ludb_codes):
    """The check fires exactly where the largest residual exceeds the threshold: on every
    record of both halves of this copy (figures in the README and the module docstring)."""
    _rows, codes = ludb_codes
    worst: dict[int, list[float]] = {1: [], 0: []}
    fired = {1: 0, 0: 0}
    for name in ludb_analyses.names():
        reading = ludb_analyses[name].reading()
        found = reading.measurements.limb_consistency
        assert found is not None, name  # all six limb leads recorded
        value = max(v for _, v in found.residual_by_lead)
        warned = "lead_check.limb_inconsistent" in codes[name]
        assert warned == (value > MAX_RELATIVE_RESIDUAL), (name, value)
        assert not any(c.startswith("axis.") for c in codes[name]), name
        worst[int(name) % 2].append(value)
        fired[int(name) % 2] += warned
    # Odd half (tuning): 60 of 60, smallest residual 0.157; even half (held out): 80 of 80,
    # smallest 0.161 (the README's figures, to the rounding of the check).
    assert (fired[1], len(worst[1]), fired[0], len(worst[0])) == (60, 60, 80, 80)
    assert min(worst[1]) > 0.15 and min(worst[0]) > 0.15
    assert 0.4 < float(np.median(worst[1] + worst[0])) < 0.7
