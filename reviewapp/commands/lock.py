"""`reviewapp lock PATH`: who holds a record's marks lock; take it over on purpose.

A window that has a record open holds its lock, and only the lock holder saves. A lock whose
program is gone on this computer is taken over without asking; one written on another
computer cannot be checked from here and counts as held. This command says which it is and,
with ``--take-over READER --confirm``, takes the lock as the window's take-over does (the
same ``take_over_marks``): an audit event ``take_over_lock`` naming the previous holder is
saved in the marks file, the displaced window can no longer save there, and the lock is then
released so the reader can open the record.
"""

from __future__ import annotations

import argparse

from reviewapp.commands._options import add_reading_options

ROLES = ("first", "second", "adjudicator")


def add_parser(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "lock",
        help="who holds a record's marks lock; take it over on purpose (--take-over, --confirm)",
        description="Say who holds the lock of a record's marks file (a window on this or "
        "another computer), and whether that holder can still be running. With --take-over "
        "READER --confirm, take the lock over as the window does: the take-over is recorded "
        "in the marks file's audit trail, then the lock is released. Take over only a lock "
        "you know is abandoned: the window that held it can no longer save its reading there "
        "(it can keep its changes as a separate file).",
    )
    p.add_argument(
        "path",
        metavar="PATH",
        help="record file (WFDB .hea or record name, EDF, CSV, aECG XML, DICOM)",
    )
    p.add_argument(
        "--take-over",
        metavar="READER",
        default=None,
        help="take the lock over as READER (your reader id); needs --confirm",
    )
    p.add_argument(
        "--role",
        choices=ROLES,
        default="first",
        help="READER's role in this record's readings (default first; a second reader is blinded)",
    )
    p.add_argument(
        "--confirm",
        action="store_true",
        help="with --take-over: confirm that the holder is displaced (without it nothing is "
        "touched)",
    )
    add_reading_options(p)


def run(args: argparse.Namespace) -> int:
    from reviewapp.core.errors import ReviewError
    from reviewapp.core.io import open_record
    from reviewapp.core.workflow.opening import lock_report, take_over_marks
    from reviewapp.core.workflow.roles import ReadMode, usable_reader_id

    if args.confirm and args.take_over is None:
        raise ReviewError(
            "--confirm confirms a take-over: give --take-over READER with it", args.path
        )
    reader = None
    if args.take_over is not None:
        reader = usable_reader_id(args.take_over)
        if reader is None:
            raise ReviewError(
                f"reader id {args.take_over!r} is not usable: use 1-64 letters, digits, '.', "
                "'_', '@' or '-', starting with a letter or digit",
                args.path,
            )
    record = open_record(args.path, fs_hz=args.fs, units=args.units)
    report = lock_report(record)
    if report is None:  # every record opened from a path has a file
        raise ReviewError("the record has no file, so no marks file and no lock", args.path)
    print(f"{record.name}: marks lock {report.text}")
    if reader is None:
        if report.held:
            print(
                "to take it over: reviewapp lock PATH --take-over YOUR_ID --confirm (the "
                "holder can then no longer save; recorded in the audit trail)"
            )
        return 0
    if not args.confirm:
        raise ReviewError(
            "not taken over: add --confirm to displace the holder (its window can then no "
            "longer save there)",
            report.lock_path,
        )
    if report.state == "free":
        print("nothing to take over")
        return 0
    mode = ReadMode(args.role, blinded=args.role == "second")
    opening = take_over_marks(record, reader, mode)
    if opening.problems:
        raise opening.problems[0]
    assert opening.store is not None
    try:
        if opening.warning:  # a live holder was displaced: the window's own words
            print(opening.warning)
            print(f"recorded in {opening.store.path.name} as a take-over by {reader}")
        else:
            print("the stale lock was cleared (nothing to record: its holder was gone)")
    finally:
        opening.store.close()
    print("lock released: open the record to read it")
    return 0
