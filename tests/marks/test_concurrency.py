"""Two instances on one sidecar: locks, conflict detection, reload, save-aside, merge."""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys

import pytest

from reviewapp.core.marks import (
    ConflictError,
    LockedError,
    MarksStore,
    MergeConflictError,
    UndoStack,
    UnreadableSidecarError,
    load_sidecar,
)


def test_second_window_on_a_record_is_detected_and_named(scratch, kit):
    rec = kit.make_record(scratch)
    with MarksStore.open(rec, "reader1"):
        with pytest.raises(LockedError) as info:
            MarksStore.open(rec, "reader2")
        holder = info.value.holder
        assert holder["pid"] == os.getpid()
        assert holder["host"] == socket.gethostname()
        assert holder["reviewer"] == "reader1"
        assert "reader1" in str(info.value)
    MarksStore.open(rec, "reader2").close()  # released on close


def test_stale_lock_of_a_dead_process_is_taken_over(scratch, kit):
    rec = kit.make_record(scratch)
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    lock = scratch / "rec.marks.json.lock"
    lock.write_text(json.dumps({"pid": dead.pid, "host": socket.gethostname(), "since": "x"}))
    with MarksStore.open(rec, "reader1") as store:
        assert json.loads(lock.read_text())["pid"] == os.getpid()
        store.do(store.edits.add_note("after takeover"))
    assert not lock.exists()


def test_lock_of_another_host_counts_as_held_unless_forced(scratch, kit):
    rec = kit.make_record(scratch)
    lock = scratch / "rec.marks.json.lock"
    lock.write_text(json.dumps({"pid": 1, "host": "elsewhere.invalid", "reviewer": "reader9"}))
    with pytest.raises(LockedError, match="reader9"):
        MarksStore.open(rec, "reader1")
    with MarksStore.open(rec, "reader1", force_lock=True):
        assert json.loads(lock.read_text())["host"] == socket.gethostname()


def test_change_on_disk_is_never_overwritten_and_can_be_merged(scratch, kit):
    rec = kit.make_record(scratch)
    a = MarksStore.open(rec, "reader1")
    b = MarksStore.open(rec, "reader1", lock=False)  # e.g. a second machine on a share
    a.do(a.edits.move_fiducial("qrs_on", -0.05))
    on_disk = a.path.read_bytes()
    stack_b = UndoStack(b)
    with pytest.raises(ConflictError) as info:
        stack_b.push(b.edits.move_fiducial("t_off", 0.4))
    assert set(info.value.options) == {"reload", "save_aside", "merge"}
    assert a.path.read_bytes() == on_disk  # not overwritten
    assert b.dirty and b.changed_on_disk()
    b.resolve_merge()
    merged = load_sidecar(a.path)
    r = merged.reading("reader1")
    assert {o.fiducial: o.new_s for o in r.overrides} == {"qrs_on": -0.05, "t_off": 0.4}
    assert [e.action for e in merged.audit] == ["move_fiducial", "move_fiducial", "merge"]
    # A now is the stale one: its next edit is refused, it reloads and sees both.
    with pytest.raises(ConflictError):
        a.do(a.edits.add_note("late"))
    a.resolve_reload()
    assert {o.fiducial for o in a.reading.overrides} == {"qrs_on", "t_off"}
    a.do(a.edits.add_note("after reload"))
    # B's undo history was reset by the merge (its state was replaced from disk).
    assert not stack_b.can_undo()
    a.close()
    b.close()


def test_same_fiducial_changed_on_both_sides_cannot_merge_but_can_be_kept_aside(scratch, kit):
    rec = kit.make_record(scratch)
    a = MarksStore.open(rec, "reader1")
    b = MarksStore.open(rec, "reader1", lock=False)
    a.do(a.edits.move_fiducial("t_off", 0.40))
    with pytest.raises(ConflictError):
        b.do(b.edits.move_fiducial("t_off", 0.42))
    disk = a.path.read_bytes()
    with pytest.raises(MergeConflictError) as info:
        b.resolve_merge()
    assert any("t_off" in c for c in info.value.conflicts)
    assert a.path.read_bytes() == disk  # nothing written
    aside = b.resolve_save_aside()
    assert aside.name.startswith("rec.marks.reader1.") and aside.name.endswith(".json")
    kept = load_sidecar(aside)
    assert kept.reading("reader1").overrides[0].new_s == 0.42
    assert b.reading.overrides[0].new_s == 0.40  # continues from the file on disk
    assert a.path.read_bytes() == disk
    a.close()
    b.close()


def test_two_readers_edit_concurrently_and_merge_cleanly(scratch, kit):
    rec = kit.make_record(scratch)
    a = MarksStore.open(rec, "reader1", lock=False)
    b = MarksStore.open(rec, "reader2", role="second", lock=False)
    a.do(a.edits.move_fiducial("t_off", 0.40))
    a.do(a.edits.sign_off())
    with pytest.raises(ConflictError):
        b.do(b.edits.move_fiducial("t_off", 0.38))
    b.resolve_merge()
    sc = load_sidecar(a.path)
    assert sc.reading("reader1").status == "signed_off"
    assert sc.reading("reader2").overrides[0].new_s == 0.38
    assert sc.reading("reader2").blinded
    a.close()
    b.close()


def test_file_removed_or_replaced_under_a_store_is_a_conflict(scratch, kit):
    rec = kit.make_record(scratch)
    with MarksStore.open(rec, "reader1") as a:
        a.do(a.edits.add_note("one"))
        a.path.unlink()
        with pytest.raises(ConflictError, match="removed"):
            a.do(a.edits.add_note("two"))
        a.resolve_merge()  # nothing on disk to merge with: ours is written
        assert load_sidecar(a.path).reading("reader1").notes[-1].text == "two"
        a.path.write_bytes(b"garbage")
        with pytest.raises(ConflictError, match="changed"):
            a.do(a.edits.add_note("three"))
        assert a.path.read_bytes() == b"garbage"
        with pytest.raises(UnreadableSidecarError):
            a.resolve_merge()
        with pytest.raises(UnreadableSidecarError, match=r"kept as rec\.marks\.reader1"):
            a.resolve_save_aside()
        assert a.path.read_bytes() == b"garbage"
        (aside,) = scratch.glob("rec.marks.reader1.*.json")
        assert load_sidecar(aside).reading("reader1").notes[-1].text == "three"


def test_junk_lock_files_are_taken_over_never_an_exception(scratch, kit):
    rec = kit.make_record(scratch)
    lock = scratch / "rec.marks.json.lock"
    host = socket.gethostname()
    for junk in (
        b"",
        b"\xff\x00garbage",
        b"[1, 2]",
        json.dumps({"pid": 10**30, "host": host}).encode(),
        json.dumps({"pid": True, "host": host}).encode(),
        json.dumps({"pid": -5, "host": host}).encode(),
        json.dumps({"pid": "12", "host": host}).encode(),
        b"x" * 100_000,
    ):
        lock.write_bytes(junk)
        with MarksStore.open(rec, "reader1"):
            assert json.loads(lock.read_text())["pid"] == os.getpid()
        assert not lock.exists()


def test_lock_removed_under_a_store_is_retaken_and_taken_over_lock_stops_saving(scratch, kit):
    rec = kit.make_record(scratch)
    lock = scratch / "rec.marks.json.lock"
    with MarksStore.open(rec, "reader1") as a:
        lock.unlink()
        a.do(a.edits.add_note("still saved"))
        assert json.loads(lock.read_text())["pid"] == os.getpid()
        with MarksStore.open(rec, "reader2", force_lock=True) as b:  # takes it over
            assert json.loads(lock.read_text())["reviewer"] == "reader2"
            with pytest.raises(ConflictError, match="took over"):
                a.do(a.edits.add_note("refused"))
            b.do(b.edits.add_note("reader2 saves"))
    assert [n.text for n in load_sidecar(scratch / "rec.marks.json").reading("reader1").notes] == [
        "still saved"
    ]
