"""`reviewapp measure` end to end on real LUDB records (via the shared_data fixture)."""

from __future__ import annotations

import argparse
import csv
import io
import json
import math

import jsonschema
import numpy as np
import pytest

from reviewapp import CLINICAL_CAUTION
from reviewapp.commands import measure
from reviewapp.core.measure.output import MEASURE_JSON_SCHEMA, reading_to_dict


def _run(argv: list[str]) -> int:
    # The subcommand alone (other subcommands are not needed to test this one).
    parser = argparse.ArgumentParser(prog="reviewapp")
    measure.add_parser(parser.add_subparsers(dest="command"))
    return measure.run(parser.parse_args(["measure", *argv]))


def _finite_numbers(obj) -> bool:
    if isinstance(obj, float):
        return math.isfinite(obj)
    if isinstance(obj, dict):
        return all(_finite_numbers(v) for v in obj.values())
    if isinstance(obj, list):
        return all(_finite_numbers(v) for v in obj)
    return True


def test_json_on_ludb_record(shared_data, capsys):
    path = shared_data / "ludb" / "1.hea"
    assert _run([str(path), "--format", "json", "--per-lead"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert len(lines) == 1
    d = json.loads(lines[0])
    jsonschema.validate(d, MEASURE_JSON_SCHEMA)
    keys = "record fs_hz leads beats global representative leads_measurements findings notes"
    for key in (*keys.split(), "engine_version", "caution"):
        assert key in d
    assert d["caution"] == CLINICAL_CAUTION and d["fs_hz"] == 500.0 and len(d["leads"]) == 12
    assert _finite_numbers(d)
    g = d["global"]
    for k in ("rr_ms", "hr_bpm", "qrs_ms", "qt_ms"):
        assert isinstance(g[k], float)
    assert set(g["qtc_ms"]) == {"bazett", "fridericia", "framingham", "hodges"}
    assert set(g["axis_deg"]) == {"p", "qrs", "t"}
    b = d["beats"][1]
    assert set(b) >= {"r_s", "p_on_s", "p_off_s", "qrs_on_s", "qrs_off_s", "t_off_s", "kind"}
    assert set(b["leads"]) == set(d["leads"])
    assert b["qrs_on_s"] < b["r_s"] < b["qrs_off_s"]
    # Beat times are seconds from record start: R of beat 1 matches the cardiologists' lead-II
    # QRS peak of LUDB record 1 within 50 ms.
    wfdb = pytest.importorskip("wfdb")
    ann = wfdb.rdann(str(shared_data / "ludb" / "1"), "ii")
    ref_r_s = ann.sample[np.array(ann.symbol) == "N"] / 500.0
    assert np.min(np.abs(ref_r_s - b["r_s"])) < 0.05
    rep = d["representative"]["marks_s"]
    assert rep["qrs_on_s"] < 0 < rep["qrs_off_s"]  # relative to R


def test_csv_one_row_per_record_and_failures(shared_data, tmp_path, capsys):
    bad = tmp_path / "garbage.edf"
    bad.write_bytes(b"this is not an ECG at all\x00\x01" * 10)
    paths = [shared_data / "ludb" / "1.hea", bad, shared_data / "ludb" / "2.hea"]
    # Exit 1: finished, some records failed (exit codes in `reviewapp --help`).
    assert _run([str(p) for p in paths] + ["--format", "csv"]) == 1
    out = capsys.readouterr()
    rows = list(csv.DictReader(io.StringIO(out.out)))
    assert [r["record"] for r in rows] == ["1", "garbage", "2"]
    assert rows[1]["error"] and not rows[0]["error"] and float(rows[2]["qt_ms"]) > 0
    assert all(r["caution"] == CLINICAL_CAUTION for r in rows)
    assert len(out.err.strip().splitlines()) == 1 and "garbage.edf" in out.err


def test_garbage_file_exit_2_one_line(tmp_path, capsys):
    bad = tmp_path / "noise.csv"
    bad.write_text("hello\nworld\n")
    assert _run([str(bad)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("reviewapp: ") and "noise.csv" in err[0]
    assert "Traceback" not in err[0]


def test_table_mentions_caution_and_ranges(shared_data, capsys):
    assert _run([str(shared_data / "ludb" / "1.hea"), "--per-lead"]) == 0
    out = capsys.readouterr().out
    assert CLINICAL_CAUTION in out
    assert "QTc (Fridericia)" in out and "120 to 200 ms" in out and "V6" in out


def test_no_beats_gives_nulls_and_note():
    from reviewapp.core.engine import analyse
    from reviewapp.core.record import record_from_array

    rec = record_from_array(np.zeros((5000, 2)), 500.0, ["I", "II"], name="flat")
    a = analyse(rec)
    d = reading_to_dict(a, a.reading(), path="flat")
    jsonschema.validate(d, MEASURE_JSON_SCHEMA)
    assert d["beats"] == [] and d["global"]["hr_bpm"] is None and d["global"]["qt_ms"] is None
    assert any("no beats found" in n or "no usable lead" in n for n in d["notes"])
    assert d["representative"] is None and d["caution"] == CLINICAL_CAUTION


def test_through_the_real_entry_point(tmp_path, capsys):
    import importlib

    from reviewapp import cli

    for name in cli.SUBCOMMANDS:  # a subcommand without its module is a failure, not a skip
        importlib.import_module(f"reviewapp.commands.{name}")
    bad = tmp_path / "empty.csv"
    bad.write_text("")
    assert cli.main(["measure", str(bad), "--format", "json"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "empty.csv" in err[0]
