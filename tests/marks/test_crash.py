"""Kill a writer at random instants; every sidecar left behind must parse and hold either the
state before or the state after the edit that was being saved.

One forked child opens the store (taking over the dead predecessor's lock) and saves edit
after edit in a loop, announcing on a pipe ``B k`` before edit k and ``D k <sha256>`` once it
is on disk. The parent SIGKILLs it after a random delay, checks the files, and forks the next.
Forking (rather than starting interpreters) keeps hundreds of kills within seconds.
"""

from __future__ import annotations

import gc
import hashlib
import os
import random
import signal
import time

import pytest

from reviewapp.core.marks import MarksStore, backup_path_for, load_sidecar, record_identity

KILLS = 200
TIME_CAP_S = 60.0
ROUNDS_PER_FILE = 25  # a new sidecar now and then keeps the audit trail (and saves) small

pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(not hasattr(os, "fork"), reason="needs os.fork (POSIX)"),
]


def _child(rec, path, wfd: int) -> None:
    gc.disable()  # a collection would touch (and so copy) every page inherited from pytest
    try:
        store = MarksStore.open(rec, "writer", path=path)
        r = store.reading.override(("representative", None, None, "t_off"))
        k = 0 if r is None else round(r.new_s * rec.fs_hz)
        while True:
            k += 1
            os.write(wfd, f"B {k}\n".encode())
            store.do(store.edits.move_fiducial("t_off", k / rec.fs_hz))
            digest = hashlib.sha256(path.read_bytes()).hexdigest()
            os.write(wfd, f"D {k} {digest}\n".encode())
    finally:
        os._exit(0)


def _read_all(rfd: int) -> list[str]:
    chunks = []
    while chunk := os.read(rfd, 65536):
        chunks.append(chunk)
    return b"".join(chunks).decode().splitlines()


def _state(path, ident, fs):
    sc = load_sidecar(path, ident)  # parses, validates, right record
    r = sc.reading("writer")
    ov = None if r is None else r.override(("representative", None, None, "t_off"))
    k = 0 if ov is None else round(ov.new_s * fs)
    return k, len(sc.audit)


def test_sigkill_at_random_moments_never_leaves_a_torn_sidecar(scratch, kit):
    rng = random.Random(20261202)
    rec = kit.make_record(scratch)
    ident = record_identity(rec)
    fs = rec.fs_hz
    # Warm up once in the parent (schema validator built, modules loaded): forked children
    # inherit it, so each starts saving within a millisecond or two.
    with MarksStore.open(rec, "writer", path=scratch / "warmup.marks.json") as warm:
        warm.do(warm.edits.move_fiducial("t_off", 0.1))
    gc.collect()
    gc.freeze()  # keep the parent's objects out of the children's collections (copy-on-write)
    kills = mid_save = saves = after_rename = 0
    t0 = time.monotonic()
    path = None
    while kills < KILLS and time.monotonic() - t0 < TIME_CAP_S:
        if kills % ROUNDS_PER_FILE == 0:
            path = scratch / f"rec{kills // ROUNDS_PER_FILE}.marks.json"
            known_k, known_hash = 0, None
        before = path.read_bytes() if path.exists() else None
        rfd, wfd = os.pipe()
        pid = os.fork()
        if pid == 0:  # pragma: no cover - child
            os.close(rfd)
            _child(rec, path, wfd)
        os.close(wfd)
        time.sleep(rng.uniform(0.0, 0.06))
        os.kill(pid, signal.SIGKILL)
        os.waitpid(pid, 0)
        lines = _read_all(rfd)
        os.close(rfd)
        kills += 1
        done = [ln.split() for ln in lines if ln.startswith("D ")]
        begun = [int(ln.split()[1]) for ln in lines if ln.startswith("B ")]
        saves += len(done)
        if done:
            known_k, known_hash = int(done[-1][1]), done[-1][2]
        elif before is not None:
            known_hash = hashlib.sha256(before).hexdigest()
        in_flight = begun[-1] if begun and begun[-1] > known_k else None
        if not path.exists():
            assert known_k == 0 and known_hash is None and (in_flight in (None, 1))
            continue
        data = path.read_bytes()
        k, n_audit = _state(path, ident, fs)
        assert n_audit == k  # one audit event per edit: the trail is whole, too
        if hashlib.sha256(data).hexdigest() == known_hash:
            assert k == known_k  # the state before the interrupted edit
        else:
            # only possible if the kill hit the save of edit known_k + 1 after its rename
            assert in_flight == known_k + 1, (kills, k, known_k, begun[-3:])
            assert k == in_flight  # the state after it, complete and valid
            known_k, known_hash = k, hashlib.sha256(data).hexdigest()
            after_rename += 1
        if in_flight is not None:
            mid_save += 1
        bak = backup_path_for(path)
        if bak.exists():
            kb, _ = _state(bak, ident, fs)
            assert kb in (known_k - 1, known_k - 2, known_k)  # an earlier complete version
    print(f"kills={kills} saves={saves} mid_save={mid_save} after_rename={after_rename}")
    gc.unfreeze()
    assert kills >= KILLS, f"only {kills} kills in {TIME_CAP_S} s"
    # The children really wrote, and many kills landed inside a save (between B and D); the
    # exact counts depend on machine load, so only loose floors are checked.
    assert saves >= KILLS // 10, saves
    assert mid_save >= KILLS // 10, mid_save
    assert after_rename > 0, after_rename  # some kills hit between the rename and "D"
    # A last open cleans the dead writers' temporary files and takes over their lock.
    with MarksStore.open(rec, "writer", path=path) as store:
        assert store.reading.override(("representative", None, None, "t_off")) is not None
    leftovers = [p.name for p in scratch.iterdir() if ".tmp-" in p.name and path.name in p.name]
    assert leftovers == []
