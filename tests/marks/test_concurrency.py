"""One writer per record: locks, their liveness, take-over, and saves that never lose anything.

Only a store holding the record's lock saves, and each save is a compare-and-swap under an OS
lock. Two writers can still meet: a window whose lock was taken over (its next save is
refused), or a file changed by another program (a conflict offering reload, save aside or
merge). Outside references: the operating system's own view of processes (a real dead child,
a real live child with its start time from psutil) and the marks store's schema validation.
"""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from reviewapp.core.errors import MarksError
from reviewapp.core.marks import (
    ConflictError,
    LockedError,
    MarksStore,
    MergeConflictError,
    TakenOverError,
    UndoStack,
    UnreadableSidecarError,
    load_sidecar,
)
from reviewapp.core.marks.lock import boot_id, lock_path_for, process_start, remove_if_stale

REPO = Path(__file__).resolve().parents[2]


def test_second_window_on_a_record_is_detected_and_named(scratch, kit):
    rec = kit.make_record(scratch)
    with MarksStore.open(rec, "reader1"):
        with pytest.raises(LockedError) as info:
            MarksStore.open(rec, "reader2")
        holder = info.value.holder
        assert holder["pid"] == os.getpid()
        assert holder["host"] == socket.gethostname()
        assert holder["reviewer"] == "reader1"
        assert holder["boot"] == boot_id() and holder["started"] == process_start(os.getpid())
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
        assert store.took_over is None  # a dead holder is no take-over
        store.do(store.edits.add_note("after takeover"))
    assert not lock.exists()


@pytest.fixture
def live_child():
    child = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        yield child
    finally:
        child.kill()
        child.wait()


def test_reused_pid_and_earlier_boot_make_a_lock_stale_a_live_one_is_held(scratch, kit, live_child):
    """Liveness is the process id AND its start time (and the boot): a lock whose pid now
    belongs to another process, or that was written before a reboot, is stale."""
    rec = kit.make_record(scratch)
    lock = scratch / "rec.marks.json.lock"
    started = process_start(live_child.pid)
    assert started is not None
    here = {"host": socket.gethostname(), "boot": boot_id(), "reviewer": "reader9"}
    # The live child's own start time: its window is open.
    lock.write_text(json.dumps({**here, "pid": live_child.pid, "started": started}))
    with pytest.raises(LockedError, match="reader9"):
        MarksStore.open(rec, "reader1")
    # Same pid, another start time: the pid was reused, the holder is gone.
    lock.write_text(json.dumps({**here, "pid": live_child.pid, "started": started - 3600}))
    with MarksStore.open(rec, "reader1") as store:
        assert store.took_over is None
    # Written in an earlier boot of this machine: stale whatever the pid.
    lock.write_text(json.dumps({**here, "pid": live_child.pid, "boot": "an-earlier-boot"}))
    with MarksStore.open(rec, "reader1"):
        pass
    assert not lock.exists()


def test_take_over_a_live_window_warns_audits_and_stops_the_old_window(scratch, kit):
    rec = kit.make_record(scratch)
    a = MarksStore.open(rec, "reader1")
    a.do(a.edits.add_note("before"))
    with pytest.raises(LockedError):
        MarksStore.open(rec, "reader2")
    b = MarksStore.take_over(rec, "reader2")
    assert b.took_over is not None
    assert b.took_over.previous["reviewer"] == "reader1"
    assert b.took_over.previous["pid"] == os.getpid()
    assert "reader1" in b.took_over.warning and "audit" in b.took_over.warning
    on_disk = load_sidecar(a.path)
    event = on_disk.audit[-1]
    assert (event.action, event.reviewer, event.target) == (
        "take_over_lock",
        "reader2",
        "record lock",
    )
    assert event.old["reviewer"] == "reader1" and event.new["reviewer"] == "reader2"
    disk = a.path.read_bytes()
    with pytest.raises(TakenOverError, match="took over") as refused:
        a.do(a.edits.add_note("refused"))
    # The refusal names the new holder (read from the lock file, not from the store) and
    # offers only the way out that keeps the reading: a separate file.
    assert refused.value.holder["reviewer"] == "reader2" and "reader2" in str(refused.value)
    assert refused.value.options == ("save_aside",)
    assert a.path.read_bytes() == disk  # the displaced window wrote nothing
    aside = a.resolve_save_aside()  # its unsaved note is kept as a separate file
    assert load_sidecar(aside).reading("reader1").notes[-1].text == "refused"
    b.do(b.edits.add_note("reader2 saves"))
    a.close()  # does not remove reader2's lock
    assert json.loads(lock_path_for(b.path).read_text())["reviewer"] == "reader2"
    b.close()
    assert not lock_path_for(b.path).exists()


def test_lock_of_another_host_counts_as_held_unless_taken_over(scratch, kit):
    rec = kit.make_record(scratch)
    lock = scratch / "rec.marks.json.lock"
    lock.write_text(json.dumps({"pid": 1, "host": "elsewhere.invalid", "reviewer": "reader9"}))
    with pytest.raises(LockedError, match="reader9"):
        MarksStore.open(rec, "reader1")
    with MarksStore.open(rec, "reader1", force_lock=True) as store:  # force_lock = take_over
        assert json.loads(lock.read_text())["host"] == socket.gethostname()
        assert store.took_over.previous["host"] == "elsewhere.invalid"
        assert store.audit[-1].action == "take_over_lock"


def test_a_store_saves_only_under_the_lock(scratch, kit):
    rec = kit.make_record(scratch)
    with pytest.raises(MarksError, match="only under the record's lock"):
        MarksStore.open(rec, "reader1", lock=False)
    with MarksStore.open(rec, "reader1", lock=False, read_only=True) as ro:
        assert not lock_path_for(ro.path).exists()


def test_change_on_disk_is_never_overwritten_and_can_be_merged(scratch, kit):
    rec = kit.make_record(scratch)
    a = MarksStore.open(rec, "reader1")
    a.do(a.edits.move_fiducial("qrs_on", -0.05))
    # Meanwhile the same reader's other window took over, moved T end and was closed.
    with MarksStore.take_over(rec, "reader1") as b:
        b.do(b.edits.move_fiducial("t_off", 0.4))
    on_disk = a.path.read_bytes()
    stack_a = UndoStack(a)
    with pytest.raises(ConflictError) as info:
        stack_a.push(a.edits.move_fiducial("p_on", -0.2))
    assert set(info.value.options) == {"reload", "save_aside", "merge"}
    assert a.path.read_bytes() == on_disk  # not overwritten
    assert a.dirty and a.changed_on_disk()
    a.resolve_merge()
    merged = load_sidecar(a.path)
    r = merged.reading("reader1")
    assert {o.fiducial: o.new_s for o in r.overrides} == {
        "qrs_on": -0.05,
        "t_off": 0.4,
        "p_on": -0.2,
    }
    assert sorted(e.action for e in merged.audit) == sorted(
        ["move_fiducial", "take_over_lock", "move_fiducial", "move_fiducial", "merge"]
    )
    assert not stack_a.can_undo()  # the merge replaced the state from disk
    a.do(a.edits.add_note("after merge"))  # and it holds the lock again
    a.close()
    assert not lock_path_for(a.path).exists()


def test_same_fiducial_changed_on_both_sides_cannot_merge_but_can_be_kept_aside(scratch, kit):
    rec = kit.make_record(scratch)
    a = MarksStore.open(rec, "reader1")
    with MarksStore.take_over(rec, "reader1") as b:
        b.do(b.edits.move_fiducial("t_off", 0.40))
    with pytest.raises(ConflictError):
        a.do(a.edits.move_fiducial("t_off", 0.42))
    disk = a.path.read_bytes()
    with pytest.raises(MergeConflictError) as info:
        a.resolve_merge()
    assert any("t_off" in c for c in info.value.conflicts)
    assert a.path.read_bytes() == disk  # nothing written
    aside = a.resolve_save_aside()
    assert aside.name.startswith("rec.marks.reader1.") and aside.name.endswith(".json")
    kept = load_sidecar(aside)
    assert kept.reading("reader1").overrides[0].new_s == 0.42
    assert a.reading.overrides[0].new_s == 0.40  # continues from the file on disk
    assert a.path.read_bytes() == disk
    a.close()


def test_second_reader_after_a_take_over_merges_cleanly(scratch, kit):
    rec = kit.make_record(scratch)
    a = MarksStore.open(rec, "reader2", role="second")
    with MarksStore.take_over(rec, "reader1") as b:
        b.do(b.edits.move_fiducial("t_off", 0.40))
        b.do(b.edits.sign_off())
    with pytest.raises(ConflictError):
        a.do(a.edits.move_fiducial("t_off", 0.38))
    a.resolve_merge()
    sc = load_sidecar(a.path)
    assert sc.reading("reader1").status == "signed_off"
    assert sc.reading("reader2").overrides[0].new_s == 0.38
    assert sc.reading("reader2").blinded
    a.close()


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


def test_fifos_named_like_a_lock_or_a_sidecar_never_block(scratch, kit):
    rec = kit.make_record(scratch)
    lock = scratch / "rec.marks.json.lock"
    os.mkfifo(lock)
    with MarksStore.open(rec, "reader1") as store:  # the FIFO is replaced, never opened
        store.do(store.edits.add_note("saved"))
    lock.unlink(missing_ok=True)
    side = scratch / "rec.marks.json"
    side.rename(scratch / "kept.json")
    os.mkfifo(side)
    with pytest.raises(UnreadableSidecarError, match="FIFO"):
        MarksStore.open(rec, "reader1")
    with pytest.raises(UnreadableSidecarError, match="FIFO"):
        load_sidecar(side)


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


def test_stale_lock_is_removed_on_request_a_live_one_never(scratch, kit, live_child):
    side = scratch / "rec.marks.json"
    lock = lock_path_for(side)
    here = {"host": socket.gethostname(), "boot": boot_id()}
    lock.write_text(json.dumps({**here, "pid": 2**22 + 4321}))  # above Linux's pid_max
    assert remove_if_stale(side) and not lock.exists()
    started = process_start(live_child.pid)
    lock.write_text(json.dumps({**here, "pid": live_child.pid, "started": started}))
    assert not remove_if_stale(side) and lock.exists()
    assert not remove_if_stale(scratch / "none.marks.json")


# Two processes save to one record as fast as they can, either each opening, editing and
# closing in turn, or each taking the lock over from the other whenever a save is refused.
# Every save a store acknowledged (returned without an error) must be in the final file.
_WRITER = textwrap.dedent(
    """
    import json, sys, time
    from pathlib import Path
    import numpy as np
    from reviewapp.core.marks import ConflictError, LockedError, MarksStore
    from reviewapp.core.record import record_from_array
    mode, folder, n, tag = sys.argv[1], Path(sys.argv[2]), int(sys.argv[3]), sys.argv[4]
    rec = record_from_array(np.zeros((100, 1), np.float32), 500.0, ["I"], name="rec",
                            source_path=folder / "rec.csv")
    acked = []
    def grab():
        while True:
            try:
                return MarksStore.take_over(rec, "reader1")
            except ConflictError:
                pass  # the other process took it over again first
    if mode == "turns":
        for i in range(n):
            while True:
                try:
                    with MarksStore.open(rec, "reader1") as store:
                        store.do(store.edits.add_note(f"{tag}-{i}"))
                    acked.append(f"{tag}-{i}")
                    break
                except LockedError:
                    time.sleep(0.001)
    else:
        store = grab()
        for i in range(n):
            try:
                store.do(store.edits.add_note(f"{tag}-{i}"))
                acked.append(f"{tag}-{i}")
            except ConflictError:
                store.close()
                store = grab()
        store.close()
    print(json.dumps(acked))
    """
)


@pytest.mark.parametrize("mode", ["turns", "take_over"])
def test_two_processes_saving_at_once_lose_no_acknowledged_save(scratch, mode):
    (scratch / "rec.csv").write_bytes(b"demo signal file\n")
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    cmd = [sys.executable, "-c", _WRITER, mode, str(scratch), "30"]
    procs = [
        subprocess.Popen([*cmd, tag], stdout=subprocess.PIPE, text=True, env=env)
        for tag in ("a", "b")
    ]
    acked = []
    for p in procs:
        out, _ = p.communicate(timeout=120)
        assert p.returncode == 0
        acked += json.loads(out)
    notes = {n.text for n in load_sidecar(scratch / "rec.marks.json").reading("reader1").notes}
    assert len(acked) >= 30  # both made progress
    assert set(acked) <= notes, sorted(set(acked) - notes)
    assert not (scratch / "rec.marks.json.lock").exists()
