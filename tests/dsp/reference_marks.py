"""Reference wave boundaries from QTDB ``.q1c`` and LUDB per-lead annotations, and matching.

Protocol (shared/data/README.md): a wave's boundaries are the ``(`` and ``)`` annotations next
to its peak label (``p``, ``N``, ``t``); a P belongs to the QRS that follows it, a T to the QRS
that precedes it. A detected beat matches an annotated beat when its R lies within 150 ms of
the annotated QRS peak. Errors are detected minus reference, in ms.

CSE tolerances (2 x SD between CSE referees; CSE Working Party, Eur Heart J 6:815-825, 1985;
values as used by Martinez et al., IEEE TBME 51(4):570-581, 2004).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import wfdb

FIDS = ("p_on", "p_off", "qrs_on", "qrs_off", "t_off")
CSE_TOLERANCE_MS = {"p_on": 10.2, "p_off": 12.7, "qrs_on": 6.5, "qrs_off": 11.6, "t_off": 30.6}
MATCH_S = 0.150
LUDB_LEADS = ("i", "ii", "iii", "avr", "avl", "avf", "v1", "v2", "v3", "v4", "v5", "v6")
_WAVE_COL = {"p": (0, 1), "N": (2, 3), "t": (None, 4)}
_QRS_LABELS = {"N", "L", "R", "V", "A", "a", "J", "S", "E", "j", "e", "F", "/", "f", "Q", "B"}


@dataclass(frozen=True)
class RefBeats:
    """Reference beats: QRS peak sample (n,) and boundaries (n, 5) in FIDS order, -1 = none."""

    r: np.ndarray
    marks: np.ndarray


def parse_wave_annotations(samples: np.ndarray, symbols: list[str]) -> RefBeats:
    """Group ``( peak )`` triples into beats (P before its QRS, T after it)."""
    qrs_i = [k for k, s in enumerate(symbols) if s in _QRS_LABELS]
    r = np.array([samples[k] for k in qrs_i], dtype=np.int64)
    marks = np.full((len(qrs_i), 5), -1, dtype=np.int64)
    pos = {k: j for j, k in enumerate(qrs_i)}
    for k, s in enumerate(symbols):
        if s not in ("p", "t") and k not in pos:
            continue
        on = samples[k - 1] if k > 0 and symbols[k - 1] == "(" else -1
        off = samples[k + 1] if k + 1 < len(symbols) and symbols[k + 1] == ")" else -1
        if k in pos:
            marks[pos[k], 2], marks[pos[k], 3] = on, off
            continue
        if s == "p":
            nxt = [j for j in range(len(qrs_i)) if qrs_i[j] > k]
            if nxt and all(symbols[m] != "t" for m in range(k + 1, qrs_i[nxt[0]])):
                marks[nxt[0], 0], marks[nxt[0], 1] = on, off
        else:
            prv = [j for j in range(len(qrs_i)) if qrs_i[j] < k]
            if prv and all(symbols[m] != "p" for m in range(qrs_i[prv[-1]] + 1, k)):
                marks[prv[-1], 4] = off
    return RefBeats(r, marks)


def load_ludb_lead(record_path: Path, lead_ext: str) -> RefBeats:
    ann = wfdb.rdann(str(record_path), lead_ext)
    return parse_wave_annotations(np.asarray(ann.sample), list(ann.symbol))


def load_qtdb_q1c(record_path: Path) -> RefBeats:
    ann = wfdb.rdann(str(record_path), "q1c")
    return parse_wave_annotations(np.asarray(ann.sample), list(ann.symbol))


def match_beats(det_r: np.ndarray, ref_r: np.ndarray, fs_hz: float) -> np.ndarray:
    """For each reference beat, index of the nearest detected R within 150 ms, else -1."""
    det_r = np.asarray(det_r, dtype=np.int64)
    if det_r.size == 0:
        return np.full(len(ref_r), -1, dtype=np.int64)
    j = (
        np.clip(np.searchsorted(det_r, ref_r), 1, det_r.size - 1)
        if det_r.size > 1
        else np.zeros(len(ref_r), dtype=np.int64)
    )
    if det_r.size > 1:
        left = det_r[j - 1]
        right = det_r[j]
        j = np.where(np.abs(ref_r - left) <= np.abs(ref_r - right), j - 1, j)
    ok = np.abs(det_r[j] - ref_r) <= MATCH_S * fs_hz
    return np.where(ok, j, -1)


@dataclass
class ErrorPool:
    """Collects detected-minus-reference errors per fiducial (ms) and missed/extra counts."""

    errors: dict[str, list[float]]
    missed: dict[str, int]  # reference mark present, detected absent
    extra: dict[str, int]  # detected present, reference absent (only where reference is complete)
    n_ref: dict[str, int]

    @classmethod
    def empty(cls) -> ErrorPool:
        return cls(
            {f: [] for f in FIDS},
            dict.fromkeys(FIDS, 0),
            dict.fromkeys(FIDS, 0),
            dict.fromkeys(FIDS, 0),
        )

    def add(
        self,
        det: np.ndarray,
        ref: np.ndarray,
        fs_hz: float,
        count_extra: bool | tuple[str, ...] = True,
    ) -> None:
        """``det`` and ``ref``: (n, 5) sample indices, -1 = absent (rows already matched).

        ``count_extra``: count detected marks without a reference mark (True: every fiducial;
        a tuple: only those fiducials).
        """
        for k, f in enumerate(FIDS):
            d, r = det[:, k], ref[:, k]
            both = (d >= 0) & (r >= 0)
            self.errors[f].extend(((d[both] - r[both]) * 1000.0 / fs_hz).tolist())
            self.n_ref[f] += int((r >= 0).sum())
            self.missed[f] += int(((r >= 0) & (d < 0)).sum())
            if count_extra is True or (isinstance(count_extra, tuple) and f in count_extra):
                self.extra[f] += int(((r < 0) & (d >= 0)).sum())

    def stats(self) -> dict[str, tuple[float, float, int]]:
        out = {}
        for f in FIDS:
            e = np.asarray(self.errors[f])
            out[f] = (
                float(e.mean()) if e.size else np.nan,
                float(e.std()) if e.size else np.nan,
                int(e.size),
            )
        return out

    def table(self, title: str) -> str:
        lines = [
            title,
            f"{'fiducial':8s} {'mean ms':>8s} {'SD ms':>7s} {'CSE tol':>7s} {'n':>6s}"
            f" {'missed':>7s} {'extra':>6s}",
        ]
        for f, (m, s, n) in self.stats().items():
            lines.append(
                f"{f:8s} {m:8.1f} {s:7.1f} {CSE_TOLERANCE_MS[f]:7.1f} {n:6d} "
                f"{self.missed[f]:7d} {self.extra[f]:6d}"
            )
        return "\n".join(lines)


# --- Whole-database scoring through the engine (shared by tests and benchmarks) -------------

LUDB_LEAD_NAMES = ("I", "II", "III", "aVR", "aVL", "aVF", "V1", "V2", "V3", "V4", "V5", "V6")
# QTDB q1c marks cover a short stretch; process this much signal either side of it (s).
QTDB_MARGIN_S = 10.0


@dataclass
class BeatCounts:
    """Reference beats matched / missed, and detected beats with no reference (LUDB only)."""

    matched: int = 0
    missed: int = 0
    extra: int = 0


def ludb_record_names(ludb_dir: Path) -> list[str]:
    return sorted((p.stem for p in ludb_dir.glob("*.hea")), key=lambda s: (len(s), s))


def qtdb_record_names(qtdb_dir: Path) -> list[str]:
    return sorted(p.stem for p in qtdb_dir.glob("*.q1c"))


def ludb_signal(ludb_dir: Path, name: str) -> tuple[np.ndarray, float]:
    sig = wfdb.rdrecord(str(ludb_dir / name))
    return np.asarray(sig.p_signal, dtype=np.float32), float(sig.fs)


def score_ludb_record(
    ludb_dir: Path, name: str, analysis, pool: ErrorPool, counts: BeatCounts
) -> None:
    """Add one LUDB record's per-lead errors (each lead's own marks vs that lead's annotation).

    Only annotated beats are scored (LUDB leaves the first and last ~1 s unannotated); a
    detected beat counts as extra only inside the annotated span of the record.
    """
    fs = analysis.fs_hz
    det_r = np.array([b.r for b in analysis.beats], dtype=np.int64)
    lead_cols = [analysis.record.lead_index(n) for n in LUDB_LEAD_NAMES]
    for ext, col in zip(LUDB_LEADS, lead_cols, strict=True):
        ref = load_ludb_lead(ludb_dir / name, ext)
        if ref.r.size == 0:
            continue
        m = match_beats(det_r, ref.r, fs)
        ok = m >= 0
        if ext == "ii":  # beat-level counts once per record, on lead II's annotation
            counts.matched += int(ok.sum())
            counts.missed += int((~ok).sum())
            span = (det_r >= ref.r.min() - MATCH_S * fs) & (det_r <= ref.r.max() + MATCH_S * fs)
            counts.extra += int(span.sum() - np.unique(m[ok]).size)
        det = np.array(
            [analysis.beat_lead_marks[b][col].as_array() for b in m[ok]], dtype=np.int64
        ).reshape(-1, 5)
        pool.add(det, ref.marks[ok], fs)


def qtdb_window(qtdb_dir: Path, name: str) -> tuple[np.ndarray, float, list[str], int, RefBeats]:
    """Signal from 10 s before the first to 10 s after the last q1c mark, and the marks
    shifted into that window."""
    ref = load_qtdb_q1c(qtdb_dir / name)
    hdr = wfdb.rdheader(str(qtdb_dir / name))
    fs = float(hdr.fs)
    valid = ref.marks[ref.marks >= 0]
    first = int(min(ref.r.min(), valid.min() if valid.size else ref.r.min()))
    last = int(max(ref.r.max(), valid.max() if valid.size else ref.r.max()))
    a = max(0, int(first - QTDB_MARGIN_S * fs))
    b = min(int(hdr.sig_len), int(last + QTDB_MARGIN_S * fs))
    sig = wfdb.rdrecord(str(qtdb_dir / name), sampfrom=a, sampto=b)
    x = np.nan_to_num(np.asarray(sig.p_signal, dtype=np.float32))
    shifted = RefBeats(ref.r - a, np.where(ref.marks >= 0, ref.marks - a, -1))
    return x, fs, list(sig.sig_name), a, shifted


def score_qtdb_record(ref: RefBeats, analysis, pool: ErrorPool, counts: BeatCounts) -> None:
    """Add one QTDB record's errors: global per-beat marks vs the q1c marks (both leads)."""
    fs = analysis.fs_hz
    det_r = np.array([b.r for b in analysis.beats], dtype=np.int64)
    m = match_beats(det_r, ref.r, fs)
    ok = m >= 0
    counts.matched += int(ok.sum())
    counts.missed += int((~ok).sum())
    det = np.array([analysis.beat_marks[b].as_array() for b in m[ok]], dtype=np.int64).reshape(
        -1, 5
    )
    # q1c marks only some waves of some beats: a detected mark without a reference one is
    # not an error there (no positive predictivity, README protocol) -- except P in a record
    # whose reader marked no P at all (e.g. atrial fibrillation), where a detected P is extra.
    no_p = bool((ref.marks[:, :2] < 0).all())
    pool.add(det, ref.marks[ok], fs, count_extra=("p_on", "p_off") if no_p else False)
