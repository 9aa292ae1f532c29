"""Every layout shows every lead; standard and Cabrera orders; 1 mV pulses; rhythm strips."""

from __future__ import annotations

import pytest

from reviewapp.core.record import STANDARD_12
from reviewapp.ui.layouts import LAYOUTS, build_layout


@pytest.mark.parametrize("key", list(LAYOUTS))
def test_each_layout_shows_all_leads_on_the_paper(loaded, key):
    w = loaded
    w.view.set_layout(key)
    shown = {t.cell.lead for t in w.paper.traces}
    assert shown == set(w.record.lead_names) == set(STANDARD_12)
    labels = {
        item.textItem.toPlainText() for item in w.paper._furniture if hasattr(item, "textItem")
    }
    assert set(STANDARD_12) <= labels
    # One 1 mV calibration pulse per row, as tall as the gain.
    from reviewapp.ui.traces import CalibrationPulse

    pulses = [i for i in w.paper._furniture if isinstance(i, CalibrationPulse)]
    assert len(pulses) == w.paper.geom.layout.n_rows
    h = pulses[0].boundingRect().height() - 2  # minus the 1 mm pad each side
    assert h == pytest.approx(w.view.scale.gain_mm_per_mv)


def test_3x4_grid_and_rhythm_strips():
    lay = build_layout("3x4+3", STANDARD_12, 10.0, rhythm_leads=("V1", "II", "V5"))
    grid = [c for c in lay.cells if not c.rhythm]
    rhythm = [c for c in lay.cells if c.rhythm]
    # Conventional 3x4 print: columns I-III, aVR-aVF, V1-V3, V4-V6, each 2.5 s of a 10 s page.
    assert [[c.lead for c in grid if c.col == k] for k in range(4)] == [
        ["I", "II", "III"],
        ["aVR", "aVL", "aVF"],
        ["V1", "V2", "V3"],
        ["V4", "V5", "V6"],
    ]
    assert {(c.t0_s, c.t1_s) for c in grid if c.col == 1} == {(2.5, 5.0)}
    assert [c.lead for c in rhythm] == ["V1", "II", "V5"]
    assert all(c.t0_s == 0.0 and c.t1_s == 10.0 for c in rhythm)


def test_cabrera_order():
    # Cabrera sequence (frontal-plane order; e.g. Anderson et al., "The Cabrera format",
    # J Electrocardiol 2000 — from memory): aVL, I, -aVR, II, aVF, III.
    lay = build_layout("12x1", STANDARD_12, 10.0, order="cabrera")
    assert [c.label for c in lay.cells][:6] == ["aVL", "I", "-aVR", "II", "aVF", "III"]
    assert [c.inverted for c in lay.cells][2] is True


def test_cabrera_in_window_inverts_avr(loaded):
    import numpy as np

    w = loaded
    w.view.set_layout("12x1")
    w.act_cabrera.trigger()
    avr = next(t for t in w.paper.traces if t.cell.lead == "aVR")
    assert avr.cell.inverted and avr.cell.row == 2
    g = w.paper.geom
    _x, y = avr.getData()
    raw = w.record.window(0, g.page_samples)[:, w.record.lead_index("aVR")]
    # Drawn y (mm, down) = baseline + (mV - the lead's display baseline) * gain when inverted;
    # the display baseline is the lead's median over the page.
    offset = float(np.median(raw))
    assert g.offset_mv("aVR") == pytest.approx(offset, abs=1e-4)
    assert np.nanmax(y) == pytest.approx(
        g.baseline_y(2) + (np.nanmax(raw) - offset) * w.view.scale.gain_mm_per_mv, abs=0.05
    )


def test_extra_leads_are_kept(loaded):
    names = (*STANDARD_12, "X", "Y", "Z")
    for key in LAYOUTS:
        lay = build_layout(key, names, 10.0)
        assert lay.leads_shown() == set(names)


def test_a_12_lead_grid_keeps_each_lead_in_its_place_when_one_is_missing():
    # Conventional 3 x 4 places (common practice, no source): a missing V3 leaves its place
    # empty; V4-V6 do not slide into the third column.
    names = [n for n in STANDARD_12 if n != "V3"]
    lay = build_layout("3x4+1", names, 10.0)
    grid = {(c.row, c.col): c.lead for c in lay.cells if not c.rhythm}
    assert (2, 2) not in grid and grid[(0, 3)] == "V4" and grid[(2, 3)] == "V6"
    assert grid[(0, 2)] == "V1" and grid[(1, 2)] == "V2"


@pytest.mark.parametrize("key", list(LAYOUTS))
def test_extra_leads_go_to_their_own_groups_below_the_grid(key):
    names = (*STANDARD_12, "V4R", "X", "Y", "Z", "V8")
    lay = build_layout(key, names, 10.0)
    assert lay.leads_shown() == set(names)
    main_rows = {c.row for c in lay.cells if c.lead in STANDARD_12 or c.rhythm}
    kinds = [(g.kind, g.leads) for g in lay.groups]
    assert kinds == [("right", ("V4R",)), ("posterior", ("V8",)), ("frank", ("X", "Y", "Z"))]
    for g in lay.groups:
        rows = {c.row for c in lay.cells if c.lead in g.leads}
        # Below every row of the twelve and the rhythm strips, in rows of their own.
        assert min(rows) == g.first_row > max(main_rows)
        assert rows == set(range(g.first_row, g.first_row + g.n_rows))
        others = {c.lead for c in lay.cells if c.row in rows}
        assert others == set(g.leads)
    if key.startswith("3x4"):
        # The grid is the standard 3 x 4 whatever else the record holds.
        assert {c.row for c in lay.cells if c.lead in STANDARD_12 and not c.rhythm} == {0, 1, 2}
        assert next(c.lead for c in lay.cells if c.rhythm) == "II"


def test_a_rhythm_strip_shows_the_lead_its_label_names():
    lay = build_layout("3x4+1", (*STANDARD_12, "X", "Y", "Z"), 10.0, rhythm_leads=("V5",))
    (strip,) = [c for c in lay.cells if c.rhythm]
    assert strip.lead == strip.label == "V5" == lay.rhythm_leads[0]
    assert (strip.t0_s, strip.t1_s) == (0.0, 10.0)


@pytest.mark.parametrize(
    "names",
    [("MLII", "V5"), ("X", "Y", "Z"), ("I", "II", "V1"), ("V1",)],
)
@pytest.mark.parametrize("key", list(LAYOUTS))
def test_records_with_few_leads_get_one_full_strip_per_lead(key, names):
    lay = build_layout(key, names, 10.0)
    assert lay.strips and not lay.groups and lay.n_cols == 1
    # In the record's order, each the whole page long; no rhythm strip repeating one of them.
    assert [c.lead for c in lay.cells] == list(names)
    assert all((c.t0_s, c.t1_s, c.col) == (0.0, 10.0, 0) for c in lay.cells)
    assert [c.row for c in lay.cells] == list(range(len(names)))
    assert lay.rhythm_leads == ()
