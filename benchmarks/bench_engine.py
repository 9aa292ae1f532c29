"""Engine speed against peers, measured in the same run, printed as ratios.

- full 12-lead measurement of a 10 s 500 Hz record (LUDB) vs NeuroKit2 (`ecg_peaks` +
  `ecg_delineate(method="dwt")`, lead by lead); goal <= 30 ms on one core;
- recomputation after one fiducial override; goal <= 2 ms;
- a 15-minute 2-lead 250 Hz record (QTDB) vs wfdb's XQRS detector alone; goal <= 0.5 s.

Run: python benchmarks/bench_engine.py [--shared-data PATH] [--records N]
"""

from __future__ import annotations

import argparse
import os
import statistics
import time
import warnings
from pathlib import Path

import numpy as np

os.environ.setdefault("OMP_NUM_THREADS", "1")

from reviewapp.core.engine import analyse
from reviewapp.core.fiducials import MarkOverride
from reviewapp.core.io import open_record

DEFAULT_DATA = Path(__file__).resolve().parents[2] / "shared" / "data"


def _time(fn, repeat: int) -> tuple[float, object]:
    times = []
    out = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def bench_12_lead(data: Path, n_records: int) -> None:
    paths = sorted((data / "ludb").glob("*.hea"), key=lambda p: int(p.stem))[:n_records]
    ours, nk_times, override_times = [], [], []
    try:
        import neurokit2 as nk
    except ImportError:  # the bench extra is optional
        nk = None
    for hea in paths:
        rec = open_record(hea)
        rec.signal_mv  # noqa: B018 - reading from disk is not the engine's time
        t, analysis = _time(lambda rec=rec: analyse(rec), 5)
        ours.append(t)
        rep = analysis.representative
        if rep is not None and rep.marks.qrs_on is not None:
            ov = [MarkOverride("representative", "qrs_on", rep.marks.qrs_on - 3)]
            t_ov, _ = _time(lambda a=analysis, ov=ov: a.reading(ov), 50)
            override_times.append(t_ov)
        if nk is not None:
            sig = rec.signal_mv

            def run_nk(sig=sig, fs=rec.fs_hz):
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")
                    for j in range(sig.shape[1]):
                        _, info = nk.ecg_peaks(sig[:, j], sampling_rate=fs)
                        try:
                            nk.ecg_delineate(
                                sig[:, j], info["ECG_R_Peaks"], sampling_rate=fs, method="dwt"
                            )
                        except Exception:
                            pass

            t_nk, _ = _time(run_nk, 1)
            nk_times.append(t_nk)
    ms = 1000 * statistics.median(ours)
    print(
        f"12-lead 10 s 500 Hz (LUDB, {len(paths)} records): reviewapp {ms:.1f} ms/record "
        f"(goal <= 30 ms)"
    )
    if override_times:
        print(
            f"  recompute after one override: {1000 * statistics.median(override_times):.2f} ms "
            f"(goal <= 2 ms)"
        )
    if nk_times:
        nk_ms = 1000 * statistics.median(nk_times)
        print(
            f"  NeuroKit2 peaks+dwt delineation, lead by lead: {nk_ms:.0f} ms/record; "
            f"ratio NeuroKit2/reviewapp = {nk_ms / ms:.1f}x"
        )


def bench_long(data: Path) -> None:
    import wfdb
    from wfdb import processing

    hea = sorted((data / "qtdb").glob("*.hea"))[0]
    rec = open_record(hea)
    rec.signal_mv  # noqa: B018
    t, analysis = _time(lambda: analyse(rec), 3)
    print(
        f"15-min 2-lead {rec.fs_hz:.0f} Hz ({hea.stem}, {rec.duration_s / 60:.1f} min, "
        f"{len(analysis.beats)} beats): reviewapp full analysis {t:.3f} s (goal <= 0.5 s)"
    )
    sig = wfdb.rdrecord(str(hea.with_suffix(""))).p_signal[:, 0]

    def xqrs():
        x = processing.XQRS(sig=np.nan_to_num(sig), fs=rec.fs_hz)
        x.detect(verbose=False)
        return x.qrs_inds

    t_x, _ = _time(xqrs, 1)
    print(
        f"  wfdb XQRS (detection only, one lead): {t_x:.3f} s; ratio XQRS/reviewapp = "
        f"{t_x / t:.1f}x"
    )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--shared-data", type=Path, default=DEFAULT_DATA)
    ap.add_argument("--records", type=int, default=10)
    args = ap.parse_args()
    if not args.shared_data.is_dir():
        raise SystemExit(f"reference data not found at {args.shared_data}")
    bench_12_lead(args.shared_data, args.records)
    bench_long(args.shared_data)


if __name__ == "__main__":
    main()
