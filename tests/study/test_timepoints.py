"""Subjects and timepoints: header comments, the mapping file, roles and order.

Trade facts used (common practice, no source): a thorough QT study's baseline is its pre-dose
ECGs; day -1 ECGs are drug-free; post-dose timepoints are named by hours after the dose.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from reviewapp.core.errors import ReviewError
from reviewapp.core.study.timepoints import (
    hours_after_dose,
    lookup,
    plan_timepoints,
    read_timepoint_map,
    timepoint_from_comments,
)


def test_timepoint_comes_from_the_header_comment():
    assert timepoint_from_comments(["subject: S-1", "Timepoint: post-dose 2 h "]) == "post-dose 2 h"
    assert timepoint_from_comments(["time-point: day -1 supine"]) == "day -1 supine"
    assert timepoint_from_comments(["study: X", "age: 40"]) is None


@pytest.mark.parametrize(
    ("label", "hours"),
    [("post-dose 2 h", 2.0), ("post-dose 30 min", 0.5), ("24 hours", 24.0), ("pre-dose", None)],
)
def test_hours_after_dose(label, hours):
    assert hours_after_dose(label) == hours


def test_roles_and_order():
    plan = plan_timepoints(
        [
            "post-dose 12 h",
            "Pre-dose",
            "post-dose 2 h",
            "day -1 standing",
            "visit X",
            "post-dose 30 min",
            "screening",
        ]
    )
    assert [t.label for t in plan.timepoints] == [
        "day -1 standing",
        "screening",
        "Pre-dose",
        "post-dose 30 min",
        "post-dose 2 h",
        "post-dose 12 h",
        "visit X",
    ]
    assert plan.baseline_labels == ("Pre-dose",)
    assert plan.on_drug_labels == ("post-dose 30 min", "post-dose 2 h", "post-dose 12 h", "visit X")
    given = plan_timepoints(["D1 0h", "D1 2h", "D-1 8h"], baseline=["D1 0h"], drug_free=["d-1 8h"])
    assert given.baseline_labels == ("D1 0h",)
    assert [t.label for t in given.timepoints if t.drug_free] == ["D-1 8h", "D1 0h"]


def test_mapping_file_is_read_and_matched(tmp_path: Path):
    m = tmp_path / "map.csv"
    m.write_text(
        "\ufeffRecord,Subject,Timepoint\nrec1,S-7,pre-dose\nsite/rec2.hea,S-8,\n\n",
        encoding="utf-8",
    )
    mapping = read_timepoint_map(m)
    folder = tmp_path / "study"
    assert lookup(mapping, folder / "rec1.hea", folder).subject == "S-7"
    entry = lookup(mapping, folder / "site" / "rec2.hea", folder)
    assert (entry.subject, entry.timepoint) == ("S-8", None)  # empty cell: header's value stays
    assert lookup(mapping, folder / "rec3.hea", folder) is None


@pytest.mark.parametrize(
    ("content", "problem"),
    [
        ("", "empty"),
        ("record,subject\nr1,S-1\n", r"lacks the column\(s\) timepoint"),
        ("record,subject,timepoint\nr1,S-1,pre-dose\nr1,S-2,pre-dose\n", "mapped twice"),
        ("record,subject,timepoint\n,S-1,pre-dose\n", "record cell is empty"),
    ],
)
def test_bad_mapping_files_are_refused_naming_the_file(tmp_path: Path, content, problem):
    m = tmp_path / "map.csv"
    m.write_text(content, encoding="utf-8")
    with pytest.raises(ReviewError, match=problem) as err:
        read_timepoint_map(m)
    assert str(m) in str(err.value)


def test_missing_or_binary_mapping_file(tmp_path: Path):
    with pytest.raises(ReviewError, match="not found"):
        read_timepoint_map(tmp_path / "nope.csv")
    bad = tmp_path / "bin.csv"
    bad.write_bytes(b"\xff\xfe\x00\x81garbage")
    with pytest.raises(ReviewError, match="not UTF-8"):
        read_timepoint_map(bad)
