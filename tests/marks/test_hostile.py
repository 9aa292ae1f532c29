"""Corrupt, hostile, future-version and foreign sidecars: a MarksError naming the file, the
file untouched, and a fresh reading possible beside it (nothing deleted)."""

from __future__ import annotations

import json
import time

import pytest

from reviewapp.core.errors import MarksError
from reviewapp.core.marks import (
    MAX_SIDECAR_BYTES,
    ForeignSidecarError,
    FutureVersionError,
    MarksStore,
    UnreadableSidecarError,
    load_sidecar,
)


def _valid_doc(scratch, kit) -> dict:
    rec = kit.make_record(scratch)
    with MarksStore.open(rec, "reader1") as store:
        store.set_automatic(kit.make_automatic())
        store.do(store.edits.move_fiducial("qrs_on", -0.05))
        store.do(store.edits.add_note("note"))
        store.do(store.edits.add_caliper("amplitude", 0.5, 0.5, v1_mv=0.0, v2_mv=1.2, lead="I"))
        return json.loads(store.path.read_text("utf-8"))


def _variants(doc: dict) -> dict[str, bytes]:
    def mutated(fn) -> bytes:
        d = json.loads(json.dumps(doc))
        fn(d)
        return json.dumps(d).encode()

    reading = lambda d: d["readings"]["reader1"]  # noqa: E731
    return {
        "empty": b"",
        "truncated": json.dumps(doc).encode()[:-40],
        "not utf-8": b'{"format": "\xff\xfe"}',
        "binary junk": bytes(range(256)) * 4,
        "a list": b"[1, 2, 3]",
        "foreign json": b'{"hello": "world"}',
        "deep nesting": b"[" * 100_000 + b"]" * 100_000,
        "deep nesting in audit": mutated(
            lambda d: d["audit"][0].__setitem__("new", json.loads("[" * 40 + "]" * 40))
        ),
        "NaN": json.dumps(doc).replace('"new_s": -0.05', '"new_s": NaN').encode(),
        "Infinity": json.dumps(doc).replace('"new_s": -0.05', '"new_s": -Infinity').encode(),
        "huge exponent": json.dumps(doc).replace('"new_s": -0.05', '"new_s": 1e999').encode(),
        "huge integer": json.dumps(doc)
        .replace('"new_s": -0.05', '"new_s": ' + "9" * 5000)
        .encode(),
        "duplicate key": b'{"format": "reviewapp-marks", "format": "x"}',
        "wrong type: fs as string": mutated(lambda d: d["record"].__setitem__("fs_hz", "500")),
        "wrong type: overrides object": mutated(lambda d: reading(d).__setitem__("overrides", {})),
        "wrong type: bool as time": mutated(
            lambda d: reading(d)["overrides"][0].__setitem__("new_s", True)
        ),
        "unknown fiducial": mutated(
            lambda d: reading(d)["overrides"][0].__setitem__("fiducial", "u_off")
        ),
        "huge note": mutated(lambda d: reading(d)["notes"][0].__setitem__("text", "x" * 200_000)),
        "huge reviewer id": mutated(lambda d: d["readings"].__setitem__("r" * 10_000, reading(d))),
        "reading under wrong key": mutated(
            lambda d: d["readings"].__setitem__("reader2", reading(d))
        ),
        "extra field": mutated(lambda d: d.__setitem__("surprise", 1)),
        "missing audit": mutated(lambda d: d.pop("audit")),
        "bad timestamp": mutated(lambda d: d["audit"][0].__setitem__("at", "yesterday")),
        "signed off without signer": mutated(
            lambda d: reading(d).__setitem__("status", "signed_off")
        ),
        "beat override without beat": mutated(
            lambda d: reading(d)["overrides"][0].__setitem__("scope", "beat")
        ),
        "path in reviewer id": mutated(lambda d: reading(d).__setitem__("reviewer", "../x")),
    }


def test_every_hostile_variant_is_a_marks_error_naming_the_file_and_left_untouched(scratch, kit):
    doc = _valid_doc(scratch, kit)
    rec = kit.make_record(scratch)
    path = scratch / "rec.marks.json"
    for label, data in _variants(doc).items():
        path.write_bytes(data)
        t0 = time.monotonic()
        with pytest.raises(UnreadableSidecarError) as info:
            MarksStore.open(rec, "reader1")
        elapsed = time.monotonic() - t0
        assert info.value.path == path, label
        assert str(path) in str(info.value), label
        assert path.read_bytes() == data, label  # untouched
        assert elapsed < 20, label  # never a hang (generous: shared 2-core machine)
        with pytest.raises(MarksError):
            load_sidecar(path)
    assert not (scratch / "rec.marks.json.lock").exists()  # every failed open released it


def test_giant_file_is_refused_without_reading_it(scratch, kit):
    rec = kit.make_record(scratch)
    path = scratch / "rec.marks.json"
    with open(path, "wb") as fh:
        fh.truncate(MAX_SIDECAR_BYTES + 1)  # sparse: cheap to make
    with pytest.raises(UnreadableSidecarError, match="MB"):
        MarksStore.open(rec, "reader1")


def test_future_version_says_so(scratch, kit):
    doc = _valid_doc(scratch, kit)
    doc["schema_version"] = 7
    doc["new_thing"] = {"whatever": []}
    path = scratch / "rec.marks.json"
    path.write_text(json.dumps(doc))
    with pytest.raises(FutureVersionError, match=r"schema version 7.*newer"):
        MarksStore.open(kit.make_record(scratch), "reader1")


def test_sidecar_of_a_changed_record_is_refused(scratch, kit):
    rec = kit.make_record(scratch, content=b"original signal bytes")
    with MarksStore.open(rec, "reader1") as store:
        store.do(store.edits.move_fiducial("qrs_on", -0.05))
    (scratch / "rec.csv").write_bytes(b"original signal bytez")  # one byte changed
    changed = kit.make_record(scratch)
    with pytest.raises(ForeignSidecarError, match="different record") as info:
        MarksStore.open(changed, "reader1")
    assert info.value.expected_fingerprint != info.value.found_fingerprint


def test_fresh_reading_beside_an_unusable_file_moves_it_aside_and_deletes_nothing(scratch, kit):
    doc = _valid_doc(scratch, kit)
    rec = kit.make_record(scratch)
    path = scratch / "rec.marks.json"
    bad = b'{"format": "reviewapp-marks", "schema_version": 1, "record": '
    path.write_bytes(bad)
    backup = (scratch / "rec.marks.json.bak").read_bytes()
    with MarksStore.open(rec, "reader1", fresh_if_unreadable=True) as store:
        moved = store.set_aside_paths
        assert [p.read_bytes() for p in moved] == [bad, backup]
        assert all(".set-aside-" in p.name for p in moved)
        assert store.reading.overrides == ()
        store.do(store.edits.add_note("fresh start"))
        store.do(store.edits.add_note("second save makes a new .bak"))
    assert load_sidecar(path).reading("reader1").notes[0].text == "fresh start"
    assert [p.read_bytes() for p in moved] == [bad, backup]  # still there, unchanged
    assert doc["format"] == "reviewapp-marks"


def test_unwritable_values_are_refused_before_they_touch_the_reading(scratch, kit):
    rec = kit.make_record(scratch)
    with MarksStore.open(rec, "reader1") as store:
        store.do(store.edits.add_note("good"))
        before = store.sidecar
        for cmd in (
            store.edits.add_note("bad \ud800 text"),  # lone surrogate: not encodable
            store.edits.add_note("x" * 20_001),  # above the schema's note cap
            store.edits.add_caliper("time", 0.1, 0.2, label="y" * 201),
        ):
            with pytest.raises(MarksError):
                store.do(cmd)
            assert store.sidecar == before and not store.dirty
        store.do(store.edits.add_note("still saving"))
        assert load_sidecar(store.path).reading("reader1").notes[-1].text == "still saving"
