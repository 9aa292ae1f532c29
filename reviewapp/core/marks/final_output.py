"""The final reading as JSON, CSV columns and text (``reviewapp measure --final``, study table).

JSON: ``reviewapp measure --final --format json`` prints the usual measure object (see
``core/measure/output.py``) computed under the final marks, plus a ``final`` object
(``FINAL_JSON_SCHEMA``):

- ``status``: "adjudicated" | "signed_off" | "in_progress" | "unread"; ``basis``: which
  readings the final marks come from, in words; ``precedence``: the rule, in one line.
- ``readers``: ``[{reviewer, role, status, signed_off_at, n_overrides}]``.
- ``values``: ``{name: {value, unit, automatic, source}}`` for every name in
  ``final.VALUE_NAMES``; ``source`` is ``{kind ("automatic" | "reader" | "adjudicated"),
  engine_version, reviewer, role, signed, marks, equal_to, text}``.
- ``flags``: ``{not_signed, readers_differ, no_adjudication}``; ``differences``: the intervals
  two signed readers differ on (``{item, reviewer_a, reviewer_b, a_ms, b_ms, tolerance_ms,
  text}``); ``tolerances_ms`` and ``tolerance_source``.
- ``engine_version``; ``notes``: e.g. an unsigned adjudication that was not applied.
- ``statements``: the final interpretation, ``[{code, text, category, source}]`` (``source``
  as for values: automatic, the reader's, or adjudicated with ``equal_to``).

CSV: the measure columns (final values), then for each value ``<name>_source`` and
``auto_<name>``, then ``status``, ``readers``, ``basis``, ``flag_not_signed``,
``flag_readers_differ``, ``flag_no_adjudication``, ``differences``, ``final_statements``
(texts joined by "; ") and ``final_statements_source``.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable, Mapping
from typing import Any

from reviewapp.core.marks.final import (
    TOLERANCE_SOURCE,
    VALUE_MARKS,
    VALUE_NAMES,
    FinalReading,
)

PRECEDENCE = (
    "adjudicated (signed) > signed reading (first reader before second) > reading in "
    "progress > automatic; values never averaged between readers"
)

_num = {"type": ["number", "null"]}
_source = {
    "type": "object",
    "required": ["kind", "engine_version", "reviewer", "role", "signed", "text"],
    "properties": {
        "kind": {"enum": ["automatic", "reader", "adjudicated"]},
        "engine_version": {"type": "string"},
        "reviewer": {"type": ["string", "null"]},
        "role": {"type": ["string", "null"]},
        "signed": {"type": "boolean"},
        "marks": {"type": "array", "items": {"type": "string"}},
        "equal_to": {"type": "array", "items": {"type": "string"}},
        "text": {"type": "string"},
    },
}
FINAL_JSON_SCHEMA: dict[str, Any] = {
    "$schema": "https://json-schema.org/draft/2020-12/schema",
    "title": "reviewapp final reading (the 'final' object of measure --final)",
    "type": "object",
    "required": ["status", "basis", "readers", "values", "flags", "differences"],
    "properties": {
        "status": {"enum": ["adjudicated", "signed_off", "in_progress", "unread"]},
        "basis": {"type": "string"},
        "precedence": {"type": "string"},
        "readers": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["reviewer", "role", "status"],
                "properties": {
                    "reviewer": {"type": "string"},
                    "role": {"type": "string"},
                    "status": {"type": "string"},
                    "signed_off_at": {"type": ["string", "null"]},
                    "n_overrides": {"type": "integer"},
                },
            },
        },
        "values": {
            "type": "object",
            "required": list(VALUE_NAMES),
            "additionalProperties": {
                "type": "object",
                "required": ["value", "unit", "automatic", "source"],
                "properties": {
                    "value": _num,
                    "unit": {"type": "string"},
                    "automatic": _num,
                    "source": _source,
                },
            },
        },
        "flags": {
            "type": "object",
            "required": ["not_signed", "readers_differ", "no_adjudication"],
            "properties": {
                k: {"type": "boolean"} for k in ("not_signed", "readers_differ", "no_adjudication")
            },
        },
        "differences": {"type": "array", "items": {"type": "object"}},
        "tolerances_ms": {"type": "object", "additionalProperties": {"type": "number"}},
        "tolerance_source": {"type": "string"},
        "engine_version": {"type": "string"},
        "notes": {"type": "array", "items": {"type": "string"}},
        "statements": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["code", "text", "category", "source"],
                "properties": {
                    "code": {"type": "string"},
                    "text": {"type": "string"},
                    "category": {"type": "string"},
                    "source": _source,
                },
            },
        },
    },
}


def _r(x: float | None, nd: int = 4) -> float | None:
    return None if x is None else round(float(x), nd) + 0.0


def final_to_dict(final: FinalReading) -> dict[str, Any]:
    """The ``final`` object (see the module docstring)."""
    return {
        "status": final.status,
        "basis": final.basis,
        "precedence": PRECEDENCE,
        "readers": [
            {
                "reviewer": r.reviewer,
                "role": r.role,
                "status": r.status,
                "signed_off_at": r.signed_off_at,
                "n_overrides": r.n_overrides,
            }
            for r in final.readers
        ],
        "values": {
            v.name: {
                "value": _r(v.value),
                "unit": v.unit,
                "automatic": _r(v.automatic),
                "source": v.source.to_dict(),
            }
            for v in final.values
        },
        "flags": {
            "not_signed": final.not_signed,
            "readers_differ": final.readers_differ,
            "no_adjudication": final.no_adjudication,
        },
        "differences": [
            {
                "item": d.item,
                "reviewer_a": d.reviewer_a,
                "reviewer_b": d.reviewer_b,
                "a_ms": _r(d.a_ms),
                "b_ms": _r(d.b_ms),
                "tolerance_ms": d.tolerance_ms,
                "text": d.text,
            }
            for d in final.differences
        ],
        "tolerances_ms": dict(final.tolerances_ms),
        "tolerance_source": TOLERANCE_SOURCE,
        "engine_version": final.engine_version,
        "notes": list(final.notes),
        "statements": [
            {"code": x.code, "text": x.text, "category": x.category, "source": x.source.to_dict()}
            for x in final.statements
        ],
    }


def _yes(flag: bool) -> str:
    return "yes" if flag else ""


def readers_text(final_d: Mapping[str, Any]) -> str:
    return "; ".join(
        f"{r['reviewer']} ({r['role']}, {r['status']})" for r in final_d.get("readers", ())
    )


FLAG_COLUMNS: tuple[str, ...] = (
    "flag_not_signed",
    "flag_readers_differ",
    "flag_no_adjudication",
    "differences",
)
PROVENANCE_COLUMNS: tuple[str, ...] = (
    *(c for n in VALUE_NAMES for c in (f"{n}_source", f"auto_{n}")),
    "status",
    "readers",
    "basis",
    *FLAG_COLUMNS,
    "final_statements",
    "final_statements_source",
)


def provenance_columns(final_d: Mapping[str, Any] | None) -> dict[str, Any]:
    """The provenance columns of one record (all empty for a record that failed)."""
    row: dict[str, Any] = dict.fromkeys(PROVENANCE_COLUMNS, "")
    if not final_d:
        return row
    for name, v in final_d["values"].items():
        row[f"{name}_source"] = v["source"]["text"]
        row[f"auto_{name}"] = v["automatic"]
    flags = final_d["flags"]
    row.update(
        status=final_d["status"],
        readers=readers_text(final_d),
        basis=final_d["basis"],
        flag_not_signed=_yes(flags["not_signed"]),
        flag_readers_differ=_yes(flags["readers_differ"]),
        flag_no_adjudication=_yes(flags["no_adjudication"]),
        differences="; ".join(d["text"] for d in final_d["differences"]),
    )
    stmts = final_d.get("statements") or []
    row["final_statements"] = "; ".join(x["text"] for x in stmts)
    row["final_statements_source"] = "; ".join(dict.fromkeys(x["source"]["text"] for x in stmts))
    return row


def final_csv_text(results: Iterable[Mapping[str, Any]]) -> str:
    """``measure --final --format csv``: the measure columns, then the provenance columns."""
    from reviewapp.core.measure.output import CSV_COLUMNS, csv_row

    columns = (*CSV_COLUMNS, *PROVENANCE_COLUMNS)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(columns)
    for d in results:
        row = {**csv_row(d), **provenance_columns(d.get("final"))}
        w.writerow(["" if row[c] is None else row[c] for c in columns])
    return buf.getvalue()


def _cell(v: float | None, unit: str) -> str:
    if v is None:
        return "-"
    return f"{v:+.0f} {unit}" if unit == "deg" else f"{v:.0f} {unit}"


def final_table_text(final_d: Mapping[str, Any]) -> str:
    """The final-reading block printed above the measure table."""
    flags = final_d["flags"]
    raised = [
        text
        for key, text in (
            ("not_signed", "not signed"),
            ("readers_differ", "readers differ beyond tolerance"),
            ("no_adjudication", "no adjudication"),
        )
        if flags[key]
    ]
    lines = [
        f"Final reading: {final_d['basis']} (status {final_d['status']})",
        f"Readers: {readers_text(final_d) or 'none'}",
        f"Flags: {', '.join(raised) if raised else 'none'}",
        "",
        f"{'Quantity':<20}{'Final':>10}{'Automatic':>11}  Source",
    ]
    for name, unit, _deps in VALUE_MARKS:
        v = final_d["values"][name]
        lines.append(
            f"{name:<20}{_cell(v['value'], unit):>10}{_cell(v['automatic'], unit):>11}  "
            f"{v['source']['text']}"
        )
    for d in final_d["differences"]:
        lines.append(f"Readers differ: {d['text']}")
    if final_d["differences"]:
        lines.append(f"Tolerance: {final_d['tolerance_source']}")
    lines += [f"Note: {n}" for n in final_d.get("notes", ())]
    stmts = final_d.get("statements") or []
    if stmts:
        lines.append("Final interpretation:")
        lines += [f"  - {x['text']}  [{x['source']['text']}]" for x in stmts]
    lines.append(f"Precedence: {PRECEDENCE}")
    return "\n".join(lines) + "\n"
