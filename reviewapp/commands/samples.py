"""`reviewapp samples OUTDIR`: regenerate the invented demo worklist (deterministic)."""

from __future__ import annotations

import argparse


def add_parser(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "samples",
        help="write the invented demo worklist (synthetic records with ground truth)",
        description="Regenerate the bundled, invented demo worklist. Same files every time.",
    )
    p.add_argument("outdir", help="folder to write the records into")


def run(args: argparse.Namespace) -> int:
    from reviewapp.core.synth.demo import main as demo_main

    return int(demo_main([args.outdir]) or 0)
