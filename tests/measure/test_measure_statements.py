"""`reviewapp measure` carries the interpretation: JSON ``statements`` (text, category,
criteria, source), a CSV column and the table; ``--final`` the final interpretation with its
provenance. Records: LUDB 108 (Kalyakulina AI et al., IEEE Access 2020), labelled complete
right bundle branch block; the criteria are Surawicz B et al., Circulation 2009 (Part III).
"""

from __future__ import annotations

import csv
import io
import json
import shutil

import jsonschema

from reviewapp.core.marks import MarksStore
from reviewapp.core.marks.final_output import FINAL_JSON_SCHEMA
from reviewapp.core.measure.output import MEASURE_JSON_SCHEMA
from tests.measure.test_measure_command import _run


def test_json_statements_on_a_right_bundle_branch_block(shared_data, capsys):
    assert _run([str(shared_data / "ludb" / "108.hea"), "--format", "json"]) == 0
    d = json.loads(capsys.readouterr().out)
    jsonschema.validate(d, MEASURE_JSON_SCHEMA)
    by_code = {x["code"]: x for x in d["statements"]}
    rbbb = by_code["conduction.rbbb"]
    assert rbbb["text"] == "complete right bundle branch block"
    assert rbbb["category"] == "conduction" and "120 ms" in rbbb["criteria"]
    assert "Surawicz" in rbbb["source"] and "2009" in rbbb["source"]
    labels = {(v["label"], v["lead"]) for v in rbbb["values"]}
    assert ("QRS duration", None) in labels and ("R'", "V1") in labels
    # R-peak time in V1 measured and shown (issue 11).
    assert ("R-peak time", "V1") in labels
    assert d["lead_shapes"]["V1"]["r_peak_time_ms"] > 50.0
    # Rhythm first, then conduction (reading order).
    cats = [x["category"] for x in d["statements"]]
    assert cats.index("rhythm") < cats.index("conduction")
    # Statements not made are reasons, with why: the QTc of a QRS >= 120 ms.
    gated = [r for r in d["reasons"] if r["quantity"].startswith("statement:")]
    assert any("QTc statements not made" in r["text"] for r in gated)
    for x in d["statements"]:
        assert "from memory" not in json.dumps(x)


def test_csv_and_table_carry_the_statements(shared_data, capsys):
    path = str(shared_data / "ludb" / "108.hea")
    assert _run([path, "--format", "csv"]) == 0
    row = next(csv.DictReader(io.StringIO(capsys.readouterr().out)))
    assert "complete right bundle branch block: QRS" in row["statements"]
    assert _run([path]) == 0
    table = capsys.readouterr().out
    assert "Interpretation (automatic statements; criteria and sources below):" in table
    assert "  - complete right bundle branch block: QRS" in table
    assert "criteria: QRS >= 120 ms" in table and "source: Surawicz B et al." in table


def test_final_carries_the_readers_statements_with_provenance(shared_data, tmp_path, capsys):
    for ext in (".hea", ".dat"):
        shutil.copy(shared_data / "ludb" / f"108{ext}", tmp_path / f"108{ext}")
    from reviewapp.core.io import open_record

    record = open_record(tmp_path / "108.hea")
    with MarksStore.open(record, "reader1") as st:
        st.do(st.edits.add_statement("conduction.rbbb", "complete right bundle branch block"))
        st.do(st.edits.sign_off())
    assert _run([str(tmp_path / "108.hea"), "--final", "--format", "json"]) == 0
    d = json.loads(capsys.readouterr().out)
    jsonschema.validate(d["final"], FINAL_JSON_SCHEMA)
    (x,) = d["final"]["statements"]
    assert x["code"] == "conduction.rbbb" and x["category"] == "conduction"
    assert (
        x["source"]["kind"] == "reader" and x["source"]["text"] == "reader1 (first reader, signed)"
    )
    assert _run([str(tmp_path / "108.hea"), "--final", "--format", "csv"]) == 0
    row = next(csv.DictReader(io.StringIO(capsys.readouterr().out)))
    assert row["final_statements"] == "complete right bundle branch block"
    assert row["final_statements_source"] == "reader1 (first reader, signed)"
