"""Delineation accuracy on QTDB and LUDB, next to NeuroKit2 on the same LUDB records.

Protocol as in shared/data/README.md: QTDB ``.q1c`` marks (set with both leads in view) vs the
engine's global per-beat marks; LUDB per-lead marks vs each lead's own per-beat marks, pooled
over leads. Errors are detected minus reference, mean +- SD in ms, next to the CSE tolerances
(CSE Working Party, Eur Heart J 6:815-825, 1985; as used by Martinez et al., IEEE TBME
51(4):570-581, 2004). NeuroKit2 (``nk.ecg_peaks`` + ``nk.ecg_delineate(method="dwt")``,
lead by lead, its own R peaks) is scored the same way on the same LUDB records; time per
record for both comes from this run and is printed as a ratio.

Run: python benchmarks/bench_accuracy.py [--shared-data PATH] [--ludb N] [--qtdb N] [--no-nk]
"""

from __future__ import annotations

import argparse
import os
import sys
import time
import warnings
from pathlib import Path

import numpy as np

os.environ.setdefault("OMP_NUM_THREADS", "1")

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "tests" / "dsp"))
sys.path.insert(0, str(REPO))

from reference_marks import (  # noqa: E402
    LUDB_LEAD_NAMES,
    LUDB_LEADS,
    BeatCounts,
    ErrorPool,
    load_ludb_lead,
    ludb_record_names,
    ludb_signal,
    match_beats,
    qtdb_record_names,
    qtdb_window,
    score_ludb_record,
    score_qtdb_record,
)

from reviewapp.core.engine import analyse  # noqa: E402
from reviewapp.core.record import record_from_array  # noqa: E402

DEFAULT_DATA = REPO.parent / "shared" / "data"
_NK_KEYS = ("ECG_P_Onsets", "ECG_P_Offsets", "ECG_R_Onsets", "ECG_R_Offsets", "ECG_T_Offsets")


def _nk_marks(x: np.ndarray, fs: float) -> tuple[np.ndarray, np.ndarray]:
    """NeuroKit2 R peaks and (n, 5) boundaries for one lead (-1 where it gives none)."""
    import neurokit2 as nk

    _, info = nk.ecg_peaks(x, sampling_rate=fs)
    r = np.asarray(info["ECG_R_Peaks"], dtype=np.int64)
    marks = np.full((r.size, 5), -1, dtype=np.int64)
    if r.size < 2:
        return r, marks
    try:
        _, waves = nk.ecg_delineate(x, r, sampling_rate=fs, method="dwt")
    except Exception:  # NeuroKit2 fails on some records; count as no marks
        return r, marks
    for k, key in enumerate(_NK_KEYS):
        v = np.asarray(waves.get(key, [np.nan] * r.size), dtype=float)[: r.size]
        marks[: v.size, k] = np.where(np.isfinite(v), v, -1).astype(np.int64)
    return r, marks


def run_ludb(data: Path, limit: int | None, with_nk: bool) -> None:
    names = ludb_record_names(data / "ludb")[:limit]
    pool, counts = ErrorPool.empty(), BeatCounts()
    nk_pool = ErrorPool.empty()
    t_engine = t_nk = 0.0
    for name in names:
        x, fs = ludb_signal(data / "ludb", name)
        rec = record_from_array(x, fs, LUDB_LEAD_NAMES, name=name)
        t0 = time.perf_counter()
        an = analyse(rec)
        t_engine += time.perf_counter() - t0
        score_ludb_record(data / "ludb", name, an, pool, counts)
        if with_nk:
            t0 = time.perf_counter()
            per_lead = [_nk_marks(x[:, j].astype(np.float64), fs) for j in range(x.shape[1])]
            t_nk += time.perf_counter() - t0
            for ext, (r, marks) in zip(LUDB_LEADS, per_lead, strict=True):
                ref = load_ludb_lead(data / "ludb" / name, ext)
                m = match_beats(r, ref.r, fs)
                ok = m >= 0
                nk_pool.add(marks[m[ok]], ref.marks[ok], fs)
    n = len(names)
    print(
        pool.table(f"\nLUDB, this engine: {n} records x 12 leads, each lead's own per-beat marks")
    )
    print(
        f"beats: {counts.matched} matched, {counts.missed} reference beats missed, "
        f"{counts.extra} detected beats without a reference (annotated span)"
    )
    print(f"engine time per record (whole analysis): {1000 * t_engine / n:.1f} ms")
    if with_nk:
        print(nk_pool.table(f"\nLUDB, NeuroKit2 dwt (lead by lead): {n} records"))
        print(f"NeuroKit2 time per record (12 leads): {1000 * t_nk / n:.1f} ms")
        print(f"time ratio NeuroKit2 / engine: {t_nk / max(t_engine, 1e-9):.1f}")


def run_qtdb(data: Path, limit: int | None) -> None:
    names = qtdb_record_names(data / "qtdb")[:limit]
    pool, counts = ErrorPool.empty(), BeatCounts()
    t_engine = 0.0
    for name in names:
        x, fs, leads, _, ref = qtdb_window(data / "qtdb", name)
        rec = record_from_array(x, fs, leads, name=name, derive_limb_leads=False)
        t0 = time.perf_counter()
        an = analyse(rec)
        t_engine += time.perf_counter() - t0
        score_qtdb_record(ref, an, pool, counts)
    n = len(names)
    print(pool.table(f"\nQTDB q1c, this engine: {n} records, global per-beat marks"))
    print(f"beats: {counts.matched} q1c beats matched, {counts.missed} missed")
    print(f"engine time per record window (~20-60 s, 2 leads): {1000 * t_engine / n:.1f} ms")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--shared-data", type=Path, default=DEFAULT_DATA)
    ap.add_argument("--ludb", type=int, default=None, help="first N LUDB records (default all)")
    ap.add_argument("--qtdb", type=int, default=None, help="first N QTDB records (default all)")
    ap.add_argument("--no-nk", action="store_true", help="skip NeuroKit2")
    args = ap.parse_args()
    if not (args.shared_data / "ludb").is_dir():
        print(f"reference data not found at {args.shared_data}; pass --shared-data")
        return 1
    warnings.filterwarnings("ignore")
    run_qtdb(args.shared_data, args.qtdb)
    run_ludb(args.shared_data, args.ludb, not args.no_nk)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
