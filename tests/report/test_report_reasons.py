"""The report page's measurement block holds every reason whole: nothing cut, nothing drawn over
anything else, nothing outside the block, for the LUDB records that give the most to say
(Kalyakulina et al., IEEE Access 2020; labels from ludb.csv): complete bundle branch block,
atrial fibrillation with and without complete left bundle branch block, ventricular pacing
in sinus rhythm and in atrial fibrillation, and ST elevation infarction in four walls (the
most ST and Q-wave flags). The words come from the reading's reasons (``reason_text``), so
each drawn statement is checked against them."""

from __future__ import annotations

import re

import pytest

from reviewapp.core.measure import reason_text as rt
from reviewapp.report.content import build_report_content
from reviewapp.report.export import render_page
from reviewapp.report.layout import page_layout
from tests.ui.test_reasons_seen import _af, _complete, _ludb_record, _paced


def _af_lbbb(lab: dict[str, str]) -> bool:
    return lab.get("Rhythms", "").startswith("atrial fibrillation") and (
        "complete left bundle branch block" in lab.get("Conduction abnormalities", "")
    )


def _af_paced(lab: dict[str, str]) -> bool:
    return lab.get("Rhythms", "").startswith("atrial fibrillation") and (
        "ventricular pacing" in lab.get("Cardiac pacing", "")
    )


def _stemi(lab: dict[str, str]) -> bool:
    # ST elevation infarction in four walls or more, in sinus rhythm, no complete block: the
    # most ST and Q-wave flags.
    return (
        lab.get("Ischemia", "").count("stemi") >= 4
        and "sinus" in lab.get("Rhythms", "")
        and "complete" not in lab.get("Conduction abnormalities", "").replace("incomplete", "")
    )


KINDS = {
    "complete LBBB": _complete("left"),
    "complete RBBB": _complete("right"),
    "atrial fibrillation": _af,
    "AF with complete LBBB": _af_lbbb,
    "ventricular pacing": _paced,
    "paced AF": _af_paced,
    "ST elevation infarction": _stemi,
}


@pytest.mark.parametrize("kind", list(KINDS))
def test_measurement_block_holds_every_reason_whole(kind, shared_data, ludb_analyses) -> None:
    stem = _ludb_record(shared_data, KINDS[kind])
    content = build_report_content(ludb_analyses[stem])
    lo = page_layout()
    _, drawing = render_page(content, lo, dpi=150)
    box = lo.table
    inside = [(t, r) for t, r in drawing.texts if r.intersects(box)]
    for t, r in inside:
        assert box.contains(r, tol=0.05), (t, r, box)  # nothing runs out of the block
        assert not t.endswith("..."), t  # nothing cut
    for i, (a, ra) in enumerate(inside):
        for b, rb in inside[i + 1 :]:
            assert not ra.intersects(rb), (a, b)  # nothing drawn over anything else
    drawn = re.sub(r"\s+", "", "".join(t for t, _ in inside))
    for st in content.reason_statements:
        assert re.sub(r"\s+", "", rt.brief(st.text)) in drawn, st.text
    for row in content.rows:
        if row.quantity in {q for g in _page_groups() for q in g} and (
            row.value is None or not row.judged
        ):
            assert re.sub(r"\s+", "", row.reason_cell or "not measured") in drawn, row.quantity
    if content.other_findings:
        flags = re.sub(r"\s+", "", "Other flags: " + "; ".join(content.other_findings))
        assert flags in drawn


def _page_groups():
    from reviewapp.report.page import TABLE_GROUPS

    return TABLE_GROUPS
