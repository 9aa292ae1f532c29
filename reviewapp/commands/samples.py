"""`reviewapp samples FOLDER`: regenerate the invented demo worklist (deterministic)."""

from __future__ import annotations

import argparse
from pathlib import Path


def add_parser(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "samples",
        help="write the invented demo worklist (synthetic records with ground truth)",
        description="Regenerate the bundled, invented demo worklist. Same files every time; each "
        "file is written whole or not at all, so an interrupted run is simply run again.",
    )
    p.add_argument("outdir", metavar="FOLDER", help="folder to write the records into")
    p.add_argument(
        "--study",
        action="store_true",
        help="write the invented demo QT study (75 records with readings) instead of the worklist",
    )


def run(args: argparse.Namespace) -> int:
    from reviewapp.core.errors import ReviewError
    from reviewapp.core.marks.durable import remove_stale_temps_in
    from reviewapp.core.synth.demo import main as demo_main

    out = Path(args.outdir)
    if out.exists() and not out.is_dir():
        raise ReviewError("exists and is not a folder; give a folder for the records", out)
    if out.is_dir():  # what an interrupted run left half-written: never a record, only temps
        remove_stale_temps_in(out, marker="")
    return int(demo_main([args.outdir, *(["--study"] if args.study else [])]) or 0)
