"""Corrections dragged in the window are saved to the record's marks sidecar (with audit
events), undone there too, and come back when the record is opened again."""

from __future__ import annotations

import json

import pytest

from reviewapp.core.workflow import MarkTarget
from tests.ui.test_marks import _median_drag


def _sidecar(hea):
    return json.loads(hea.with_name(hea.stem + ".marks.json").read_text())


def test_drag_saves_undo_reverts_and_reopen_restores(window, qtbot, sample_copy, settings):
    w = window
    settings.setValue("reader/id", "reader1")
    assert w.open_path(sample_copy, analyse_now=True)
    s = w.workflow
    assert s.store is not None and s.store.reviewer == "reader1"
    fs = w.record.fs_hz
    k0 = s.reading.marked.representative.marks.t_off
    qt0 = s.reading.measurements.intervals.qt_ms
    k1, _ = _median_drag(w, qtbot, "t_off", 40)
    assert k1 != k0
    side = _sidecar(sample_copy)
    ovs = side["readings"]["reader1"]["overrides"]
    rep_r = s.analysis.representative.r_index
    assert len(ovs) == 1 and ovs[0]["fiducial"] == "t_off" and ovs[0]["scope"] == "representative"
    # Stored in seconds relative to the median beat's R, on the sample grid; the automatic
    # value it replaced is kept beside it.
    assert ovs[0]["new_s"] == pytest.approx((k1 - rep_r) / fs)
    assert ovs[0]["old_s"] == pytest.approx((k0 - rep_r) / fs)
    assert any(e["action"] == "move_fiducial" for e in side["audit"])
    qt1 = s.reading.measurements.intervals.qt_ms
    assert qt1 - qt0 == pytest.approx((k1 - k0) / fs * 1000.0)
    # Undo in the window undoes in the sidecar, with an audit event.
    w.act_undo.trigger()
    side = _sidecar(sample_copy)
    assert side["readings"]["reader1"]["overrides"] == []
    assert any(e["action"].startswith("undo:") for e in side["audit"])
    w.act_redo.trigger()
    # Close and open again: the correction is back, drawn as corrected, QT as corrected.
    w.open_path(sample_copy, analyse_now=True)
    s2 = w.workflow
    assert s2 is not s and s2.is_corrected(MarkTarget("representative", "t_off"))
    assert s2.reading.marked.representative.marks.t_off == k1
    assert s2.reading.measurements.intervals.qt_ms == pytest.approx(qt1)


def test_calipers_are_saved_and_restored(window, qtbot, sample_copy, settings):
    w = window
    settings.setValue("reader/id", "reader1")
    assert w.open_path(sample_copy, analyse_now=True)
    fs = w.record.fs_hz
    c = w.paper.add_caliper("time", center_sample=1000)
    assert c.store_id is not None
    c.set_legs(a=900, b=1342)
    w.calipers.rename(c, "RR")
    w.calipers.flush()
    saved = _sidecar(sample_copy)["readings"]["reader1"]["calipers"]
    assert len(saved) == 1 and saved[0]["label"] == "RR" and saved[0]["kind"] == "time"
    assert (saved[0]["t1_s"], saved[0]["t2_s"]) == pytest.approx((900 / fs, 1342 / fs))
    amp = w.paper.add_caliper("amplitude", center_sample=1500)
    amp.set_levels(a_mv=0.0, b_mv=1.25)
    w.calipers.flush()
    text = c.label_text()
    # Reopen: both calipers come back on their lead with the same readouts.
    w.open_path(sample_copy, analyse_now=True)
    back = {k.name: k for k in w.paper.calipers}
    assert set(back) == {"RR", amp.name}
    assert back["RR"].label_text() == text
    assert back[amp.name].readout().amplitude_mv == pytest.approx(1.25)
    w.paper.remove_caliper(back["RR"])
    assert len(_sidecar(sample_copy)["readings"]["reader1"]["calipers"]) == 1
