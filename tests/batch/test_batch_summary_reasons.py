"""The batch summary CSV carries the engine's reasons, as `reviewapp measure` does.

Which records must carry a reason is decided outside the code under test: the demo records'
truth files (the generating model: atrial fibrillation, a QRS of 120 ms or more) and the
documented scaling of the shared LUDB copy (its limb leads break Einthoven's relation III =
II - I: Einthoven et al., Pflugers Arch 1913; measured in README). The words must be the very
ones `reviewapp measure --format csv` writes for the same record (one source, one writer).
"""

from __future__ import annotations

import csv
import io
import json
import shutil
from pathlib import Path

import pytest

from reviewapp.cli import main
from reviewapp.core.io import open_record
from reviewapp.core.marks import MarksStore
from reviewapp.core.synth import load_truth

REPO = Path(__file__).resolve().parents[2]
SAMPLES = REPO / "sample_records"
DEMO = ("s001_predose", "s011_predose", "s014_post2h")
QTC = ("qtc_bazett_ms", "qtc_fridericia_ms", "qtc_framingham_ms", "qtc_hodges_ms")


@pytest.fixture
def folder(tmp_path: Path) -> Path:
    f = tmp_path / "recs"
    f.mkdir()
    for name in DEMO:
        for ext in (".hea", ".dat", ".truth.json"):
            shutil.copy(SAMPLES / f"{name}{ext}", f / f"{name}{ext}")
    return f


def _batch(folder: Path, summary: Path) -> dict[str, dict[str, str]]:
    assert main(["batch", str(folder), "--workers", "1", "--summary", str(summary)]) == 0
    with open(summary, newline="", encoding="utf-8") as fh:
        return {r["record"]: r for r in csv.DictReader(fh)}


def _measure_csv(paths: list[Path], capsys: pytest.CaptureFixture[str]) -> dict[str, dict]:
    capsys.readouterr()
    assert main(["measure", *map(str, paths), "--format", "csv"]) == 0
    rows = csv.DictReader(io.StringIO(capsys.readouterr().out))
    return {r["record"]: r for r in rows}


def test_summary_names_the_cautions_of_the_reading(
    folder: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    rows = _batch(folder, tmp_path / "first.csv")
    truth = {n: load_truth(folder / f"{n}.truth.json") for n in DEMO}

    # Atrial fibrillation (the generator's rhythm): every QTc is less reliable, irregular RR.
    assert truth["s014_post2h"].rhythm == "af"
    af = rows["s014_post2h"]
    assert "irregular rhythm" in af["auto_less_reliable"]
    assert all(q in af["auto_less_reliable"].split(":")[0].split() for q in QTC)
    # A QRS of 120 ms or more (the generator's QRS): QTc not comparable with its limits
    # (Rautaharju et al., Circulation 2009, in the text).
    assert truth["s011_predose"].qrs_ms >= 120
    wide = rows["s011_predose"]
    assert all(q in wide["auto_not_comparable"].split(":")[0].split() for q in QTC)
    assert "QRS >= 120 ms" in wide["auto_not_comparable"]
    # A regular, narrow sinus record: nothing to say.
    assert rows["s001_predose"]["auto_not_comparable"] == ""
    assert rows["s001_predose"]["auto_less_reliable"] == ""

    # One source: the very words of `reviewapp measure`'s CSV for the same reading.
    measured = _measure_csv([folder / f"{n}.hea" for n in DEMO], capsys)
    for n in DEMO:
        assert rows[n]["auto_not_comparable"] == (measured[n]["not_comparable"] or "")
        assert rows[n]["auto_less_reliable"] == (measured[n]["less_reliable"] or "")

    # Run again: every record is current and skipped, its reasons read from its marks file.
    again = _batch(folder, tmp_path / "again.csv")
    assert {r["note"] for r in again.values()} == {"current"}
    for n in DEMO:
        for col in ("auto_not_comparable", "auto_less_reliable"):
            assert again[n][col] == rows[n][col]


def test_marks_cached_before_reasons_were_kept(folder: Path, tmp_path: Path) -> None:
    _batch(folder, tmp_path / "first.csv")
    for name in ("s011_predose", "s014_post2h"):  # as an earlier batch wrote them
        side = folder / f"{name}.marks.json"
        doc = json.loads(side.read_text())
        del doc["listing_cache"]["reasons"]
        side.write_text(json.dumps(doc))
    with MarksStore.open(open_record(folder / "s011_predose.hea"), "reader1") as store:
        store.do(store.edits.sign_off())
    rows = _batch(folder, tmp_path / "second.csv")
    # Not signed off: analysed again, so the reasons are there.
    assert rows["s014_post2h"]["outcome"] == "done"
    assert "irregular rhythm" in rows["s014_post2h"]["auto_less_reliable"]
    # Signed off: left as read, and the summary says it does not know rather than nothing.
    signed = rows["s011_predose"]
    assert signed["outcome"] == "skipped" and signed["reading_status"] == "signed_off"
    assert signed["auto_not_comparable"].startswith("unknown: ")


def test_limb_leads_inconsistent_on_the_shared_ludb_copy(shared_data: Path, tmp_path: Path) -> None:
    f = tmp_path / "ludb"
    f.mkdir()
    for ext in (".hea", ".dat"):
        shutil.copy(shared_data / "ludb" / f"1{ext}", f / f"1{ext}")
    row = _batch(f, tmp_path / "s.csv")["1"]
    # The frontal axes carry the limb-lead caution (README: 140 of 140 LUDB records warned).
    quantities = row["auto_less_reliable"].split(":")[0].split()
    assert {"p_axis_deg", "qrs_axis_deg", "t_axis_deg"} <= set(quantities), row
    assert "limb leads" in row["auto_less_reliable"]
