"""Subjects and timepoints of a QT study: from record headers or a mapping file, and their order.

Header: the subject is the record's own subject id (``# subject: S-101`` in a WFDB header,
the patient id of other formats); the timepoint is a header comment ``timepoint: <label>``
(``# timepoint: post-dose 2 h``).

Mapping file (``--timepoints MAP.csv``): a CSV with a header row and the columns ``record``,
``subject`` and ``timepoint``. ``record`` names a record by its name (file stem, ``s101_pre_1``),
its file name (``s101_pre_1.hea``) or its path relative to the study folder. A non-empty cell
wins over the header; an empty cell leaves the header's value.

Timepoint roles (what the analysis does with each label):
- baseline: labels given with ``--baseline``, else every label starting with "pre-dose",
  "predose" or "baseline" (all of a subject's baseline ECGs are averaged into their baseline);
- drug-free: the baseline labels, labels starting with "day -N", "screening", "run-in" or
  "drug-free", and labels given with ``--drug-free``: the ECGs an individual QT/RR correction
  is fitted on;
- on drug: every other label.
Order: drug-free labels before the baseline, then the baseline, then the rest by the hours
after dose found in the label ("2 h", "90 min"), labels without hours last, by name.
"""

from __future__ import annotations

import csv
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

from reviewapp.core.errors import ReviewError

_TIMEPOINT = re.compile(r"^\s*time\s*-?\s*point\s*:\s*(\S.{0,79}?)\s*$", re.IGNORECASE)
_BASELINE = re.compile(r"^\s*(pre-?\s?dose|baseline)\b", re.IGNORECASE)
_DRUG_FREE = re.compile(r"^\s*(day\s*-\s*\d+|screening|run-?\s?in|drug-?\s?free)\b", re.IGNORECASE)
_HOURS = re.compile(r"(-?\d+(?:\.\d+)?)\s*(h|hr|hrs|hours?|min|minutes?)\b", re.IGNORECASE)
MAP_COLUMNS = ("record", "subject", "timepoint")
MAX_MAP_BYTES = 20_000_000  # a mapping of a million records is still far below this


def timepoint_from_comments(comments: Iterable[str]) -> str | None:
    """The ``timepoint: <label>`` header comment, or None.

    >>> timepoint_from_comments(["age: 34", "timepoint: post-dose 2 h"])
    'post-dose 2 h'
    """
    for line in comments:
        m = _TIMEPOINT.match(str(line))
        if m:
            return m.group(1)
    return None


def hours_after_dose(label: str) -> float | None:
    """Hours given in a label ("post-dose 2 h" -> 2.0, "90 min" -> 1.5), else None.

    >>> hours_after_dose("post-dose 2 h"), hours_after_dose("post-dose 90 min")
    (2.0, 1.5)
    """
    m = _HOURS.search(label)
    if not m:
        return None
    value = float(m.group(1))
    return value / 60.0 if m.group(2).lower().startswith("min") else value


@dataclass(frozen=True)
class Timepoint:
    """One timepoint label and its role in the analysis."""

    label: str
    baseline: bool
    drug_free: bool
    hours: float | None

    @property
    def on_drug(self) -> bool:
        return not self.drug_free


@dataclass(frozen=True)
class TimepointPlan:
    """Every timepoint of a study, in display order."""

    timepoints: tuple[Timepoint, ...]

    def get(self, label: str) -> Timepoint:
        for t in self.timepoints:
            if t.label == label:
                return t
        raise KeyError(label)

    @property
    def baseline_labels(self) -> tuple[str, ...]:
        return tuple(t.label for t in self.timepoints if t.baseline)

    @property
    def on_drug_labels(self) -> tuple[str, ...]:
        return tuple(t.label for t in self.timepoints if t.on_drug)


def plan_timepoints(
    labels: Iterable[str],
    *,
    baseline: Sequence[str] = (),
    drug_free: Sequence[str] = (),
) -> TimepointPlan:
    """Roles and order of the timepoint labels (rules in the module docstring).

    >>> [t.label for t in plan_timepoints(
    ...     ["post-dose 6 h", "pre-dose", "post-dose 1 h", "day -1 supine"]).timepoints]
    ['day -1 supine', 'pre-dose', 'post-dose 1 h', 'post-dose 6 h']
    """
    seen = list(dict.fromkeys(labels))
    given_base = {b.strip().casefold() for b in baseline}
    given_free = {d.strip().casefold() for d in drug_free}
    out = []
    for label in seen:
        key = label.strip().casefold()
        is_base = key in given_base if given_base else bool(_BASELINE.match(label))
        is_free = is_base or key in given_free or bool(_DRUG_FREE.match(label))
        out.append(Timepoint(label, is_base, is_free, None if is_free else hours_after_dose(label)))

    def order(t: Timepoint) -> tuple:
        if t.drug_free and not t.baseline:
            return (0, seen.index(t.label), 0.0, "")
        if t.baseline:
            return (1, seen.index(t.label), 0.0, "")
        return (2, t.hours is None, t.hours or 0.0, t.label)

    return TimepointPlan(tuple(sorted(out, key=order)))


@dataclass(frozen=True)
class MapEntry:
    subject: str | None
    timepoint: str | None
    line: int


def read_timepoint_map(path: str | Path) -> dict[str, MapEntry]:
    """The mapping file as ``{record key: MapEntry}`` (raises ReviewError naming the file)."""
    path = Path(path)
    try:
        if path.stat().st_size > MAX_MAP_BYTES:
            raise ReviewError(
                f"mapping file is larger than {MAX_MAP_BYTES // 1_000_000} MB; expected a CSV "
                "of record, subject, timepoint",
                path,
            )
        text = path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise ReviewError("mapping file not found", path) from None
    except IsADirectoryError:
        raise ReviewError("expected a CSV mapping file but found a folder", path) from None
    except UnicodeDecodeError:
        raise ReviewError("mapping file is not UTF-8 text; save it as CSV (UTF-8)", path) from None
    except OSError as err:
        raise ReviewError(f"cannot read the mapping file: {err.strerror or err}", path) from None
    try:
        rows = list(csv.reader(text.splitlines()))
    except csv.Error as err:
        raise ReviewError(f"mapping file is not valid CSV: {err}", path) from None
    rows = [r for r in rows if any(c.strip() for c in r)]
    if not rows:
        raise ReviewError(
            "mapping file is empty; expected columns record, subject, timepoint", path
        )
    head = [c.strip().casefold() for c in rows[0]]
    missing = [c for c in MAP_COLUMNS if c not in head]
    if missing:
        raise ReviewError(
            f"mapping file lacks the column(s) {', '.join(missing)} in its first row (found: "
            f"{', '.join(h for h in head if h) or 'nothing'}); expected record, subject, timepoint",
            path,
        )
    idx = {c: head.index(c) for c in MAP_COLUMNS}
    out: dict[str, MapEntry] = {}
    for n, row in enumerate(rows[1:], start=2):

        def cell(col: str, row: list[str] = row) -> str | None:
            i = idx[col]
            v = row[i].strip() if i < len(row) else ""
            return v or None

        key = cell("record")
        if key is None:
            raise ReviewError(f"line {n}: the record cell is empty", path)
        entry = MapEntry(cell("subject"), cell("timepoint"), n)
        before = out.get(key)
        if before is not None and (before.subject, before.timepoint) != (
            entry.subject,
            entry.timepoint,
        ):
            raise ReviewError(
                f"line {n}: record {key!r} is mapped twice with different values (also on line "
                f"{before.line})",
                path,
            )
        out[key] = entry
    return out


def map_keys(path: Path, folder: Path) -> tuple[str, ...]:
    """The keys a mapping row may use for the record at ``path`` (see the module docstring)."""
    keys = [path.stem, path.name]
    try:
        keys.append(path.resolve().relative_to(folder.resolve()).as_posix())
    except ValueError:
        pass
    return tuple(keys)


def lookup(mapping: Mapping[str, MapEntry], path: Path, folder: Path) -> MapEntry | None:
    for key in map_keys(path, folder):
        if key in mapping:
            return mapping[key]
    return None
