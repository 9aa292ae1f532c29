"""Output of ``reviewapp measure``: JSON (one object per record, JSON Lines), CSV and a table.

JSON schema (``MEASURE_JSON_SCHEMA`` below is the machine-readable form; version 1)
--------------------------------------------------------------------------------------
One object per record; several records give JSON Lines (one object per line). Times are
seconds; absent or unmeasurable values are ``null``, never a guess.

- ``record`` (str): record name; ``path`` (str): the file given.
- ``format`` (str): file format; ``fs_hz`` (number): sampling rate; ``duration_s`` (number).
- ``leads`` (list of str): lead names in signal order.
- ``subject``: ``{"sex": "female"|"male"|null, "age_years": number|null}``, from the file.
- ``beats`` (list): every detected beat, in time order, with its global (all-lead) marks:
  ``r_s``, ``p_on_s``, ``p_off_s``, ``qrs_on_s``, ``qrs_off_s``, ``t_off_s`` (seconds from
  record start), ``kind`` ("dominant" | "premature" | "paced" | "unknown"), and the beat's own
  intervals ``rr_ms`` (from the previous R), ``pr_ms``, ``qrs_ms``, ``qt_ms``. With
  ``--per-lead`` each beat also has ``leads``: ``{lead name: {"p_on_s": ..., ...}}``.
- ``global``: ``rr_ms`` (mean of dominant-to-dominant intervals), ``rr_sd_ms``, ``hr_bpm``,
  ``ventricular_rate_bpm`` (every QRS, premature beats included: (n - 1) intervals over the
  first-to-last R span), ``p_ms``, ``pr_ms``, ``qrs_ms``, ``qt_ms`` (representative beat),
  ``qtc_ms`` ``{"bazett", "fridericia", "framingham", "hodges"}``, ``axis_deg``
  ``{"p", "qrs", "t"}`` (frontal plane, degrees on (-180, 180]).
  ``rhythm_irregular`` (bool): RR varies by more than 10 % (CV) within the dominant beat
  group; RR then averages every interval of that group and QTc is less reliable.
- ``voltages``: ``sokolow_lyon_mv``, ``cornell_mv``.
- ``representative``: ``n_beats_used``, ``marks_s`` (``p_on_s`` ... ``t_off_s``, seconds
  relative to the R of the median beat: negative before R), and ``lead_marks_s``
  ``{lead: {...}}`` (each lead's own marks, same convention). null when there is none.
- ``leads_measurements``: ``{lead: {p_mv, q_mv, r_mv, s_mv, r_prime_mv, t_mv, q_ms, st_j_mv,
  st_j60_mv, st_j80_mv}}``; amplitudes signed mV from the isoelectric level (Q, S <= 0).
- ``findings`` (list): ``{quantity, lead, value, unit, limit, direction ("above"|"below"),
  source, text}``: values outside normal limits, flags for the reader, not diagnoses.
  ``value`` is the value as displayed (1 ms, 0.01 mV); several QTc formulas flagging the same
  way give one ``qtc_ms`` finding.
  Beside the QTc: ``jt_ms`` (QT - QRS), ``jtc_bazett_ms`` (JT / sqrt(RR_s)) and
  ``qt_bogossian_ms`` (QT - 0.485 x QRS; Bogossian et al., Heart Rhythm 2014), for a QRS of
  120 ms or more or a paced rhythm, when the QTc is not comparable with its limits.
- ``unmeasured`` (list): ``{quantity, reason}`` for every value left null.
- ``reasons`` (list): ``{quantity, kind, text}`` for every value left out, in one list: kind
  "not_measured" (null; the same as ``unmeasured``), "not_comparable" (shown, but not to be
  compared with its normal limits, e.g. QTc with QRS >= 120 ms), "gated" (a criterion not
  applied, e.g. the ST and Q infarct criteria with a wide QRS) or "caution" (shown and
  compared, but less reliable, e.g. QTc in an irregular rhythm). ``quantity`` as in
  ``unmeasured`` (a field name, ``<lead>.<field>``, ``<lead>.st``, ...).
- ``statements`` (list): the interpretation statements, in reading order (lead checks,
  rhythm, conduction, axis, chambers, repolarization and QT, ischemia and infarction):
  ``{code, text, category, criteria, source, detail, values, qualifiers}``. ``text`` is the
  trade term as the AHA/ACCF/HRS statement list writes it ("complete right bundle branch
  block"); ``code`` this program's own identifier (``core/interpret/catalogue.py``);
  ``criteria`` the rule applied, in words; ``source`` the published source (authors,
  journal, year); ``detail`` the specifics ("2 of 12 beats"); ``values`` the measured values
  that met the criteria ``{label, value, unit, lead, text}``; ``qualifiers`` how to read the
  statement given the rest of the ECG. Statements not made for a reason appear in
  ``reasons`` (kind "gated", quantity "statement:<group>").
- ``lead_shapes``: ``{lead: {r_peak_time_ms, r_ms, s_ms, r_notched, p_terminal_mv,
  p_terminal_ms, u_mv, t_min_mv, jp_mv, end_qrs, delta_ms, delta_mv}}``: the wave shapes
  the statements use (R-peak time, wave durations, P terminal force, U wave, terminal QRS
  notch or slur, initial slur); ``global.qrs_t_angle_deg``; ``voltages.peguero_mv`` and
  ``voltages.cornell_product_mm_ms``.
- ``notes`` (list of str): remarks from reading and analysis ("no beats found", ...).
- ``engine_version`` (str); ``caution`` (str): the clinical caution, always present.
- A record that cannot be read gives ``{"record", "path", "error", "caution"}`` instead.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Iterable, Mapping
from typing import Any

from reviewapp import CLINICAL_CAUTION
from reviewapp.core.fiducials import FIDUCIALS, WaveMarks
from reviewapp.core.measure.findings import LABELS, displayed
from reviewapp.core.measure.limit_text import (
    direction_of,
    flag_text,
    number_text,
    range_text,
    value_text,
)
from reviewapp.core.measure.limits import normal_range
from reviewapp.core.measure.reason_text import CSV_KINDS, cause, csv_cells
from reviewapp.core.measure.types import LeadMeasurements, NormalRange, ValueReason
from reviewapp.core.record import SubjectFacts

SCHEMA_VERSION = 1
QTC_NAMES = ("bazett", "fridericia", "framingham", "hodges")
WIDE_QRS_KEYS = ("jt_ms", "jtc_bazett_ms", "qt_bogossian_ms")
REASON_KINDS = ("not_measured", "not_comparable", "gated", "caution")
LEAD_FIELDS = (
    "p_mv",
    "q_mv",
    "r_mv",
    "s_mv",
    "r_prime_mv",
    "t_mv",
    "q_ms",
    "st_j_mv",
    "st_j60_mv",
    "st_j80_mv",
)
MARK_KEYS = tuple(f"{n}_s" for n in FIDUCIALS)
SHAPE_FIELDS = (
    "r_peak_time_ms",
    "r_ms",
    "s_ms",
    "r_notched",
    "p_terminal_mv",
    "p_terminal_ms",
    "u_mv",
    "t_min_mv",
    "jp_mv",
    "end_qrs",
    "delta_ms",
    "delta_mv",
)

_num = {"type": ["number", "null"]}
_marks_obj = {
    "type": "object",
    "properties": {k: _num for k in MARK_KEYS},
    "required": list(MARK_KEYS),
}
MEASURE_JSON_SCHEMA: dict[str, Any] = {
    "$schema": "https://json-schema.org/draft/2020-12/schema",
    "title": "reviewapp measure output (one record)",
    "type": "object",
    "oneOf": [
        {"required": ["error"]},
        {
            "required": [
                "record",
                "fs_hz",
                "leads",
                "beats",
                "global",
                "representative",
                "leads_measurements",
                "findings",
                "notes",
                "engine_version",
                "caution",
            ]
        },
    ],
    "properties": {
        "schema_version": {"const": SCHEMA_VERSION},
        "record": {"type": "string"},
        "path": {"type": "string"},
        "error": {"type": "string"},
        "format": {"type": "string"},
        "fs_hz": {"type": "number", "exclusiveMinimum": 0},
        "duration_s": {"type": "number"},
        "leads": {"type": "array", "items": {"type": "string"}},
        "subject": {
            "type": "object",
            "properties": {"sex": {"type": ["string", "null"]}, "age_years": _num},
        },
        "beats": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["r_s", *MARK_KEYS, "kind"],
                "properties": {
                    "r_s": {"type": "number"},
                    **{k: _num for k in MARK_KEYS},
                    "kind": {"enum": ["dominant", "premature", "paced", "unknown"]},
                    "rr_ms": _num,
                    "pr_ms": _num,
                    "qrs_ms": _num,
                    "qt_ms": _num,
                    "leads": {"type": "object", "additionalProperties": _marks_obj},
                },
            },
        },
        "global": {
            "type": "object",
            "required": [
                "rr_ms",
                "hr_bpm",
                "p_ms",
                "pr_ms",
                "qrs_ms",
                "qt_ms",
                "qtc_ms",
                "axis_deg",
            ],
            "properties": {
                **{k: _num for k in ("rr_ms", "rr_sd_ms", "hr_bpm", "p_ms", "pr_ms")},
                "ventricular_rate_bpm": _num,
                **{k: _num for k in ("qrs_ms", "qt_ms")},
                "qtc_ms": {
                    "type": "object",
                    "required": list(QTC_NAMES),
                    "properties": {k: _num for k in QTC_NAMES},
                },
                **{k: _num for k in WIDE_QRS_KEYS},
                "rhythm_irregular": {"type": "boolean"},
                "axis_deg": {
                    "type": "object",
                    "required": ["p", "qrs", "t"],
                    "properties": {k: _num for k in ("p", "qrs", "t")},
                },
            },
        },
        "voltages": {
            "type": "object",
            "properties": {"sokolow_lyon_mv": _num, "cornell_mv": _num},
        },
        "representative": {
            "type": ["object", "null"],
            "required": ["n_beats_used", "marks_s"],
            "properties": {
                "n_beats_used": {"type": "integer", "minimum": 0},
                "marks_s": _marks_obj,
                "lead_marks_s": {"type": "object", "additionalProperties": _marks_obj},
            },
        },
        "leads_measurements": {
            "type": "object",
            "additionalProperties": {
                "type": "object",
                "properties": {k: _num for k in LEAD_FIELDS},
            },
        },
        "findings": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["quantity", "value", "unit", "limit", "direction", "source", "text"],
                "properties": {
                    "quantity": {"type": "string"},
                    "lead": {"type": ["string", "null"]},
                    "value": {"type": "number"},
                    "unit": {"type": "string"},
                    "limit": {"type": "number"},
                    "direction": {"enum": ["above", "below"]},
                    "source": {"type": "string"},
                    "text": {"type": "string"},
                },
            },
        },
        "unmeasured": {
            "type": "array",
            "items": {
                "type": "object",
                "properties": {"quantity": {"type": "string"}, "reason": {"type": "string"}},
            },
        },
        "reasons": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["quantity", "kind", "text"],
                "properties": {
                    "quantity": {"type": "string"},
                    "kind": {"enum": list(REASON_KINDS)},
                    "text": {"type": "string"},
                },
            },
        },
        "statements": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["code", "text", "category", "criteria", "source"],
                "properties": {
                    "code": {"type": "string"},
                    "text": {"type": "string"},
                    "category": {"type": "string"},
                    "criteria": {"type": "string"},
                    "source": {"type": "string"},
                    "detail": {"type": "string"},
                    "values": {
                        "type": "array",
                        "items": {
                            "type": "object",
                            "required": ["label", "value", "unit", "text"],
                            "properties": {
                                "label": {"type": "string"},
                                "value": {"type": "number"},
                                "unit": {"type": "string"},
                                "lead": {"type": ["string", "null"]},
                                "text": {"type": "string"},
                            },
                        },
                    },
                    "qualifiers": {"type": "array", "items": {"type": "string"}},
                },
            },
        },
        "lead_shapes": {"type": "object", "additionalProperties": {"type": "object"}},
        "notes": {"type": "array", "items": {"type": "string"}},
        "engine_version": {"type": "string"},
        "caution": {"type": "string"},
    },
}

CSV_COLUMNS: tuple[str, ...] = (
    "record",
    "path",
    "fs_hz",
    "n_beats",
    "rr_ms",
    "rr_sd_ms",
    "hr_bpm",
    "ventricular_rate_bpm",
    "p_ms",
    "pr_ms",
    "qrs_ms",
    "qt_ms",
    *(f"qtc_{n}_ms" for n in QTC_NAMES),
    "p_axis_deg",
    "qrs_axis_deg",
    "t_axis_deg",
    "sokolow_lyon_mv",
    "cornell_mv",
    "n_findings",
    *WIDE_QRS_KEYS,
    "not_comparable",
    "less_reliable",
    "statements",
    "engine_version",
    "error",
    "caution",
)


def _f(x: float | None, nd: int = 4) -> float | None:
    """A finite float rounded to ``nd`` decimals, else None (JSON has no NaN)."""
    if x is None:
        return None
    x = float(x)
    return round(x, nd) + 0.0 if math.isfinite(x) else None  # + 0.0: no "-0.0"


def _marks_s(m: WaveMarks, fs: float, offset: int = 0) -> dict[str, float | None]:
    return {f"{k}_s": _f(v, 6) for k, v in m.as_seconds(fs, offset).items()}


def statement_dict(x: Any) -> dict[str, Any]:
    """One ``interpret.Statement`` as its JSON object (module docstring)."""
    return {
        "code": x.code,
        "text": x.text,
        "category": x.category,
        "criteria": x.criteria,
        "source": x.source,
        "detail": x.detail,
        "values": [
            {"label": v.label, "value": _f(v.value), "unit": v.unit, "lead": v.lead, "text": v.text}
            for v in x.values
        ],
        "qualifiers": list(x.qualifiers),
    }


def reading_to_dict(
    analysis: Any,
    reading: Any,
    *,
    path: str = "",
    per_lead: bool = False,
    interpretation: Any = None,
) -> dict:
    """The JSON object for one record (see the module docstring for the schema).

    ``analysis`` is an ``engine.Analysis``, ``reading`` its ``Reading``; ``interpretation``
    its ``interpret.Interpretation`` (computed here when not given).
    """
    if interpretation is None:
        from reviewapp.core.interpret import interpret

        interpretation = interpret(reading, analysis.record.subject)
    rec = analysis.record
    fs = float(rec.fs_hz)
    marked = reading.marked
    ms = reading.measurements
    iv = ms.intervals
    names = list(rec.lead_names)
    beats = []
    for i, beat in enumerate(marked.beats):
        bm = marked.beat_marks[i] if i < len(marked.beat_marks) else WaveMarks()
        row: dict[str, Any] = {"r_s": _f(beat.r / fs, 6), **_marks_s(bm, fs)}
        row["kind"] = beat.kind.value
        if i < len(ms.beats):
            bi = ms.beats[i]
            row.update(rr_ms=_f(bi.rr_ms), pr_ms=_f(bi.pr_ms), qrs_ms=_f(bi.qrs_ms))
            row["qt_ms"] = _f(bi.qt_ms)
        if per_lead:
            lm = marked.beat_lead_marks[i] if i < len(marked.beat_lead_marks) else ()
            row["leads"] = {n: _marks_s(m, fs) for n, m in zip(names, lm, strict=False)}
        beats.append(row)
    rep = marked.representative
    rep_d = None
    if rep is not None:
        rep_d = {
            "n_beats_used": int(rep.n_beats_used),
            "marks_s": _marks_s(rep.marks, fs, -rep.r_index),
            "lead_marks_s": {
                n: _marks_s(m, fs, -rep.r_index)
                for n, m in zip(names, rep.lead_marks, strict=False)
            },
        }
    notes = list(rec.notes) + list(analysis.notes) + list(ms.notes)
    if not marked.beats and "no beats found" not in notes:
        notes.append("no beats found")
    return {
        "schema_version": SCHEMA_VERSION,
        "record": rec.name,
        "path": path,
        "format": rec.source_format,
        "fs_hz": fs,
        "duration_s": _f(rec.duration_s, 6),
        "leads": names,
        "subject": {"sex": rec.subject.sex, "age_years": _f(rec.subject.age_years, 2)},
        "beats": beats,
        "global": {
            "rr_ms": _f(iv.rr_ms),
            "rr_sd_ms": _f(iv.rr_sd_ms),
            "hr_bpm": _f(iv.hr_bpm),
            "ventricular_rate_bpm": _f(iv.ventricular_rate_bpm),
            "p_ms": _f(iv.p_ms),
            "pr_ms": _f(iv.pr_ms),
            "qrs_ms": _f(iv.qrs_ms),
            "qt_ms": _f(iv.qt_ms),
            "qtc_ms": {n: _f(getattr(iv, f"qtc_{n}_ms")) for n in QTC_NAMES},
            **{k: _f(getattr(iv, k)) for k in WIDE_QRS_KEYS},
            "rhythm_irregular": bool(ms.rhythm_irregular),
            "qrs_t_angle_deg": _f(iv.qrs_t_angle_deg, 2),
            "axis_deg": {
                "p": _f(iv.p_axis_deg, 2),
                "qrs": _f(iv.qrs_axis_deg, 2),
                "t": _f(iv.t_axis_deg, 2),
            },
        },
        "voltages": {
            "sokolow_lyon_mv": _f(ms.sokolow_lyon_mv),
            "cornell_mv": _f(ms.cornell_mv),
            "peguero_mv": _f(ms.peguero_mv),
            "cornell_product_mm_ms": _f(ms.cornell_product_mm_ms, 0),
        },
        "representative": rep_d,
        "leads_measurements": {m.lead: _lead_dict(m) for m in ms.leads},
        "findings": [
            {
                "quantity": f.quantity,
                "lead": f.lead,
                "value": _f(f.value),
                "unit": f.unit,
                "limit": _f(f.limit),
                "direction": f.direction,
                "source": f.source,
                "text": f.text,
            }
            for f in reading.findings
        ],
        "unmeasured": [{"quantity": q, "reason": r} for q, r in ms.unmeasured],
        "reasons": [
            {"quantity": r.quantity, "kind": r.kind, "text": r.text}
            for r in (*getattr(reading, "reasons", ()), *interpretation.reasons)
        ],
        "statements": [statement_dict(x) for x in interpretation.statements],
        "lead_shapes": {m.lead: _shape_dict(m) for m in ms.leads},
        "notes": notes,
        "engine_version": analysis.engine_version,
        "caution": CLINICAL_CAUTION,
    }


def _lead_dict(m: LeadMeasurements) -> dict[str, float | None]:
    return {k: _f(getattr(m, k)) for k in LEAD_FIELDS}


def _shape_dict(m: LeadMeasurements) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for k in SHAPE_FIELDS:
        v = getattr(m, k)
        out[k] = v if v is None or isinstance(v, bool | str) else _f(v)
    return out


def error_dict(record: str, path: str, message: str) -> dict[str, Any]:
    return {
        "schema_version": SCHEMA_VERSION,
        "record": record,
        "path": path,
        "error": message,
        "caution": CLINICAL_CAUTION,
    }


def csv_text(results: Iterable[Mapping[str, Any]]) -> str:
    """One CSV row per record (global values; ``error`` filled for records that failed)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    for d in results:
        w.writerow(["" if v is None else v for v in csv_row(d).values()])
    return buf.getvalue()


def csv_row(d: Mapping[str, Any]) -> dict[str, Any]:
    row: dict[str, Any] = dict.fromkeys(CSV_COLUMNS)
    row["record"], row["path"] = d.get("record"), d.get("path")
    row["caution"] = CLINICAL_CAUTION  # every export carries it, CSV included
    if "error" in d:
        row["error"] = d["error"]
        return row
    g = d["global"]
    row.update(fs_hz=d["fs_hz"], n_beats=len(d["beats"]))
    for k in CSV_COLUMNS[CSV_COLUMNS.index("rr_ms") : CSV_COLUMNS.index("qt_ms") + 1]:
        row[k] = g.get(k)
    for n in QTC_NAMES:
        row[f"qtc_{n}_ms"] = g["qtc_ms"][n]
    for n in ("p", "qrs", "t"):
        row[f"{n}_axis_deg"] = g["axis_deg"][n]
    row.update(d.get("voltages", {}))
    row["n_findings"] = len(d["findings"])
    for k in WIDE_QRS_KEYS:
        row[k] = g.get(k)
    # The quantities shown but not to be compared with their limits (e.g. QTc with a wide
    # QRS), with the first reason, and those less reliable: the full texts are in the JSON
    # ``reasons``.
    nc, ca = csv_cells(
        ValueReason(str(r["quantity"]), r["kind"], str(r["text"]))
        for r in d.get("reasons", ())
        if r.get("kind") in CSV_KINDS
    )
    row["not_comparable"], row["less_reliable"] = nc or None, ca or None
    row["statements"] = "; ".join(statement_line(x) for x in d.get("statements") or ())
    row["engine_version"] = d["engine_version"]
    return row


def statement_line(x: Mapping[str, Any]) -> str:
    """A statement's JSON object as one line: text and detail."""
    return f"{x['text']}: {x['detail']}" if x.get("detail") else str(x["text"])


def format_range(nr: NormalRange | None) -> str:
    """A normal range as text (``limit_text.range_text``: the one writer of ranges).

    >>> format_range(NormalRange("pr_ms", 120.0, 200.0, "ms", ""))
    '120 to 200 ms'
    """
    return range_text(nr)


_TABLE_ROWS: tuple[tuple[str, str, str], ...] = (
    # (quantity, where in the dict, unit)
    ("hr_bpm", "global.hr_bpm", "bpm"),
    ("ventricular_rate_bpm", "global.ventricular_rate_bpm", "bpm"),
    ("rr_ms", "global.rr_ms", "ms"),
    ("p_ms", "global.p_ms", "ms"),
    ("pr_ms", "global.pr_ms", "ms"),
    ("qrs_ms", "global.qrs_ms", "ms"),
    ("qt_ms", "global.qt_ms", "ms"),
    *((f"qtc_{n}_ms", f"global.qtc_ms.{n}", "ms") for n in QTC_NAMES),
    *((k, f"global.{k}", "ms") for k in WIDE_QRS_KEYS),
    ("p_axis_deg", "global.axis_deg.p", "deg"),
    ("qrs_axis_deg", "global.axis_deg.qrs", "deg"),
    ("t_axis_deg", "global.axis_deg.t", "deg"),
    ("sokolow_lyon_mv", "voltages.sokolow_lyon_mv", "mV"),
    ("cornell_mv", "voltages.cornell_mv", "mV"),
)


def _dig(d: Mapping[str, Any], dotted: str) -> Any:
    cur: Any = d
    for k in dotted.split("."):
        cur = cur.get(k) if isinstance(cur, Mapping) else None
    return cur


def _val(v: float | None, unit: str) -> str:
    return value_text(v, unit, missing="-")


def _reasons(d: Mapping[str, Any]) -> dict[str, str]:
    """quantity -> why it is not measured (first reason given)."""
    out: dict[str, str] = {}
    for u in d.get("unmeasured") or ():
        out.setdefault(str(u.get("quantity")), str(u.get("reason")))
    return out


def _cell(v: float | None, key: str) -> str:
    if v is None:
        return "-"
    return number_text(v, "ms" if key == "q_ms" else "mV")


def table_text(d: Mapping[str, Any], *, per_lead: bool = False) -> str:
    """A readable summary of one record: values, normal ranges, flags, findings, caution.

    A value shown as "-" has its reason in the last column (from ``unmeasured``). Flags are
    judged on the value as shown, like the findings.
    """
    if "error" in d:
        return f"{d.get('record')}: ERROR {d['error']}\n{CLINICAL_CAUTION}\n"
    sub = d.get("subject") or {}
    subject = SubjectFacts(sex=sub.get("sex"), age_years=sub.get("age_years"))
    who = ", ".join(
        x
        for x in (
            sub.get("sex") or "sex not stated",
            f"{sub['age_years']:g} y" if sub.get("age_years") is not None else "age not stated",
        )
    )
    kinds: dict[str, int] = {}
    for b in d["beats"]:
        kinds[b["kind"]] = kinds.get(b["kind"], 0) + 1
    rep = d.get("representative")
    lines = [
        f"Record {d['record']} ({d.get('format', '')}, {d['fs_hz']:g} Hz, {len(d['leads'])} leads, "
        f"{d.get('duration_s') or 0:.1f} s); subject: {who}",
        f"Beats: {len(d['beats'])}"
        + (" (" + ", ".join(f"{n} {k}" for k, n in sorted(kinds.items())) + ")" if kinds else "")
        + (f"; median beat of {rep['n_beats_used']} beats" if rep else "; no median beat"),
        "",
        f"{'Quantity':<22}{'Value':>12}  {'Normal':<22}Flag / why not measured",
    ]
    flagged = {(f["quantity"], f["lead"]): f["direction"] for f in d["findings"]}
    reasons = _reasons(d)
    not_comparable = {
        str(r["quantity"]): str(r["text"]).split(":", 1)[-1].split(";", 1)[0].strip()
        for r in d.get("reasons") or ()
        if r.get("kind") == "not_comparable"
    }
    cautions = {
        str(r["quantity"]): cause(str(r["text"]))
        for r in d.get("reasons") or ()
        if r.get("kind") == "caution"
    }
    for q, where, unit in _TABLE_ROWS:
        v = _dig(d, where)
        nr = normal_range(q, subject)
        direction = flagged.get((q, None), "")
        if not direction and v is not None and nr is not None and q.startswith("qtc_"):
            # Merged QTc finding: each formula's own flag from its limit, on the shown value.
            direction = direction_of(nr, v)
        flag = flag_text(direction)
        if q in not_comparable and v is not None:
            flag = "not comparable: " + not_comparable[q]
        if q in cautions and v is not None:
            # Shown and compared, but less reliable (an irregular rhythm's QTc, an axis from
            # inconsistent limb leads): the cause beside the flag.
            flag = "; ".join(x for x in (flag, f"caution: {cautions[q]}") if x)
        if v is None:
            flag = reasons.get(q, "not measured")
        label = LABELS.get(q, q)
        if q == "rr_ms" and d["global"].get("rr_sd_ms") is not None:
            label = f"RR (SD {displayed(d['global']['rr_sd_ms'], 'ms'):.0f} ms)"
        lines.append(f"{label:<22}{_val(v, unit):>12}  {format_range(nr):<22}{flag}".rstrip())
    if per_lead:
        lines += ["", "Per lead (mV from the isoelectric level; Q ms; ST at J, J+60, J+80):"]
        head = ["P", "Q", "R", "S", "R'", "T", "Q ms", "ST J", "J+60", "J+80"]
        lines.append(f"{'Lead':<6}" + "".join(f" {h:>7}" for h in head))
        for lead, m in d["leads_measurements"].items():
            cells = [_cell(m[k], k) for k in LEAD_FIELDS]
            row = f"{lead:<6}" + "".join(f" {c:>7}" for c in cells)
            why = reasons.get(lead) or reasons.get(f"{lead}.qrs") or reasons.get(f"{lead}.st")
            lines.append(row + (f"  ({why})" if why and "-" in cells else ""))
    lines += ["", "Interpretation (automatic statements; criteria and sources below):"]
    stmts = d.get("statements") or []
    for x in stmts:
        lines.append(f"  - {statement_line(x)}")
        lines.append(f"      criteria: {x['criteria']}")
        if x.get("values"):
            lines.append("      measured: " + "; ".join(v["text"] for v in x["values"]))
        lines += [f"      note: {q}" for q in x.get("qualifiers") or ()]
        lines.append(f"      source: {x['source']}")
    if not stmts:
        lines.append("  none")
    gated = [
        r for r in d.get("reasons") or () if str(r.get("quantity", "")).startswith("statement:")
    ]
    lines += [f"  (not stated: {r['text']})" for r in gated]
    lines += ["", "Findings (flags for the reader, not diagnoses):"]
    lines += [f"  - {f['text']}" for f in d["findings"]] or ["  none"]
    sources = list(dict.fromkeys(f["source"] for f in d["findings"] if f.get("source")))
    if sources:
        lines += ["Sources of the limits used:"] + [f"  - {src}" for src in sources]
    if d.get("notes"):
        lines += ["Notes:"] + [f"  - {n}" for n in d["notes"]]
    lines += ["", d.get("caution") or CLINICAL_CAUTION, ""]
    return "\n".join(lines)
