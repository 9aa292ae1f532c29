"""Speed and accuracy of reviewapp's QRS detector against wfdb XQRS and NeuroKit2.

Run from the repository root:

    /work/venv/bin/python benchmarks/bench_detection.py [--data ../shared/data] [--no-nk]

Records: MIT-BIH 100 (30 min, 2 leads, 360 Hz) and QTDB records (15 min, 2 leads, 250 Hz),
scored against their .atr beat labels with wfdb.processing.compare_annotations (150 ms).
Ours uses both leads (conditioning + detection; detection alone is printed too); XQRS and
NeuroKit2 ``ecg_peaks`` (default method) are single-lead detectors and get the first lead.
Targets: a 15-min 2-lead 250 Hz record well under 0.3 s; the 12-lead 10 s 500 Hz beat stage
under 15 ms (on an idle machine: timings on a shared machine run several times longer).
Times are wall-clock of the same run, best of ``--repeat``; ratios are reference time / our
time. The 12-lead part times the whole automatic beat stage (condition, detect, classify,
median beat) on LUDB records (10 s, 500 Hz).
"""

from __future__ import annotations

import argparse
import sys
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np
import wfdb
from wfdb import processing

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

from reviewapp.core.dsp.beats import classify_beats, representative_beat  # noqa: E402
from reviewapp.core.dsp.filters import condition  # noqa: E402
from reviewapp.core.dsp.qrs import detect_qrs  # noqa: E402

BEAT_SYMBOLS = frozenset("NLRBAaJSVrFejnE/fQ?")  # WFDB beat annotation codes
QTDB = ("sel100", "sel102", "sel221", "sel223", "sele0411", "sel16265")
LUDB = ("1", "2", "3", "4", "5")


def _best_time(fn: Callable[[], np.ndarray], repeat: int) -> tuple[float, np.ndarray]:
    best, out = np.inf, np.zeros(0)
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, np.asarray(out, dtype=np.int64)


def _score(ref: np.ndarray, test: np.ndarray, fs: float) -> tuple[float, float]:
    cmp = processing.compare_annotations(ref, test, int(0.15 * fs))
    return float(cmp.sensitivity), float(cmp.positive_predictivity)


def _ours(x: np.ndarray, fs: float) -> np.ndarray:
    c = condition(x, fs)
    return detect_qrs(c, fs, np.ones(x.shape[1], dtype=bool))


def _xqrs(x: np.ndarray, fs: float) -> np.ndarray:
    det = processing.XQRS(sig=x[:, 0].astype(np.float64), fs=fs)
    det.detect(verbose=False)
    return np.asarray(det.qrs_inds)


def _nk(x: np.ndarray, fs: float) -> np.ndarray:
    import neurokit2 as nk

    _, info = nk.ecg_peaks(x[:, 0].astype(np.float64), sampling_rate=int(fs))
    return np.asarray(info["ECG_R_Peaks"])


def bench_records(data: Path, use_nk: bool, repeat: int) -> None:
    paths = [data / "mitdb" / "100"] + [data / "qtdb" / name for name in QTDB]
    methods: dict[str, Callable[[np.ndarray, float], np.ndarray]] = {"ours": _ours, "xqrs": _xqrs}
    if use_nk:
        try:
            import neurokit2  # noqa: F401

            methods["neurokit2"] = _nk
        except ImportError:
            print("neurokit2 not installed: skipped")
    print(f"{'record':10s} {'min':>5s} " + " ".join(f"{m:>26s}" for m in methods))
    print(f"{'':10s} {'':5s} " + " ".join(f"{'time s   Se %    PPV %':>26s}" for _ in methods))
    totals = {m: 0.0 for m in methods}
    detect_only: dict[str, float] = {}
    for path in paths:
        if not path.with_suffix(".hea").exists():
            print(f"{path.name}: not found, skipped")
            continue
        rec = wfdb.rdrecord(str(path))
        ann = wfdb.rdann(str(path), "atr")
        ref = np.array(
            [s for s, sym in zip(ann.sample, ann.symbol, strict=True) if sym in BEAT_SYMBOLS]
        )
        x = np.nan_to_num(rec.p_signal.astype(np.float32))
        c = condition(x, rec.fs)
        t_det, _ = _best_time(
            lambda c=c, fs=rec.fs: detect_qrs(c, fs, np.ones(c.shape[1], dtype=bool)), repeat
        )
        detect_only[path.name] = t_det
        cells = []
        for name, fn in methods.items():
            reps = repeat if name == "ours" else 1
            t, r = _best_time(lambda fn=fn, x=x, fs=rec.fs: fn(x, fs), reps)
            se, ppv = _score(ref, r, rec.fs)
            totals[name] += t
            cells.append(f"{t:8.3f} {se * 100:7.2f} {ppv * 100:7.2f}")
        print(
            f"{path.name:10s} {rec.sig_len / rec.fs / 60:5.1f} "
            + " ".join(f"{c:>26s}" for c in cells)
        )
    ours = totals["ours"]
    print(
        f"ours = conditioning + detection on both leads; detection alone (conditioned input): "
        f"{sum(detect_only.values()):.2f} s in total"
    )
    for name, t in totals.items():
        if name != "ours" and ours > 0:
            print(f"total time {name} / ours = {t / ours:.1f}x  ({t:.2f} s vs {ours:.2f} s)")


def bench_12_lead(data: Path, repeat: int) -> None:
    print("\n12-lead 10 s 500 Hz: condition + detect + classify + median beat (best of runs)")
    for name in LUDB:
        path = data / "ludb" / name
        if not path.with_suffix(".hea").exists():
            continue
        rec = wfdb.rdrecord(str(path))
        x = rec.p_signal.astype(np.float32)
        fs = rec.fs
        usable = np.ones(x.shape[1], dtype=bool)

        def stage(x: np.ndarray = x, fs: float = fs, usable: np.ndarray = usable) -> np.ndarray:
            c = condition(x, fs)
            r = detect_qrs(c, fs, usable)
            beats = classify_beats(c, fs, r, usable)
            representative_beat(c, fs, beats, usable)
            return r

        t, r = _best_time(stage, repeat)
        print(f"LUDB {name:>4s}: {t * 1000:6.1f} ms  ({r.size} beats)")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--data", type=Path, default=REPO.parent / "shared" / "data")
    parser.add_argument("--no-nk", action="store_true", help="skip NeuroKit2")
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args()
    if not args.data.is_dir():
        print(f"{args.data}: reference data folder not found")
        return 2
    bench_records(args.data, not args.no_nk, args.repeat)
    bench_12_lead(args.data, max(args.repeat, 20))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
