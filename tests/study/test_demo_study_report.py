"""The bundled invented demo study, run through `reviewapp study`, and the report it gives.

The demo is invented (sample_records/study/README.md); here it checks that the study shows
every part it was built for (design facts from ``demo_study.SUBJECTS``, not clinical
references), and that every page and picture carries the clinical caution and its sources.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from reviewapp import CLINICAL_CAUTION
from reviewapp.core.study.analysis import ANY_ON_DRUG
from reviewapp.core.synth import demo_study

REPO = Path(__file__).resolve().parents[2]
STUDY = REPO / "sample_records" / "study"


def _shipped() -> Path:
    """The demo study is part of the repository: missing is a failure, not a skip."""
    if not (STUDY / "README.md").is_file():
        pytest.fail(
            f"the demo study is missing: {STUDY} (regenerate with `reviewapp samples "
            "sample_records/study --study`)"
        )
    return STUDY


@pytest.fixture(scope="module")
def demo() -> dict:
    """The shipped demo through the study's own worker function and analysis (in-process; the
    command line around them is checked in test_study_command)."""
    _shipped()
    from reviewapp.core.io import find_records
    from reviewapp.core.study.analysis import analyse_study
    from reviewapp.core.study.task import study_records

    rows = study_records([str(p) for p in find_records(STUDY)])
    return {"rows": rows, "analysis": analyse_study(rows)}


def test_demo_design_has_every_part():
    ecgs = demo_study.study_ecgs()
    per_subject = {s.subject_id: [e for e in ecgs if e.subject is s] for s in demo_study.SUBJECTS}
    for s, mine in per_subject.items():
        free = [e for e in mine if e.timepoint.label.startswith(("day -1", "pre-dose"))]
        rates = [e.hr_bpm for e in free]
        assert len(free) >= 6 and max(rates) - min(rates) >= 30.0, s  # spread for QTcI
        assert {e.timepoint.replicates for e in mine if "dose" in e.timepoint.label} == {3}
    assert sum(s.qt_effect_ms > 60 for s in demo_study.SUBJECTS) >= 1
    assert sum(s.qt_effect_ms == 0 for s in demo_study.SUBJECTS) >= 1
    assert len(ecgs) == len(list(_shipped().glob("*.hea")))


def test_a_shipped_record_regenerates_identically(tmp_path):
    _shipped()
    ecg = next(e for e in demo_study.study_ecgs() if e.name == "s103_3h_1")
    demo_study.write_records(tmp_path, [ecg])
    for suffix in (".hea", ".dat"):
        assert (tmp_path / f"s103_3h_1{suffix}").read_bytes() == (
            STUDY / f"s103_3h_1{suffix}"
        ).read_bytes()


def test_demo_table_shows_statuses_provenance_and_flags(demo):
    rows = {r.record: r for r in demo["rows"]}
    assert rows["s103_3h_1"].status == "adjudicated"
    assert rows["s103_3h_1"].provenance["qt_ms_source"].startswith("adjudicated by adjudicator1")
    assert rows["s104_3h_2"].flag("no_adjudication")
    assert rows["s101_6h_3"].status == "in_progress" and rows["s101_6h_3"].flag("not_signed")
    assert rows["s105_6h_1"].status == "unread"
    assert sum(r.status == "signed_off" for r in rows.values()) >= 60


def test_demo_analysis_finds_what_was_built_in(demo):
    a = demo["analysis"]
    f = "qtc_fridericia_ms"
    # S-103 was built with +72 ms at 3 h over a QTc near 434 ms, S-104 with +36 ms near 428.
    assert "S-103" in a.category(f, "QTc > 500 ms", ANY_ON_DRUG).subjects
    assert a.category(f, "increase > 60 ms", ANY_ON_DRUG).subjects == ("S-103",)
    assert set(a.category(f, "increase > 30 ms", ANY_ON_DRUG).subjects) == {"S-103", "S-104"}
    assert "S-101" not in a.category(f, "QTc > 450 ms", ANY_ON_DRUG).subjects  # no effect
    peak = a.summary("post-dose 3 h", f)
    assert peak.n == 5 and peak.mean == max(s.mean for s in a.summaries if s.quantity == f)
    for s in demo_study.SUBJECTS:
        assert abs(a.fits[s.subject_id].b - s.b) < 0.05, s.subject_id  # built-in exponent


def test_report_and_pictures_carry_the_caution_and_sources(demo):
    from reviewapp.study_report import render_pages, render_qt_rr

    a = demo["analysis"]
    pages = render_pages(a, "demo", dpi=40.0)
    assert len(pages) >= 5
    for _img, drawing in pages:
        text = " ".join(t for t, _ in drawing.texts)
        assert "Clinical caution:" in text and "not a certified medical device" in text
        assert "Sources:" in text
        for t, r in drawing.texts:  # nothing is drawn off the A4 sheet
            assert 0.0 <= r.x and r.right <= 210.0 and 0.0 <= r.y and r.bottom <= 297.0, t
    all_text = " ".join(t for _, d in pages for t, _ in d.texts)
    for source in ("ICH E14, 2005", "Malik et al., Heart 2002", "Fridericia, Acta Med Scand 1920"):
        assert source in all_text
    img, drawing = render_qt_rr(a.clouds[0], a.population_fit, "demo")
    text = " ".join(t for t, _ in drawing.texts)
    assert "Malik et al., Heart 2002" in text
    assert CLINICAL_CAUTION.split(".")[0] in text.replace("Clinical caution: ", "")
    assert not img.isNull() and img.width() > 1000
    for t, r in drawing.texts:  # nothing is drawn off the picture (170 x 128 mm)
        assert 0.0 <= r.x and r.right <= 170.0 and 0.0 <= r.y and r.bottom <= 128.0, t


def test_every_demo_value_names_its_source(demo):
    from reviewapp.core.marks.final import VALUE_NAMES

    for r in demo["rows"]:
        assert not r.error
        for name in VALUE_NAMES:
            assert r.provenance[f"{name}_source"], (r.record, name)
