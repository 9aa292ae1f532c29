"""LUDB cardiologists' GLOBAL P duration, PR, QRS duration and QT, and how the engine's compare.

Reference rule (shared/data/README.md, "Global intervals and labels"): a global duration runs
from the earliest onset to the latest offset over the simultaneous leads (AHA/ACCF/HRS 2007
Part I, Kligfield et al., Circulation 115:1306-1324). LUDB's cardiologists marked each lead on
its own (Kalyakulina et al., IEEE Access 8:186181, 2020), so a beat's reference is the
SECOND-earliest onset and the SECOND-latest offset among the leads that marked that boundary
(at least 4 leads), which keeps one stray lead mark from deciding it; a record's value is the
median over its beats. Beats are grouped across the 12 annotation files by their QRS peak
label within 150 ms of the anchor lead's (the lead with the most annotated beats).

Acceptance limits beside the figures: IEC 60601-2-25 global durations, recalled (from
memory): P +-10 / 15, PR +-10 / 10, QRS +-6 / 10, QT +-12 / 30 ms (|mean| / SD of the
record-by-record differences).

Tuning split (RULES.md: tune on one half, report the other): records with an ODD record
number are the tuning half; EVEN record numbers are held out (nothing was tuned on them).
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from reference_marks import LUDB_LEADS, MATCH_S, load_ludb_lead

GLOBAL_INTERVALS = ("p_ms", "pr_ms", "qrs_ms", "qt_ms")
# IEC 60601-2-25 acceptance for global durations (recalled, from memory): (|mean|, SD) ms.
IEC_GLOBAL_LIMITS_MS = {
    "p_ms": (10.0, 15.0),
    "pr_ms": (10.0, 10.0),
    "qrs_ms": (6.0, 10.0),
    "qt_ms": (12.0, 30.0),
}
MIN_LEADS = 4  # a beat's global boundary needs this many leads marking it


def tuning_half(name: str) -> bool:
    """True for the tuning half (odd record numbers), False for the held-out half."""
    return int(name) % 2 == 1


def _second(values: np.ndarray, earliest: bool) -> int:
    """Second-earliest (or second-latest) of the marked values (>= MIN_LEADS), else -1."""
    v = np.sort(values[values >= 0])
    if v.size < MIN_LEADS:
        return -1
    return int(v[1] if earliest else v[-2])


def _lead_marks_by_beat(ludb_dir: Path, name: str, fs_hz: float) -> tuple[np.ndarray, np.ndarray]:
    """(anchor QRS peaks (B,), marks[beat, lead, fid] (B, 12, 5), -1 = not marked): each
    lead's marks of the beat whose QRS peak lies within 150 ms of the anchor lead's."""
    leads = [load_ludb_lead(ludb_dir / name, ext) for ext in LUDB_LEADS]
    anchor = max(leads, key=lambda rb: rb.r.size)
    marks = np.full((anchor.r.size, len(leads), 5), -1, dtype=np.int64)
    for j, rb in enumerate(leads):
        if rb.r.size == 0:
            continue
        k = np.searchsorted(rb.r, anchor.r)
        for bi, (ar, kk) in enumerate(zip(anchor.r, k, strict=True)):
            cand = [c for c in (kk - 1, kk) if 0 <= c < rb.r.size]
            if not cand:
                continue
            c = min(cand, key=lambda c: abs(int(rb.r[c]) - int(ar)))
            if abs(int(rb.r[c]) - int(ar)) <= MATCH_S * fs_hz:
                marks[bi, j] = rb.marks[c]
    return anchor.r, marks


def ludb_global_reference(ludb_dir: Path, name: str, fs_hz: float = 500.0) -> dict[str, float]:
    """The cardiologists' global P, PR, QRS and QT of one LUDB record (ms; absent keys where
    no beat had enough leads marked). See the module docstring for the rule."""
    anchor_r, marks = _lead_marks_by_beat(ludb_dir, name, fs_hz)
    if anchor_r.size == 0:
        return {}
    per_beat: dict[str, list[float]] = {k: [] for k in GLOBAL_INTERVALS}
    to_ms = 1000.0 / fs_hz
    for b in range(marks.shape[0]):
        p_on = _second(marks[b, :, 0], True)
        p_off = _second(marks[b, :, 1], False)
        q_on = _second(marks[b, :, 2], True)
        q_off = _second(marks[b, :, 3], False)
        t_off = _second(marks[b, :, 4], False)
        if p_on >= 0 and p_off > p_on:
            per_beat["p_ms"].append((p_off - p_on) * to_ms)
        if p_on >= 0 and q_on > p_on:
            per_beat["pr_ms"].append((q_on - p_on) * to_ms)
        if q_on >= 0 and q_off > q_on:
            per_beat["qrs_ms"].append((q_off - q_on) * to_ms)
        if q_on >= 0 and t_off > q_on:
            per_beat["qt_ms"].append((t_off - q_on) * to_ms)
    return {k: float(np.median(v)) for k, v in per_beat.items() if v}


def ludb_beat_qrs_reference(ludb_dir: Path, name: str, fs_hz: float = 500.0) -> np.ndarray:
    """The cardiologists' global QRS onset and end of every annotated beat of one LUDB
    record: (B, 3) samples (anchor QRS peak, second-earliest lead onset, second-latest lead
    end), -1 where fewer than ``MIN_LEADS`` leads marked the boundary (module docstring)."""
    anchor_r, marks = _lead_marks_by_beat(ludb_dir, name, fs_hz)
    out = np.full((anchor_r.size, 3), -1, dtype=np.int64)
    for b in range(anchor_r.size):
        out[b] = (anchor_r[b], _second(marks[b, :, 2], True), _second(marks[b, :, 3], False))
    return out


def ludb_labels(ludb_dir: Path) -> dict[str, dict[str, str]]:
    """ludb.csv rows by record name (the cardiologists' diagnoses; Kalyakulina et al. 2020)."""
    with (ludb_dir / "ludb.csv").open(newline="") as fh:
        return {r["ID"].strip(): r for r in csv.DictReader(fh)}


def has_label(row: dict[str, str], column: str, text: str, *, exclude: str = "") -> bool:
    """Whether one of the lines of ``row[column]`` contains ``text`` (case-insensitive) and
    not ``exclude``."""
    for line in row.get(column, "").lower().splitlines():
        if text in line and not (exclude and exclude in line):
            return True
    return False


@dataclass
class GlobalComparison:
    """Engine minus reference per record and interval, split into the two halves."""

    diffs: dict[str, dict[str, float]]  # interval -> record -> engine - reference (ms)

    @classmethod
    def empty(cls) -> GlobalComparison:
        return cls({k: {} for k in GLOBAL_INTERVALS})

    def add(self, name: str, engine: dict[str, float | None], ref: dict[str, float]) -> None:
        for k in GLOBAL_INTERVALS:
            e = engine.get(k)
            if e is not None and k in ref:
                self.diffs[k][name] = float(e) - ref[k]

    def stats(self, half: bool | None = None) -> dict[str, tuple[float, float, int]]:
        """(mean, SD, n) per interval; ``half`` True: tuning half, False: held-out, None: all."""
        out = {}
        for k, d in self.diffs.items():
            v = np.array([x for n, x in d.items() if half is None or tuning_half(n) == half])
            out[k] = (
                (float(v.mean()), float(v.std()), int(v.size)) if v.size else (np.nan, np.nan, 0)
            )
        return out

    def table(self, title: str) -> str:
        lines = [
            title,
            f"{'interval':8s} {'half':>9s} {'mean ms':>8s} {'SD ms':>6s} {'n':>4s}"
            f" {'IEC |mean|/SD':>14s}",
        ]
        for k in GLOBAL_INTERVALS:
            lim = IEC_GLOBAL_LIMITS_MS[k]
            for label, half in (("odd/tune", True), ("even/test", False), ("all", None)):
                m, s, n = self.stats(half)[k]
                lines.append(
                    f"{k:8s} {label:>9s} {m:8.1f} {s:6.1f} {n:4d} {lim[0]:>7.0f} / {lim[1]:.0f}"
                )
        return "\n".join(lines)
