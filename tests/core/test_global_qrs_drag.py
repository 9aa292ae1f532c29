"""A corrected global QRS end moves every lead's J point by the same amount, now that the
global QRS (earliest onset to latest end over the leads, AHA/ACCF/HRS 2007 Part I, Kligfield
et al., Circulation 115:1306) lies outside most leads' own QRS marks."""

from __future__ import annotations

from reviewapp.core.fiducials import MarkOverride


def test_dragged_global_qrs_end_is_the_global_value_and_moves_each_j_point(ludb_analyses) -> None:
    # LUDB record 108 (complete RBBB, ludb.csv; Kalyakulina et al. 2020): the global QRS end
    # lies after most leads' own QRS ends (the terminal R' in V1 ends last).
    a = ludb_analyses["108"]
    rep = a.representative
    g = rep.marks.qrs_off
    assert any(m.qrs_off != g for m in rep.lead_marks), "lead marks equal the global one"
    fs = a.fs_hz
    shift = round(0.010 * fs)
    reading = a.reading([MarkOverride("representative", "qrs_off", g + shift)])
    marked = reading.marked.representative
    assert marked.marks.qrs_off == g + shift
    qrs = reading.measurements.intervals.qrs_ms
    assert qrs == (g + shift - marked.marks.qrs_on) * 1000.0 / fs  # the dragged mark is global
    for before, after in zip(rep.lead_marks, marked.lead_marks, strict=True):
        if before.qrs_off is not None:
            assert after.qrs_off == before.qrs_off + shift
