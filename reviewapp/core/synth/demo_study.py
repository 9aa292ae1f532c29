"""The invented demo QT study: triplicate ECGs of a few subjects, with readings, for ``study``.

Everything here is made up: study RA-DEMO-102, the compound ZX-0917 ("torvamidine"), the
subjects S-101 ... and their facts, the readers ``reader1``, ``reader2``, ``adjudicator1``.
The ECGs are synthetic (``generator.generate``); no record comes from a person.

Design (one subject; ``STUDY_TIMEPOINTS``):
- day -1, drug-free: three single ECGs at rest supine, standing and after a short walk, so
  the heart rate spreads for the subject's own QT/RR fit;
- dosing day: a pre-dose triplicate (the baseline) and triplicates 1, 3 and 6 h after dose.
Each subject has their own QT/RR relation QT = a * RR^b (the value at each ECG's mean RR;
beat to beat the QT follows RR by Fridericia's exponent, ``qt_rate_adapt``), and some have a
drug effect on QT (and on heart rate) that peaks at 3 h: ``SUBJECTS`` lists it, so the
analysis can be checked against what was built in.

Readings (``write_readings``), made through the marks store as readers would: the batch step
stores the automatic marks of every record; ``reader1`` signs every record off, correcting the
T end where the automatic QT is more than 4 ms from the constructed one, except the 6 h
triplicate of the last subject (not read yet) and one ECG left in progress; ``reader2`` reads
the 3 h triplicates blinded as second reader; on one ECG the two differ and ``adjudicator1``
adopts the second reader's QT, on another they differ and nobody has adjudicated yet.

Regenerate (the records are identical each time; the sidecars' event ids are random)::

    reviewapp samples sample_records/study --study

It lives in ``sample_records/study/``, a subfolder of the demo worklist: ``reviewapp study`` and
``reviewapp batch`` search a folder recursively, so either run on ``sample_records`` also
takes it in.
"""

from __future__ import annotations

import argparse
import csv
import io
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta
from pathlib import Path

import numpy as np

from reviewapp.core.marks.durable import atomic_write
from reviewapp.core.record import SubjectFacts
from reviewapp.core.synth.generator import SyntheticECG, generate
from reviewapp.core.synth.params import SynthParams

STUDY = "RA-DEMO-102"
STUDY_TITLE = "fictional multiple-dose QT assessment of the invented compound ZX-0917 (torvamidine)"
DOSE_AT = datetime(2026, 4, 7, 8, 0)
READ_AT = datetime(2026, 4, 9, 9, 0)
CORRECT_ABOVE_MS = 4.0  # reader1 corrects a T end whose QT is further than this from the truth


@dataclass(frozen=True)
class StudySubject:
    """One invented subject: QT/RR relation, resting rate, drug effect at its 3 h peak."""

    subject_id: str
    sex: str
    age_years: int
    a_ms: float  # QT at RR = 1 s, drug-free
    b: float  # QT/RR exponent
    hr_bpm: float  # resting heart rate on the dosing day
    qt_effect_ms: float  # drug effect on QT at the peak (3 h)
    hr_effect_bpm: float  # drug effect on heart rate at the peak
    qrs_axis_deg: float
    t_amp_mv: float
    seed: int


SUBJECTS: tuple[StudySubject, ...] = (
    StudySubject("S-101", "male", 31, 402.0, 0.32, 62.0, 0.0, 0.0, 55.0, 0.36, 10100),
    StudySubject("S-102", "female", 27, 418.0, 0.38, 70.0, 14.0, 4.0, 70.0, 0.30, 10200),
    StudySubject("S-103", "male", 44, 432.0, 0.29, 58.0, 72.0, 2.0, 35.0, 0.34, 10300),
    StudySubject("S-104", "female", 38, 428.0, 0.41, 72.0, 36.0, 6.0, 62.0, 0.28, 10400),
    StudySubject("S-105", "male", 52, 410.0, 0.35, 66.0, 8.0, 0.0, 20.0, 0.38, 10500),
)


@dataclass(frozen=True)
class StudyTimepoint:
    label: str
    code: str  # in record names
    replicates: int
    hr_offset_bpm: float  # day -1 manoeuvres: rate change against rest
    effect_fraction: float  # share of the peak drug effect
    at: datetime


STUDY_TIMEPOINTS: tuple[StudyTimepoint, ...] = (
    StudyTimepoint("day -1 supine", "dm1_supine", 1, -8.0, 0.0, DOSE_AT - timedelta(hours=24)),
    StudyTimepoint(
        "day -1 standing", "dm1_standing", 1, 12.0, 0.0, DOSE_AT - timedelta(hours=23, minutes=50)
    ),
    StudyTimepoint(
        "day -1 after walking", "dm1_walk", 1, 24.0, 0.0, DOSE_AT - timedelta(hours=23, minutes=40)
    ),
    StudyTimepoint("pre-dose", "pre", 3, 0.0, 0.0, DOSE_AT - timedelta(minutes=30)),
    StudyTimepoint("post-dose 1 h", "1h", 3, 0.0, 0.55, DOSE_AT + timedelta(hours=1)),
    StudyTimepoint("post-dose 3 h", "3h", 3, 0.0, 1.0, DOSE_AT + timedelta(hours=3)),
    StudyTimepoint("post-dose 6 h", "6h", 3, 0.0, 0.45, DOSE_AT + timedelta(hours=6)),
)

_TIMEPOINT_CODES = tuple(t.code for t in STUDY_TIMEPOINTS)


@dataclass(frozen=True)
class StudyECG:
    """One record of the study: who, when, and the QT and rate it was built with."""

    name: str
    subject: StudySubject
    timepoint: StudyTimepoint
    replicate: int
    hr_bpm: float
    qt_ms: float  # the subject's QT at this rate plus the drug effect
    acquired_at: datetime

    @property
    def params(self) -> SynthParams:
        s = self.subject
        rr_s = 60.0 / self.hr_bpm
        return SynthParams(
            hr_bpm=self.hr_bpm,
            rr_sd_ms=22.0,
            pr_ms=152.0,
            qrs_ms=90.0,
            # qt_rate_adapt gives each beat qt_ms * RR^(1/3); at the mean RR this is the QT asked.
            qt_ms=self.qt_ms / rr_s ** (1.0 / 3.0),
            qt_rate_adapt=True,
            qrs_axis_deg=s.qrs_axis_deg,
            t_axis_deg=s.qrs_axis_deg - 15.0,
            t_amp_mv=s.t_amp_mv,
            baseline_wander_mv=0.05,
            seed=s.seed + 10 * _TIMEPOINT_CODES.index(self.timepoint.code) + self.replicate,
        )


def extra_subjects(n: int, seed: int = 20260407) -> tuple[StudySubject, ...]:
    """``n`` more invented subjects (S-106 on), drawn at random within the same ranges."""
    rng = np.random.default_rng(seed)
    out = []
    for k in range(n):
        out.append(
            StudySubject(
                f"S-{106 + k:03d}",
                "female" if k % 2 else "male",
                int(rng.integers(22, 56)),
                float(np.round(rng.uniform(398.0, 436.0))),
                float(np.round(rng.uniform(0.28, 0.42), 3)),
                float(np.round(rng.uniform(58.0, 74.0))),
                float(np.round(rng.choice([0.0, 0.0, 10.0, 25.0, 45.0]))),
                float(np.round(rng.uniform(0.0, 5.0))),
                float(np.round(rng.uniform(10.0, 75.0))),
                float(np.round(rng.uniform(0.28, 0.40), 2)),
                20000 + 100 * k,
            )
        )
    return tuple(out)


def study_ecgs(subjects: Sequence[StudySubject] = SUBJECTS) -> list[StudyECG]:
    """Every ECG of the study, in acquisition order within each subject."""
    out = []
    for s in subjects:
        for tp in STUDY_TIMEPOINTS:
            for k in range(1, tp.replicates + 1):
                # Replicates a minute apart; the rate drifts by a beat per minute among them.
                hr = s.hr_bpm + tp.hr_offset_bpm + s.hr_effect_bpm * tp.effect_fraction
                hr += (0.0, 1.0, -1.0)[(k - 1) % 3]
                rr_s = 60.0 / hr
                qt = s.a_ms * rr_s**s.b + s.qt_effect_ms * tp.effect_fraction
                code = s.subject_id.lower().replace("-", "")
                name = f"{code}_{tp.code}" + (f"_{k}" if tp.replicates > 1 else "")
                out.append(StudyECG(name, s, tp, k, hr, qt, tp.at + timedelta(minutes=k - 1)))
    return out


def generate_ecg(ecg: StudyECG) -> SyntheticECG:
    s = ecg.subject
    facts = SubjectFacts(
        subject_id=s.subject_id,
        age_years=float(s.age_years),
        sex=s.sex,
        acquired_at=ecg.acquired_at,
        comments=(
            f"timepoint: {ecg.timepoint.label}",
            f"replicate: {ecg.replicate} of {ecg.timepoint.replicates}",
            f"study: {STUDY} (fictional)",
        ),
    )
    return generate(ecg.params, name=ecg.name, subject=facts)


def write_records(folder: Path, ecgs: Sequence[StudyECG]) -> list[Path]:
    """WFDB records (no truth files: the design above is the truth that matters here)."""
    from reviewapp.core.synth.wfdb_out import write_synthetic

    paths = []
    for ecg in ecgs:
        hea = write_synthetic(generate_ecg(ecg), folder, ecg.name, truth=False)
        paths.append(hea)
    return paths


def _clock(start: datetime):  # type: ignore[no-untyped-def]
    """A store clock that ticks one second per event from ``start`` (fixed dates)."""
    state = {"t": start}

    def now() -> str:
        state["t"] += timedelta(seconds=1)
        return state["t"].strftime("%Y-%m-%dT%H:%M:%S.000000Z")

    return now


def write_readings(folder: Path, ecgs: Sequence[StudyECG]) -> None:
    """Automatic marks for every record, then the readings of the module docstring."""
    from reviewapp.core.engine import analyse
    from reviewapp.core.io import open_record
    from reviewapp.core.marks import MarksStore, automatic_from_analysis, write_automatic

    last = ecgs[-1].subject.subject_id if ecgs else ""
    clock = _clock(READ_AT)
    for ecg in ecgs:
        record = open_record(folder / f"{ecg.name}.hea")
        analysis = analyse(record)
        write_automatic(
            record, automatic_from_analysis(analysis, computed_at=clock()), actor="batch"
        )
        rep = analysis.representative
        if rep is None or rep.marks.qrs_on is None or rep.marks.t_off is None:
            continue
        fs = record.fs_hz
        qrs_on_s = (rep.marks.qrs_on - rep.r_index) / fs
        auto_t_s = (rep.marks.t_off - rep.r_index) / fs
        auto_qt = (auto_t_s - qrs_on_s) * 1000.0
        tp, sid = ecg.timepoint.code, ecg.subject.subject_id
        if sid == last and tp == "6h":
            continue  # not read yet
        t1 = auto_t_s
        if abs(auto_qt - ecg.qt_ms) > CORRECT_ABOVE_MS:
            t1 = qrs_on_s + ecg.qt_ms / 1000.0
        if sid == "S-103" and tp == "3h" and ecg.replicate == 1:
            t1 = auto_t_s + 0.006
        with MarksStore.open(record, "reader1", role="first", clock=clock) as store:
            if t1 != auto_t_s:
                store.do(store.edits.move_fiducial("t_off", t1))
            if sid == "S-101" and tp == "6h" and ecg.replicate == 3:
                store.do(store.edits.move_fiducial("t_off", auto_t_s + 0.012))
                continue  # left in progress
            store.do(store.edits.sign_off())
        if tp != "3h":
            continue
        t2 = t1
        if sid == "S-103" and ecg.replicate == 1:
            t2 = auto_t_s + 0.024  # 18 ms later than reader1: adjudicated below
        if sid == "S-104" and ecg.replicate == 2:
            t2 = t1 - 0.014  # 14 ms earlier: differs, not adjudicated yet
        with MarksStore.open(record, "reader2", role="second", clock=clock) as store:
            if t2 != auto_t_s:
                store.do(store.edits.move_fiducial("t_off", t2))
            store.do(store.edits.sign_off())
        if sid == "S-103" and ecg.replicate == 1:
            with MarksStore.open(record, "adjudicator1", role="adjudicator", clock=clock) as store:
                second = store.readings()["reader2"]
                store.do(store.edits.adopt_interval("qt_ms", second))
                store.do(store.edits.sign_off())


def _readme(ecgs: Sequence[StudyECG], subjects: Sequence[StudySubject]) -> str:
    lines = [
        "# Demo QT study (invented)",
        "",
        "Synthetic ECGs of a",
        f"{STUDY_TITLE},",
        f"study code {STUDY}. The study, the compound, the subjects, the readers and every fact",
        "are made up; no record comes from a person.",
        "Use them to try `reviewapp study`, never as a reference for clinical values.",
        "",
        "    reviewapp study sample_records/study --out study-results",
        "",
        "Regenerate (records identical each time; the marks files' event ids are random):",
        "",
        "    reviewapp samples sample_records/study --study",
        "",
        "Design per subject: day -1 (drug-free) single ECGs supine, standing and after a short",
        "walk (heart-rate spread for the individual QT/RR fit), then on the dosing day a",
        "pre-dose triplicate (baseline) and triplicates 1, 3 and 6 h after the dose. Each",
        "record: 10 s, 12 leads, 500 Hz, WFDB format 16; header comments `# subject:`,",
        "`# timepoint:`, `# replicate:`. `worklist.csv` lists the records.",
        "",
        "Built in (QT = a * RR^b drug-free, plus the drug effect, which peaks at 3 h and is",
        "55 % of the peak at 1 h and 45 % at 6 h):",
        "",
        "| subject | sex, age | a (ms) | b | resting HR (bpm) | QT effect at 3 h (ms) |"
        " HR effect at 3 h (bpm) |",
        "|---|---|---|---|---|---|---|",
    ]
    lines += [
        f"| {s.subject_id} | {s.sex}, {s.age_years} | {s.a_ms:g} | {s.b:g} | {s.hr_bpm:g} | "
        f"{s.qt_effect_ms:g} | {s.hr_effect_bpm:g} |"
        for s in subjects
    ]
    lines += [
        "",
        "Readings in the `.marks.json` files (made through the marks store, as readers do):",
        "the automatic marks of every record; `reader1` (first reader) signed every record,",
        f"correcting the T end where the automatic QT was more than {CORRECT_ABOVE_MS:g} ms",
        "from the constructed one, except the 6 h triplicate of the last subject (not read",
        "yet) and s101_6h_3 (left in progress); `reader2` read the 3 h triplicates blinded;",
        "on s103_3h_1 they differ by 18 ms and `adjudicator1` adopted reader2's QT; on",
        "s104_3h_2 they differ by 14 ms and nobody has adjudicated yet.",
        "",
        f"{len(ecgs)} records.",
    ]
    return "\n".join(lines) + "\n"


def write_study(
    folder: str | Path, subjects: Sequence[StudySubject] = SUBJECTS, *, readings: bool = True
) -> list[Path]:
    """Write the study's records, readings, worklist and README into ``folder``."""
    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    ecgs = study_ecgs(subjects)
    paths = write_records(out, ecgs)
    if readings:
        write_readings(out, ecgs)
        for bak in out.glob("*.marks.json.bak"):  # the store's backups of its own first saves
            bak.unlink()
    fh = io.StringIO()
    w = csv.writer(fh, lineterminator="\n")
    w.writerow(["record", "subject", "timepoint", "replicate", "acquired_at", "study"])
    for e in ecgs:
        w.writerow(
            [
                f"{e.name}.hea",
                e.subject.subject_id,
                e.timepoint.label,
                e.replicate,
                e.acquired_at.isoformat(sep=" "),
                STUDY,
            ]
        )
    atomic_write(out / "worklist.csv", fh.getvalue().encode("utf-8"), "cannot write the worklist")
    readme = _readme(ecgs, subjects).encode("utf-8")
    atomic_write(out / "README.md", readme, "cannot write the README")
    return paths


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(
        prog="python -m reviewapp.core.synth.demo_study",
        description="Write the invented demo QT study (synthetic ECGs with readings).",
    )
    parser.add_argument("folder", type=Path, help="output folder, e.g. sample_records/study")
    parser.add_argument(
        "--more-subjects",
        type=int,
        default=0,
        metavar="N",
        help="add N invented subjects (S-106 on) to the five of the bundled study",
    )
    args = parser.parse_args(argv)
    subjects = SUBJECTS + extra_subjects(max(0, args.more_subjects))
    paths = write_study(args.folder, subjects)
    print(f"wrote {len(paths)} synthetic study records with readings to {args.folder}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
