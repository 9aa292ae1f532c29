"""Writing synthetic records as WFDB, read back with wfdb-python (the reference reader), and
the deterministic demo worklist."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np
import pytest
import wfdb

from reviewapp.core.errors import MarksError
from reviewapp.core.record import SubjectFacts
from reviewapp.core.synth import SynthParams, generate, load_truth
from reviewapp.core.synth.demo import DEMO_RECORDS, main, write_demo_record
from reviewapp.core.synth.wfdb_out import write_synthetic


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_wfdb_round_trip_within_adc_resolution(tmp_path: Path) -> None:
    subject = SubjectFacts(
        subject_id="S-900", age_years=61.0, sex="male", comments=("timepoint: post-dose 4 h",)
    )
    syn = generate(
        SynthParams(duration_s=5, emg_snr_db=20, ectopic_beats=(2,)), name="rt", subject=subject
    )
    hea = write_synthetic(syn, tmp_path, "rt")
    assert hea == tmp_path / "rt.hea" and hea.is_file()
    rec = wfdb.rdrecord(str(tmp_path / "rt"))  # reference reader
    assert rec.fs == 500 and rec.sig_len == syn.record.n_samples
    assert tuple(rec.sig_name) == syn.record.lead_names
    assert rec.fmt == ["16"] * 12 and rec.units == ["mV"] * 12
    gain = rec.adc_gain[0]
    assert gain == 1000.0
    err = np.max(np.abs(rec.p_signal - syn.record.signal_mv.astype(np.float64)))
    assert err <= 0.5 / gain + 1e-6  # rounding to the nearest ADC step
    assert err > 0  # it really was quantised, not copied
    assert {"subject: S-900", "age: 61", "sex: male", "timepoint: post-dose 4 h"} <= set(
        rec.comments
    )
    # Truth JSON: seconds, read back to the same sample indices.
    data = json.loads((tmp_path / "rt.truth.json").read_text())
    assert data["beats"][0]["qrs_on_s"] == syn.truth.beats[0].marks.qrs_on / 500
    assert data["beats"][2]["kind"] == "premature" and data["beats"][2]["p_on_s"] is None
    assert load_truth(tmp_path / "rt.truth.json") == syn.truth


def test_wfdb_boundaries_survive_quantisation(tmp_path: Path) -> None:
    syn = generate(SynthParams(duration_s=4))
    write_synthetic(syn, tmp_path, "q")
    d = wfdb.rdrecord(str(tmp_path / "q"), physical=False).d_signal
    for b in syn.truth.beats:
        m = b.marks
        for on, off in ((m.p_on, m.p_off), (m.qrs_on, m.qrs_off)):
            assert np.all(d[on - 1] == 0) and np.any(d[on] != 0)
            assert np.any(d[off] != 0) and np.all(d[off + 1] == 0)
        assert np.any(d[m.t_off] != 0) and np.all(d[m.t_off + 1] == 0)


def test_big_signals_get_a_smaller_gain(tmp_path: Path) -> None:
    syn = generate(SynthParams(duration_s=3, r_amp_mv=60.0))
    write_synthetic(syn, tmp_path, "big")
    rec = wfdb.rdrecord(str(tmp_path / "big"))
    assert rec.adc_gain[0] < 1000
    err = np.max(np.abs(rec.p_signal - syn.record.signal_mv))
    assert err <= 0.5 / rec.adc_gain[0] + 1e-6


def test_load_truth_rejects_bad_files(tmp_path: Path) -> None:
    bad = tmp_path / "x.truth.json"
    bad.write_text("{not json")
    with pytest.raises(MarksError, match=r"x\.truth\.json"):
        load_truth(bad)
    bad.write_text(json.dumps({"format": "something-else"}))
    with pytest.raises(MarksError, match="not a synthetic truth file"):
        load_truth(bad)


def test_demo_record_regeneration_is_identical(tmp_path: Path, sample_records_dir: Path) -> None:
    demo = next(d for d in DEMO_RECORDS if d.name == "s005_post1h")  # the noisy one
    write_demo_record(demo, tmp_path / "a")
    write_demo_record(demo, tmp_path / "b")
    for suffix in (".dat", ".hea", ".truth.json"):
        a, b = tmp_path / "a" / f"s005_post1h{suffix}", tmp_path / "b" / f"s005_post1h{suffix}"
        assert _sha(a) == _sha(b)
        shipped = sample_records_dir / f"s005_post1h{suffix}"
        if shipped.exists():  # the committed files are what the command produces
            assert _sha(a) == _sha(shipped), f"{shipped} is stale: regenerate it"


def test_demo_command_writes_the_worklist(tmp_path: Path) -> None:
    assert main([str(tmp_path)]) == 0
    names = {d.name for d in DEMO_RECORDS}
    assert 10 <= len(names) <= 12
    for name in names:
        assert (tmp_path / f"{name}.hea").is_file() and (tmp_path / f"{name}.truth.json").is_file()
    text = (tmp_path / "README.md").read_text()
    assert "invented" in text and "python -m reviewapp.core.synth.demo sample_records" in text
    rows = (tmp_path / "worklist.csv").read_text().splitlines()
    assert len(rows) == len(DEMO_RECORDS) + 1
    total = sum(p.stat().st_size for p in tmp_path.iterdir())
    assert total < 4_000_000
    # The scenario each record is meant to show is really in its truth.
    truths = {n: load_truth(tmp_path / f"{n}.truth.json") for n in names}
    assert truths["s014_post2h"].rhythm == "af"
    assert truths["s007_predose"].pr_ms > 200  # first-degree AV block: PR > 200 ms
    assert truths["s011_predose"].qrs_ms >= 120  # wide QRS
    assert any(b.kind.value == "premature" for b in truths["s009_post4h"].beats)
    qt = [truths[n].qt_ms for n in ("s003_predose", "s003_post2h", "s003_post6h")]
    assert qt == sorted(qt) and qt[-1] - qt[0] > 60
