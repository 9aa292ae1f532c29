"""`reviewapp export PATH --pdf FILE`: a true-scale report page, measurements and fiducials."""

from __future__ import annotations

import argparse
from pathlib import Path

from reviewapp.core.errors import ReviewError


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
    p.add_argument("--pdf", type=Path, metavar="FILE", help="write the page as PDF")
    p.add_argument("--png", type=Path, metavar="FILE", help="write the page as PNG (300 dpi)")
    p.add_argument("--csv", type=Path, metavar="FILE", help="write the measurements as CSV")
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
    p.add_argument("--speed", type=float, default=25.0, metavar="MM_PER_S", help="paper speed (25)")
    p.add_argument("--gain", type=float, default=10.0, metavar="MM_PER_MV", help="gain (10)")
    p.add_argument("--dpi", type=float, default=300.0, help="PNG resolution (300)")


def run(args: argparse.Namespace) -> int:
    if not (args.pdf or args.png or args.csv or args.wfdb_annotations):
        raise ReviewError("nothing to export: give --pdf, --png, --csv or --wfdb-annotations")
    if not (5.0 <= args.speed <= 100.0):
        raise ReviewError(f"--speed must be between 5 and 100 mm/s, got {args.speed:g}")
    if not (1.0 <= args.gain <= 40.0):
        raise ReviewError(f"--gain must be between 1 and 40 mm/mV, got {args.gain:g}")
    if not (50.0 <= args.dpi <= 1200.0):
        raise ReviewError(f"--dpi must be between 50 and 1200, got {args.dpi:g}")
    from reviewapp.report.content import load_report_content
    from reviewapp.report.export import (
        write_measurements_csv,
        write_pdf,
        write_png,
        write_wfdb_annotations,
    )
    from reviewapp.report.layout import page_layout

    content = load_report_content(args.path, args.reviewer)
    layout = page_layout(args.paper, args.speed, args.gain)
    written: list[Path] = []
    if args.pdf:
        write_pdf(args.pdf, content, layout)
        written.append(args.pdf)
    if args.png:
        write_png(args.png, content, layout, dpi=args.dpi)
        written.append(args.png)
    if args.csv:
        write_measurements_csv(args.csv, content)
        written.append(args.csv)
    if args.wfdb_annotations:
        written.append(write_wfdb_annotations(content))
    for p in written:
        print(f"wrote {p}")
    return 0
