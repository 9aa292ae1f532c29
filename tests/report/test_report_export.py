"""`reviewapp export`: reviewer-corrected fiducials to WFDB (read back with wfdb.rdann, the
reference reader), the measurements CSV, and clear errors.

Record: LUDB record 1 (PhysioNet, via the shared_data fixture), copied into tmp.
"""

from __future__ import annotations

import csv
import shutil
from pathlib import Path

import numpy as np
import pytest
import wfdb

from reviewapp.cli import main
from reviewapp.core.engine import analyse
from reviewapp.core.io import open_record
from reviewapp.core.marks import MarksStore
from reviewapp.report.content import load_report_content
from reviewapp.report.export import write_wfdb_annotations


@pytest.fixture
def reviewed_record(tmp_path: Path, shared_data: Path) -> Path:
    for ext in (".hea", ".dat"):
        shutil.copy(shared_data / "ludb" / f"1{ext}", tmp_path / f"1{ext}")
    path = tmp_path / "1.hea"
    a = analyse(open_record(path))
    fs = a.fs_hz
    beat = a.beats[3]
    t_off_auto = a.beat_marks[3].t_off
    assert t_off_auto is not None
    with MarksStore.open(open_record(path), "reader1") as store:
        # The reader moves T end of beat 4 by +20 ms, and the global QRS end of the median beat.
        store.do(
            store.edits.move_fiducial(
                "t_off", (t_off_auto + 10) / fs, scope="beat", beat_r_s=beat.r / fs
            )
        )
        rep = a.representative
        assert rep is not None and rep.marks.qrs_off is not None
        store.do(store.edits.move_fiducial("qrs_off", (rep.marks.qrs_off - rep.r_index + 5) / fs))
    return path


def _rdann_waves(folder: Path, name: str, ext: str) -> dict[str, list[int]]:
    """Onsets/offsets per wave from the annotation file, LUDB convention: "(" peak ")"."""
    ann = wfdb.rdann(str(folder / name), ext)
    sym, smp = list(ann.symbol), np.asarray(ann.sample)
    out: dict[str, list[int]] = {k: [] for k in ("p_on", "p_off", "qrs_on", "qrs_off", "t_off")}
    wave = {"p": "p", "N": "qrs", "t": "t"}
    for i, s in enumerate(sym):
        if s in wave or (s not in "()" and s.isalpha()):
            w = wave.get(s, "qrs")
            if i > 0 and sym[i - 1] == "(" and w != "t":
                out[f"{w}_on"].append(int(smp[i - 1]))
            if i + 1 < len(sym) and sym[i + 1] == ")":
                out[f"{w}_off"].append(int(smp[i + 1]))
    return out


def test_wfdb_annotations_read_back_to_the_final_fiducials(reviewed_record: Path):
    content = load_report_content(reviewed_record)
    assert content.status == "in_progress" and content.reviewer == "reader1"
    assert content.n_corrected == 2
    out = write_wfdb_annotations(content)
    assert out == reviewed_record.with_suffix(".rvw")
    got = _rdann_waves(out.parent, "1", "rvw")
    for fid in ("p_on", "p_off", "qrs_on", "qrs_off", "t_off"):
        want = sorted(
            getattr(m, fid) for m in content.final_beat_marks if getattr(m, fid) is not None
        )
        assert sorted(got[fid]) == want, fid
    # The corrected T end is in the file, the automatic one it replaced is not.
    pair = content.beat_marks[3][4]
    assert pair.fiducial == "t_off" and pair.corrected
    assert pair.final in got["t_off"] and pair.auto not in got["t_off"]
    assert wfdb.rdann(str(out.parent / "1"), "rvw").fs == pytest.approx(500.0)


def test_export_command_writes_every_output(reviewed_record: Path, tmp_path: Path, capsys):
    pdf, png, csv_path = tmp_path / "r.pdf", tmp_path / "r.png", tmp_path / "r.csv"
    rc = main(
        [
            "export",
            str(reviewed_record),
            "--pdf",
            str(pdf),
            "--png",
            str(png),
            "--csv",
            str(csv_path),
            "--wfdb-annotations",
            "--paper",
            "letter",
            "--dpi",
            "100",
        ]
    )
    assert rc == 0, capsys.readouterr().err
    assert pdf.stat().st_size > 10_000 and png.stat().st_size > 10_000
    assert (reviewed_record.parent / "1.rvw").is_file()
    with open(csv_path, newline="") as fh:
        rows = [r for r in csv.DictReader(fh) if r["quantity"]]
    by_q = {r["quantity"]: r for r in rows if not r["record"].startswith("#")}
    # The CSV holds the values recomputed with the reader's corrections (not the automatic).
    content = load_report_content(reviewed_record)
    qrs = next(r for r in content.rows if r.quantity == "qrs_ms")
    assert by_q["qrs_ms"]["value"] == f"{qrs.value:.1f}"
    assert by_q["qrs_ms"]["marks"] == "reviewer-corrected"
    assert by_q["qrs_ms"]["reading_status"] == "in_progress"
    auto = analyse(open_record(reviewed_record)).reading().measurements.intervals.qrs_ms
    assert qrs.value == pytest.approx(auto + 10.0, abs=2.1)  # QRS end moved +5 samples = 10 ms


def test_export_errors_are_one_clear_line(tmp_path: Path, capsys):
    assert main(["export", str(tmp_path / "nope.hea"), "--pdf", str(tmp_path / "x.pdf")]) == 2
    err = capsys.readouterr().err
    assert "nope.hea" in err and "Traceback" not in err
    assert main(["export", str(tmp_path / "nope.hea")]) == 2
    assert "nothing to export" in capsys.readouterr().err


def test_export_of_a_reviewer_without_a_reading_is_refused(reviewed_record: Path, tmp_path, capsys):
    rc = main(
        [
            "export",
            str(reviewed_record),
            "--pdf",
            str(tmp_path / "x.pdf"),
            "--reviewer",
            "someone-else",
        ]
    )
    assert rc == 2
    err = capsys.readouterr().err
    assert "someone-else" in err and "1.marks.json" in err
    assert not (tmp_path / "x.pdf").exists()
