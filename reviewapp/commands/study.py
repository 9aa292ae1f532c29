"""`reviewapp study FOLDER --out DIR`: the study table of final readings and the QT analysis.

Writes into DIR: ``records.csv`` (one row per record: final values with their provenance,
automatic values, flags; ``core/study/table.py``), ``beats.csv`` (beat-to-beat QT and RR of
the dominant beats), ``analysis.csv`` (``core/study/analysis_csv.py``), ``report.pdf`` and
``qt_rr_<subject>.png`` (``reviewapp/study_report``). Records are read on the batch engine
(Dask) like ``reviewapp batch``; sidecars are only read, never written.
"""

from __future__ import annotations

import argparse
import functools
import os
import sys
from collections.abc import Sequence
from pathlib import Path

from reviewapp import CLINICAL_CAUTION
from reviewapp.core.errors import ReviewError

# Below this many records a local cluster costs more than it saves (as for `reviewapp batch`).
SMALL_STUDY = 50
TOLERANCE_NAMES = {"qt": "qt_ms", "qrs": "qrs_ms", "pr": "pr_ms"}


def add_parser(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "study",
        help="QT study: table of final readings with provenance, analysis and report",
        description=(
            "Build the study table of every record under FOLDER (final reading of each record "
            "with where each value came from, subject, timepoint, reading status and flags) "
            "and the analysis a drug-safety QT study reports: replicates averaged, change from "
            "baseline of QTcF and heart rate with 90 % CI, categorical outliers (ICH E14, "
            "2005), individual (QTcI) and population QT/RR corrections (Malik et al., Heart "
            "2002), and a QT/RR picture per subject."
        ),
    )
    p.add_argument("folder", type=Path, metavar="FOLDER", help="folder of records (recursive)")
    p.add_argument("--out", type=Path, required=True, metavar="DIR", help="folder for the results")
    p.add_argument(
        "--workers",
        type=int,
        default=None,
        metavar="N",
        help=f"worker processes (default: all cores, or in-process below {SMALL_STUDY} "
        "records; 1 = in-process)",
    )
    p.add_argument(
        "--scheduler", default=None, metavar="ADDRESS", help="use an existing Dask cluster"
    )
    p.add_argument(
        "--timepoints",
        type=Path,
        default=None,
        metavar="MAP.csv",
        help="CSV with columns record, subject, timepoint; its values win over the record "
        "headers ('# subject:', '# timepoint:')",
    )
    p.add_argument(
        "--baseline",
        action="append",
        default=[],
        metavar="LABEL",
        help="timepoint label of the baseline (repeatable; default: labels starting with "
        "'pre-dose' or 'baseline')",
    )
    p.add_argument(
        "--drug-free",
        action="append",
        default=[],
        metavar="LABEL",
        help="more drug-free timepoint labels for the QT/RR fits (repeatable; the baseline and "
        "labels starting with 'day -N', 'screening', 'run-in' or 'drug-free' always are)",
    )
    p.add_argument(
        "--tolerance",
        action="append",
        default=[],
        metavar="NAME=MS",
        help="readers differ when QT, QRS or PR differ by more than this (e.g. qt=15; "
        "default 10 ms each)",
    )
    p.add_argument(
        "--signed-only",
        action="store_true",
        help="analyse only records whose final reading is signed or adjudicated "
        "(the table still lists every record)",
    )
    p.add_argument(
        "--title", default=None, metavar="TEXT", help="report title (default: the folder name)"
    )
    p.add_argument(
        "--no-report", action="store_true", help="write the tables only (no PDF, no pictures)"
    )


def parse_tolerances(items: Sequence[str]) -> dict[str, float] | None:
    """``["qt=15", "pr_ms=12"]`` -> ``{"qt_ms": 15.0, "pr_ms": 12.0}`` over the defaults."""
    if not items:
        return None
    from reviewapp.core.marks.final import DEFAULT_STUDY_TOLERANCES_MS

    out = dict(DEFAULT_STUDY_TOLERANCES_MS)
    for item in items:
        name, sep, value = item.partition("=")
        key = TOLERANCE_NAMES.get(name.strip().lower().removesuffix("_ms"))
        try:
            ms = float(value)
        except ValueError:
            ms = float("nan")
        if not sep or key is None or not ms >= 0:
            raise ReviewError(
                f"--tolerance {item!r}: expected NAME=MS with NAME one of qt, qrs, pr and MS a "
                "number of milliseconds >= 0, e.g. qt=15"
            )
        out[key] = ms
    return out


def _check_out(out: Path) -> Path:
    if out.exists() and not out.is_dir():
        raise ReviewError("exists and is not a folder; give a folder for the results", out)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise ReviewError(f"cannot create the results folder: {err.strerror or err}", out) from None
    if not os.access(out, os.W_OK):
        raise ReviewError("cannot write the results there: no permission", out)
    return out


def _record_ids(paths: Sequence[Path], folder: Path) -> list[str]:
    """Record names (file stems); where two records share a stem, their relative paths."""
    stems = [p.stem for p in paths]
    dup = {s for s in stems if stems.count(s) > 1}
    out = []
    for p in paths:
        if p.stem in dup:
            out.append(p.resolve().relative_to(folder.resolve()).with_suffix("").as_posix())
        else:
            out.append(p.stem)
    return out


def run(args: argparse.Namespace) -> int:
    from dataclasses import replace

    from tqdm import tqdm

    from reviewapp.batch.runner import run_batch
    from reviewapp.core.io import find_records
    from reviewapp.core.study.analysis import analyse_study
    from reviewapp.core.study.analysis_csv import analysis_csv_text
    from reviewapp.core.study.table import (
        StudyRow,
        apply_mapping,
        beats_csv_text,
        failed_row,
        records_csv_text,
    )
    from reviewapp.core.study.task import study_records
    from reviewapp.core.study.timepoints import lookup, read_timepoint_map

    folder = Path(args.folder)
    if not folder.is_dir():
        raise ReviewError("not a folder", folder)
    if args.workers is not None and args.workers < 1:
        raise ReviewError(f"--workers must be at least 1, got {args.workers}")
    tolerances = parse_tolerances(args.tolerance)
    mapping = read_timepoint_map(args.timepoints) if args.timepoints is not None else None
    if Path(args.out).resolve() == folder.resolve():
        raise ReviewError("give a results folder other than the study folder itself", args.out)
    out = _check_out(Path(args.out))
    out_resolved = out.resolve()
    paths = [
        p for p in find_records(folder, recursive=True) if out_resolved not in p.resolve().parents
    ]
    if not paths:
        raise ReviewError(f"no records found under {folder}")
    workers = args.workers
    if workers is None and args.scheduler is None and len(paths) < SMALL_STUDY:
        workers = 1
    bar = tqdm(total=len(paths), unit="rec", desc="study", file=sys.stderr, dynamic_ncols=True)
    try:
        result = run_batch(
            paths,
            workers=workers,
            scheduler=args.scheduler,
            progress=lambda _o: bar.update(1),
            task=functools.partial(study_records, tolerances_ms=tolerances),
        )
    finally:
        bar.close()
    rows: list[StudyRow] = []
    matched: set[int] = set()
    for path, rid, o in zip(paths, _record_ids(paths, folder), result.outcomes, strict=True):
        row = o if isinstance(o, StudyRow) else failed_row(str(path), o.error or "failed")
        if mapping is not None:
            entry = lookup(mapping, path, folder)
            if entry is not None:
                matched.add(entry.line)
            row = apply_mapping(row, entry)
        rows.append(replace(row, record=rid))
    (out / "records.csv").write_text(records_csv_text(rows), encoding="utf-8")
    (out / "beats.csv").write_text(beats_csv_text(rows), encoding="utf-8")
    failed = [r for r in rows if r.error]
    for r in failed:
        print(f"failed: {r.error}", file=sys.stderr)
    if len(failed) == len(rows):
        raise ReviewError(
            f"none of the {len(rows)} records could be measured (see {out / 'records.csv'})"
        )
    analysis = analyse_study(
        rows, baseline=args.baseline, drug_free=args.drug_free, signed_only=args.signed_only
    )
    (out / "analysis.csv").write_text(analysis_csv_text(analysis), encoding="utf-8")
    written = ["records.csv", "beats.csv", "analysis.csv"]
    if not args.no_report:
        from reviewapp.study_report import write_study_report

        written += write_study_report(
            out,
            analysis,
            title=args.title or f"QT study: {folder.resolve().name}",
            tolerances_ms=tolerances,
        )
    statuses = ", ".join(f"{n} {s}" for s, n in sorted(analysis.status_counts.items()))
    print(
        f"{len(rows)} records ({statuses}); {len(analysis.subjects)} subjects, "
        f"{len(analysis.plan.timepoints)} timepoints; {len(analysis.used)} ECGs analysed, "
        f"{len(analysis.excluded)} left out; {result.records_per_second:.1f} records/s"
    )
    flags = {
        f: sum(r.flag(f) for r in rows) for f in ("not_signed", "readers_differ", "no_adjudication")
    }
    print("flags: " + ", ".join(f"{n} {f.replace('_', ' ')}" for f, n in flags.items()))
    if mapping is not None and len(matched) < len(mapping):
        print(f"note: {len(mapping) - len(matched)} row(s) of {args.timepoints} matched no record")
    for note in analysis.notes:
        print(f"note: {note}")
    print(f"wrote {', '.join(written)} to {out}")
    print(CLINICAL_CAUTION)
    return 1 if failed else 0
