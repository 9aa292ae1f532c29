"""Options shared by the subcommands that open a record file."""

from __future__ import annotations

import argparse


def add_reading_options(p: argparse.ArgumentParser) -> None:
    """``--fs`` and ``--units``: facts a file may not state (CSV without time, units)."""
    p.add_argument(
        "--fs",
        type=float,
        default=None,
        metavar="HZ",
        help="sampling rate for CSV files without a time column",
    )
    p.add_argument(
        "--units",
        default=None,
        metavar="U",
        help="sample units where the file does not say (uV, mV, V)",
    )
