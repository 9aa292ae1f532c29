"""Each QTc row of the report is flagged even when the findings merge the formulas."""

from __future__ import annotations

from reviewapp.core.engine import analyse
from reviewapp.core.fiducials import MarkOverride
from reviewapp.core.record import SubjectFacts
from reviewapp.core.synth import SynthParams, generate
from reviewapp.report.content import build_report_content


def test_every_qtc_row_flagged_when_the_findings_merge_them() -> None:
    # QTc >= 450 ms flagged in men (Rautaharju et al., AHA/ACCF/HRS 2009 Part IV; from memory):
    # QT 440 ms at 60 bpm gives QTc ~440 by every formula, +60 ms puts every formula above 450.
    syn = generate(SynthParams(hr_bpm=60, qt_ms=440, seed=2))
    rec = syn.record
    object.__setattr__(rec, "subject", SubjectFacts(age_years=50, sex="male"))
    analysis = analyse(rec)
    rep = analysis.representative
    ov = MarkOverride("representative", "t_off", rep.marks.t_off + round(0.060 * rec.fs_hz))
    content = build_report_content(analysis, [ov])
    reading = analysis.reading([ov])
    assert any(f.quantity == "qtc_ms" for f in reading.findings), "formulas were merged"
    qtc_rows = [r for r in content.rows if r.quantity.startswith("qtc_")]
    assert qtc_rows and all(r.flag == "high" for r in qtc_rows), qtc_rows
    assert not any("QTc" in t for t in content.other_findings)
