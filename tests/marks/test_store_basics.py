"""Store behaviour: saving, backups, sign-off freezing, automatic recompute, audit."""

from __future__ import annotations

import json

import pytest

from reviewapp.core.errors import MarksError
from reviewapp.core.marks import (
    MarksStore,
    ReadOnlyError,
    UndoStack,
    backup_path_for,
    load_sidecar,
    record_identity,
    write_automatic,
)


def test_every_edit_is_on_disk_at_once_with_previous_version_as_backup(scratch, kit):
    rec = kit.make_record(scratch)
    with MarksStore.open(rec, "reader1") as store:
        assert store.path == scratch / "rec.marks.json"
        assert not store.path.exists()  # opening alone writes nothing
        store.do(store.edits.move_fiducial("qrs_on", -0.05))
        first = store.path.read_bytes()
        assert not backup_path_for(store.path).exists()
        store.do(store.edits.add_note("hello"))
        assert backup_path_for(store.path).read_bytes() == first
        on_disk = load_sidecar(store.path, record_identity(rec))
        assert on_disk == store.sidecar
        assert on_disk.reading("reader1").notes[0].text == "hello"


def test_file_is_diff_friendly_sorted_indented_and_times_on_the_sample_grid(scratch, kit):
    rec = kit.make_record(scratch)
    with MarksStore.open(rec, "reader1") as store:
        store.do(store.edits.move_fiducial("t_off", 0.37123))  # 185.6 samples -> 186
        text = store.path.read_text("utf-8")
    doc = json.loads(text)
    assert text == json.dumps(doc, sort_keys=True, indent=2, ensure_ascii=False) + "\n"
    ov = doc["readings"]["reader1"]["overrides"][0]
    assert ov["new_s"] == 186 / kit.fs_hz


def test_sign_off_then_edit_reopens_and_audit_records_it(scratch, kit):
    rec = kit.make_record(scratch)
    times = iter(f"2026-01-01T00:00:{s:02d}.000000Z" for s in range(60))
    with MarksStore.open(rec, "reader1", clock=lambda: next(times)) as store:
        stack = UndoStack(store)
        stack.push(store.edits.move_fiducial("qrs_on", -0.05))
        stack.push(store.edits.sign_off())
        r = store.reading
        assert (r.status, r.signed_off_by) == ("signed_off", "reader1")
        assert r.signed_off_at is not None
        stack.push(store.edits.add_caliper("time", 0.5, 0.9, lead="II"))
        assert store.reading.status == "in_progress"
        assert store.reading.signed_off_by is None
        actions = [e.action for e in store.audit]
        assert actions == ["move_fiducial", "sign_off", "reopen", "add_caliper"]
        # Undoing the reopening edit gives back the signed-off reading, and says so.
        stack.undo()
        assert store.reading.status == "signed_off"
        assert [e.action for e in store.audit][-2:] == ["undo:add_caliper", "restore_sign_off"]
        assert all(e.reviewer == "reader1" for e in store.audit)
        assert [e.at for e in store.audit] == sorted(e.at for e in store.audit)


def test_recomputed_automatic_marks_leave_overrides_alone(scratch, kit):
    rec = kit.make_record(scratch)
    write_automatic(rec, kit.make_automatic("0.1.0"))
    with MarksStore.open(rec, "reader1") as store:
        store.do(store.edits.move_fiducial("t_off", 0.4))
        # old value filled from the automatic marks the reader saw
        assert store.reading.overrides[0].old_s == 0.35
        before = store.reading
    path = write_automatic(rec, kit.make_automatic("0.2.0", shift_s=0.01))
    sc = load_sidecar(path)
    assert sc.automatic.engine_version == "0.2.0"
    assert sc.reading("reader1") == before
    ev = sc.audit[-1]
    assert (ev.action, ev.reviewer) == ("set_automatic", "batch")
    assert (ev.old["engine_version"], ev.new["engine_version"]) == ("0.1.0", "0.2.0")


def test_read_only_store_refuses_edits_and_bad_reviewer_ids_are_refused(scratch, kit):
    rec = kit.make_record(scratch)
    with MarksStore.open(rec, "reader1", read_only=True) as store:
        with pytest.raises(ReadOnlyError):
            store.do(store.edits.add_note("x"))
    for bad in ("", "../etc", "a b", "x" * 65):
        with pytest.raises(MarksError):
            MarksStore.open(rec, bad)


def test_role_is_fixed_per_reviewer(scratch, kit):
    rec = kit.make_record(scratch)
    with MarksStore.open(rec, "reader1") as store:
        store.do(store.edits.add_note("first read"))
    with pytest.raises(MarksError, match="first reader"):
        MarksStore.open(rec, "reader1", role="adjudicator")
    # the failed open released its lock
    MarksStore.open(rec, "reader1").close()


def test_edit_commands_refuse_a_stale_state(scratch, kit):
    rec = kit.make_record(scratch)
    with MarksStore.open(rec, "reader1") as store:
        cmd = store.edits.move_fiducial("qrs_on", -0.05)
        store.do(cmd)
        with pytest.raises(MarksError):
            store.do(cmd)  # made against the earlier reading
