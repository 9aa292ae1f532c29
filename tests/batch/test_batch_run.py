"""`reviewapp batch` on a real Dask LocalCluster, resumability, and what it must never touch.

Outside references: real PhysioNet records (LUDB, QTDB; see tests/batch/conftest.py), the
synthetic generator's construction-exact heart rate, and the marks store's own schema
validation of every sidecar written (reviewapp.core.marks.load_sidecar).
"""

from __future__ import annotations

import csv
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from reviewapp.batch import sidecar_adapter as sidecars
from reviewapp.batch.runner import run_batch
from reviewapp.batch.summary_csv import write_summary_csv
from reviewapp.cli import main
from reviewapp.core.engine import ENGINE_VERSION, analyse
from reviewapp.core.io import find_records, open_record
from reviewapp.core.marks import MarksStore, load_sidecar, record_identity

REPO = Path(__file__).resolve().parents[2]
GOOD = {"1", "2", "101", "sel100w", "syn60", "syn75"}
BAD = {"garbage", "cut"}


def _env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    env["QT_QPA_PLATFORM"] = "offscreen"
    return env


def test_batch_command_on_a_local_cluster_marks_good_records_and_reports_the_bad(
    record_folder: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
):
    """`reviewapp batch FOLDER --scheduler ADDRESS` on a real 2-process LocalCluster."""
    import logging

    from dask.distributed import LocalCluster

    paths = find_records(record_folder)
    assert {p.stem for p in paths} == GOOD | BAD
    summary = tmp_path / "summary.csv"
    with LocalCluster(
        n_workers=2,
        threads_per_worker=1,
        processes=True,
        dashboard_address=None,
        silence_logs=logging.ERROR,
    ) as cluster:
        rc = main(
            [
                "batch",
                str(record_folder),
                "--scheduler",
                cluster.scheduler_address,
                "--summary",
                str(summary),
            ]
        )
    out = capsys.readouterr()
    assert rc == 1  # ran to the end; some records failed
    assert f"{len(paths)} records: {len(GOOD)} done, 0 skipped, {len(BAD)} failed" in out.out
    with open(summary, newline="") as fh:
        rows = {r["record"]: r for r in csv.DictReader(fh)}
    assert set(rows) == GOOD | BAD
    assert {n for n, r in rows.items() if r["outcome"] == "done"} == GOOD
    for name in BAD:
        assert rows[name]["outcome"] == "failed"
        assert rows[name]["error"].startswith(rows[name]["path"])  # names the file
    assert not any(rows[n]["error"] for n in GOOD)
    # Every sidecar passes the marks store's schema and identity check.
    for p in paths:
        if p.stem in GOOD:
            rec = open_record(p)
            sc = load_sidecar(sidecars.sidecar_path(p), record_identity(rec))
            assert sc.automatic is not None and sc.automatic.engine_version == ENGINE_VERSION
            assert sc.listing_cache is not None and sc.readings == ()
        else:
            assert not sidecars.sidecar_path(p).exists()
    # Synthetic records: the cached heart rate is the generator's (60 and 75 bpm exactly by
    # construction, invented data); a check of the cache, not of the engine.
    for name, hr in (("syn60", 60.0), ("syn75", 75.0)):
        assert float(rows[name]["auto_hr_bpm"]) == pytest.approx(hr, abs=1.5)
    # The stored automatic marks are what an in-process analysis of the same file gives.
    p1 = record_folder / "1.hea"
    sc = load_sidecar(sidecars.sidecar_path(p1))
    a = analyse(open_record(p1))
    assert [round(b.r_s * 500) for b in sc.automatic.beats] == [b.r for b in a.beats]


def test_run_batch_starts_its_own_cluster_and_reports_progress(record_folder: Path):
    """The default path: run_batch makes (and closes) a LocalCluster of 2 workers (threads here,
    to keep CI short; the command above runs on processes)."""
    paths = [p for p in find_records(record_folder) if p.stem in {"syn60", "syn75", "garbage"}]
    seen: list[str] = []
    result = run_batch(paths, workers=2, processes=False, progress=lambda o: seen.append(o.record))
    assert sorted(seen) == sorted(o.record for o in result.outcomes)  # once per record
    assert (result.done, result.skipped, result.failed) == (2, 0, 1)
    write_summary_csv(record_folder / "s.csv", result.outcomes)
    again = run_batch(paths, workers=2, processes=False)
    assert (again.done, again.skipped, again.failed) == (0, 2, 1)


def _edit(record_path: Path, reviewer: str, *, t_off_s: float, sign: bool) -> bytes:
    rec = open_record(record_path)
    with MarksStore.open(rec, reviewer) as store:
        store.do(store.edits.move_fiducial("t_off", t_off_s))
        if sign:
            store.do(store.edits.sign_off())
    return sidecars.sidecar_path(record_path).read_bytes()


def test_rerun_keeps_overrides_and_leaves_signed_off_readings_alone(
    record_folder: Path, monkeypatch: pytest.MonkeyPatch
):
    paths = [p for p in find_records(record_folder) if p.stem in GOOD]
    first = run_batch(paths, workers=1)
    assert first.done == len(paths)
    p_edit, p_signed = record_folder / "1.hea", record_folder / "2.hea"
    _edit(p_edit, "reader1", t_off_s=0.41, sign=False)
    signed_bytes = _edit(p_signed, "reader2", t_off_s=0.39, sign=True)
    before = load_sidecar(sidecars.sidecar_path(p_edit))

    # Unchanged engine: everything is current (the edited record too) and nothing is redone.
    again = run_batch(paths, workers=1)
    assert again.done == 0 and again.skipped == len(paths)

    # A newer engine: the sidecars are no longer current, automatic marks are replaced,
    # readings are not; the signed-off record is not touched at all.
    monkeypatch.setattr("reviewapp.batch.task.engine_version", lambda: "9.9.9-test")
    newer = run_batch(paths, workers=1)
    by_name = {o.record: o for o in newer.outcomes}
    assert newer.done == len(paths) - 1
    assert by_name["2"].outcome == "skipped" and "signed off" in by_name["2"].note
    assert sidecars.sidecar_path(p_signed).read_bytes() == signed_bytes
    after = load_sidecar(sidecars.sidecar_path(p_edit))
    assert after.readings == before.readings
    assert after.readings[0].overrides[0].new_s == pytest.approx(0.41)
    assert by_name["1"].outcome == "done"
    # The listing cache holds automatic values only (nothing of a reader's work, so a blinded
    # second reader's worklist shows nothing of the first reading).
    auto_qt = analyse(open_record(p_edit)).reading().measurements.intervals.qt_ms
    assert after.listing_cache["qt_ms"] == pytest.approx(auto_qt, abs=0.05)
    assert any(e.action == "set_automatic" for e in after.audit[len(before.audit) :])


@pytest.fixture
def synthetic_folder(tmp_path: Path) -> Path:
    from reviewapp.core.synth import SynthParams, generate
    from reviewapp.core.synth.wfdb_out import write_synthetic

    folder = tmp_path / "many"
    for k in range(12):
        syn = generate(SynthParams(hr_bpm=55.0 + k, duration_s=10.0, seed=k), name=f"s{k:02d}")
        write_synthetic(syn, folder, f"s{k:02d}")
    return folder


def test_a_killed_batch_resumes(synthetic_folder: Path):
    folder = synthetic_folder
    n = len(find_records(folder))
    cmd = [sys.executable, "-m", "reviewapp", "batch", str(folder), "--workers", "1"]
    proc = subprocess.Popen(cmd, env=_env(), stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 60
    try:
        while time.monotonic() < deadline:
            if len(list(folder.glob("*.marks.json"))) >= 3 or proc.poll() is not None:
                break
            time.sleep(0.01)
        proc.send_signal(signal.SIGKILL)
    finally:
        proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL, "the batch finished before it could be killed"
    done_before = {p: p.read_bytes() for p in folder.glob("*.marks.json")}
    assert 0 < len(done_before) < n

    summary = folder.parent / "resume.csv"
    out = subprocess.run(
        [*cmd, "--summary", str(summary)], env=_env(), capture_output=True, text=True, timeout=120
    )
    assert out.returncode == 0, out.stderr
    with open(summary, newline="") as fh:
        rows = {r["record"]: r for r in csv.DictReader(fh)}
    assert len(rows) == n and all(r["outcome"] in ("done", "skipped") for r in rows.values())
    for side, data in done_before.items():
        name = side.name.removesuffix(".marks.json")
        # Complete sidecars from before the kill were current: skipped, file untouched.
        assert rows[name]["outcome"] == "skipped", name
        assert side.read_bytes() == data
    assert sum(r["outcome"] == "done" for r in rows.values()) == n - len(done_before)
    assert f"{n} records: {n - len(done_before)} done, {len(done_before)} skipped, 0 failed" in (
        out.stdout
    )
