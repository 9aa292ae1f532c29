"""Global P duration, PR, QRS and QT against the LUDB cardiologists' global values.

Reference rule (shared/data/README.md): earliest onset to latest offset over the simultaneous
leads (AHA/ACCF/HRS 2007 Part I, Kligfield et al., Circulation 115:1306-1324); LUDB's
cardiologists marked each lead on its own (Kalyakulina et al., IEEE Access 2020), so a beat's
reference is the second-earliest onset and second-latest offset over the leads marked (at
least 4), a record's value the median over its beats. Engine minus reference, record by
record, mean +- SD in ms, for the odd-numbered records (where the global rule was tuned) and
the even-numbered ones (held out), next to the IEC 60601-2-25 acceptance limits for global
durations (recalled, from memory). The same records are also measured with the global marks
as the multi-lead (median-lead) marks the engine used before (``standard_global`` off), in
the same run, and the BBB / first-degree AV block / short-QTc counts are printed.

Run: python benchmarks/bench_global.py [--shared-data PATH]
"""

from __future__ import annotations

import argparse
import sys
import time
import warnings
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "tests" / "dsp"))
sys.path.insert(0, str(REPO))

from reference_global import (  # noqa: E402
    GLOBAL_INTERVALS,
    GlobalComparison,
    has_label,
    ludb_global_reference,
    ludb_labels,
)
from reference_marks import LUDB_LEAD_NAMES, ludb_record_names, ludb_signal  # noqa: E402

import reviewapp.core.dsp.delineate_params as params_mod  # noqa: E402
from reviewapp.core.engine import analyse  # noqa: E402
from reviewapp.core.record import record_from_array  # noqa: E402

DEFAULT_DATA = REPO.parent / "shared" / "data"


def run(data: Path, standard: bool) -> None:
    root = data / "ludb"
    labels = ludb_labels(root)
    original = params_mod.DelineationParams.for_fs.__func__  # type: ignore[attr-defined]

    def for_fs(cls, fs_hz, **kw):
        return original(cls, fs_hz, **{"standard_global": standard, **kw})

    params_mod.DelineationParams.for_fs = classmethod(for_fs)  # type: ignore[method-assign]
    try:
        comp = GlobalComparison.empty()
        bbb, avb, short = [], [], []
        t0 = time.perf_counter()
        names = ludb_record_names(root)
        for name in names:
            x, fs = ludb_signal(root, name)
            reading = analyse(record_from_array(x, fs, LUDB_LEAD_NAMES, name=name)).reading()
            iv = reading.measurements.intervals
            comp.add(
                name,
                {k: getattr(iv, k) for k in GLOBAL_INTERVALS},
                ludb_global_reference(root, name),
            )
            row = labels[name]
            if has_label(
                row, "Conduction abnormalities", "complete right bundle", exclude="incomplete"
            ) or has_label(
                row, "Conduction abnormalities", "complete left bundle", exclude="incomplete"
            ):
                bbb.append((name, iv.qrs_ms))
            if has_label(row, "Conduction abnormalities", "i degree av block"):
                avb.append((name, iv.pr_ms))
            if any(
                f.quantity.startswith("qtc") and f.direction == "below" for f in reading.findings
            ):
                short.append(name)
        dt = time.perf_counter() - t0
    finally:
        params_mod.DelineationParams.for_fs = classmethod(original)  # type: ignore[method-assign]
    title = (
        "standard's global marks (this engine)" if standard else "multi-lead (median-lead) marks"
    )
    print(comp.table(f"\nLUDB global durations, {title}: engine - cardiologists' global, ms"))
    n_wide = sum((v or 0) >= 120 for _, v in bbb)
    n_long = sum((v or 0) > 200 for _, v in avb)
    print(f"complete BBB, QRS ms: {bbb} (>= 120 ms: {n_wide}/{len(bbb)})")
    print(f"first-degree AV block, PR ms: {avb} (> 200 ms: {n_long}/{len(avb)})")
    print(f"short QTc flagged: {len(short)} of {len(names)} records {short}")
    print(f"time: {1000 * dt / len(names):.1f} ms per record (analysis + reading)")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--shared-data", type=Path, default=DEFAULT_DATA)
    args = ap.parse_args()
    if not (args.shared_data / "ludb").is_dir():
        print(f"reference data not found at {args.shared_data}; pass --shared-data")
        return 1
    warnings.filterwarnings("ignore")
    run(args.shared_data, standard=False)
    run(args.shared_data, standard=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
