"""`reviewapp study`: the table, the analysis files, the report, workers, and bad input.

Records are invented synthetic ECGs (two subjects of the demo study design, without readings,
plus hand-made ones); the checks are about what the command writes and refuses, the numbers
themselves are checked in the other test modules.
"""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from reviewapp.core.marks.final import VALUE_NAMES
from reviewapp.core.study.table import RECORD_COLUMNS, read_study_table


def _one_line(err: str) -> str:
    lines = [ln for ln in err.strip().splitlines() if not ln.startswith("study:")]
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


@pytest.fixture(scope="module")
def small_study(tmp_path_factory) -> Path:
    """Two invented subjects of the demo design, reduced: the three day -1 ECGs, pre-dose and
    3 h duplicates (14 records)."""
    from dataclasses import replace

    from reviewapp.core.synth import demo_study as ds

    folder = tmp_path_factory.mktemp("small_study")
    keep = {"dm1_supine", "dm1_standing", "dm1_walk", "pre", "3h"}
    tps = tuple(
        replace(t, replicates=min(2, t.replicates)) for t in ds.STUDY_TIMEPOINTS if t.code in keep
    )
    ecgs = [e for e in ds.study_ecgs(ds.SUBJECTS[2:4]) if e.timepoint.code in keep]
    ecgs = [
        replace(e, timepoint=next(t for t in tps if t.code == e.timepoint.code))
        for e in ecgs
        if e.replicate <= 2
    ]
    ds.write_records(folder, ecgs)
    return folder


def test_study_writes_table_analysis_report_and_pictures(small_study, tmp_path, run_cli):
    out = tmp_path / "out"
    code, stdout, err = run_cli("study", str(small_study), "--out", str(out), "--workers", "1")
    assert code == 0, err
    assert "study" in err  # the progress bar on stderr
    names = {p.name for p in out.iterdir()}
    assert {
        "records.csv",
        "beats.csv",
        "analysis.csv",
        "report.pdf",
        "qt_rr_S-103.png",
        "qt_rr_S-104.png",
    } <= names
    rows = list(csv.DictReader((out / "records.csv").read_text().splitlines()))
    assert len(rows) == 14 and tuple(rows[0]) == RECORD_COLUMNS
    for name in VALUE_NAMES:
        assert f"{name}_source" in rows[0] and f"auto_{name}" in rows[0]
    r = next(r for r in rows if r["record"] == "s103_3h_1")
    assert (r["subject"], r["timepoint"], r["status"]) == ("S-103", "post-dose 3 h", "unread")
    assert r["flag_not_signed"] == "yes" and r["qt_ms_source"].startswith("automatic (engine ")
    assert "not signed" in stdout and "Automated measurements must be verified" in stdout
    analysis = (out / "analysis.csv").read_text()
    assert "mean_change,qtc_fridericia_ms" in analysis and "categorical" in analysis
    assert analysis.rstrip().endswith("licensed practice govern every reading.")
    pdf = (out / "report.pdf").read_bytes()
    assert pdf.startswith(b"%PDF") and pdf.count(b"/Type /Page\n") + pdf.count(b"/Type /Page ") >= 5
    # The table can be read back and analysed again ("on that table").
    again = read_study_table(out / "records.csv", out / "beats.csv")
    assert len(again) == 14 and sum(len(r.beats) for r in again) > 100


def test_one_and_two_workers_give_the_same_numbers(small_study, tmp_path):
    """The table and its analysis from 1 worker (in-process) and from 2 Dask workers. Threads
    here, to keep the suite fast; benchmarks/bench_study.py compares 1 worker with 2 worker
    processes on 1,000 records."""
    import functools

    from reviewapp.batch.runner import run_batch
    from reviewapp.core.study.analysis import analyse_study
    from reviewapp.core.study.analysis_csv import analysis_csv_text
    from reviewapp.core.study.table import beats_csv_text, records_csv_text
    from reviewapp.core.study.task import study_records

    paths = sorted(small_study.glob("*.hea"))
    texts = []
    for workers in (1, 2):
        result = run_batch(
            paths, workers=workers, processes=False, task=functools.partial(study_records)
        )
        assert result.workers == workers and len(result.outcomes) == len(paths)
        rows = list(result.outcomes)
        texts.append(
            (records_csv_text(rows), beats_csv_text(rows), analysis_csv_text(analyse_study(rows)))
        )
    assert texts[0] == texts[1]
    assert texts[0][0].count("\n") == len(paths) + 1


def test_mapping_file_wins_over_the_header(tmp_path, record_writer, run_cli):
    folder = tmp_path / "mapped"
    folder.mkdir()
    record_writer(folder, "a1", subject="HDR-1", timepoint="post-dose 1 h", seed=1)
    record_writer(folder, "a2", seed=2)  # nothing in its header
    m = tmp_path / "map.csv"
    m.write_text("record,subject,timepoint\na1,S-1,\na2.hea,S-2,pre-dose\nzz,S-9,x\n")
    out = tmp_path / "out"
    code, stdout, err = run_cli(
        "study", str(folder), "--out", str(out), "--timepoints", str(m), "--no-report"
    )
    assert code == 0, err
    rows = {r["record"]: r for r in csv.DictReader((out / "records.csv").read_text().splitlines())}
    assert (rows["a1"]["subject"], rows["a1"]["subject_from"]) == ("S-1", "mapping")
    assert (rows["a1"]["timepoint"], rows["a1"]["timepoint_from"]) == ("post-dose 1 h", "header")
    assert (rows["a2"]["subject"], rows["a2"]["timepoint"]) == ("S-2", "pre-dose")
    assert "1 row(s) of" in stdout and "matched no record" in stdout


def test_a_bad_record_or_sidecar_is_one_row_not_a_stop(tmp_path, record_writer, run_cli):
    folder = tmp_path / "mixed"
    folder.mkdir()
    record_writer(folder, "good", subject="S-1", timepoint="pre-dose", seed=3)
    record_writer(folder, "badmarks", subject="S-1", timepoint="pre-dose", seed=4)
    (folder / "badmarks.marks.json").write_text("{not json")
    (folder / "junk.hea").write_bytes(b"\x00garbage header\n")
    out = tmp_path / "out"
    code, _, err = run_cli("study", str(folder), "--out", str(out), "--no-report")
    assert code == 1
    rows = {r["record"]: r for r in csv.DictReader((out / "records.csv").read_text().splitlines())}
    assert rows["good"]["status"] == "unread" and rows["good"]["qt_ms"]
    assert (
        rows["badmarks"]["status"] == "error" and "badmarks.marks.json" in rows["badmarks"]["error"]
    )
    assert rows["badmarks"]["qt_ms"] == ""  # never an automatic value standing in for a reading
    assert rows["junk"]["status"] == "error"
    assert "failed: " in err and "Traceback" not in err


@pytest.mark.parametrize(
    ("make", "problem"),
    [
        (lambda t: ["study", str(t / "missing"), "--out", str(t / "o")], "not a folder"),
        (lambda t: ["study", str(t / "empty"), "--out", str(t / "o")], "no records found"),
        (lambda t: ["study", str(t / "empty"), "--out", str(t / "file.txt")], "not a folder"),
        (
            lambda t: [
                "study",
                str(t / "empty"),
                "--out",
                str(t / "o"),
                "--timepoints",
                str(t / "nomap.csv"),
            ],
            "mapping file not found",
        ),
        (
            lambda t: ["study", str(t / "empty"), "--out", str(t / "o"), "--tolerance", "qt=abc"],
            "--tolerance",
        ),
        (
            lambda t: ["study", str(t / "empty"), "--out", str(t / "o"), "--workers", "0"],
            "--workers",
        ),
        (lambda t: ["study", str(t / "empty"), "--out", str(t / "empty")], "other than"),
    ],
)
def test_bad_input_is_one_line_and_exit_2(tmp_path, run_cli, make, problem):
    (tmp_path / "empty").mkdir()
    (tmp_path / "file.txt").write_text("x")
    code, _, err = run_cli(*make(tmp_path))
    assert code == 2
    line = _one_line(err)
    assert line.startswith("reviewapp: ") and problem in line


def test_tolerance_option_changes_the_flag(tmp_path):
    from reviewapp.commands.study import parse_tolerances

    assert parse_tolerances(["qt=15", "PR_ms=12"]) == {"qt_ms": 15.0, "qrs_ms": 10.0, "pr_ms": 12.0}
    assert parse_tolerances([]) is None
