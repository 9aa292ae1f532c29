"""`reviewapp export PATH --pdf FILE`: a true-scale report page, measurements and fiducials."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable
from pathlib import Path

from reviewapp.core.errors import ReviewError
from reviewapp.report.layout import STANDARD_GAINS_MM_PER_MV, STANDARD_SPEEDS_MM_PER_S


def _standard(values: tuple[float, ...], what: str, unit: str) -> Callable[[str], float]:
    """argparse type accepting only the standard recorder settings (a clear error otherwise)."""
    allowed = ", ".join(f"{v:g}" for v in values)

    def parse(text: str) -> float:
        try:
            v = float(text)
        except ValueError:
            v = float("nan")
        for ok in values:
            if abs(v - ok) < 1e-9:
                return ok
        raise argparse.ArgumentTypeError(
            f"{text} is not a standard {what}; use one of {allowed} {unit}"
        )

    return parse


def add_parser(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "export",
        help="write a true-scale report page (PDF/PNG), measurements (CSV), fiducials (WFDB)",
        description=(
            "Export one record's reading: a landscape report page at true scale (3 x 4 leads "
            "and a lead II rhythm strip on a 1 mm / 5 mm grid, calibration pulses, the global "
            "measurements with normal ranges and flags, reviewer-corrected marks distinguished "
            "from automatic ones, reading status and reviewer). Values are recomputed from the "
            "signal and the marks in the record's sidecar."
        ),
    )
    p.add_argument("path", type=Path, help="record file (for WFDB the .hea)")
    p.add_argument("--pdf", type=Path, metavar="FILE.pdf", help="write the page as PDF")
    p.add_argument(
        "--png",
        type=Path,
        metavar="FILE.png",
        help="write the page as an image: PNG (FILE.png, lossless) or JPEG (FILE.jpg)",
    )
    p.add_argument(
        "--csv",
        metavar="FILE",
        help="write the measurements as CSV ('-' for standard output)",
    )
    p.add_argument(
        "--wfdb-annotations",
        action="store_true",
        help="write the final fiducials as a WFDB annotation file <record>.rvw beside the record",
    )
    p.add_argument(
        "--reviewer",
        default=None,
        metavar="ID",
        help="print this reviewer's reading (default: a signed-off one, else the latest edited)",
    )
    p.add_argument("--paper", choices=("a4", "letter"), default="a4", help="paper (landscape)")
    p.add_argument(
        "--speed",
        type=_standard(STANDARD_SPEEDS_MM_PER_S, "paper speed", "mm/s"),
        default=25.0,
        metavar="MM_PER_S",
        help="paper speed: 12.5, 25 (default), 50 or 100 mm/s",
    )
    p.add_argument(
        "--gain",
        type=_standard(STANDARD_GAINS_MM_PER_MV, "gain", "mm/mV"),
        default=10.0,
        metavar="MM_PER_MV",
        help="gain: 2.5, 5, 10 (default), 20 or 40 mm/mV",
    )
    p.add_argument("--dpi", type=float, default=300.0, help="image resolution (300)")


def run(args: argparse.Namespace) -> int:
    from reviewapp.report.export import IMAGE_FORMATS, STDOUT, check_output_path

    if not (args.pdf or args.png or args.csv or args.wfdb_annotations):
        raise ReviewError("nothing to export: give --pdf, --png, --csv or --wfdb-annotations")
    if not (50.0 <= args.dpi <= 1200.0):
        raise ReviewError(f"--dpi must be between 50 and 1200, got {args.dpi:g}")
    # Check every target before the (slower) analysis, so a typo costs nothing.
    if args.pdf:
        check_output_path(args.pdf, "PDF", (".pdf",))
    if args.png:
        check_output_path(args.png, "page image", tuple(IMAGE_FORMATS))
    to_stdout = args.csv == STDOUT
    if args.csv and not to_stdout:
        check_output_path(args.csv, "CSV")
    from reviewapp.core.io import open_record
    from reviewapp.core.io.files import atomic_output
    from reviewapp.core.record import check_analysable
    from reviewapp.report.content import load_report_content

    # The analysis cannot work on a record too short, too coarsely sampled or too large:
    # refuse it in words before the report is made.
    check_analysable(open_record(args.path), args.path)
    from reviewapp.report.export import (
        write_image,
        write_measurements_csv,
        write_pdf,
        write_wfdb_annotations,
    )
    from reviewapp.report.layout import page_layout

    content = load_report_content(args.path, args.reviewer)
    layout = page_layout(args.paper, args.speed, args.gain)
    written: list[Path] = []
    # Each file is written to a temporary name beside it and renamed when complete: a full
    # disk or a kill never leaves a report cut short in place of the previous one.
    if args.pdf:
        with atomic_output(args.pdf, ReviewError) as tmp:
            write_pdf(tmp, content, layout)
        written.append(args.pdf)
    if args.png:
        with atomic_output(args.png, ReviewError) as tmp:
            write_image(tmp, content, layout, dpi=args.dpi)
        written.append(args.png)
    if args.csv and to_stdout:
        write_measurements_csv(args.csv, content)
    elif args.csv:
        with atomic_output(args.csv, ReviewError) as tmp:
            write_measurements_csv(tmp, content)
        written.append(Path(args.csv))
    if args.wfdb_annotations:
        written.append(write_wfdb_annotations(content))
    # With the CSV on standard output, progress goes to standard error to keep the CSV clean.
    out = sys.stderr if to_stdout else sys.stdout
    for p in written:
        print(f"wrote {p}", file=out)
    return 0
