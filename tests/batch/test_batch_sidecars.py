"""The batch judges each sidecar with the marks store's own reader, and never misstates it.

A sidecar copied from another record (with its sign-off), one whose record changed after
sign-off, one of a future schema version or with an invalid field, or a FIFO named like one,
is reported as foreign / stale / invalid, left untouched, and never as signed or current.
Outside references: the marks store's schema validation and identity check
(reviewapp.core.marks.load_sidecar), the synthetic generator's construction-exact records
(invented signals), the operating system's file types.
"""

from __future__ import annotations

import csv
import errno
import json
import os
import shutil
import signal
from pathlib import Path

import numpy as np
import pytest

from reviewapp.batch import sidecar_adapter as sidecars
from reviewapp.batch.runner import run_batch
from reviewapp.batch.summary_csv import write_summary_csv
from reviewapp.cli import main
from reviewapp.core.errors import ReviewError
from reviewapp.core.io import find_records, open_record
from reviewapp.core.marks import MarksStore, load_sidecar

from .conftest import add_synthetic


@pytest.fixture
def folder(tmp_path: Path) -> Path:
    f = tmp_path / "recs"
    for k, name in enumerate(("a", "b", "c", "d", "e")):
        add_synthetic(f, name, 60.0 + 5 * k, seed=k)
    assert run_batch(find_records(f), workers=1).done == 5
    return f


def _sign(record: Path, reviewer: str = "reader1") -> None:
    with MarksStore.open(open_record(record), reviewer) as store:
        store.do(store.edits.move_fiducial("t_off", 0.4))
        store.do(store.edits.sign_off())


def _outcomes(folder: Path):
    return {o.record: o for o in run_batch(find_records(folder), workers=1).outcomes}


def test_foreign_stale_and_invalid_sidecars_are_reported_as_such_and_left_alone(folder: Path):
    _sign(folder / "a.hea")
    _sign(folder / "c.hea")
    # b: its sidecar replaced by a copy of a's (signed off by reader1).
    shutil.copy(folder / "a.marks.json", folder / "b.marks.json")
    # c: signed off, then the record's signal file changed.
    dat = bytearray((folder / "c.dat").read_bytes())
    dat[100] ^= 0x01
    (folder / "c.dat").write_bytes(bytes(dat))
    # d: a future schema version; e: an invalid field.
    doc = json.loads((folder / "d.marks.json").read_text())
    doc["schema_version"] = 99
    (folder / "d.marks.json").write_text(json.dumps(doc))
    doc = json.loads((folder / "e.marks.json").read_text())
    doc["automatic"]["engine_version"] = 12
    (folder / "e.marks.json").write_text(json.dumps(doc))
    before = {p.name: p.read_bytes() for p in folder.glob("*.marks.json")}

    got = _outcomes(folder)
    assert got["a"].outcome == "skipped" and got["a"].status == "signed_off"
    assert got["a"].marks_file == "valid"
    expected = {"b": "foreign", "c": "stale", "d": "invalid", "e": "invalid"}
    for name, state in expected.items():
        o = got[name]
        assert (o.outcome, o.marks_file, o.status, o.reviewer) == ("failed", state, None, None)
        assert o.error.startswith(f"{folder / name}.hea: {state} marks file: ")
        assert "left untouched" in o.error
    assert "made for record 'a', not 'b'" in got["b"].error
    assert "files changed after these marks were made" in got["c"].error
    assert "schema version 99" in got["d"].error
    assert "engine_version" in got["e"].error
    assert {p.name: p.read_bytes() for p in folder.glob("*.marks.json")} == before
    # The store refuses the same files (one judgement for everyone).
    for name in ("d", "e"):
        with pytest.raises(ReviewError):
            load_sidecar(folder / f"{name}.marks.json")


def test_a_fifo_named_like_a_sidecar_fails_its_record_without_blocking(folder: Path):
    (folder / "b.marks.json").unlink()
    os.mkfifo(folder / "b.marks.json")
    signal.alarm(60)
    try:
        got = _outcomes(folder)
    finally:
        signal.alarm(0)
    assert got["b"].outcome == "failed" and got["b"].marks_file == "invalid"
    assert "FIFO" in got["b"].error
    assert [got[n].outcome for n in "acde"] == ["skipped"] * 4


def test_stale_locks_of_current_records_are_removed_live_ones_kept(folder: Path):
    dead_pid = 2**22 + 4321  # above Linux's default pid_max: never a live process
    stale = folder / "a.marks.json.lock"
    stale.write_text(json.dumps({"pid": dead_pid, "host": os.uname().nodename}))
    with MarksStore.open(open_record(folder / "b.hea"), "reader1"):  # a window has b open
        got = _outcomes(folder)
        assert (folder / "b.marks.json.lock").exists()
    assert got["a"].outcome == "skipped" and not stale.exists()
    assert got["b"].outcome == "skipped"


def test_a_one_millisecond_aecg_fails_in_words(tmp_path: Path, folder: Path):
    from reviewapp.core.io.aecg_format import write_aecg
    from reviewapp.core.record import record_from_array

    one = record_from_array(np.full((1, 2), 0.1, np.float32), 1000.0, ["I", "II"], name="t")
    write_aecg(one, folder / "tiny.xml")
    code = main(["batch", str(folder), "--workers", "1", "--summary", str(tmp_path / "s.csv")])
    assert code == 1
    with open(tmp_path / "s.csv", newline="", encoding="utf-8") as fh:
        rows = {r["record"]: r for r in csv.DictReader(fh)}
    assert rows["tiny"]["outcome"] == "failed"
    assert "record too short to measure (1 samples" in rows["tiny"]["error"]
    assert "LinAlgError" not in rows["tiny"]["error"]


def test_batch_on_only_a_one_millisecond_aecg_is_exit_2_naming_it(tmp_path: Path, capsys):
    from reviewapp.core.io.aecg_format import write_aecg
    from reviewapp.core.record import record_from_array

    one = record_from_array(np.full((1, 2), 0.1, np.float32), 1000.0, ["I", "II"], name="t")
    write_aecg(one, tmp_path / "tiny.xml")
    assert main(["batch", str(tmp_path), "--workers", "1"]) == 2
    failures = [ln for ln in capsys.readouterr().err.splitlines() if ln.startswith("failed:")]
    assert failures == [
        f"failed: {tmp_path / 'tiny.xml'}: record too short to measure (1 samples, 0.001 s; "
        "at least 2 s needed)"
    ]


def test_summary_with_a_non_utf8_file_name_is_written_whole(tmp_path: Path, folder: Path, capsys):
    rec = open_record(folder / "a.hea")
    t = np.arange(rec.n_samples) / rec.fs_hz
    x = rec.window(0, rec.n_samples)[:, :2]
    bad = os.fsencode(folder) + b"/x\xff.csv"  # Latin-1 byte: not UTF-8
    with open(bad, "w", encoding="ascii") as fh:
        fh.write("time_s,I [mV],II [mV]\n")
        np.savetxt(fh, np.column_stack([t, x]), delimiter=",", fmt="%.6f")
    summary = tmp_path / "summary.csv"
    code = main(["batch", str(folder), "--workers", "1", "--summary", str(summary)])
    err = capsys.readouterr().err
    assert code == 0, err
    text = summary.read_bytes().decode("utf-8")  # valid UTF-8 throughout
    rows = list(csv.DictReader(text.splitlines()))
    assert len(rows) == 6 and all(r["outcome"] in ("done", "skipped") for r in rows)
    (row,) = [r for r in rows if r["record"].startswith("x")]
    assert row["record"] == "x\\xff" and row["path"].endswith("x\\xff.csv")
    assert row["outcome"] == "done" and row["auto_hr_bpm"]


def test_a_summary_that_cannot_be_written_leaves_the_previous_one_whole(
    tmp_path: Path, folder: Path, monkeypatch: pytest.MonkeyPatch
):
    outcomes = run_batch(find_records(folder), workers=1).outcomes
    summary = tmp_path / "summary.csv"
    write_summary_csv(summary, outcomes[:2])
    previous = summary.read_bytes()
    import reviewapp.core.marks.durable as durable

    def full_disk(fd: int, data: bytes) -> int:
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(durable.os, "write", full_disk)
    with pytest.raises(ReviewError, match="cannot write the batch summary: No space left"):
        write_summary_csv(summary, outcomes)
    monkeypatch.undo()
    assert summary.read_bytes() == previous
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []


def test_scheduler_without_workers_times_out_with_a_message(tmp_path: Path, folder: Path, capsys):
    import logging

    from dask.distributed import LocalCluster

    with LocalCluster(
        n_workers=0, processes=False, dashboard_address=None, silence_logs=logging.ERROR
    ) as cluster:
        address = cluster.scheduler_address
        code = main(["batch", str(folder), "--scheduler", address, "--worker-wait", "1"])
    err = capsys.readouterr().err.strip().splitlines()[-1]
    assert code == 2
    assert err == (
        f"reviewapp: no Dask worker joined the scheduler at {address} within 1 s; start "
        f"workers (dask worker {address}) or run without --scheduler"
    )
    assert sidecars.read_view(folder / "a.hea") is not None  # nothing was touched
