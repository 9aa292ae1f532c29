"""The study table: one row per record with its final values and their provenance.

``records.csv`` (``RECORD_COLUMNS``), one row per record:

- ``record``, ``subject``, ``timepoint``, ``status`` (adjudicated | signed_off | in_progress |
  unread | error), ``readers`` (each reviewer with role and status), ``basis`` (which readings
  the final marks come from);
- for every value of ``final.VALUE_NAMES`` (hr_bpm, rr_ms, p_ms, pr_ms, qrs_ms, qt_ms, the
  four QTc, the three axes): the final value, ``<name>_source`` (where it came from, see
  ``core/marks/final.py``) and ``auto_<name>`` (the automatic value beside it);
- flags (``yes`` or empty): ``flag_not_signed``, ``flag_readers_differ`` (two signed readers
  differ beyond tolerance on QT, QRS or PR; ``differences`` says on what, by how much and the
  tolerance), ``flag_no_adjudication`` (they differ and no signed adjudication settles it);
- ``n_dominant_beats``, ``engine_version``, ``subject_from`` / ``timepoint_from`` (header or
  mapping), ``acquired_at``, ``path``, ``notes``, ``error`` (why a record could not be read),
  ``caution``.

``beats.csv`` (``BEAT_COLUMNS``): the beat-to-beat QT and RR of each record's dominant beats
(a dominant beat preceded by a dominant beat, so no RR spans an ectopic beat or a pause),
under the final marks: ``record``, ``subject``, ``timepoint``, ``r_s``, ``rr_ms``, ``qt_ms``.
"""

from __future__ import annotations

import csv
import io
import itertools
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from reviewapp import CLINICAL_CAUTION
from reviewapp.core.errors import ReviewError
from reviewapp.core.marks.final import VALUE_NAMES, FinalReading
from reviewapp.core.marks.final_output import (
    FLAG_COLUMNS,
    PROVENANCE_COLUMNS,
    final_to_dict,
    provenance_columns,
)
from reviewapp.core.record import Record
from reviewapp.core.study.timepoints import MapEntry, timepoint_from_comments

DONE, FAILED = "done", "failed"
ERROR_STATUS = "error"


@dataclass(frozen=True)
class BeatPoint:
    """One dominant beat: its R time (s), the RR before it and its QT (ms)."""

    r_s: float
    rr_ms: float
    qt_ms: float


@dataclass(frozen=True)
class StudyRow:
    """One record of the study table (see the module docstring for the columns)."""

    record: str
    path: str
    subject: str | None = None
    timepoint: str | None = None
    subject_from: str = ""
    timepoint_from: str = ""
    acquired_at: str = ""
    values: Mapping[str, float | None] = field(default_factory=dict)
    provenance: Mapping[str, Any] = field(default_factory=dict)  # PROVENANCE_COLUMNS
    n_dominant_beats: int = 0
    engine_version: str = ""
    notes: str = ""
    error: str = ""
    beats: tuple[BeatPoint, ...] = ()
    cpu_seconds: float = 0.0  # CPU time the worker spent on the record (not in the table)

    # What the batch runner's progress callbacks read.
    @property
    def outcome(self) -> str:
        return FAILED if self.error else DONE

    @property
    def status(self) -> str:
        return ERROR_STATUS if self.error else str(self.provenance.get("status", ""))

    def flag(self, name: str) -> bool:
        return self.provenance.get(f"flag_{name}") == "yes"

    @property
    def signed(self) -> bool:
        return self.status in ("adjudicated", "signed_off")

    def value(self, name: str) -> float | None:
        return self.values.get(name)


def dominant_beats(final: FinalReading) -> tuple[BeatPoint, ...]:
    """Beat-to-beat QT and RR of dominant beats preceded by a dominant beat (final marks)."""
    beats = final.reading.measurements.beats
    out = []
    for prev, b in itertools.pairwise(beats):
        if b.kind != "dominant" or prev.kind != "dominant":
            continue
        if b.rr_ms is None or b.qt_ms is None:
            continue
        out.append(BeatPoint(round(float(b.r_s), 4), round(b.rr_ms, 2), round(b.qt_ms, 2)))
    return tuple(out)


def row_from_final(path: str, record: Record, final: FinalReading) -> StudyRow:
    """The table row of a record from its final reading (subject and timepoint from the
    header; a mapping is applied afterwards with ``apply_mapping``)."""
    fd = final_to_dict(final)
    subject = record.subject.subject_id
    timepoint = timepoint_from_comments(record.subject.comments)
    acquired = record.subject.acquired_at
    n_dom = sum(1 for b in final.reading.measurements.beats if b.kind == "dominant")
    notes = list(record.notes) + list(final.notes)
    return StudyRow(
        record=Path(path).stem,
        path=path,
        subject=subject,
        timepoint=timepoint,
        subject_from="header" if subject else "",
        timepoint_from="header" if timepoint else "",
        acquired_at="" if acquired is None else acquired.isoformat(sep=" "),
        values={k: v["value"] for k, v in fd["values"].items()},
        provenance=provenance_columns(fd),
        n_dominant_beats=n_dom,
        engine_version=final.engine_version,
        notes="; ".join(notes),
        beats=dominant_beats(final),
    )


def failed_row(path: str, error: str) -> StudyRow:
    return StudyRow(record=Path(path).stem, path=path, error=" ".join(error.split()))


def apply_mapping(row: StudyRow, entry: MapEntry | None) -> StudyRow:
    """The row with the mapping's subject and timepoint where the mapping gives them."""
    if entry is None:
        return row
    changes: dict[str, Any] = {}
    if entry.subject is not None:
        changes.update(subject=entry.subject, subject_from="mapping")
    if entry.timepoint is not None:
        changes.update(timepoint=entry.timepoint, timepoint_from="mapping")
    return replace(row, **changes)


RECORD_COLUMNS: tuple[str, ...] = (
    "record",
    "subject",
    "timepoint",
    "status",
    "readers",
    "basis",
    *(c for n in VALUE_NAMES for c in (n, f"{n}_source", f"auto_{n}")),
    *FLAG_COLUMNS,
    "n_dominant_beats",
    "engine_version",
    "subject_from",
    "timepoint_from",
    "acquired_at",
    "path",
    "notes",
    "error",
    "caution",
)
BEAT_COLUMNS: tuple[str, ...] = ("record", "subject", "timepoint", "r_s", "rr_ms", "qt_ms")
_FLOAT_COLUMNS = frozenset(VALUE_NAMES) | {f"auto_{n}" for n in VALUE_NAMES}


def _cell(v: Any) -> Any:
    if v is None:
        return ""
    if isinstance(v, float):
        return "" if not math.isfinite(v) else round(v, 2) + 0.0
    return v


def record_dict(row: StudyRow) -> dict[str, Any]:
    d: dict[str, Any] = {
        "record": row.record,
        "subject": row.subject,
        "timepoint": row.timepoint,
        **{c: row.provenance.get(c, "") for c in PROVENANCE_COLUMNS},
        **{n: row.values.get(n) for n in VALUE_NAMES},
        "status": row.status,
        "n_dominant_beats": row.n_dominant_beats if not row.error else "",
        "engine_version": row.engine_version,
        "subject_from": row.subject_from,
        "timepoint_from": row.timepoint_from,
        "acquired_at": row.acquired_at,
        "path": row.path,
        "notes": row.notes,
        "error": row.error,
        "caution": CLINICAL_CAUTION,
    }
    return {c: _cell(d.get(c)) for c in RECORD_COLUMNS}


def records_csv_text(rows: Iterable[StudyRow]) -> str:
    buf = io.StringIO()
    w = csv.DictWriter(buf, RECORD_COLUMNS, lineterminator="\n")
    w.writeheader()
    for row in rows:
        w.writerow(record_dict(row))
    return buf.getvalue()


def beats_csv_text(rows: Iterable[StudyRow]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(BEAT_COLUMNS)
    for row in rows:
        for b in row.beats:
            w.writerow(
                [row.record, row.subject or "", row.timepoint or "", b.r_s, b.rr_ms, b.qt_ms]
            )
    return buf.getvalue()


def _opt_float(text: str, path: Path, line: int, column: str) -> float | None:
    if text == "":
        return None
    try:
        return float(text)
    except ValueError:
        raise ReviewError(f"line {line}: {column} is not a number ({text!r})", path) from None


def read_study_table(records_csv: Path, beats_csv: Path | None = None) -> list[StudyRow]:
    """Read ``records.csv`` (and ``beats.csv``) back into rows, e.g. to re-run the analysis
    on a table that was edited or merged; raises ReviewError naming the file and line."""
    records_csv = Path(records_csv)
    try:
        text = records_csv.read_text(encoding="utf-8-sig")
    except OSError as err:
        raise ReviewError(
            f"cannot read the study table: {err.strerror or err}", records_csv
        ) from None
    except UnicodeDecodeError:
        raise ReviewError("study table is not UTF-8 text", records_csv) from None
    reader = csv.DictReader(text.splitlines())
    missing = [
        c
        for c in ("record", "subject", "timepoint", "status", *VALUE_NAMES)
        if c not in (reader.fieldnames or ())
    ]
    if missing:
        raise ReviewError(f"not a study table: no column(s) {', '.join(missing)}", records_csv)
    rows: list[StudyRow] = []
    for n, d in enumerate(reader, start=2):
        values = {k: _opt_float(d.get(k) or "", records_csv, n, k) for k in VALUE_NAMES}
        prov: dict[str, Any] = {c: d.get(c) or "" for c in PROVENANCE_COLUMNS}
        for c in PROVENANCE_COLUMNS:
            if c in _FLOAT_COLUMNS:
                prov[c] = _opt_float(prov[c], records_csv, n, c)
        rows.append(
            StudyRow(
                record=d["record"],
                path=d.get("path") or "",
                subject=d["subject"] or None,
                timepoint=d["timepoint"] or None,
                subject_from=d.get("subject_from") or "",
                timepoint_from=d.get("timepoint_from") or "",
                acquired_at=d.get("acquired_at") or "",
                values=values,
                provenance=prov,
                n_dominant_beats=int(float(d.get("n_dominant_beats") or 0)),
                engine_version=d.get("engine_version") or "",
                notes=d.get("notes") or "",
                error=d.get("error") or "",
            )
        )
    if beats_csv is not None:
        rows = _attach_beats(rows, Path(beats_csv))
    return rows


def _attach_beats(rows: Sequence[StudyRow], beats_csv: Path) -> list[StudyRow]:
    try:
        text = beats_csv.read_text(encoding="utf-8-sig")
    except OSError as err:
        raise ReviewError(f"cannot read the beat table: {err.strerror or err}", beats_csv) from None
    by_record: dict[str, list[BeatPoint]] = {}
    reader = csv.DictReader(text.splitlines())
    if [c for c in BEAT_COLUMNS if c not in (reader.fieldnames or ())]:
        raise ReviewError(
            f"not a beat table: expected columns {', '.join(BEAT_COLUMNS)}", beats_csv
        )
    for n, d in enumerate(reader, start=2):
        vals = [_opt_float(d[c], beats_csv, n, c) for c in ("r_s", "rr_ms", "qt_ms")]
        if any(v is None for v in vals):
            raise ReviewError(f"line {n}: r_s, rr_ms and qt_ms are all needed", beats_csv)
        by_record.setdefault(d["record"], []).append(BeatPoint(*vals))  # type: ignore[arg-type]
    return [replace(r, beats=tuple(by_record.get(r.record, ()))) for r in rows]
