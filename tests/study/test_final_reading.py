"""The final reading and its provenance, through sidecars built with the marks store's own API.

Expected values come from the marks the readers set (a QT is the distance from QRS onset to
T end), not from the resolver: e.g. an adjudicated QT is reader 2's T end minus the automatic
QRS onset stored in the sidecar.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import jsonschema
import pytest

from reviewapp.core.engine import analyse
from reviewapp.core.io import open_record
from reviewapp.core.marks import (
    MarksStore,
    Override,
    ReviewerReading,
    Sidecar,
    automatic_from_analysis,
    load_sidecar,
    record_identity,
    write_automatic,
)
from reviewapp.core.marks.final import resolve_final, sidecar_for
from reviewapp.core.marks.final_output import FINAL_JSON_SCHEMA
from reviewapp.core.measure.output import MEASURE_JSON_SCHEMA

FIRST_SHIFT_S, SECOND_SHIFT_S = 0.010, 0.030  # T end moved later by reader 1 and reader 2


@pytest.fixture(scope="module")
def adjudicated(tmp_path_factory) -> dict:
    """A record read by a first reader (signed), a blinded second reader (signed) who differ
    by 20 ms on T end, and an adjudicator who adopts the second reader's QT (signed)."""
    from reviewapp.core.record import SubjectFacts
    from reviewapp.core.synth import SynthParams, generate
    from reviewapp.core.synth.wfdb_out import write_synthetic

    folder = tmp_path_factory.mktemp("adjudicated")
    facts = SubjectFacts(subject_id="S-900", comments=("timepoint: post-dose 2 h",))
    syn = generate(SynthParams(hr_bpm=62, qt_ms=416, seed=5), name="r1", subject=facts)
    hea = write_synthetic(syn, folder, "r1")
    record = open_record(hea)
    analysis = analyse(record)
    write_automatic(record, automatic_from_analysis(analysis))
    auto = load_sidecar(folder / "r1.marks.json").automatic.representative.marks
    with MarksStore.open(record, "reader1", role="first") as store:
        store.do(store.edits.move_fiducial("t_off", auto.t_off + FIRST_SHIFT_S))
        store.do(store.edits.sign_off())
    with MarksStore.open(record, "reader2", role="second") as store:
        assert store.blinded
        store.do(store.edits.move_fiducial("t_off", auto.t_off + SECOND_SHIFT_S))
        store.do(store.edits.sign_off())
    with MarksStore.open(record, "adj1", role="adjudicator") as store:
        store.do(store.edits.adopt_interval("qt_ms", store.readings()["reader2"]))
        store.do(store.edits.sign_off())
    return {
        "folder": folder,
        "hea": hea,
        "qt_auto": (auto.t_off - auto.qrs_on) * 1000.0,
        "qt_first": (auto.t_off + FIRST_SHIFT_S - auto.qrs_on) * 1000.0,
        "qt_second": (auto.t_off + SECOND_SHIFT_S - auto.qrs_on) * 1000.0,
    }


def test_measure_final_reports_the_adjudicated_values_and_their_provenance(adjudicated, run_cli):
    code, out, err = run_cli("measure", "--final", "--format", "json", str(adjudicated["hea"]))
    assert code == 0, err
    d = json.loads(out)
    jsonschema.validate(d, MEASURE_JSON_SCHEMA)
    jsonschema.validate(d["final"], FINAL_JSON_SCHEMA)
    final = d["final"]
    assert final["status"] == "adjudicated"
    qt = final["values"]["qt_ms"]
    assert qt["value"] == pytest.approx(adjudicated["qt_second"], abs=1e-6)
    assert qt["automatic"] == pytest.approx(adjudicated["qt_auto"], abs=1e-6)
    assert d["global"]["qt_ms"] == pytest.approx(adjudicated["qt_second"], abs=1e-6)
    src = qt["source"]
    assert (src["kind"], src["reviewer"], src["signed"]) == ("adjudicated", "adj1", True)
    assert src["equal_to"] == ["reader2"]
    assert "adjudicated by adj1" in src["text"]
    # Heart rate does not depend on any mark: automatic, accepted by the signed first reader.
    hr = final["values"]["hr_bpm"]["source"]
    assert (hr["kind"], hr["reviewer"], hr["signed"]) == ("automatic", "reader1", True)
    assert hr["engine_version"] == d["engine_version"]
    assert final["flags"] == {"not_signed": False, "readers_differ": True, "no_adjudication": False}
    (diff,) = final["differences"]
    assert diff["item"] == "qt_ms" and diff["tolerance_ms"] == 10.0
    assert diff["a_ms"] == pytest.approx(adjudicated["qt_first"], abs=1e-6)
    assert diff["b_ms"] == pytest.approx(adjudicated["qt_second"], abs=1e-6)
    assert {r["reviewer"]: r["role"] for r in final["readers"]} == {
        "reader1": "first",
        "reader2": "second",
        "adj1": "adjudicator",
    }


def test_measure_final_table_and_csv_carry_the_provenance(adjudicated, run_cli):
    code, out, _ = run_cli("measure", "--final", str(adjudicated["hea"]))
    assert code == 0
    qt_line = next(line for line in out.splitlines() if line.startswith("qt_ms "))
    assert f"{adjudicated['qt_second']:.0f} ms" in qt_line and "adjudicated by adj1" in qt_line
    assert "Automated measurements must be verified" in out
    code, out, _ = run_cli("measure", "--final", "--format", "csv", str(adjudicated["hea"]))
    assert code == 0
    (row,) = csv.DictReader(out.splitlines())
    assert float(row["qt_ms"]) == pytest.approx(adjudicated["qt_second"], abs=1e-3)
    assert float(row["auto_qt_ms"]) == pytest.approx(adjudicated["qt_auto"], abs=1e-3)
    assert row["qt_ms_source"].startswith("adjudicated by adj1")
    assert row["status"] == "adjudicated" and row["flag_readers_differ"] == "yes"
    # Without --final nothing changes: the automatic values, no provenance columns.
    code, out, _ = run_cli("measure", "--format", "csv", str(adjudicated["hea"]))
    (row,) = csv.DictReader(out.splitlines())
    assert float(row["qt_ms"]) == pytest.approx(adjudicated["qt_auto"], abs=1e-3)
    assert "qt_ms_source" not in row


def test_study_table_reports_the_adjudicated_values(adjudicated, run_cli, tmp_path):
    out_dir = tmp_path / "out"
    code, _, err = run_cli(
        "study", str(adjudicated["folder"]), "--out", str(out_dir), "--no-report"
    )
    assert code == 0, err
    (row,) = csv.DictReader((out_dir / "records.csv").read_text().splitlines())
    assert (row["record"], row["subject"], row["timepoint"]) == ("r1", "S-900", "post-dose 2 h")
    assert row["status"] == "adjudicated"
    assert float(row["qt_ms"]) == pytest.approx(adjudicated["qt_second"], abs=0.01)
    assert float(row["auto_qt_ms"]) == pytest.approx(adjudicated["qt_auto"], abs=0.01)
    assert row["qt_ms_source"] == "adjudicated by adj1 (signed); equal to reader2"
    assert row["flag_readers_differ"] == "yes" and row["flag_no_adjudication"] == ""
    assert "QT reader1" in row["differences"] and "tolerance 10 ms" in row["differences"]
    assert "reader2 (second, signed_off)" in row["readers"]


# --- the precedence rule on sidecar models (pure function) ------------------------------------


@pytest.fixture(scope="module")
def plain(
    tmp_path_factory,
) -> dict:
    """A record with its analysis and automatic marks (no reading yet)."""
    from reviewapp.core.synth import SynthParams, generate
    from reviewapp.core.synth.wfdb_out import write_synthetic

    folder = tmp_path_factory.mktemp("plain")
    hea = write_synthetic(generate(SynthParams(hr_bpm=70, seed=9), name="p"), folder, "p")
    record = open_record(hea)
    analysis = analyse(record)
    automatic = automatic_from_analysis(analysis, computed_at="2026-01-01T00:00:00.000000Z")
    m = automatic.representative.marks
    return {"record": record, "analysis": analysis, "automatic": automatic, "marks": m}


def _reading(reviewer, role, status, t_off=None, p_on=None, at=None) -> ReviewerReading:
    r = ReviewerReading(
        reviewer,
        role=role,
        status=status,
        signed_off_by=reviewer if status == "signed_off" else None,
        signed_off_at=at if status == "signed_off" else None,
    )
    for fid, value in (("t_off", t_off), ("p_on", p_on)):
        if value is not None:
            ov = Override("representative", fid, new_s=value)
            r = r.with_override(ov.key, ov)
    return r


def _sidecar(plain, *readings) -> Sidecar:
    return Sidecar(
        record=record_identity(plain["record"]),
        automatic=plain["automatic"],
        readings=tuple(readings),
    )


def _qt(plain, t_off_s: float) -> float:
    return (t_off_s - plain["marks"].qrs_on) * 1000.0


def test_no_sidecar_is_the_automatic_reading_not_signed(plain):
    final = resolve_final(None, plain["analysis"])
    qt = final.value("qt_ms")
    assert final.status == "unread" and final.not_signed
    assert qt.source.kind == "automatic" and qt.source.reviewer is None
    assert qt.value == pytest.approx(_qt(plain, plain["marks"].t_off), abs=1e-6)
    assert qt.value == qt.automatic


def test_unsigned_correction_counts_but_is_flagged(plain):
    t = plain["marks"].t_off + 0.016
    final = resolve_final(
        _sidecar(plain, _reading("r1", "first", "in_progress", t)), plain["analysis"]
    )
    qt = final.value("qt_ms")
    assert final.status == "in_progress" and final.not_signed
    assert (qt.source.kind, qt.source.reviewer, qt.source.signed) == ("reader", "r1", False)
    assert qt.value == pytest.approx(_qt(plain, t), abs=1e-6)
    assert qt.source.text == "r1 (first reader, not signed)"


def test_signed_reading_wins_over_one_in_progress_whatever_the_role(plain):
    m = plain["marks"]
    first = _reading("r1", "first", "in_progress", m.t_off + 0.030)
    second = _reading("r2", "second", "signed_off", m.t_off + 0.006, at="2026-01-02T10:00:00Z")
    final = resolve_final(_sidecar(plain, first, second), plain["analysis"])
    assert final.status == "signed_off" and final.base_reviewer == "r2"
    assert final.value("qt_ms").value == pytest.approx(_qt(plain, m.t_off + 0.006), abs=1e-6)
    assert not final.readers_differ  # only one signed reading: nothing to compare yet


def test_double_read_takes_the_first_reader_and_flags_a_difference(plain):
    m = plain["marks"]
    first = _reading("r1", "first", "signed_off", m.t_off + 0.004, at="2026-01-02T10:00:00Z")
    agree = _reading("r2", "second", "signed_off", m.t_off + 0.012, at="2026-01-02T11:00:00Z")
    final = resolve_final(_sidecar(plain, first, agree), plain["analysis"])
    assert final.base_reviewer == "r1" and not final.readers_differ  # 8 ms <= 10 ms
    assert final.value("qt_ms").value == pytest.approx(_qt(plain, m.t_off + 0.004), abs=1e-6)
    differ = _reading("r2", "second", "signed_off", m.t_off + 0.016, at="2026-01-02T11:00:00Z")
    final = resolve_final(_sidecar(plain, first, differ), plain["analysis"])
    assert final.readers_differ and final.no_adjudication  # 12 ms > 10 ms
    assert final.value("qt_ms").value == pytest.approx(_qt(plain, m.t_off + 0.004), abs=1e-6)
    (d,) = final.differences
    assert d.b_ms - d.a_ms == pytest.approx(12.0, abs=1e-6)
    # The tolerance is the user's: at 15 ms the same readers agree.
    final = resolve_final(
        _sidecar(plain, first, differ), plain["analysis"], tolerances_ms={"qt_ms": 15.0}
    )
    assert not final.readers_differ


def test_adjudication_only_settles_what_it_touched(plain):
    m = plain["marks"]
    first = _reading(
        "r1", "first", "signed_off", m.t_off + 0.004, p_on=m.p_on - 0.010, at="2026-01-02T10:00:00Z"
    )
    second = _reading("r2", "second", "signed_off", m.t_off + 0.030, at="2026-01-02T11:00:00Z")
    adj = _reading("adj", "adjudicator", "signed_off", m.t_off + 0.020, at="2026-01-03T09:00:00Z")
    final = resolve_final(_sidecar(plain, first, second, adj), plain["analysis"])
    assert final.status == "adjudicated" and not final.no_adjudication
    qt, pr = final.value("qt_ms"), final.value("pr_ms")
    assert qt.value == pytest.approx(_qt(plain, m.t_off + 0.020), abs=1e-6)
    assert (qt.source.kind, qt.source.equal_to) == ("adjudicated", ())  # a value of its own
    # PR rests on P onset (reader 1's correction) and QRS onset (automatic): reader 1's.
    assert (pr.source.kind, pr.source.reviewer) == ("reader", "r1")
    assert pr.value == pytest.approx((m.qrs_on - (m.p_on - 0.010)) * 1000.0, abs=1e-6)


def test_the_comparison_final_column_holds_only_what_the_adjudication_settled(plain):
    """``adjudicated_items``: nothing before an adjudication; then each fiducial the
    adjudicator set and each interval resting on one, valued as ``resolve_final`` values it
    (the adjudicator's marks over the chosen reading); the rest absent."""
    from reviewapp.core.marks.final import adjudicated_items

    m = plain["marks"]
    first = _reading(
        "r1", "first", "signed_off", m.t_off + 0.004, p_on=m.p_on - 0.010, at="2026-01-02T10:00:00Z"
    )
    second = _reading("r2", "second", "signed_off", m.t_off + 0.030, at="2026-01-02T11:00:00Z")
    assert adjudicated_items(plain["analysis"], (first, second), None) == {}
    empty = _reading("adj", "adjudicator", "in_progress")
    assert adjudicated_items(plain["analysis"], (first, second, empty), empty) == {}
    adj = _reading("adj", "adjudicator", "signed_off", m.t_off + 0.020, at="2026-01-03T09:00:00Z")
    items = adjudicated_items(plain["analysis"], (first, second, adj), adj)
    assert set(items) == {"t_off", "qt_ms", "qtc_bazett_ms", "qtc_fridericia_ms"}
    assert items["t_off"].value_ms == pytest.approx((m.t_off + 0.020) * 1000.0, abs=1e-6)
    assert items["qt_ms"].value_ms == pytest.approx(_qt(plain, m.t_off + 0.020), abs=1e-6)
    assert items["qt_ms"].marks == ("t_off",) and items["qt_ms"].base_reviewer == "r1"
    final = resolve_final(_sidecar(plain, first, second, adj), plain["analysis"])
    assert items["qt_ms"].value_ms == pytest.approx(final.value("qt_ms").value, abs=1e-9)


def test_unsigned_adjudication_is_not_applied(plain):
    m = plain["marks"]
    first = _reading("r1", "first", "signed_off", m.t_off, at="2026-01-02T10:00:00Z")
    adj = _reading("adj", "adjudicator", "in_progress", m.t_off + 0.040)
    final = resolve_final(_sidecar(plain, first, adj), plain["analysis"])
    assert final.status == "signed_off"
    assert final.value("qt_ms").value == pytest.approx(_qt(plain, m.t_off), abs=1e-6)
    assert any("not signed off and is not applied" in n for n in final.notes)


def test_a_signed_reading_keeps_the_automatic_marks_it_was_read_on(plain):
    """A newer engine must not move a value a reader signed: the stored automatic T end
    (here 8 ms later than this engine's) stays for a read record, not for an unread one."""
    from dataclasses import replace

    auto = plain["automatic"]
    moved = replace(auto.representative.marks, t_off=auto.representative.marks.t_off + 0.008)
    stored = replace(auto, representative=replace(auto.representative, marks=moved))
    signed = _reading("r1", "first", "signed_off", at="2026-01-02T10:00:00Z")
    sidecar = Sidecar(record_identity(plain["record"]), stored, (signed,))
    final = resolve_final(sidecar, plain["analysis"])
    qt = final.value("qt_ms")
    assert qt.value == pytest.approx(_qt(plain, plain["marks"].t_off + 0.008), abs=1e-6)
    assert qt.automatic == qt.value and qt.source.kind == "automatic"
    assert any("kept as stored" in n for n in final.notes)
    unread = resolve_final(Sidecar(record_identity(plain["record"]), stored), plain["analysis"])
    assert unread.value("qt_ms").value == pytest.approx(_qt(plain, plain["marks"].t_off), abs=1e-6)


def test_a_foreign_sidecar_is_refused_not_reported(tmp_path: Path, record_writer, run_cli):
    a = record_writer(tmp_path, "a", seed=1)
    b = record_writer(tmp_path, "b", seed=2, hr_bpm=75)
    rec_b = open_record(b)
    write_automatic(rec_b, automatic_from_analysis(analyse(rec_b)))
    (tmp_path / "b.marks.json").replace(tmp_path / "a.marks.json")  # b's marks beside a
    with pytest.raises(Exception, match="different record"):
        sidecar_for(open_record(a))
    code, _, err = run_cli("measure", "--final", str(a))
    assert code == 2 and "different record" in err and "Traceback" not in err
    assert len(err.strip().splitlines()) == 1
