"""`reviewapp info PATH`: print what a record file holds (format, leads, rate, subject, notes)."""

from __future__ import annotations

import argparse


def add_parser(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "info",
        help="describe a record file (format, leads, sampling rate, duration, subject facts)",
        description="Open a record and print what it holds. Nothing is measured.",
    )
    p.add_argument(
        "path",
        metavar="PATH",
        help="record file (WFDB .hea or record name, EDF, CSV, aECG XML, DICOM)",
    )
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


def run(args: argparse.Namespace) -> int:
    from reviewapp.core.describe import describe_record
    from reviewapp.core.io import open_record

    record = open_record(args.path, fs_hz=args.fs, units=args.units)
    print(describe_record(record))
    return 0
