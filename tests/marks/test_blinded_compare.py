"""Blinded second read, two-reader comparison and adjudication on a real record (LUDB 1)."""

from __future__ import annotations

import math
import shutil

import pytest
import wfdb

from reviewapp.core import engine
from reviewapp.core.errors import MarksError
from reviewapp.core.marks import (
    BlindedError,
    MarksStore,
    automatic_from_analysis,
    compare_readings,
    load_sidecar,
    overrides_for,
    write_automatic,
)
from reviewapp.core.record import record_from_array


@pytest.fixture(scope="module")
def ludb(shared_data, tmp_path_factory):
    src = shared_data / "ludb"
    if not (src / "1.hea").exists():
        pytest.skip("LUDB record 1 not in the shared data")
    folder = tmp_path_factory.mktemp("ludb1")
    for name in ("1.hea", "1.dat"):
        shutil.copy2(src / name, folder / name)
    r = wfdb.rdrecord(str(folder / "1"))
    rec = record_from_array(r.p_signal, r.fs, r.sig_name, name="1", source_path=folder / "1.hea")
    analysis = engine.analyse(rec)
    assert analysis.representative is not None
    return rec, analysis


def _rel_s(analysis, fid: str) -> float:
    rep = analysis.representative
    return (rep.marks.get(fid) - rep.r_index) / analysis.fs_hz


def test_second_reader_is_blinded_to_the_first(ludb):
    rec, analysis = ludb
    path = rec.source_path.with_name("1.marks.json")
    path.unlink(missing_ok=True)
    write_automatic(rec, automatic_from_analysis(analysis))
    with MarksStore.open(rec, "reader1") as first:
        first.do(first.edits.move_fiducial("t_off", _rel_s(analysis, "t_off") + 0.02))
        first.do(first.edits.add_note("long QT? check lead II"))
        first.do(first.edits.add_caliper("time", 0.4, 0.9, lead="II", label="QT"))
        first.do(first.edits.sign_off())
    with MarksStore.open(rec, "reader2", role="second", show_automatic=False) as second:
        assert second.blinded
        assert second.reading.overrides == () and second.reading.notes == ()
        assert second.automatic is None  # chosen: no automatic marks either
        assert second.audit == ()
        with pytest.raises(BlindedError):
            second.readings()
        with pytest.raises(BlindedError):
            _ = second.sidecar
        view = second.view
        assert [r.reviewer for r in view.readings] == []
        text = repr(view)
        assert "long QT" not in text and "reader1" not in text
        second.do(second.edits.move_fiducial("t_off", _rel_s(analysis, "t_off") - 0.01))
        assert second.reading.overrides[0].old_s is None  # no automatic value leaks
        assert [r.reviewer for r in second.view.readings] == ["reader2"]
        assert all(e.reviewer == "reader2" for e in second.audit)
        with pytest.raises(MarksError, match="adjudicator"):
            second.edits.adjudicate_fiducial("t_off", 0.3)
    with MarksStore.open(rec, "reader3", role="second", show_automatic=True) as third:
        assert third.automatic == load_sidecar(path).automatic  # the engine's marks only
    sc = load_sidecar(path)
    assert {r.reviewer: r.role for r in sc.readings} == {"reader1": "first", "reader2": "second"}
    assert sc.reading("reader1").status == "signed_off"  # untouched by the second read


def test_comparison_recomputes_intervals_and_flags_beyond_tolerance(ludb):
    rec, analysis = ludb
    path = rec.source_path.with_name("1.marks.json")
    path.unlink(missing_ok=True)
    t_off = _rel_s(analysis, "t_off")
    with MarksStore.open(rec, "reader1") as a:
        a.do(a.edits.move_fiducial("t_off", t_off + 0.020))
        ra = a.reading
    with MarksStore.open(rec, "reader2", role="second") as b:
        b.do(b.edits.move_fiducial("t_off", t_off - 0.004))
        rb = b.reading
    cmp = compare_readings(analysis, ra, rb)
    row = cmp.row("t_off")
    assert (row.source_a, row.source_b) == ("reader", "reader")
    assert row.diff_ms == pytest.approx(-24.0)
    # The CSE T-end tolerance (30.6 ms, CSE Working Party, Eur Heart J 1985) is capped by the
    # QT's 10 ms: T end is the QT's end, so the two verdicts agree.
    assert row.tolerance_ms == 10.0 and row.beyond_tolerance
    assert cmp.row("qrs_on").diff_ms == 0.0 and cmp.row("qrs_on").source_a == "automatic"
    # QT runs from QRS onset to T end, so moving T end by -24 ms moves QT by -24 ms
    # (definition: Rautaharju et al., AHA/ACCF/HRS recommendations part IV, Circulation
    # 2009;119:e241-e250).
    qt = cmp.row("qt_ms")
    assert qt.diff_ms == pytest.approx(-24.0)
    assert qt.beyond_tolerance and qt in cmp.flagged  # default tolerance 10 ms
    # Bazett: QTc = QT / sqrt(RR in s) (Bazett, Heart 1920;7:353-370); RR is the same for
    # both readers, so the QTc difference is the QT difference over sqrt(RR).
    rr_s = analysis.reading().measurements.intervals.rr_ms / 1000.0
    assert cmp.row("qtc_bazett_ms").diff_ms == pytest.approx(-24.0 / math.sqrt(rr_s), rel=1e-6)
    # Engine values for each reader are the engine's own (recomputed, nothing stored).
    ia = analysis.reading(overrides_for(ra, rec.fs_hz, analysis.representative.r_index))
    assert qt.a_ms == ia.measurements.intervals.qt_ms
    assert cmp.row("qrs_ms").diff_ms == 0.0 and not cmp.row("qrs_ms").flagged
    # A wider tolerance clears the flag.
    assert not compare_readings(analysis, ra, rb, {"qt_ms": 30}).row("qt_ms").beyond_tolerance


def test_adjudicator_sees_both_and_final_values_are_audited(ludb):
    rec, analysis = ludb
    path = rec.source_path.with_name("1.marks.json")
    path.unlink(missing_ok=True)
    t_off, qrs_on = _rel_s(analysis, "t_off"), _rel_s(analysis, "qrs_on")
    with MarksStore.open(rec, "reader1") as a:
        a.do(a.edits.move_fiducial("t_off", t_off + 0.020))
        a.do(a.edits.move_fiducial("qrs_on", qrs_on - 0.004))
    with MarksStore.open(rec, "reader2", role="second") as b:
        b.do(b.edits.move_fiducial("t_off", t_off - 0.010))
    with MarksStore.open(rec, "judge", role="adjudicator") as j:
        readings = j.readings()
        ra, rb = readings["reader1"], readings["reader2"]
        j.do(j.edits.adopt_interval("qt_ms", ra))
        j.do(j.edits.adjudicate_fiducial("t_off", rb.overrides[0].new_s, chosen_from="reader2"))
        final = j.reading
        events = [e for e in j.audit if e.reviewer == "judge"]
    assert [e.action for e in events] == ["adjudicate", "adjudicate"]
    assert "adopted from reader1" in events[0].target
    assert "chosen from reader2" in events[1].target
    assert final.role == "adjudicator"
    got = {o.fiducial: o.new_s for o in final.overrides}
    assert got["qrs_on"] == ra.override(("representative", None, None, "qrs_on")).new_s
    assert got["t_off"] == rb.overrides[0].new_s
    cmp = compare_readings(analysis, ra, final)
    assert cmp.row("qrs_on").diff_ms == 0.0
    assert cmp.row("t_off").diff_ms == pytest.approx(-30.0)


def test_second_reader_cannot_unblind_before_signing_off(ludb):
    rec, analysis = ludb
    path = rec.source_path.with_name("1.marks.json")
    path.unlink(missing_ok=True)
    with MarksStore.open(rec, "reader1") as a:
        a.do(a.edits.add_note("first reader's note"))
    with pytest.raises(MarksError, match="blinded until"):
        MarksStore.open(rec, "reader2", role="second", blinded=False)
    with MarksStore.open(rec, "reader2", role="second") as b:
        b.do(b.edits.move_fiducial("t_off", _rel_s(analysis, "t_off")))
        b.do(b.edits.sign_off())
    with MarksStore.open(rec, "reader2", role="second", blinded=False) as b:
        assert set(b.readings()) == {"reader1", "reader2"}


def test_a_boundary_and_the_intervals_it_bounds_get_the_same_verdict():
    """One boundary moved, the other shared: the interval differs by exactly the boundary's
    difference (interval definitions: Kligfield et al., Circulation 2007, AHA/ACCF/HRS Part
    I), so the boundary is beyond tolerance whenever an interval it bounds is, for the default
    tolerances and for tolerances a study sets."""
    from reviewapp.core.marks.compare import INTERVAL_BOUNDARIES, comparison_tolerances_ms

    for given in (None, {"qt_ms": 20.0}, {"qrs_ms": 4.0, "pr_ms": 15.0}):
        tol = comparison_tolerances_ms(given)
        for interval, bounds in INTERVAL_BOUNDARIES.items():
            if interval not in tol:
                continue
            for fid in bounds:
                for diff in (tol[interval] - 0.5, tol[interval] + 0.5):
                    assert (diff > tol[fid]) >= (diff > tol[interval]), (given, interval, fid)
    # Tolerances the study names for a fiducial are kept as given.
    assert comparison_tolerances_ms({"t_off": 30.6})["t_off"] == 30.6
    # CSE tolerances where no interval is tighter (CSE Working Party, Eur Heart J 1985).
    assert comparison_tolerances_ms()["qrs_on"] == 6.5
    assert comparison_tolerances_ms()["p_off"] == 12.7
