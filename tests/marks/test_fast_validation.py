"""The speed-ups of saving must not change what counts as a valid marks file.

Outside reference: the jsonschema library validating against the published schema file
exactly as shipped (``$ref``s and all). The store validates with the references written in
place (``codec.inline_refs``), built once per process; both must give the same verdict, and
the same first error, on real sidecars and on many damaged copies of them.
"""

from __future__ import annotations

import copy
import json
import os
import shutil
from pathlib import Path
from typing import Any

import jsonschema
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from jsonschema.exceptions import best_match

from reviewapp.core.marks import MarksStore, codec, write_automatic
from reviewapp.core.marks.durable import remove_stale_temps_in


def _reference() -> jsonschema.protocols.Validator:
    return jsonschema.Draft202012Validator(codec.schema())


def _verdict(validator: Any, doc: Any) -> tuple[bool, tuple[Any, ...], str] | None:
    err = best_match(validator.iter_errors(doc))
    return None if err is None else (False, tuple(err.absolute_path), err.message)


def _sidecar_doc(folder: Path, kit: Any) -> dict[str, Any]:
    rec = kit.make_record(folder)
    write_automatic(rec, kit.make_automatic("0.1.0"), listing_cache=None)
    with MarksStore.open(rec, "reader1") as store:
        store.do(store.edits.move_fiducial("qrs_on", -0.05))
        store.do(store.edits.add_caliper("time", 0.5, 0.9, lead="II"))
        store.do(store.edits.add_note("note text"))
        store.do(store.edits.sign_off())
        path = store.path
    return json.loads(path.read_text("utf-8"))


def test_inlined_schema_keeps_no_reference_and_every_constraint():
    flat = codec.inline_refs(codec.schema())
    text = json.dumps(flat)
    assert '"$ref"' not in text
    assert flat["$schema"] == codec.schema()["$schema"]
    # a definition without references of its own appears in place, word for word
    flat_text = json.dumps(flat, sort_keys=True)
    for name, definition in codec.schema()["$defs"].items():
        text = json.dumps(definition, sort_keys=True)
        used = f'"#/$defs/{name}"' in json.dumps(codec.schema())
        if used and '"$ref"' not in text:
            assert text in flat_text, name


def test_inline_refs_leaves_schemas_it_cannot_inline_unchanged():
    cyclic = {"$defs": {"a": {"items": {"$ref": "#/$defs/a"}}}, "$ref": "#/$defs/a"}
    external = {"properties": {"x": {"$ref": "other.json#/x"}}}
    assert codec.inline_refs(cyclic) is cyclic
    assert codec.inline_refs(external) is external


def test_real_sidecar_is_valid_for_both(scratch: Path, kit: Any):
    doc = _sidecar_doc(scratch, kit)
    assert doc["automatic"] is not None and doc["readings"]["reader1"]["status"] == "signed_off"
    assert _verdict(_reference(), doc) is None
    assert _verdict(codec._validator(), doc) is None


def _paths(node: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    out = [prefix]
    if isinstance(node, dict):
        for k, v in node.items():
            out += _paths(v, (*prefix, k))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out += _paths(v, (*prefix, i))
    return out


_JSON_VALUES = st.recursive(
    st.none()
    | st.booleans()
    | st.integers(-(10**12), 10**12)
    | st.floats(allow_nan=False, allow_infinity=False)
    | st.text(max_size=8)
    | st.sampled_from(["dominant", "signed_off", "beat", "p_on", "2026-01-01T00:00:00Z", "I"]),
    lambda inner: (
        st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=6), inner, max_size=3)
    ),
    max_leaves=6,
)


_DOCS: list[dict[str, Any]] = []


def _one_sidecar_doc(kit: Any) -> dict[str, Any]:
    if not _DOCS:
        folder = kit.scratch_dir()
        try:
            _DOCS.append(_sidecar_doc(folder, kit))
        finally:
            shutil.rmtree(folder, ignore_errors=True)
    return _DOCS[0]


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_damaged_sidecars_get_the_same_verdict_and_error(kit: Any, data: st.DataObject):
    damaged = copy.deepcopy(_one_sidecar_doc(kit))
    for _ in range(data.draw(st.integers(1, 3))):
        where = data.draw(st.sampled_from(_paths(damaged)[1:]))
        parent = damaged
        for key in where[:-1]:
            parent = parent[key]
        action = data.draw(st.sampled_from(["replace", "delete", "add"]))
        if action == "delete":
            del parent[where[-1]]
        elif action == "add" and isinstance(parent, dict):
            parent[data.draw(st.text(max_size=6))] = data.draw(_JSON_VALUES)
        else:
            parent[where[-1]] = data.draw(_JSON_VALUES)
        if not _paths(damaged)[1:]:
            break
    expected = _verdict(_reference(), damaged)
    assert _verdict(codec._validator(), damaged) == expected
    assert _fast_verdict(damaged) is (expected is None)


def _fast_verdict(doc: Any) -> bool:
    check = codec._fast_check()
    assert check is not None, "the compiled check must cover the shipped schema"
    return check(doc)


# JSON Schema's own edge cases of type and equality (2020-12 core/validation specification):
# true is not 1 for const/enum, 5.0 is an integer, a bool is not a number.
_EDGES = [
    (("schema_version",), True),
    (("schema_version",), 1.0),
    (("record", "n_samples"), 5000.0),
    (("record", "n_samples"), 5000.5),
    (("record", "n_samples"), True),
    (("record", "fs_hz"), False),
    (("record", "fs_hz"), 0),
    (("record", "fingerprint"), "sha256:" + "0" * 63),
    (("readings", "reader1", "blinded"), 1),
    (("readings", "reader1", "signed_off_at"), None),
    (("readings", "reader1", "status"), "in_progress"),
    (("automatic", "beats", 0, "kind"), "Dominant"),
    (("automatic", "beats", 0, "marks_s", "p_on"), None),
    (("automatic", "representative"), None),
    (("automatic",), None),
    (("listing_cache",), {"kind": "k", "engine_version": "1", "record_fingerprint": "x"}),
    (("listing_cache",), {"kind": "k", "engine_version": "", "record_fingerprint": "x"}),
    (("listing_cache",), {"kind": "k", "engine_version": "1", "record_fingerprint": 3}),
    (("listing_cache",), {"kind": "k", "engine_version": "1", "record_fingerprint": "x", "a": [1]}),
]


@pytest.mark.parametrize("where,value", _EDGES)
def test_edge_values_get_the_verdict_of_jsonschema(kit: Any, where, value):
    doc = copy.deepcopy(_one_sidecar_doc(kit))
    parent = doc
    for key in where[:-1]:
        parent = parent[key]
    parent[where[-1]] = value
    expected = _verdict(_reference(), doc)
    assert _fast_verdict(doc) is (expected is None)
    assert _verdict(codec._validator(), doc) == expected


def test_folder_sweep_removes_only_dead_writers_marks_temporaries(scratch: Path):
    dead_pid = 2**22 + 12345  # above Linux's default pid_max (4194304 = 2**22): never alive
    live_pid = os.getppid()
    dead = scratch / f".1.marks.json.tmp-{dead_pid}-ab12cd34"
    dead_lock = scratch / f".1.marks.json.lock.tmp-{dead_pid}-00ff00ff"
    live = scratch / f".2.marks.json.tmp-{live_pid}-ab12cd34"
    other = scratch / f".notes.txt.tmp-{dead_pid}-ab12cd34"  # not a marks file: not ours
    sidecar = scratch / "1.marks.json"
    for p in (dead, dead_lock, live, other, sidecar):
        p.write_bytes(b"x")
    removed = remove_stale_temps_in(scratch)
    assert sorted(removed) == sorted([dead, dead_lock])
    assert not dead.exists() and not dead_lock.exists()
    assert live.exists() and other.exists() and sidecar.exists()


def test_folder_sweep_of_a_missing_folder_is_a_no_op(scratch: Path):
    assert remove_stale_temps_in(scratch / "absent") == []


@pytest.mark.parametrize("sweep", [True, False])
def test_batch_write_without_per_record_sweep_is_the_same_file(scratch: Path, kit: Any, sweep):
    rec = kit.make_record(scratch)
    path = write_automatic(rec, kit.make_automatic("0.1.0"), sweep_temps=sweep)
    doc = json.loads(path.read_text("utf-8"))
    assert _verdict(_reference(), doc) is None
    assert doc["automatic"]["engine_version"] == "0.1.0"
    assert not path.with_name(path.name + ".lock").exists()
