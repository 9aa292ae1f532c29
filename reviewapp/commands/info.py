"""`reviewapp info PATH`: print what a record file holds (format, leads, rate, subject, notes)."""

from __future__ import annotations

import argparse

from reviewapp.commands._options import add_reading_options


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
    add_reading_options(p)


def run(args: argparse.Namespace) -> int:
    from reviewapp.core.describe import describe_record
    from reviewapp.core.io import open_record

    record = open_record(args.path, fs_hz=args.fs, units=args.units)
    print(describe_record(record))
    return 0
