"""LUDB's diagnostic labels (``ludb.csv``) and the statements that answer each of them.

LUDB: Kalyakulina AI et al., IEEE Access 8:186181-186190, 2020; the labels are the
cardiologists' reading of each record (``../shared/data/README.md``). Each label below is
answered by a set of statement codes: the label is "found" for a record when the engine
makes any of them.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from pathlib import Path

from reviewapp.core.record import SubjectFacts


@dataclass(frozen=True)
class Label:
    name: str
    column: str
    values: tuple[str, ...]  # ludb.csv lines (lower case) that carry the label
    codes: frozenset[str]  # statements that answer it
    note: str = ""

    def has(self, row: dict[str, str]) -> bool:
        lines = [x.strip().lower() for x in row[self.column].split("\n") if x.strip()]
        if not self.values:  # any entry at all in the column
            return bool(lines)
        return any(x in lines for x in self.values)


SINUS = frozenset({"rhythm.sinus", "rhythm.sinus_bradycardia", "rhythm.sinus_tachycardia"})
PACING = frozenset(
    {
        "rhythm.paced_ventricular",
        "rhythm.paced_atrial",
        "rhythm.paced_dual",
        "rhythm.paced_complexes",
    }
)
LABELS: tuple[Label, ...] = (
    Label(
        "sinus rhythm (any rate)",
        "Rhythms",
        (
            "sinus rhythm",
            "sinus bradycardia",
            "sinus tachycardia",
            "sinus arrhythmia",
            "irregular sinus rhythm",
        ),
        SINUS,
    ),
    Label(
        "atrial fibrillation",
        "Rhythms",
        ("atrial fibrillation",),
        frozenset({"rhythm.atrial_fibrillation"}),
    ),
    Label(
        "atrial flutter",
        "Rhythms",
        ("atrial flutter, typical",),
        frozenset({"rhythm.atrial_flutter"}),
    ),
    Label("pacing", "Cardiac pacing", (), PACING),
    Label(
        "first-degree AV block",
        "Conduction abnormalities",
        ("i degree av block",),
        frozenset({"conduction.first_degree_av_block"}),
    ),
    Label(
        "complete RBBB",
        "Conduction abnormalities",
        ("complete right bundle branch block",),
        frozenset({"conduction.rbbb"}),
    ),
    Label(
        "complete LBBB",
        "Conduction abnormalities",
        ("complete left bundle branch block",),
        frozenset({"conduction.lbbb"}),
    ),
    Label(
        "incomplete RBBB",
        "Conduction abnormalities",
        ("incomplete right bundle branch block",),
        frozenset({"conduction.incomplete_rbbb"}),
    ),
    Label(
        "left anterior fascicular block",
        "Conduction abnormalities",
        ("left anterior hemiblock",),
        frozenset({"conduction.lafb"}),
    ),
)
# Labels on another convention: reported, never tuned toward.
OTHER_CONVENTION: tuple[Label, ...] = (
    Label(
        "sinus bradycardia (LUDB: < 60 bpm)",
        "Rhythms",
        ("sinus bradycardia",),
        frozenset({"rhythm.sinus_bradycardia"}),
    ),
    Label(
        "sinus tachycardia (LUDB: from about 90 bpm)",
        "Rhythms",
        ("sinus tachycardia",),
        frozenset({"rhythm.sinus_tachycardia"}),
    ),
    Label(
        "left axis deviation (LUDB: < 0 deg)",
        "Electric axis of the heart",
        ("electric axis of the heart: left axis deviation",),
        frozenset({"axis.left_deviation"}),
    ),
    Label(
        "left ventricular hypertrophy",
        "Hypertrophies",
        ("left ventricular hypertrophy",),
        frozenset({"chamber.lvh", "chamber.lvh_repolarization"}),
    ),
    Label(
        "left atrial hypertrophy",
        "Hypertrophies",
        ("left atrial hypertrophy", "left atrial overload"),
        frozenset({"chamber.left_atrial"}),
    ),
    Label(
        "right atrial overload",
        "Hypertrophies",
        ("right atrial overload",),
        frozenset({"chamber.right_atrial"}),
    ),
    Label(
        "early repolarization",
        "Other states",
        ("early repolarization syndrome",),
        frozenset({"repolarization.early_repolarization"}),
    ),
    Label(
        "ventricular extrasystoles",
        "Extrasystolies",
        (),
        frozenset({"rhythm.premature_ventricular"}),
    ),
)


def read_labels(ludb: Path) -> dict[str, dict[str, str]]:
    with open(ludb / "ludb.csv", newline="", encoding="utf-8") as fh:
        return {row["ID"]: row for row in csv.DictReader(fh)}


def subject_of(row: dict[str, str]) -> SubjectFacts:
    age_text = row["Age"].strip()
    age = 90.0 if age_text.startswith(">") else float(age_text)
    sex = {"M": "male", "F": "female"}.get(row["Sex"].strip())
    return SubjectFacts(sex=sex, age_years=age)


@dataclass(frozen=True)
class Score:
    tp: int
    fn: int
    tn: int
    fp: int

    @property
    def n_pos(self) -> int:
        return self.tp + self.fn

    @property
    def sensitivity(self) -> float | None:
        return None if self.n_pos == 0 else self.tp / self.n_pos

    @property
    def specificity(self) -> float | None:
        n = self.tn + self.fp
        return None if n == 0 else self.tn / n


def score(
    label: Label, rows: dict[str, dict[str, str]], codes: dict[str, set[str]], names: list[str]
) -> Score:
    tp = fn = tn = fp = 0
    for n in names:
        truth = label.has(rows[n])
        said = bool(codes[n] & label.codes)
        tp += truth and said
        fn += truth and not said
        fp += said and not truth
        tn += not truth and not said
    return Score(tp, fn, tn, fp)
