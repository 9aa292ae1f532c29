"""`reviewapp batch FOLDER`: compute automated marks for every record of a folder (resumable)."""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from reviewapp.core.errors import ReviewError

# Below this many records a local cluster (seconds to start worker processes and import the
# pipeline in each) costs more than it saves; measured with benchmarks/bench_batch.py.
SMALL_BATCH = 50


def add_parser(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "batch",
        help="pre-mark every record of a folder (automated marks into the sidecars)",
        description=(
            "Compute automated marks for every record under FOLDER (recursively) and store them "
            "in each record's sidecar. Reviewer overrides and signed-off readings are never "
            "touched; records whose sidecar is current (same record content and engine version) "
            "are skipped, so an interrupted batch resumes where it stopped."
        ),
    )
    p.add_argument(
        "folder", type=Path, metavar="FOLDER", help="folder of records (searched recursively)"
    )
    p.add_argument(
        "--workers",
        type=int,
        default=None,
        metavar="N",
        help="worker processes on this machine (default: all cores, or in-process for fewer "
        f"than {SMALL_BATCH} records, where starting a cluster costs more than it saves; "
        "1 = in-process, no cluster)",
    )
    p.add_argument(
        "--scheduler",
        default=None,
        metavar="ADDRESS",
        help="run on an existing Dask cluster at ADDRESS (e.g. tcp://10.0.0.5:8786)",
    )
    p.add_argument(
        "--worker-wait",
        type=float,
        default=None,
        metavar="SECONDS",
        help="with --scheduler: how long to wait for a first worker, and how long the cluster "
        "may be without workers during the run, before stopping with a message (default 60)",
    )
    p.add_argument(
        "--summary",
        type=Path,
        default=None,
        metavar="PATH",
        help=(
            "write a summary CSV here: one row per record, values from the automatic "
            "marks (auto_* columns) beside the reading status and reviewer"
        ),
    )
    p.add_argument(
        "--force",
        action="store_true",
        help="recompute automated marks even where the sidecar is current "
        "(signed-off readings are still left as they are)",
    )


def run(args: argparse.Namespace) -> int:
    from tqdm import tqdm

    from reviewapp.batch.runner import run_batch
    from reviewapp.batch.summary_csv import write_summary_csv
    from reviewapp.core.io import find_records

    folder = Path(args.folder)
    if not folder.is_dir():
        raise ReviewError("not a folder", folder)
    if args.workers is not None and args.workers < 1:
        raise ReviewError(f"--workers must be at least 1, got {args.workers}")
    if args.worker_wait is not None and not args.worker_wait > 0:
        raise ReviewError(
            f"--worker-wait must be a positive number of seconds, got {args.worker_wait}"
        )
    if args.summary is not None:
        # Refuse an unwritable summary before hours of work, not after.
        target = Path(args.summary)
        parent = target.parent if str(target.parent) else Path(".")
        if target.is_dir() or not parent.is_dir() or not os.access(parent, os.W_OK):
            raise ReviewError("cannot write the summary CSV there", target)
    paths = find_records(folder, recursive=True)
    if args.summary is not None:  # a summary written into the folder is not a record
        summary_file = Path(args.summary).resolve()
        paths = [p for p in paths if p.resolve() != summary_file]
    if not paths:
        if args.summary is not None:
            write_summary_csv(args.summary, [])
        # Nothing could be done: exit 2 like any other bad input (see reviewapp --help).
        raise ReviewError(f"no records found under {folder}")
    workers = args.workers
    if workers is None and args.scheduler is None and len(paths) < SMALL_BATCH:
        workers = 1
    counts = {"done": 0, "skipped": 0, "failed": 0}
    bar = tqdm(total=len(paths), unit="rec", desc="batch", file=sys.stderr, dynamic_ncols=True)

    def on_outcome(o) -> None:  # type: ignore[no-untyped-def]
        counts[o.outcome] += 1
        bar.set_postfix(counts, refresh=False)
        bar.update(1)

    try:
        result = run_batch(
            paths,
            workers=workers,
            scheduler=args.scheduler,
            force=args.force,
            progress=on_outcome,
            **({} if args.worker_wait is None else {"worker_wait_s": args.worker_wait}),
        )
    finally:
        bar.close()
    if args.summary is not None:
        write_summary_csv(args.summary, result.outcomes)
    for o in result.outcomes:
        if o.outcome == "failed":
            print(f"failed: {o.error}", file=sys.stderr)
    print(
        f"{len(result.outcomes)} records: {result.done} done, {result.skipped} skipped, "
        f"{result.failed} failed ({result.seconds:.1f} s"
        + (
            f", of which {result.startup_seconds:.1f} s starting up; "
            f"{result.records_per_second:.1f} records/s after start-up)"
            if result.startup_seconds > 0
            else ")"
        )
    )
    # 1 = the batch ran to the end but some records could not be processed (listed above);
    # 2 = none could be (nothing was done), as for measure.
    if result.failed and result.failed == len(result.outcomes):
        return 2
    return 1 if result.failed else 0
