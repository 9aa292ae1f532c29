"""`reviewapp measure PATH...`: automated measurements of records, as a table, JSON or CSV.

The JSON schema is documented in ``reviewapp.core.measure.output`` (module docstring and
``MEASURE_JSON_SCHEMA``). A record that fails to open or measure is reported on one line on
stderr (and as an error object / CSV row); the others are still measured. Exit code 0 when
all records were measured, 1 when some failed but not all, 2 when none could be measured
(e.g. a single unreadable record).
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

from reviewapp.commands._options import add_reading_options
from reviewapp.core.errors import ReviewError
from reviewapp.core.record import MIN_ANALYSIS_S, check_analysable

# Shortest record measured (see core.record.check_analysable).
MIN_DURATION_S = MIN_ANALYSIS_S


def add_parser(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "measure",
        help="measure records without the window (table, JSON or CSV)",
        description=(
            "Detect beats and wave boundaries and print intervals, QTc, axes, amplitudes, "
            "ST levels and findings for each record."
        ),
    )
    p.add_argument(
        "paths",
        nargs="+",
        type=Path,
        metavar="PATH",
        help="record file(s) (WFDB .hea or record name, EDF, CSV, aECG XML, DICOM)",
    )
    p.add_argument(
        "--format",
        choices=("table", "json", "csv"),
        default="table",
        help="table (readable summary, default), json (one object per record, JSON Lines), "
        "csv (one row per record)",
    )
    p.add_argument(
        "--per-lead",
        action="store_true",
        help="include each lead's marks per beat (json) / per-lead amplitudes (table); "
        "not available with csv",
    )
    p.add_argument(
        "--final",
        action="store_true",
        help="report the final reading from the record's marks file (adjudicated, else the "
        "signed reading, first reader before second, else a reading in progress, else "
        "automatic) with where each value came from; json adds a 'final' object, csv "
        "<name>_source and auto_<name> columns",
    )
    add_reading_options(p)


def measure_path(
    path: Path,
    *,
    fs_hz: float | None = None,
    per_lead: bool = False,
    units: str | None = None,
    final: bool = False,
) -> dict:
    """Open, analyse and measure one record; the JSON-ready dict (raises ReviewError).

    ``final``: measure under the final reading of the record's sidecar and add its ``final``
    object (``core/marks/final_output.py``)."""
    from reviewapp.core.io import open_record

    if fs_hz is not None and not fs_hz > 0:
        raise ReviewError(f"--fs must be a positive number of Hz, got {fs_hz}")
    record = open_record(path, fs_hz=fs_hz, units=units)
    check_analysable(record, path)
    # The engine (and SciPy) is imported only for a record it can work on: a refused file
    # costs the reader alone.
    from reviewapp.core.engine import analyse
    from reviewapp.core.measure.output import reading_to_dict

    analysis = analyse(record)
    if not final:
        return reading_to_dict(analysis, analysis.reading(), path=str(path), per_lead=per_lead)
    from reviewapp.core.marks.final import resolve_final, sidecar_for
    from reviewapp.core.marks.final_output import final_to_dict

    resolved = resolve_final(sidecar_for(record), analysis)
    d = reading_to_dict(analysis, resolved.reading, path=str(path), per_lead=per_lead)
    d["final"] = final_to_dict(resolved)
    return d


def run(args: argparse.Namespace) -> int:
    from reviewapp.core.marks.final_output import final_csv_text, final_table_text
    from reviewapp.core.measure.output import csv_text, error_dict, table_text

    results: list[dict[str, Any]] = []
    failed = 0
    if args.per_lead and args.format == "csv":
        raise ReviewError(
            "--per-lead applies to json and table output; csv has one row per record "
            "(global values only)"
        )
    for path in args.paths:
        try:
            d = measure_path(
                path, fs_hz=args.fs, per_lead=args.per_lead, units=args.units, final=args.final
            )
        except ReviewError as err:
            msg = str(err)
        except MemoryError:
            msg = f"{path}: not enough memory to measure this record"
        except Exception as err:  # one bad record must not stop the others
            msg = f"{path}: could not be measured ({type(err).__name__}: {err})"
        else:
            results.append(d)
            if args.format == "json":
                print(json.dumps(d, allow_nan=False), flush=True)
            elif args.format == "table":
                head = final_table_text(d["final"]) + "\n" if "final" in d else ""
                print(head + table_text(d, per_lead=args.per_lead), flush=True)
            continue
        failed += 1
        msg = " ".join(msg.split())  # one line, whatever the underlying error said
        print(f"reviewapp: {msg}", file=sys.stderr, flush=True)
        e = error_dict(Path(path).stem, str(path), msg)
        results.append(e)
        if args.format == "json":
            print(json.dumps(e), flush=True)
    if args.format == "csv":
        sys.stdout.write(final_csv_text(results) if args.final else csv_text(results))
    if not failed:
        return 0
    return 2 if failed == len(args.paths) else 1
