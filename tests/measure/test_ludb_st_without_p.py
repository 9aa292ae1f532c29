"""ST levels in rhythms without a P wave, against the TP segment on real records.

Reference: LUDB (Kalyakulina AI et al., IEEE Access 8:186181-186190, 2020; PhysioNet), whose
cardiologists marked the onset and end of QRS and T in every lead of every beat, and labelled
the rhythm (``ludb.csv``): 11 records of this copy are atrial fibrillation, 2 atrial flutter.

Without a P wave there is no PR segment. The app refers ST to the level just before QRS onset
in the median beat (the f waves average out there). The classic baseline without a P wave is
the TP segment (common practice, no source), computed here with plain numpy on the raw signal
as ``wfdb.rdrecord`` reads it, beat by beat:

- level = mean of the raw signal from that lead's expert T end of the previous beat to the
  beat's global QRS onset (the second-earliest expert QRS onset among the leads; beats whose
  TP segment is under 40 ms are left out);
- ST at J, J+60 ms, J+80 ms = the signal at that lead's expert QRS end (+60, +80 ms) minus the
  level; the median over the record's beats.

The app reads each record with the experts' boundaries given as the reader's corrections of
the median beat (as in ``test_ludb_amplitudes``), so the boundaries are theirs and only the
baseline differs. Tolerance: that of the sinus-rhythm ST check (``test_ludb_amplitudes``,
0.05 mV = 0.5 mm at 10 mm/mV for 95 % of leads, a mean bias under 0.01 mV).

Measured when written, all 11 fibrillation records (ours minus TP, mean ± SD in µV, 95th
percentile of |difference|): ST at J 4.1 ± 15.0 (28), J+60 5.9 ± 17.2 (36), J+80
6.0 ± 17.3 (36), on 119 leads. No threshold of this rule
was set on these figures: the level is the sinus rule's (20 ms before QRS onset), the flutter
gate is the atrial organisation threshold of the flutter statement (set on the odd-numbered
records), and the steadiness limit is the 0.1 mV step of the ST criteria.
"""

from __future__ import annotations

import csv
import itertools
from pathlib import Path

import numpy as np
import pytest
import wfdb

from reviewapp.core.engine import analyse
from reviewapp.core.io import open_record
from reviewapp.core.measure.compute import ST_WITHOUT_P_WAVE
from tests.measure.test_ludb_amplitudes import (
    LUDB_LEAD_NAMES,
    _expert_beats,
    _expert_overrides,
    _global,
    load_ludb_lead,
    match_beats,
)

ST_KEYS = {"st_j_mv": 0.0, "st_j60_mv": 60.0, "st_j80_mv": 80.0}
MIN_TP_MS = 40.0
# (|mean| max, SD max, 95th percentile of |difference| max), mV: as for sinus rhythm.
TOLERANCE_MV = (0.01, 0.025, 0.05)


def _rhythm_records(ludb: Path, word: str) -> list[str]:
    with open(ludb / "ludb.csv", newline="", encoding="utf-8") as fh:
        rows = {row["ID"]: row for row in csv.DictReader(fh)}
    names = sorted((p.stem for p in ludb.glob("*.hea")), key=int)
    return [n for n in names if n in rows and word in rows[n]["Rhythms"].lower()]


def _tp_reference(x: np.ndarray, fs: float, beats: list) -> list[dict[str, list[float]]]:
    """Per lead, the ST levels of each beat referred to its TP segment (module docstring)."""
    out: list[dict[str, list[float]]] = [{k: [] for k in ST_KEYS} for _ in LUDB_LEAD_NAMES]
    for prev, cur in itertools.pairwise(beats):
        q_on = _global(cur, 2, True)
        if q_on is None:
            continue
        for li in range(len(LUDB_LEAD_NAMES)):
            a, b = prev[li], cur[li]
            if a is None or b is None or a[4] < 0 or b[3] < 0:
                continue
            t_end, j = int(a[4]), int(b[3])
            if q_on - t_end < MIN_TP_MS * fs / 1000.0:
                continue
            level = float(x[t_end:q_on, li].mean())
            for key, ms in ST_KEYS.items():
                k = j + round(ms * fs / 1000.0)
                if k < x.shape[0]:
                    out[li][key].append(float(x[k, li]) - level)
    return out


def _compare(ludb: Path, name: str) -> dict[str, list[float]]:
    raw = wfdb.rdrecord(str(ludb / name))
    x, fs = np.asarray(raw.p_signal, dtype=np.float64), float(raw.fs)
    analysis = analyse(open_record(ludb / f"{name}.hea"))
    diffs: dict[str, list[float]] = {k: [] for k in ST_KEYS}
    if analysis.representative is None:
        return diffs
    dominant = np.asarray([b.r for b in analysis.beats if b.kind.value == "dominant"], np.int64)
    all_beats = _expert_beats(ludb, name, fs)
    matched = match_beats(dominant, load_ludb_lead(ludb / name, "ii").r, fs)
    keep = [k for k in range(len(all_beats)) if matched[k] >= 0]
    if not keep:
        return diffs
    overrides = _expert_overrides(
        analysis, [all_beats[k] for k in keep], dominant[[int(matched[k]) for k in keep]]
    )
    reading = analysis.reading(overrides)
    assert reading.marked.representative.marks.p_on is None  # no P wave: the case at hand
    ref = _tp_reference(x, fs, all_beats)
    for li, lead in enumerate(LUDB_LEAD_NAMES):
        ours = reading.measurements.lead(lead)
        for key in ST_KEYS:
            got = None if ours is None else getattr(ours, key)
            if got is not None and len(ref[li][key]) >= 3:
                diffs[key].append(float(got) - float(np.median(ref[li][key])))
    return diffs


@pytest.mark.filterwarnings("ignore:All-NaN slice")
def test_st_without_a_p_wave_agrees_with_the_tp_segment(shared_data: Path) -> None:
    ludb = shared_data / "ludb"
    names = _rhythm_records(ludb, "atrial fibrillation")
    assert len(names) >= 8, "too few atrial fibrillation records in this LUDB copy"
    pooled: dict[str, list[float]] = {k: [] for k in ST_KEYS}
    for name in names:
        for key, d in _compare(ludb, name).items():
            pooled[key] += d
    max_mean, max_sd, max_p95 = TOLERANCE_MV
    for key, values in pooled.items():
        d = np.asarray(values)
        assert d.size >= 100, (key, d.size)  # nearly every lead of every record measured
        mean, sd, p95 = float(d.mean()), float(d.std()), float(np.percentile(np.abs(d), 95))
        figures = (key, round(mean * 1000, 1), round(sd * 1000, 1), round(p95 * 1000, 1))
        assert abs(mean) <= max_mean and sd <= max_sd and p95 <= max_p95, figures


@pytest.mark.parametrize("name", ["35", "52"])
def test_st_is_not_referred_to_flutter_waves(shared_data: Path, name: str) -> None:
    # Records 35 and 52 are typical atrial flutter (ludb.csv): flutter waves are locked to
    # the QRS they conduct to and run through the ST segment, so no lead has a level for ST.
    ludb = shared_data / "ludb"
    if not (ludb / f"{name}.hea").exists():
        pytest.skip(f"LUDB record {name} is not in this copy")
    reading = analyse(open_record(ludb / f"{name}.hea")).reading()
    assert reading.marked.representative.marks.p_on is None
    assert all(m.st_j_mv is None for m in reading.measurements.leads)
    st = [why for q, why in reading.measurements.unmeasured if q.endswith(".st")]
    assert len(st) == 12 and all("flutter waves" in why for why in st)
    assert not any(r.text == ST_WITHOUT_P_WAVE for r in reading.reasons)
    assert not any(f.quantity == "st_j_mv" for f in reading.findings)


def test_fibrillation_records_have_st_in_every_lead_with_the_caution(shared_data: Path) -> None:
    ludb = shared_data / "ludb"
    for name in _rhythm_records(ludb, "atrial fibrillation"):
        reading = analyse(open_record(ludb / f"{name}.hea")).reading()
        if reading.marked.representative.marks.p_on is not None:
            continue  # the engine found a P wave: the PR segment is the baseline
        leads = reading.measurements.leads
        assert all(m.st_j_mv is not None for m in leads), name
        assert any(r.quantity == "st_j_mv" and r.kind == "caution" for r in reading.reasons)
