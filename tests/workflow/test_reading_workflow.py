"""The reading workflow without Qt: corrections, the one place they live, undo/redo, the marks
file and its audit trail, and what each action reports.

References outside the code under test: interval arithmetic by definition (QT = T end - QRS
onset, so moving T end by N samples changes QT by N / fs), and the marks file read back as
plain JSON.
"""

from __future__ import annotations

import json

import pytest

from reviewapp.core.marks.model import Caliper
from reviewapp.core.workflow import FIRST, MarkEdit, MarkTarget, ReadingWorkflow
from tests.workflow.conftest import sidecar_json

T_END = MarkTarget("representative", "t_off")


def test_a_median_drag_is_one_saved_audited_step_and_qt_moves_by_n_over_fs(open_workflow):
    w = open_workflow()
    fs = w.fs_hz
    rep0 = w.reading.marked.representative
    qt0 = w.reading.measurements.intervals.qt_ms
    k0 = rep0.marks.t_off
    seen = []
    w.subscribe(seen.append)
    # While dragging: values follow, nothing is recorded or written.
    assert w.mark_edit(MarkEdit(T_END, "preview", k0 + 7)).done
    assert w.reading.measurements.intervals.qt_ms == pytest.approx(qt0 + 7 / fs * 1000.0)
    assert sidecar_json(w.analysis) is None and len(w.history) == 0
    out = w.mark_edit(MarkEdit(T_END, "move", k0 + 12))
    assert out.done and out.recorded and out.saved_to is not None
    assert out.message == f"Move T end (median beat): saved to {out.saved_to.name}."
    # QT = T end - QRS onset (definition): 12 samples later is 12 / fs longer.
    assert w.reading.measurements.intervals.qt_ms == pytest.approx(qt0 + 12 / fs * 1000.0)
    side = sidecar_json(w.analysis)
    (ov,) = side["readings"]["reader1"]["overrides"]
    assert ov["fiducial"] == "t_off" and ov["scope"] == "representative"
    assert ov["new_s"] == pytest.approx((k0 + 12 - rep0.r_index) / fs)
    assert ov["old_s"] == pytest.approx((k0 - rep0.r_index) / fs)
    assert [e["action"] for e in side["audit"]].count("move_fiducial") == 1
    # The correction lives in the reader's reading only; the engine's overrides derive from it.
    assert w.correction(T_END).new_s == ov["new_s"]
    assert [o.sample for o in w.engine_overrides] == [k0 + 12]
    assert seen[-1].marks and seen[-1].values and seen[-1].stored
    # Undo and redo go through the file, each audited.
    assert w.undo().done and not w.is_corrected(T_END)
    assert w.reading.measurements.intervals.qt_ms == pytest.approx(qt0)
    assert w.redo().done and w.shown_sample(T_END) == k0 + 12
    actions = [e["action"] for e in sidecar_json(w.analysis)["audit"]]
    assert actions[-2:] == ["undo:move_fiducial", "redo:move_fiducial"]


def test_a_move_to_where_the_mark_is_is_neither_recorded_nor_audited(open_workflow):
    w = open_workflow()
    k0 = w.shown_sample(T_END)
    out = w.mark_edit(MarkEdit(T_END, "move", k0))
    assert not out.done and not out.recorded and out.message.startswith("No change")
    assert sidecar_json(w.analysis) is None and len(w.history) == 0
    w.move_mark(T_END, k0 + 5)
    n_events = len(sidecar_json(w.analysis)["audit"])
    out = w.move_mark(T_END, k0 + 5)
    assert out.message == "No change: T end (median beat) is already there."
    assert len(sidecar_json(w.analysis)["audit"]) == n_events and len(w.history) == 1
    assert not w.reset_mark(MarkTarget("representative", "p_on")).done


def test_beat_and_lead_marks_reset_all_is_one_step(open_workflow):
    w = open_workflow()
    fs = w.fs_hz
    beat = w.analysis.beats[2]
    t_beat = MarkTarget("beat", "t_off", beat_r=beat.r)
    j_v2 = MarkTarget("representative", "qrs_off", lead="V2")
    k_beat = w.shown_sample(t_beat)
    k_j = w.shown_sample(j_v2)
    global_end = w.reading.marked.representative.marks.qrs_off
    assert w.move_mark(t_beat, k_beat + 10).done
    assert w.move_mark(j_v2, k_j + 4).done
    assert w.reading.marked.beat_marks[2].t_off == k_beat + 10
    v2 = w.record.lead_index("V2")
    rep = w.reading.marked.representative
    # The lead's own J point moved; the global QRS end stays where it was.
    assert rep.lead_marks[v2].qrs_off == k_j + 4 and rep.marks.qrs_off == global_end
    side = sidecar_json(w.analysis)
    keys = sorted(
        (o["scope"], o["lead"] or "", o["beat_r_s"] or 0.0)
        for o in side["readings"]["reader1"]["overrides"]
    )
    assert keys == [("beat", "", pytest.approx(beat.r / fs)), ("representative", "V2", 0.0)]
    steps = len(w.history)
    out = w.reset_all()
    assert out.done and len(w.history) == steps + 1 and not w.marks.overrides
    resets = [e for e in sidecar_json(w.analysis)["audit"] if e["action"] == "reset_fiducial"]
    assert len(resets) == 2  # one audited reset per mark
    assert w.undo().done and len(w.marks.overrides) == 2


def test_without_a_file_the_reading_stays_in_the_window(demo_analysis):
    import dataclasses

    analysis = dataclasses.replace(
        demo_analysis, record=dataclasses.replace(demo_analysis.record, source_path=None)
    )
    from reviewapp.core.workflow import open_marks

    opening = open_marks(analysis.record, "reader1", FIRST)
    assert opening.store is None and "window only" in opening.note
    w = ReadingWorkflow(analysis, opening, reader="reader1")
    k0 = w.shown_sample(T_END)
    out = w.move_mark(T_END, k0 - 3)
    assert out.done and out.saved_to is None and "kept in this window only" in out.message
    assert w.correction(T_END).old_s == pytest.approx((k0 - w.rep_r_index) / w.fs_hz)
    assert w.notes.add("x").problem is not None  # notes need a marks file
    assert w.undo().done and not w.is_corrected(T_END)


def test_an_unidentified_reader_is_asked_and_window_calipers_follow(open_workflow, analysis):
    from reviewapp.core.workflow import open_marks

    w = open_workflow(None)
    assert w.store is not None and w.store.read_only and not w.identified
    # Nobody answers: a correction is dropped, a caliper stays in the window (undoable).
    w.edit_guard = lambda: False
    assert w.move_mark(T_END, w.shown_sample(T_END) + 5).message.startswith("Not changed")
    out = w.calipers.add(Caliper("c1", "time", 1.0, 1.4, lead="II", label="C1"))
    assert out.recorded and "kept in this window only: no reader id given" in out.message
    assert sidecar_json(analysis) is None

    def answer() -> bool:  # the reader gives an id: the file reopens under it
        w.use_marks(
            open_marks(analysis.record, "reader7", FIRST),
            FIRST,
            "reader7",
            carry_window_calipers=True,
        )
        return True

    w.edit_guard = answer
    out = w.calipers.add(Caliper("", "amplitude", 2.0, 2.0, 0.0, 1.2, lead="V5", label="C2"))
    assert out.saved_to is not None
    side = sidecar_json(analysis)["readings"]["reader7"]
    assert sorted(c["label"] for c in side["calipers"]) == ["C1", "C2"]
    assert [c["id"] for c in side["calipers"] if c["label"] == "C1"] == ["c1"]
    assert w.undo().done
    assert [c.label for c in w.all_calipers()] == ["C1"]


def test_calipers_notes_and_march_out_are_steps(open_workflow):
    w = open_workflow()
    assert w.calipers.add(Caliper("a", "time", 1.0, 1.4, lead="II", label="C1")).done
    assert w.calipers.move("a", t2_s=1.5).message.startswith("Move caliper C1")
    assert w.calipers.move("a", label="RR").message.startswith("Rename caliper C1 to RR")
    assert not w.calipers.move("a", label="RR").done  # same label: no change
    assert w.calipers.set_march("a", True).done and "a" in w.marching
    assert not w.calipers.set_march("a", True).done
    assert w.undo().done and "a" not in w.marching
    assert w.calipers.delete("a").done and w.all_calipers() == ()
    assert w.undo().done and w.all_calipers()[0].label == "RR"
    assert w.notes.add("  T end taken from V5 ").done
    (note,) = w.marks.notes
    assert note.text == "T end taken from V5"
    n_events = len(sidecar_json(w.analysis)["audit"])
    assert not w.notes.edit(note.id, "T end taken from V5").done  # same text
    assert len(sidecar_json(w.analysis)["audit"]) == n_events
    assert w.notes.edit(note.id, "T end taken from II").done
    assert w.notes.delete(note.id).done and w.marks.notes == ()
    assert w.undo().done and w.marks.notes[0].text == "T end taken from II"


def test_sign_off_then_an_edit_reopens_and_undo_restores_it(open_workflow):
    w = open_workflow()
    out = w.decisions.sign_off()
    assert out.done and out.message.startswith("Signed off by reader1 at ")
    assert w.decisions.sign_off_refusal() == "this reading is already signed off"
    seen = []
    w.subscribe(seen.append)
    assert w.move_mark(T_END, w.shown_sample(T_END) + 4).done
    assert w.marks.status == "in_progress" and seen[-1].reopened[0] == "reader1"
    assert w.undo().done and w.marks.status == "signed_off"
    assert sidecar_json(w.analysis)["audit"][-1]["action"] == "restore_sign_off"


def _read_and_sign(analysis, reviewer: str, role: str, shift_s: float) -> None:
    from reviewapp.core.marks import MarksStore

    rep = analysis.representative
    t_rel_s = (rep.marks.t_off - rep.r_index) / analysis.fs_hz
    with MarksStore.open(analysis.record, reviewer, role=role) as st:
        st.do(st.edits.move_fiducial("t_off", t_rel_s + shift_s))
        st.do(st.edits.sign_off())


def test_picking_a_final_value_equal_to_the_current_one_is_not_recorded(open_workflow, analysis):
    from reviewapp.core.workflow import ADJUDICATOR

    _read_and_sign(analysis, "reader1", "first", 0.040)
    _read_and_sign(analysis, "reader2", "second", -0.010)
    w = open_workflow("adj1", ADJUDICATOR)
    b = w.readings()["reader2"].override(("representative", None, None, "t_off")).new_s
    assert w.decisions.adjudicate_fiducial("t_off", b, "reader2").done
    n_events = len(sidecar_json(analysis)["audit"])
    # Reader B's value again (the final value is already B's): nothing happens.
    out = w.decisions.adjudicate_fiducial("t_off", b, "reader2")
    assert (
        not out.done and out.message == f"No change: the final T end is {b * 1000:.0f} ms already."
    )
    assert len(sidecar_json(analysis)["audit"]) == n_events and len(w.history) == 1
    assert w.decisions.adopt_interval("qt_ms", "QT", "reader1").done
    assert not w.decisions.adopt_interval("qt_ms", "QT", "reader1").done


@pytest.mark.parametrize("choice", ["reload", "keep_aside", "merge"])
def test_a_file_changed_by_another_window_offers_three_resolutions(open_workflow, analysis, choice):
    from reviewapp.core.marks import MarksStore

    w = open_workflow()
    assert w.notes.add("mine, saved").done
    # Another window takes the record's lock over, adds its own note to the same reading and
    # closes (only a lock holder saves; the file still changes under this window).
    with MarksStore.take_over(analysis.record, "reader1") as other:
        other.do(other.edits.add_note("theirs"))
    out = w.notes.add("mine, not yet saved")
    assert out.conflict and not out.done and out.recorded and out.message.startswith("Not saved")
    assert w.conflict is not None
    on_disk = [n["text"] for n in sidecar_json(analysis)["readings"]["reader1"]["notes"]]
    assert on_disk == ["mine, saved", "theirs"]
    res = w.resolve_conflict(choice)
    assert res.done and w.conflict is None and len(w.history) == 0
    texts = [n.text for n in w.marks.notes]
    on_disk = [n["text"] for n in sidecar_json(analysis)["readings"]["reader1"]["notes"]]
    assert texts == on_disk
    if choice == "merge":
        assert sorted(texts) == sorted(["mine, saved", "theirs", "mine, not yet saved"])
        assert "Merged" in res.message
    else:
        assert texts == ["mine, saved", "theirs"]
    if choice == "keep_aside":
        aside = list(analysis.record.source_path.parent.glob("*.marks.reader1.*.json"))
        assert len(aside) == 1 and "mine, not yet saved" in aside[0].read_text()
        assert aside[0].name in res.message


def test_a_failed_save_is_reported_as_not_saved(open_workflow, monkeypatch):
    from reviewapp.core.errors import MarksError
    from reviewapp.core.marks import store as store_mod

    w = open_workflow()
    p_on = MarkTarget("representative", "p_on")
    assert w.move_mark(p_on, w.shown_sample(p_on) - 2).done  # automatic marks stored with it

    def disk_full(path, data, failure="could not save"):
        raise MarksError(f"{failure}: No space left on device", path)

    monkeypatch.setattr(store_mod, "atomic_write", disk_full)
    out = w.move_mark(T_END, w.shown_sample(T_END) + 3)
    assert not out.done and out.recorded and out.saved_to is None
    assert "not saved (could not save: No space left on device)" in out.message
    (saved,) = sidecar_json(w.analysis)["readings"]["reader1"]["overrides"]
    assert saved["fiducial"] == "p_on"  # the T end correction is not in the file
    assert w.is_corrected(T_END)  # ... but kept in the window, saved with the next change


def test_a_record_held_by_another_window_names_the_holder_and_can_be_taken_over(
    open_workflow, analysis
):
    """The lock's holder in words, read-only by default, a take-over on purpose (warned and
    audited); the displaced reading is refused at its next change, said plainly, and kept as
    a separate file on request. The lock file and the marks file are read back as JSON."""
    from reviewapp.core.workflow import lock_holder, open_marks, take_over_marks

    assert lock_holder(analysis.record) is None  # nobody holds it
    first = open_workflow()
    assert first.notes.add("first window").done
    lock = json.loads(first.store.path.with_name(first.store.path.name + ".lock").read_text())
    holder = lock_holder(analysis.record)
    assert holder is not None and holder.reviewer == "reader1"
    assert holder.where == f"process {lock['pid']} on {lock['host']}"
    # "since" is the lock file's ISO time, to the minute, in UTC.
    assert holder.since == lock["since"][:10] + " " + lock["since"][11:16] + " UTC"
    assert holder.text.startswith("reader1 (process ")

    seen = open_marks(analysis.record, "reader1", FIRST)
    assert seen.locked is not None and seen.store is not None and seen.store.read_only
    assert seen.locked.holder["reviewer"] == "reader1"
    seen.store.close()

    taken = take_over_marks(analysis.record, "reader1", FIRST)
    assert taken.store is not None and not taken.store.read_only and taken.locked is None
    assert "no longer" in taken.warning and "reader1" in taken.warning
    assert sidecar_json(analysis)["audit"][-1]["action"] == "take_over_lock"
    disk = first.store.path.read_bytes()

    out = first.notes.add("after the take-over")
    assert out.displaced and out.conflict and not out.done and out.recorded
    assert out.message.startswith("Not saved: reader1 took this record over in another window")
    assert first.store.path.read_bytes() == disk  # nothing written by the displaced window
    kept = first.resolve_conflict("keep_aside")
    assert kept.done
    (aside,) = analysis.record.source_path.parent.glob("*.marks.reader1.*.json")
    notes = [n["text"] for n in json.loads(aside.read_text())["readings"]["reader1"]["notes"]]
    assert notes == ["first window", "after the take-over"]
    taken.store.close()
