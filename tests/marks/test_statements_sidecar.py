"""Interpretation statements in the marks file: schema version 2, the migration of version-1
files, the statement commands and their audit, merging, comparing two readers' statements,
and the final interpretation's provenance.

References outside the code under test: the marks file read back as plain JSON and checked
with the reference validator (jsonschema) against the shipped schema of each version; the
version-1 document is written by hand here, as version 1 of this program wrote it.
"""

from __future__ import annotations

import json
from dataclasses import replace

import jsonschema
import pytest

from reviewapp.core.marks import MarksStore, codec, record_identity
from reviewapp.core.marks.compare import compare_statements
from reviewapp.core.marks.errors import MergeConflictError, UnreadableSidecarError
from reviewapp.core.marks.final import resolve_final
from reviewapp.core.marks.merge import merge_sidecars
from reviewapp.core.marks.model import (
    FREE_TEXT_CODE,
    ReaderStatement,
    ReviewerReading,
    Sidecar,
)
from tests.marks.conftest import make_record


def v1_document(fingerprint: str) -> dict:
    """A version-1 marks file: automatic marks, a signed reading with an override, a
    caliper and a note, and its audit trail (the form version 1 wrote)."""
    times = {"p_on": -0.15, "p_off": -0.06, "qrs_on": -0.044, "qrs_off": 0.052, "t_off": 0.35}
    return {
        "format": "reviewapp-marks",
        "schema_version": 1,
        "record": {
            "name": "rec",
            "fingerprint": fingerprint,
            "fs_hz": 500.0,
            "n_samples": 2000,
            "lead_names": ["I", "II"],
        },
        "automatic": {
            "engine_version": "0.1.0",
            "computed_at": "2026-01-01T00:00:00.000000Z",
            "representative": {"marks_s": times, "lead_marks_s": {"I": times}},
            "beats": [{"r_s": 0.6, "kind": "dominant", "marks_s": times}],
        },
        "readings": {
            "reader1": {
                "reviewer": "reader1",
                "role": "first",
                "blinded": False,
                "status": "signed_off",
                "signed_off_by": "reader1",
                "signed_off_at": "2026-01-02T10:00:00.000000Z",
                "overrides": [
                    {
                        "scope": "representative",
                        "fiducial": "t_off",
                        "beat_r_s": None,
                        "lead": None,
                        "old_s": 0.35,
                        "new_s": 0.372,
                    }
                ],
                "calipers": [
                    {
                        "id": "c1",
                        "kind": "time",
                        "lead": "II",
                        "t1_s": 0.556,
                        "t2_s": 0.95,
                        "v1_mv": 0.0,
                        "v2_mv": 0.0,
                        "label": "QT",
                    }
                ],
                "notes": [{"id": "n1", "text": "T end taken from II."}],
            }
        },
        "audit": [
            {
                "id": "e1",
                "at": "2026-01-02T09:59:00.000000Z",
                "reviewer": "reader1",
                "action": "move_fiducial",
                "target": "t_off of representative beat, global",
                "old": None,
                "new": {"fiducial": "t_off", "new_s": 0.372},
            }
        ],
    }


def test_a_version_1_file_opens_keeps_every_mark_and_saves_as_version_2(scratch):
    record = make_record(scratch)
    fp = record_identity(record).fingerprint
    doc = v1_document(fp)
    # It is a valid version-1 file, and not a valid version-2 one (no statements).
    jsonschema.validate(doc, codec.schema(1))
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(doc, codec.schema())
    path = scratch / "rec.marks.json"
    raw = json.dumps(doc, indent=2).encode()
    path.write_bytes(raw)
    with MarksStore.open(record, "reader2") as st:
        r1 = st.readings()["reader1"]
        assert r1.status == "signed_off" and r1.statements == ()
        assert [o.new_s for o in r1.overrides] == [0.372]
        assert [c.label for c in r1.calipers] == ["QT"] and r1.notes[
            0
        ].text == "T end taken from II."
        # Reader 2's first statement is saved: the file becomes version 2.
        st.do(st.edits.add_statement("rhythm.sinus", "sinus rhythm", origin="catalogue"))
    new = json.loads(path.read_text())
    jsonschema.validate(new, codec.schema())  # the reference validator, version 2
    assert new["schema_version"] == 2
    old_r1 = doc["readings"]["reader1"]
    assert new["readings"]["reader1"] == {**old_r1, "statements": []}
    assert new["automatic"] == doc["automatic"] and new["record"] == doc["record"]
    assert new["audit"][: len(doc["audit"])] == doc["audit"]
    assert new["audit"][-1]["action"] == "add_statement"
    (x,) = new["readings"]["reader2"]["statements"]
    assert (x["code"], x["text"], x["origin"]) == ("rhythm.sinus", "sinus rhythm", "catalogue")
    # The version-1 bytes are kept as the backup.
    assert (scratch / "rec.marks.json.bak").read_bytes() == raw


def test_a_version_1_file_with_statements_is_refused(scratch):
    record = make_record(scratch)
    doc = v1_document(record_identity(record).fingerprint)
    doc["readings"]["reader1"]["statements"] = []  # not part of version 1
    path = scratch / "rec.marks.json"
    path.write_text(json.dumps(doc))
    with pytest.raises(UnreadableSidecarError, match="schema version 1"):
        MarksStore.open(record, "reader1", read_only=True, lock=False)


def test_statement_commands_are_audited_and_undone(scratch):
    record = make_record(scratch)
    with MarksStore.open(record, "reader1") as st:
        st.do(st.edits.add_statement("rhythm.sinus", "sinus rhythm"))
        st.do(st.edits.add_statement(FREE_TEXT_CODE, "Artefact in V3", origin="free_text"))
        st.do(
            st.edits.add_statements(
                [("axis.left_deviation", "left axis deviation: -40°")],
                origin="automatic",
                name="1 automatic statement(s)",
            )
        )
        ids = [x.id for x in st.reading.statements]
        move = st.edits.move_statement(ids[2], 0)
        st.do(move)
        assert [x.code for x in st.reading.statements] == [
            "axis.left_deviation",
            "rhythm.sinus",
            FREE_TEXT_CODE,
        ]
        edit = st.edits.edit_statement(ids[1], "Artefact in V3 and V4")
        st.do(edit)
        delete = st.edits.delete_statement(ids[0])
        st.do(delete)
        assert [x.text for x in st.reading.statements] == [
            "left axis deviation: -40°",
            "Artefact in V3 and V4",
        ]
        st.undo(delete)
        st.undo(edit)
        st.undo(move)
        assert [x.id for x in st.reading.statements] == ids
        assert st.reading.statement(ids[1]).text == "Artefact in V3"
    actions = [e["action"] for e in json.loads((scratch / "rec.marks.json").read_text())["audit"]]
    assert actions == [
        "add_statement",
        "add_statement",
        "add_statement",
        "move_statement",
        "edit_statement",
        "delete_statement",
        "undo:delete_statement",
        "undo:edit_statement",
        "undo:move_statement",
    ]


def test_an_edit_of_a_signed_reading_reopens_it(scratch):
    record = make_record(scratch)
    with MarksStore.open(record, "reader1") as st:
        st.do(st.edits.add_statement("rhythm.sinus", "sinus rhythm"))
        st.do(st.edits.sign_off())
        st.do(st.edits.add_statement("axis.left_deviation", "left axis deviation"))
        assert st.reading.status == "in_progress"
        assert any(e.action == "reopen" for e in st.audit)


def _reading(reviewer: str, role: str, statements, status: str = "signed_off") -> ReviewerReading:
    return ReviewerReading(
        reviewer,
        role,  # type: ignore[arg-type]
        status=status,  # type: ignore[arg-type]
        signed_off_by=reviewer if status == "signed_off" else None,
        signed_off_at="2026-01-02T10:00:00Z" if status == "signed_off" else None,
        statements=tuple(
            ReaderStatement(f"{reviewer}{k}", code, text)
            for k, (code, text) in enumerate(statements)
        ),
    )


def test_compare_statements_agree_and_differ():
    a = _reading(
        "r1",
        "first",
        [
            ("rhythm.sinus", "sinus rhythm"),
            ("conduction.lafb", "LAFB"),
            (FREE_TEXT_CODE, "Artefact in V3"),
        ],
    )
    b = _reading(
        "r2",
        "second",
        [
            ("rhythm.sinus", "Sinus rhythm"),
            (FREE_TEXT_CODE, " artefact in  V3"),
            ("axis.left_deviation", "left axis deviation"),
        ],
    )
    rows = {r.key: r for r in compare_statements(a, b)}
    assert rows["rhythm.sinus"].verdict == "agree"
    assert rows["conduction.lafb"].verdict == "differ: only A"
    assert rows["axis.left_deviation"].verdict == "differ: only B"
    # Free text matches on its words (case and spacing ignored).
    assert rows["free: artefact in v3"].agree
    assert [r.key for r in compare_statements(a, b)][:2] == ["rhythm.sinus", "conduction.lafb"]


def test_merge_takes_one_sides_statements_and_refuses_both(scratch):
    record = make_record(scratch)
    base = Sidecar(record=record_identity(record)).with_reading(_reading("r1", "first", []))
    ours = base.with_reading(_reading("r1", "first", [("rhythm.sinus", "sinus rhythm")]))
    merged = merge_sidecars(base, ours, base)
    assert [x.code for x in merged.reading("r1").statements] == ["rhythm.sinus"]
    theirs = base.with_reading(_reading("r1", "first", [("axis.left_deviation", "LAD")]))
    with pytest.raises(MergeConflictError, match="interpretation statements"):
        merge_sidecars(base, ours, theirs)


def test_final_statements_follow_the_final_reading_rule(ludb_analyses):
    analysis = ludb_analyses["1"]
    ident = replace(
        Sidecar(record=record_identity(analysis.record)).record, name=analysis.record.name
    )
    r1 = _reading(
        "reader1",
        "first",
        [
            ("rhythm.sinus_bradycardia", "sinus bradycardia"),
            ("conduction.lafb", "left anterior fascicular block"),
        ],
    )
    r2 = _reading("reader2", "second", [("rhythm.sinus_bradycardia", "sinus bradycardia")])
    side = Sidecar(record=ident).with_reading(r1).with_reading(r2)
    final = resolve_final(side, analysis)
    assert [x.code for x in final.statements] == ["rhythm.sinus_bradycardia", "conduction.lafb"]
    assert {x.source.kind for x in final.statements} == {"reader"}
    assert final.statements[0].source.text == "reader1 (first reader, signed)"
    # A signed adjudication with statements of its own decides, naming who agreed.
    adj = _reading("adj1", "adjudicator", [("rhythm.sinus_bradycardia", "sinus bradycardia")])
    final = resolve_final(side.with_reading(adj), analysis)
    (only,) = final.statements
    assert only.source.kind == "adjudicated" and only.source.equal_to == ("reader1", "reader2")
    assert only.source.text.startswith("adjudicated by adj1 (signed)")
    # No reader interpretation: the engine's statements on the final marks, not "accepted".
    plain = Sidecar(record=ident).with_reading(_reading("reader1", "first", []))
    final = resolve_final(plain, analysis)
    assert final.statements and {x.source.kind for x in final.statements} == {"automatic"}
    assert all("accepted" not in x.source.text for x in final.statements)
    assert "rhythm.sinus_bradycardia" in [x.code for x in final.statements]
