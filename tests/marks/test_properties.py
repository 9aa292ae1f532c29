"""Property tests: any edit sequence round-trips through save and load, and undoing every
edit gives back the reading it started from (while the audit trail only grows)."""

from __future__ import annotations

import shutil

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from reviewapp.core.fiducials import FIDUCIALS
from reviewapp.core.marks import MarksStore, UndoStack, load_sidecar, record_identity

times = st.floats(min_value=-1.0, max_value=4.0, allow_nan=False)
texts = st.text(max_size=40)
index = st.integers(min_value=0, max_value=50)

ops = st.one_of(
    st.tuples(
        st.just("move"),
        st.sampled_from(FIDUCIALS),
        st.one_of(st.none(), times),
        st.sampled_from(["representative", "beat"]),
        st.sampled_from([0.6, 1.4, 2.2]),
        st.sampled_from([None, "I", "II"]),
    ),
    st.tuples(st.just("reset"), index),
    st.tuples(st.just("add_caliper"), st.sampled_from(["time", "amplitude"]), times, times, texts),
    st.tuples(st.just("move_caliper"), index, times, st.floats(-5, 5, allow_nan=False)),
    st.tuples(st.just("delete_caliper"), index),
    st.tuples(st.just("add_note"), texts),
    st.tuples(st.just("edit_note"), index, texts),
    st.tuples(st.just("delete_note"), index),
    st.tuples(st.just("status"), st.sampled_from(["unread", "in_progress"])),
    st.tuples(st.just("sign_off")),
)


def make_command(store: MarksStore, op: tuple):
    """The command for ``op`` against the store's current reading, or None if not applicable."""
    e, r = store.edits, store.reading
    kind = op[0]
    if kind == "move":
        _, fid, value, scope, beat, lead = op
        return e.move_fiducial(fid, value, scope=scope, beat_r_s=beat, lead=lead)
    if kind == "reset":
        if not r.overrides:
            return None
        ov = r.overrides[op[1] % len(r.overrides)]
        return e.reset_fiducial(ov.fiducial, scope=ov.scope, beat_r_s=ov.beat_r_s, lead=ov.lead)
    if kind == "add_caliper":
        return e.add_caliper(op[1], op[2], op[3], v2_mv=1.0, label=op[4])
    if kind in ("move_caliper", "delete_caliper"):
        if not r.calipers:
            return None
        cid = r.calipers[op[1] % len(r.calipers)].id
        if kind == "delete_caliper":
            return e.delete_caliper(cid)
        return e.move_caliper(cid, t2_s=op[2], v1_mv=op[3])
    if kind == "add_note":
        return e.add_note(op[1])
    if kind in ("edit_note", "delete_note"):
        if not r.notes:
            return None
        nid = r.notes[op[1] % len(r.notes)].id
        return e.edit_note(nid, op[2]) if kind == "edit_note" else e.delete_note(nid)
    if kind == "status":
        return e.set_status(op[1])
    if kind == "sign_off":
        return None if r.status == "signed_off" else e.sign_off()
    raise AssertionError(op)


@settings(
    max_examples=60,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)
@given(prefix=st.lists(ops, max_size=5), edits=st.lists(ops, min_size=1, max_size=12))
def test_edits_round_trip_and_undo_restores_the_reading(kit, prefix, edits):
    folder = kit.scratch_dir()
    try:
        rec = kit.make_record(folder)
        ident = record_identity(rec)
        with MarksStore.open(rec, "reader1") as store:
            store.set_automatic(kit.make_automatic())
            for op in prefix:  # some earlier work, not on the undo stack
                cmd = make_command(store, op)
                if cmd is not None:
                    store.do(cmd)
            original = store.reading
            n_audit = len(store.audit)
            stack = UndoStack(store)
            for op in edits:
                cmd = make_command(store, op)
                if cmd is None:
                    continue
                stack.push(cmd)
                # every edit is on disk at once, exactly as held in memory
                assert load_sidecar(store.path, ident) == store.sidecar
            n_done = len(stack.history)
            edited = store.reading
            while stack.can_undo():
                stack.undo()
            assert store.reading == original
            assert len(store.audit) >= n_audit + 2 * n_done  # grew: edits and their undos
            assert store.audit[:n_audit] == load_sidecar(store.path).audit[:n_audit]
            assert load_sidecar(store.path, ident) == store.sidecar
            while stack.can_redo():
                stack.redo()
            assert store.reading == edited
        # a new session (fresh process state) reads back the same
        with MarksStore.open(rec, "reader1") as again:
            assert again.reading == edited
    finally:
        shutil.rmtree(folder, ignore_errors=True)
