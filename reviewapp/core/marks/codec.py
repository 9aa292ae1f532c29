"""Bytes <-> validated JSON for sidecars, safe against hostile files.

Every failure becomes an ``UnreadableSidecarError`` naming the file: size above
``MAX_SIDECAR_BYTES``, not UTF-8, nesting deeper than ``MAX_DEPTH``, NaN/Infinity or numbers
too large for a float, duplicate keys, invalid JSON, a future schema version, or anything the
JSON Schema of its version rejects. Output is diff-friendly: sorted keys, indent 2.

Versions: a file is checked against the schema of the version it declares
(``sidecar-1.schema.json`` for version 1, ``sidecar.schema.json`` for the current one), then
migrated to the current version (``migrate_document``: version 1 -> 2 gives every reading an
empty statement list, every other value as it was). Only the current version is written, so
a version-1 file opens, keeps every mark and is saved as version 2 with its next change.
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Callable, Iterable
from functools import cache
from importlib import resources
from pathlib import Path
from re import error as re_error
from typing import Any

from reviewapp.core.errors import MarksError
from reviewapp.core.marks.errors import FutureVersionError, UnreadableSidecarError
from reviewapp.core.marks.model import (
    FORMAT_NAME,
    READABLE_VERSIONS,
    SCHEMA_VERSION,
    AuditEvent,
    AutomaticMarks,
    Sidecar,
    automatic_to_json,
    event_to_json,
    sidecar_from_json,
    sidecar_to_json,
)

MAX_SIDECAR_BYTES = 50 * 1024 * 1024
MAX_DEPTH = 32
SCHEMA_FILE = "sidecar.schema.json"
SCHEMA_FILES: dict[int, str] = {1: "sidecar-1.schema.json", SCHEMA_VERSION: SCHEMA_FILE}


@cache
def schema(version: int = SCHEMA_VERSION) -> dict[str, Any]:
    """The JSON Schema of a sidecar version (shipped as package data; default: current)."""
    name = SCHEMA_FILES[version]
    text = resources.files("reviewapp.core.marks").joinpath(name).read_text("utf-8")
    return json.loads(text)


def migrate_document(doc: dict[str, Any]) -> dict[str, Any]:
    """A schema-valid document of an older version, as the current version (a new dict;
    ``doc`` is not changed). Version 1 -> 2: every reading gets ``"statements": []``.

    >>> old = {"schema_version": 1, "readings": {"r1": {"notes": []}}, "audit": []}
    >>> new = migrate_document(old)
    >>> new["schema_version"], new["readings"]["r1"]["statements"]
    (2, [])
    >>> "statements" in old["readings"]["r1"]
    False
    """
    version = doc.get("schema_version")
    if version == SCHEMA_VERSION:
        return doc
    if version != 1:
        raise ValueError(f"no migration from schema version {version!r}")
    readings = {k: {**r, "statements": []} for k, r in doc["readings"].items()}
    return {**doc, "schema_version": 2, "readings": readings}


@cache
def _validator(version: int = SCHEMA_VERSION) -> Any:
    """The schema's validator, built once per process (format checks off, as before).

    It checks the schema with ``$defs`` references written in place: the same constraints,
    but without a reference lookup for each of the hundreds of values in a sidecar, which
    made up about half of the validation time.
    """
    import jsonschema

    return jsonschema.Draft202012Validator(inline_refs(schema(version)))


def inline_refs(doc: dict[str, Any]) -> dict[str, Any]:
    """``doc`` with every ``{"$ref": "#/$defs/<name>"}`` replaced by that definition.

    Only plain references to the schema's own ``$defs`` are inlined (what this schema uses);
    a reference with sibling keywords keeps them beside the definition in an ``allOf``.
    Anything else (other reference forms, a cycle) returns ``doc`` unchanged.
    """
    defs = doc.get("$defs", {})

    def walk(node: Any, seen: tuple[str, ...]) -> Any:
        if isinstance(node, list):
            return [walk(x, seen) for x in node]
        if not isinstance(node, dict):
            return node
        ref = node.get("$ref")
        if ref is None:
            return {k: walk(v, seen) for k, v in node.items() if k != "$defs"}
        name = ref.removeprefix("#/$defs/") if isinstance(ref, str) else ""
        if not ref.startswith("#/$defs/") or "/" in name or name not in defs or name in seen:
            raise LookupError(ref)
        target = walk(defs[name], (*seen, name))
        rest = {k: walk(v, seen) for k, v in node.items() if k != "$ref"}
        return {**rest, "allOf": [*rest.get("allOf", []), target]} if rest else target

    try:
        flat = walk(doc, ())
    except (LookupError, AttributeError):
        return doc
    # Keep the identifying keywords ($schema picks the draft, $id the base URI).
    return {k: doc[k] for k in ("$schema", "$id") if k in doc} | flat


Check = Callable[[Any], bool]
# Keywords that only annotate: no effect on validity.
_ANNOTATIONS = frozenset({"$schema", "$id", "$defs", "$comment", "title", "description"})
_TYPES: dict[str, Check] = {
    "null": lambda v: v is None,
    "boolean": lambda v: isinstance(v, bool),
    "string": lambda v: isinstance(v, str),
    "object": lambda v: isinstance(v, dict),
    "array": lambda v: isinstance(v, list),
    "number": lambda v: isinstance(v, int | float) and not isinstance(v, bool),
    "integer": lambda v: (
        (isinstance(v, int) and not isinstance(v, bool))
        or (isinstance(v, float) and v.is_integer())
    ),
}


def _json_equal(a: Any, b: Any) -> bool:
    """JSON Schema equality (``const``, ``enum``): true is not 1, 1 is 1.0."""
    if isinstance(a, bool) or isinstance(b, bool):
        return isinstance(a, bool) and isinstance(b, bool) and a is b
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(_json_equal(x, y) for x, y in zip(a, b, strict=True))
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(_json_equal(a[k], b[k]) for k in a)
    if isinstance(a, list | dict | str) or isinstance(b, list | dict | str):
        return type(a) is type(b) and a == b
    return a == b


def _is_number(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool)


def compile_check(node: Any) -> Check:
    """A yes/no validity check of a reference-free schema (``inline_refs``), compiled once.

    Covers the keywords the sidecar schema uses, with JSON Schema 2020-12 meaning; raises
    LookupError on any other keyword. It only ever answers "valid" quickly: a document it
    refuses is checked again by jsonschema, which gives the verdict and the message.
    """
    if node is True or node == {}:
        return lambda v: True
    if node is False:
        return lambda v: False
    if not isinstance(node, dict):
        raise LookupError(f"schema node {node!r}")
    checks: list[Check] = []
    props = node.get("properties", {})
    for key, arg in node.items():
        if key in _ANNOTATIONS:
            continue
        checks.append(_keyword(key, arg, node, props))
    return _all_of(checks)


def _all_of(checks: list[Check]) -> Check:
    """One check passing when every one of ``checks`` passes (plain loops: a generator per
    value made up most of the validation time of a worklist)."""
    if not checks:
        return lambda v: True
    if len(checks) == 1:
        return checks[0]
    if len(checks) == 2:
        first, second = checks
        return lambda v: first(v) and second(v)
    frozen = tuple(checks)

    def check(v: Any) -> bool:
        for c in frozen:
            if not c(v):
                return False
        return True

    return check


# JSON values come from json.loads, so their exact Python types are known: type(v) in a set
# answers "type" without a chain of isinstance calls. bool is not a number here.
_EXACT: dict[str, tuple[type, ...]] = {
    "null": (type(None),),
    "boolean": (bool,),
    "string": (str,),
    "object": (dict,),
    "array": (list,),
    "number": (int, float),
}


def _keyword(key: str, arg: Any, node: dict[str, Any], props: dict[str, Any]) -> Check:
    import re

    if key == "type":
        names = [arg] if isinstance(arg, str) else list(arg)
        if all(n in _EXACT for n in names):
            exact = frozenset(t for n in names for t in _EXACT[n])
            tests = [_TYPES[n] for n in names]
            # Exact JSON types first; a subclass (never from json.loads) takes the full test.
            return lambda v: type(v) in exact or any(t(v) for t in tests)
        tests = [_TYPES[t] for t in names]
        return lambda v: any(t(v) for t in tests)
    if key == "const":
        return lambda v: _json_equal(v, arg)
    if key == "enum":
        return lambda v: any(_json_equal(v, x) for x in arg)
    if key in ("minimum", "maximum", "exclusiveMinimum"):
        # Written out per keyword: this check runs for every number of a sidecar.
        num = (int, float)
        if key == "minimum":
            return lambda v: not isinstance(v, num) or v.__class__ is bool or v >= arg
        if key == "maximum":
            return lambda v: not isinstance(v, num) or v.__class__ is bool or v <= arg
        return lambda v: not isinstance(v, num) or v.__class__ is bool or v > arg
    if key in ("minLength", "maxLength"):
        ok = (lambda n: n >= arg) if key == "minLength" else (lambda n: n <= arg)
        return lambda v: not isinstance(v, str) or ok(len(v))
    if key == "pattern":
        rx = re.compile(arg)
        return lambda v: not isinstance(v, str) or rx.search(v) is not None
    if key == "maxItems":
        return lambda v: not isinstance(v, list) or len(v) <= arg
    if key == "maxProperties":
        return lambda v: not isinstance(v, dict) or len(v) <= arg
    if key == "required":
        return lambda v: not isinstance(v, dict) or all(k in v for k in arg)
    if key == "items":
        item = compile_check(arg)

        def items(v: Any) -> bool:
            if isinstance(v, list):
                for x in v:
                    if not item(x):
                        return False
            return True

        return items
    if key == "properties":
        subs = tuple((k, compile_check(s)) for k, s in arg.items())

        def properties(v: Any) -> bool:
            if isinstance(v, dict):
                for k, c in subs:
                    if k in v and not c(v[k]):
                        return False
            return True

        return properties
    if key == "additionalProperties":
        if "patternProperties" in node:
            raise LookupError("patternProperties")
        extra = compile_check(arg)
        known = frozenset(props)

        def additional(v: Any) -> bool:
            if isinstance(v, dict):
                for k, x in v.items():
                    if k not in known and not extra(x):
                        return False
            return True

        return additional
    if key == "propertyNames":
        name = compile_check(arg)
        return lambda v: not isinstance(v, dict) or all(name(k) for k in v)
    if key == "allOf":
        return _all_of([compile_check(s) for s in arg])
    if key == "if":
        cond = compile_check(arg)
        then = compile_check(node.get("then", True))
        other = compile_check(node.get("else", True))
        return lambda v: then(v) if cond(v) else other(v)
    if key in ("then", "else") and "if" in node:
        return lambda v: True  # applied by "if"
    raise LookupError(f"keyword {key!r}")


@cache
def _fast_check(version: int = SCHEMA_VERSION) -> Check | None:
    """The compiled check of the inlined schema; None if it uses a keyword not covered."""
    try:
        # a "$ref" left in (inlining declined) is an unknown keyword: all goes to jsonschema
        return compile_check(inline_refs(schema(version)))
    except (LookupError, TypeError, re_error):
        return None


def sha256_hex(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def nesting_depth(doc: Any) -> int:
    """Deepest container nesting of parsed JSON (iterative, so it cannot overflow the stack)."""
    deepest = 0
    stack: list[tuple[Any, int]] = [(doc, 1)]
    while stack:
        node, depth = stack.pop()
        children: Iterable[Any]
        if isinstance(node, dict):
            children = node.values()
        elif isinstance(node, list):
            children = node
        else:
            continue
        deepest = max(deepest, depth)
        stack.extend((c, depth + 1) for c in children if isinstance(c, dict | list))
    return deepest


def _reject_constant(name: str) -> Any:
    raise ValueError(f"{name} is not allowed (numbers must be finite)")


def _finite_float(text: str) -> float:
    value = float(text)
    if not math.isfinite(value):
        raise ValueError(f"number {text[:20]} is too large")
    return value


def _no_duplicates(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for k, v in pairs:
        if k in out:
            raise ValueError(f"key {k[:40]!r} appears twice in one object")
        out[k] = v
    return out


def parse_bytes(data: bytes, path: Path | None) -> dict[str, Any]:
    """Parse and validate sidecar bytes into a schema-valid JSON document."""
    if len(data) > MAX_SIDECAR_BYTES:
        raise UnreadableSidecarError(
            f"marks file is {len(data) / 1e6:.0f} MB, above the {MAX_SIDECAR_BYTES // 2**20} MB "
            "limit; it is not a marks file this program wrote",
            path,
        )
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise UnreadableSidecarError(f"marks file is not UTF-8 text ({exc.reason})", path) from None
    try:
        doc = json.loads(
            text,
            parse_constant=_reject_constant,
            parse_float=_finite_float,
            object_pairs_hook=_no_duplicates,
        )
    except RecursionError:
        # CPython's decoder guards its recursion, so absurd nesting fails fast and cleanly.
        raise UnreadableSidecarError(
            f"marks file nests too deeply (limit {MAX_DEPTH} levels); refusing to read it", path
        ) from None
    except ValueError as exc:
        # json.JSONDecodeError is a ValueError; so are over-long integers (int max str digits).
        raise UnreadableSidecarError(f"marks file is not valid JSON: {_short(exc)}", path) from None
    depth = nesting_depth(doc)
    if depth > MAX_DEPTH:
        raise UnreadableSidecarError(
            f"marks file nests {depth} levels deep (limit {MAX_DEPTH}); refusing to read it", path
        )
    return validate_document(doc, path)


def validate_document(doc: Any, path: Path | None) -> dict[str, Any]:
    """Check format, version and the schema of that version; returns the document as the
    current version (``doc`` itself when it is current, else ``migrate_document(doc)``)."""
    if not isinstance(doc, dict):
        raise UnreadableSidecarError("marks file does not hold a JSON object", path)
    if doc.get("format") != FORMAT_NAME:
        raise UnreadableSidecarError(
            f"not a reviewapp marks file (format field is {_short(doc.get('format'))})", path
        )
    raw = doc.get("schema_version")
    version = raw if isinstance(raw, int) and not isinstance(raw, bool) else None
    if version is not None and version > SCHEMA_VERSION:
        raise FutureVersionError(
            f"marks file has schema version {version}, written by a newer reviewapp; this one "
            f"reads up to version {SCHEMA_VERSION}. Open it with the newer version",
            path,
        )
    # Any other value is checked against the current schema, which refuses it by name.
    checked = version if version in READABLE_VERSIONS else SCHEMA_VERSION
    fast = _fast_check(checked)
    try:
        if fast is not None and fast(doc):
            return migrate_document(doc)
    except RecursionError:
        raise UnreadableSidecarError("marks file nests too deeply", path) from None
    from jsonschema.exceptions import best_match

    try:
        error = best_match(_validator(checked).iter_errors(doc))
    except RecursionError:
        raise UnreadableSidecarError("marks file nests too deeply", path) from None
    if error is not None:
        where = "/".join(str(p) for p in error.absolute_path) or "(top level)"
        raise UnreadableSidecarError(
            f"marks file does not match schema version {checked} at {_short(where)}: "
            f"{_short(error.message)}",
            path,
        )
    return migrate_document(doc)


def decode(data: bytes, path: Path | None) -> Sidecar:
    """Sidecar bytes -> ``Sidecar`` values (every failure is an UnreadableSidecarError)."""
    doc = parse_bytes(data, path)
    try:
        return sidecar_from_json(doc)
    except (KeyError, TypeError, ValueError) as exc:
        raise UnreadableSidecarError(
            f"marks file content is inconsistent: {_short(exc)}", path
        ) from None


def encode(sidecar: Sidecar, path: Path | None = None, trusted: Sidecar | None = None) -> bytes:
    """``Sidecar`` -> validated, diff-friendly bytes (sorted keys, indent 2, trailing newline).

    ``trusted``: a sidecar already validated (as loaded, or as last encoded). Audit events it
    shares with ``sidecar`` (the same objects: the trail only grows) and an unchanged
    ``automatic`` are not validated again, and each event's text is rendered once, so a
    save costs about the same however long the trail grows.
    """
    doc = sidecar_to_json(sidecar, with_audit=False)
    n = 0 if trusted is None else _shared_prefix(trusted.audit, sidecar.audit)
    check = {**doc, "audit": [event_to_json(e) for e in sidecar.audit[n:]]}
    if trusted is not None and sidecar.automatic is not None:
        if sidecar.automatic is trusted.automatic:
            check["automatic"] = None
    try:
        validate_document(check, path)
    except UnreadableSidecarError as exc:
        raise MarksError(f"marks not saved, they are not valid: {exc.problem}", path) from None
    try:
        data = (_render(doc, sidecar) + "\n").encode("utf-8")
    except (ValueError, UnicodeEncodeError) as exc:
        raise MarksError(
            f"marks not saved, a value cannot be written: {_short(exc)}", path
        ) from None
    if len(data) > MAX_SIDECAR_BYTES:
        raise MarksError("marks not saved: they would exceed the size limit", path)
    return data


def dumps(doc: Any) -> str:
    """The one text form: sorted keys, indent 2, UTF-8 characters as is, no NaN."""
    return json.dumps(doc, sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False)


# Rendered text of audit events (by event id, with the event object to check identity) and of
# the last automatic marks: the indenting encoder is pure Python, so each is rendered once.
_EVENT_TEXT: dict[str, tuple[AuditEvent, str]] = {}
_AUTO_TEXT: list[tuple[AutomaticMarks, str]] = []
_SENTINEL = "\u0000automatic\u0000"


def _event_text(e: AuditEvent) -> str:
    hit = _EVENT_TEXT.get(e.id)
    if hit is not None and hit[0] is e:
        return hit[1]
    text = _indent(dumps(event_to_json(e)), 4)
    if len(_EVENT_TEXT) > 200_000:
        _EVENT_TEXT.clear()
    _EVENT_TEXT[e.id] = (e, text)
    return text


def _automatic_text(a: AutomaticMarks) -> str:
    if _AUTO_TEXT and _AUTO_TEXT[0][0] is a:
        return _AUTO_TEXT[0][1]
    text = _indent(dumps(automatic_to_json(a)), 2).lstrip()
    _AUTO_TEXT[:] = [(a, text)]
    return text


def _indent(text: str, spaces: int) -> str:
    pad = " " * spaces
    return "\n".join(pad + line for line in text.split("\n"))


def _render(doc: dict[str, Any], sidecar: Sidecar) -> str:
    """Exactly ``dumps(full document)``, assembled from cached pieces."""
    top = {**doc, "audit": []}
    if sidecar.automatic is not None:
        top["automatic"] = _SENTINEL
    text = dumps(top)
    # "audit" sorts first of the top-level keys, "automatic" second, before any user text.
    head = '{\n  "audit": []'
    assert text.startswith(head)
    if sidecar.audit:
        events = ",\n".join(_event_text(e) for e in sidecar.audit)
        text = '{\n  "audit": [\n' + events + "\n  ]" + text[len(head) :]
    if sidecar.automatic is not None:
        marker = '"automatic": ' + json.dumps(_SENTINEL)
        text = text.replace(marker, '"automatic": ' + _automatic_text(sidecar.automatic), 1)
    return text


def _shared_prefix(a: tuple, b: tuple) -> int:
    n = 0
    for x, y in zip(a, b, strict=False):
        if x is not y:
            break
        n += 1
    return n


def _short(value: Any, limit: int = 160) -> str:
    text = str(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."
