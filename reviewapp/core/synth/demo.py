"""The invented demo worklist: a fictional early-phase drug study, written to ``sample_records/``.

Everything here is made up: study RA-DEMO-101, the compound ZX-0917 ("torvamidine"), the
subjects S-001 ... S-014 and their facts. The records are synthetic ECGs (``generate``) with
exact truth files beside them. Regenerate (deterministic: fixed seeds, fixed dates)::

    python -m reviewapp.core.synth.demo sample_records
"""

from __future__ import annotations

import argparse
import csv
import io
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path

from reviewapp.core.marks.durable import atomic_write
from reviewapp.core.record import SubjectFacts
from reviewapp.core.synth.generator import generate
from reviewapp.core.synth.params import SynthParams
from reviewapp.core.synth.wfdb_out import write_synthetic

STUDY = "RA-DEMO-101"
STUDY_TITLE = "fictional single-ascending-dose study of the invented compound ZX-0917 (torvamidine)"


@dataclass(frozen=True)
class DemoRecord:
    name: str
    subject_id: str
    age_years: int
    sex: str
    timepoint: str
    acquired_at: datetime
    scenario: str
    params: SynthParams


# Each subject's QRS size (``r_amp_mv``, 1.4-1.7): precordial QRS 1.5-1.9 mV peak to peak in
# V2, R 0.9-1.7 mV in V5, within adult normal limits and under the voltage criteria of left
# ventricular hypertrophy (common practice, no source; values from memory); larger where the
# axis is vertical (s002), since V4-V6 then see less of the main force.
DEMO_RECORDS: tuple[DemoRecord, ...] = (
    DemoRecord(
        "s001_predose",
        "S-001",
        28,
        "male",
        "pre-dose",
        datetime(2026, 3, 2, 7, 45),
        "normal sinus rhythm",
        SynthParams(
            r_amp_mv=1.6, hr_bpm=62, pr_ms=150, qrs_ms=88, qt_ms=392, qrs_axis_deg=55, seed=101
        ),
    ),
    DemoRecord(
        "s001_post2h",
        "S-001",
        28,
        "male",
        "post-dose 2 h",
        datetime(2026, 3, 2, 10, 0),
        "normal sinus rhythm, slightly faster",
        SynthParams(
            r_amp_mv=1.6, hr_bpm=68, pr_ms=150, qrs_ms=88, qt_ms=388, qrs_axis_deg=55, seed=102
        ),
    ),
    DemoRecord(
        "s002_predose",
        "S-002",
        30,
        "female",
        "pre-dose",
        datetime(2026, 3, 2, 7, 55),
        "sinus rhythm with mild sinus arrhythmia",
        SynthParams(
            r_amp_mv=1.7,
            hr_bpm=58,
            rr_sd_ms=45,
            pr_ms=142,
            qrs_ms=84,
            qt_ms=410,
            qrs_axis_deg=60,
            t_axis_deg=50,
            seed=201,
        ),
    ),
    DemoRecord(
        "s003_predose",
        "S-003",
        41,
        "female",
        "pre-dose",
        datetime(2026, 3, 3, 7, 40),
        "normal sinus rhythm (baseline of a QT prolongation series)",
        SynthParams(
            r_amp_mv=1.5, hr_bpm=64, pr_ms=164, qrs_ms=86, qt_ms=404, qrs_axis_deg=40, seed=301
        ),
    ),
    DemoRecord(
        "s003_post2h",
        "S-003",
        41,
        "female",
        "post-dose 2 h",
        datetime(2026, 3, 3, 9, 55),
        "QT longer than at pre-dose",
        SynthParams(
            r_amp_mv=1.5,
            hr_bpm=63,
            pr_ms=164,
            qrs_ms=86,
            qt_ms=442,
            qrs_axis_deg=40,
            t_amp_mv=0.40,
            seed=302,
        ),
    ),
    DemoRecord(
        "s003_post6h",
        "S-003",
        41,
        "female",
        "post-dose 6 h",
        datetime(2026, 3, 3, 13, 50),
        "marked QT prolongation",
        SynthParams(
            r_amp_mv=1.5,
            hr_bpm=64,
            pr_ms=166,
            qrs_ms=88,
            qt_ms=486,
            qrs_axis_deg=40,
            t_amp_mv=0.33,
            t_axis_deg=35,
            seed=303,
        ),
    ),
    DemoRecord(
        "s005_post1h",
        "S-005",
        45,
        "male",
        "post-dose 1 h",
        datetime(2026, 3, 4, 8, 55),
        "noisy tracing: muscle noise, mains interference, baseline wander",
        SynthParams(
            r_amp_mv=1.5,
            hr_bpm=74,
            pr_ms=156,
            qrs_ms=92,
            qt_ms=384,
            qrs_axis_deg=30,
            emg_snr_db=20.0,
            mains_hz=50.0,
            mains_mv=0.06,
            baseline_wander_mv=0.35,
            seed=501,
        ),
    ),
    DemoRecord(
        "s007_predose",
        "S-007",
        52,
        "male",
        "pre-dose",
        datetime(2026, 3, 5, 7, 35),
        "first-degree AV block",
        SynthParams(
            r_amp_mv=1.4,
            hr_bpm=58,
            pr_ms=236,
            p_ms=108,
            qrs_ms=90,
            qt_ms=412,
            qrs_axis_deg=20,
            seed=701,
        ),
    ),
    DemoRecord(
        "s009_post4h",
        "S-009",
        37,
        "female",
        "post-dose 4 h",
        datetime(2026, 3, 5, 11, 50),
        "a premature ventricular beat",
        SynthParams(
            r_amp_mv=1.6,
            hr_bpm=66,
            pr_ms=148,
            qrs_ms=86,
            qt_ms=398,
            qrs_axis_deg=50,
            ectopic_beats=(5,),
            seed=901,
        ),
    ),
    DemoRecord(
        "s011_predose",
        "S-011",
        58,
        "male",
        "pre-dose",
        datetime(2026, 3, 6, 7, 50),
        "complete left bundle branch block",
        SynthParams(
            r_amp_mv=1.6,
            hr_bpm=70,
            pr_ms=172,
            qrs_ms=148,
            qt_ms=462,
            qrs_axis_deg=-25,
            t_axis_deg=155,
            wide_qrs=True,
            seed=1101,
        ),
    ),
    DemoRecord(
        "s014_post2h",
        "S-014",
        34,
        "female",
        "post-dose 2 h",
        datetime(2026, 3, 6, 10, 5),
        "atrial fibrillation",
        SynthParams(
            r_amp_mv=1.5,
            hr_bpm=80,
            af=True,
            f_wave_mv=0.065,
            qrs_ms=90,
            qt_ms=380,
            qrs_axis_deg=60,
            seed=1401,
        ),
    ),
)


def _readme() -> str:
    lines = [
        "# Sample records (invented)",
        "",
        "These ECGs are **synthetic and invented**. They were generated by",
        "`reviewapp.core.synth` (a heart-vector model projected onto the 12 leads) for a",
        f"{STUDY_TITLE},",
        f"study code {STUDY}. The study, the compound, the subjects and every subject fact",
        "are made up; no record comes from a person. Use them to try the application, never",
        "as a reference for clinical values.",
        "",
        "Regenerate (deterministic, identical files):",
        "",
        "    python -m reviewapp.core.synth.demo sample_records",
        "",
        "Each record: 10 s, 12 leads, 500 Hz, WFDB format 16 (1000 ADC units per mV).",
        "Header comments hold the subject facts (`# subject: S-014`, `# age: 34`,",
        "`# sex: female`, `# timepoint: post-dose 2 h`). `<name>.truth.json` holds the exact",
        "construction truth: every beat's P onset/end, QRS onset/end and T end in seconds from",
        "record start (first/last non-zero sample of the noise-free wave), the intervals and",
        "frontal axes; `worklist.csv` lists the records for batch review.",
        "",
        "| record | subject | timepoint | scenario |",
        "|---|---|---|---|",
    ]
    lines += [f"| {d.name} | {d.subject_id} | {d.timepoint} | {d.scenario} |" for d in DEMO_RECORDS]
    lines += [
        "",
        "`study/` holds a second invented study, for `reviewapp study`: triplicate ECGs of",
        "five subjects at drug-free, baseline and post-dose timepoints, with readings; see its",
        "README (regenerate: `reviewapp samples sample_records/study --study`). The window's",
        "worklist on this folder lists the 11 records above and names the study's 75 on its",
        "count line: tick Subfolders to list them too (with a Folder column), or open `study/`",
        "for the study alone. `reviewapp batch` and `reviewapp study` search subfolders, so on",
        "this folder they take in the study's records too; run them on `study/` for the study",
        "alone.",
    ]
    return "\n".join(lines) + "\n"


def write_demo_record(demo: DemoRecord, folder: Path) -> Path:
    subject = SubjectFacts(
        subject_id=demo.subject_id,
        age_years=float(demo.age_years),
        sex=demo.sex,
        acquired_at=demo.acquired_at,
        comments=(f"timepoint: {demo.timepoint}", f"study: {STUDY} (fictional)"),
    )
    syn = generate(demo.params, name=demo.name, subject=subject)
    return write_synthetic(syn, folder, demo.name)


def write_demo(folder: str | Path) -> list[Path]:
    """Write every demo record, the worklist and the README into ``folder``."""
    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    paths = [write_demo_record(d, out) for d in DEMO_RECORDS]
    fh = io.StringIO()
    w = csv.writer(fh, lineterminator="\n")
    w.writerow(["record", "subject", "sex", "age", "timepoint", "study"])
    for d in DEMO_RECORDS:
        w.writerow([f"{d.name}.hea", d.subject_id, d.sex, d.age_years, d.timepoint, STUDY])
    atomic_write(out / "worklist.csv", fh.getvalue().encode("utf-8"), "cannot write the worklist")
    atomic_write(out / "README.md", _readme().encode("utf-8"), "cannot write the README")
    return paths


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(
        prog="python -m reviewapp.core.synth.demo",
        description="Write the invented demo worklist (synthetic ECGs with exact truth).",
    )
    parser.add_argument("folder", type=Path, help="output folder, e.g. sample_records")
    parser.add_argument(
        "--study", action="store_true", help="write the demo QT study instead of the worklist"
    )
    args = parser.parse_args(argv)
    if args.study:
        from reviewapp.core.synth.demo_study import main as study_main

        return study_main([str(args.folder)])
    paths = write_demo(args.folder)
    print(f"wrote {len(paths)} synthetic records to {args.folder}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
