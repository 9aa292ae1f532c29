"""Records that are not a standard 12-lead, on the page: the 2-lead QT database record with its
large DC offset, a 3-lead record (PTB s0010_re's Frank X, Y, Z alone) and the 15-lead PTB
record (12 standard + Frank X, Y, Z).

References outside the code: the records' samples as wfdb reads them (the reference reader),
and their lead counts and names in the PhysioNet headers.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pytest

from reviewapp.ui.geometry import GROUP_GAP_MM
from tests.ui.conftest import choose_in_box


def _copy(shared_data: Path, tmp_path: Path, db: str, stem: str, exts: tuple[str, ...]) -> Path:
    for ext in exts:
        shutil.copy(shared_data / db / f"{stem}{ext}", tmp_path / f"{stem}{ext}")
    return tmp_path / f"{stem}.hea"


def _open(window, path: Path) -> None:
    assert window.open_path(path, analyse_now=True)
    assert window.workflow is not None and window.workflow.record is window.record


def _wfdb(path: Path, n: int) -> np.ndarray:
    import wfdb

    return np.asarray(wfdb.rdrecord(str(path.with_suffix("")), sampto=n).p_signal)


def _trace_medians_in_rows(w) -> bool:
    g = w.paper.geom
    for t in w.paper.traces:
        _x, y = t.getData()
        top, bottom = g.row_band(t.cell.row)
        if not top <= float(np.nanmedian(y)) <= bottom:
            return False
    return True


@pytest.fixture
def qtdb_sel100(shared_data, tmp_path) -> Path:
    return _copy(shared_data, tmp_path, "qtdb", "sel100", (".hea", ".dat"))


def test_two_lead_record_with_a_dc_offset_is_two_strips_drawn_on_their_rows(
    window, qtdb_sel100, settings
):
    settings.setValue("reader/id", "reader1")
    w = window
    for key in ("3x4+1", "6x2"):
        w.view.set_layout(key)
        _open(w, qtdb_sel100)
        g = w.paper.geom
        # QTDB sel100: MLII and V5 (PhysioNet header), each a full 10 s strip in the
        # record's order; no rhythm strip repeating one of them, so the rhythm box is off.
        assert [(c.lead, c.row, c.t0_s, c.t1_s) for c in g.layout.cells] == [
            ("MLII", 0, 0.0, 10.0),
            ("V5", 1, 0.0, 10.0),
        ]
        assert not w.view.rhythm_box.isEnabled()
        assert "full strip" in w.view.rhythm_box.toolTip()
        assert "each a full strip" in w.paper.header.textItem.toPlainText()
    # The file sits about +4.8 mV from zero (as wfdb reads it): drawn as recorded, both
    # traces would lie some 48 mm (two and a half rows) below the page's top row.
    ref = _wfdb(qtdb_sel100, 2500)
    assert np.all(np.median(ref, axis=0) > 4.0)
    assert w.view.filters.centre and _trace_medians_in_rows(w)
    for lead, col in (("MLII", 0), ("V5", 1)):
        assert g.offset_mv(lead) == pytest.approx(float(np.median(ref[:, col])), abs=0.01)
    # Display only: an amplitude caliper laid on the drawn trace reads the signal's own
    # millivolts (wfdb), and the measurements are those of the analysis, untouched.
    qt = w.workflow.reading.measurements.intervals.qt_ms
    r = int(np.argmax(ref[:500, 0]))
    c = w.paper.add_caliper("amplitude", row=0, center_sample=r)
    assert c.a_mv == pytest.approx(g.offset_mv("MLII"))  # starts on the drawn baseline
    c.set_levels(b_mv=float(ref[r, 0]))
    y_peak = g.y_of_mv(0, c.b_mv, "MLII")
    trace = next(t for t in w.paper.traces if t.cell.lead == "MLII")
    _x, y = trace.getData()
    assert y[r] == pytest.approx(y_peak, abs=0.02)  # the leg sits on the drawn R peak
    w.act_f_centre.trigger()
    assert not _trace_medians_in_rows(w)
    assert "baseline off its row: MLII +" in w.paper.footer.textItem.toPlainText()
    assert w.workflow.reading.measurements.intervals.qt_ms == qt


def test_display_filters_are_remembered_across_records_and_restarts(
    window, qtdb_sel100, sample_copy, settings, qtbot
):
    from reviewapp.ui.main_window import MainWindow

    w = window
    w.act_f_low.trigger()
    w.act_f_centre.trigger()
    _open(w, qtdb_sel100)
    assert (w.view.filters.lowpass, w.view.filters.centre) == (True, False)
    _open(w, sample_copy)  # another record: the same choices
    assert (w.paper.filters.lowpass, w.paper.filters.centre) == (True, False)
    assert w.view.filters_button.text() == "Filters (1 on)"
    w.close()
    again = MainWindow(settings, px_per_mm=4.0)  # the next start, same settings file
    qtbot.addWidget(again)
    assert (again.view.filters.lowpass, again.view.filters.centre) == (True, False)
    assert again.act_f_low.isChecked() and not again.act_f_centre.isChecked()
    again.close()


def test_fifteen_lead_record_puts_frank_leads_in_their_own_group(
    window, shared_data, tmp_path, qtbot
):
    w = window
    path = _copy(shared_data, tmp_path, "ptbdb", "s0010_re", (".hea", ".dat", ".xyz"))
    w.view.set_layout("3x4+1")
    _open(w, path)
    g = w.paper.geom
    lay = g.layout
    # PTB header: 12 standard leads and vx, vy, vz (the Frank leads).
    assert w.record.n_leads == 15 and lay.leads_shown() == set(w.record.lead_names)
    (group,) = lay.groups
    assert group.leads == ("X", "Y", "Z") and "Frank" in group.title
    rhythm = next(c for c in lay.cells if c.rhythm)
    assert rhythm.lead == "II" and group.first_row == rhythm.row + 1
    grid_rows = {c.row for c in lay.cells if not c.rhythm and c.lead not in group.leads}
    assert grid_rows == {0, 1, 2}
    # A large square of paper between the rhythm strip and the group holds its heading.
    gap = g.baseline_y(group.first_row) - g.baseline_y(rhythm.row)
    assert gap == pytest.approx(g.pitch_mm + GROUP_GAP_MM)
    headings = [
        it.textItem.toPlainText()
        for it in w.paper._furniture
        if hasattr(it, "textItem") and "Frank" in it.textItem.toPlainText()
    ]
    assert headings == [group.title]
    assert _trace_medians_in_rows(w)
    # The rhythm box names the lead the strip shows.
    assert w.view.rhythm_box.isEnabled() and w.view.rhythm_box.currentData() == "II"
    choose_in_box(qtbot, w.view.rhythm_box, "V5")  # the toolbar box, with the mouse and keys
    strip = next(c for c in w.paper.geom.layout.cells if c.rhythm)
    label = next(
        it
        for it in w.paper._furniture
        if hasattr(it, "textItem")
        and abs(it.pos().y() - (w.paper.geom.baseline_y(strip.row) + 1.0)) < 1e-6
    )
    assert strip.lead == "V5" == label.textItem.toPlainText()


def test_three_lead_record_is_three_strips(window, shared_data, tmp_path):
    # PTB s0010_re's Frank leads alone, as a record of their own: the .xyz signal file of the
    # PhysioNet record with a header naming only its three signals (copied from the record's
    # own header lines).
    shutil.copy(shared_data / "ptbdb" / "s0010_re.xyz", tmp_path / "s0010_re.xyz")
    lines = (shared_data / "ptbdb" / "s0010_re.hea").read_text().splitlines()
    signals = [ln for ln in lines if ln.startswith("s0010_re.xyz")]
    n = lines[0].split()[3]
    (tmp_path / "s0010_xyz.hea").write_text(f"s0010_xyz 3 1000 {n}\n" + "\n".join(signals) + "\n")
    w = window
    for key in ("3x4+3", "12x1"):
        w.view.set_layout(key)
        _open(w, tmp_path / "s0010_xyz.hea")
        lay = w.paper.geom.layout
        assert lay.strips and [c.lead for c in lay.cells] == ["X", "Y", "Z"]
        assert [t.cell.row for t in w.paper.traces] == [0, 1, 2]
        assert not w.view.rhythm_box.isEnabled()
    # The median beats: one panel per lead, and the magnified beat.
    w.view.show_median(True)
    assert len(w.median.plots) == 3 and w.median.magnifier is not None
