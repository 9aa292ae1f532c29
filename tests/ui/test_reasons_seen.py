"""What the reader must see: every value's reason, on screen and on the exported report.

Real records are opened as a reader opens them (File > Open, the file dialog answered at its
static-call boundary), the summary dock is read cell by cell, and the report is exported
through File > Export reading (PDF text and CSV read back). Records:

- LUDB (Kalyakulina et al., IEEE Access 2020; labels from ludb.csv): a complete left and a
  complete right bundle branch block in sinus rhythm (complete block: QRS >= 120 ms, Surawicz
  et al., Circulation 2009, AHA/ACCF/HRS Part III), atrial fibrillation without block or
  pacing, ventricular pacing in sinus rhythm;
- the demo worklist's s011_predose (wide QRS) and s014_post2h (atrial fibrillation), invented
  records (sample_records/README.md).

What must hold, after the AHA/ACCF/HRS statement on the QT interval (Rautaharju et al.,
Circulation 2009, Part IV: with QRS >= 120 ms the QTc is not compared with its limits; JT =
QT - QRS), Bogossian et al. (Heart Rhythm 2014: QT - 0.485 x QRS) and the 4th universal
definition of infarction (Thygesen et al., Circulation 2018: ST/Q criteria confounded by
bundle branch block and pacing): a QTc never stands without "not comparable" when the QRS is
wide or paced, with JT, JTc and the QRS-adjusted QT beside it; an irregular rhythm's QTc
carries its caution; a blank value its reason; and no text cites "from memory".
"""

from __future__ import annotations

import csv
import math
import shutil
from pathlib import Path

import pytest
from PySide6 import QtCore, QtWidgets

from reviewapp.core.workflow import ReadMode
from reviewapp.ui.summary import GLOBAL_ROWS, LEAD_COLUMNS
from tests.report.test_report_page import _squash, pdf_text
from tests.ui.conftest import set_mark

QTC = ("qtc_bazett_ms", "qtc_fridericia_ms", "qtc_framingham_ms", "qtc_hodges_ms")
WIDE = ("jt_ms", "jtc_bazett_ms", "qt_bogossian_ms")
L = QtCore.Qt.MouseButton.LeftButton


@pytest.fixture(autouse=True)
def _reader(settings):
    """A reader id, so no first-edit dialog waits for one."""
    settings.setValue("reader/id", "reader1")


def _ludb_record(shared_data: Path, keep) -> str:
    """The first LUDB record of this copy whose ludb.csv labels ``keep`` accepts."""
    root = shared_data / "ludb"
    with open(root / "ludb.csv", newline="") as fh:
        for row in csv.DictReader(fh):
            labels = {k: v.lower() for k, v in row.items() if v}
            if (root / f"{row['ID']}.hea").exists() and keep(labels):
                return row["ID"]
    pytest.skip("no such record in this LUDB copy")


def _complete(side: str):
    def keep(lab: dict[str, str]) -> bool:
        conduction = lab.get("Conduction abnormalities", "")
        return (
            f"complete {side} bundle branch block" in conduction
            and f"incomplete {side}" not in conduction
            and "sinus" in lab.get("Rhythms", "")
            and not lab.get("Cardiac pacing")
        )

    return keep


def _af(lab: dict[str, str]) -> bool:
    return (
        lab.get("Rhythms", "").startswith("atrial fibrillation")
        and "bundle branch block" not in lab.get("Conduction abnormalities", "")
        and not lab.get("Cardiac pacing")
    )


def _paced(lab: dict[str, str]) -> bool:
    return "ventricular pacing" in lab.get("Cardiac pacing", "") and lab.get("Rhythms", "") == (
        "sinus rhythm"
    )


def _copy(src_dir: Path, stem: str, dst: Path) -> Path:
    """The record's header and signal copied out (its marks file is written beside the copy,
    never into the reference data)."""
    dst.mkdir(exist_ok=True)
    for ext in (".hea", ".dat"):
        shutil.copy(src_dir / f"{stem}{ext}", dst / f"{stem}{ext}")
    return dst / f"{stem}.hea"


def _open(window, qtbot, monkeypatch, path: Path):
    """File > Open record…, as the reader does it; returns the reading on screen."""
    monkeypatch.setattr(
        QtWidgets.QFileDialog,
        "getOpenFileName",
        staticmethod(lambda *a, **k: (str(path), "")),
    )
    window.act_open.trigger()
    qtbot.waitUntil(
        lambda: window.workflow is not None and window.workflow.record is window.record,
        timeout=20_000,
    )
    assert window.record.name == path.stem
    return window.workflow.reading


def _export(window, monkeypatch, action: str, out: Path) -> Path:
    """File > Export reading > ``action``, the save dialog answered with ``out``."""
    monkeypatch.setattr(
        QtWidgets.QFileDialog,
        "getSaveFileName",
        staticmethod(lambda *a, **k: (str(out), "")),
    )
    window.acts[action].trigger()
    assert out.is_file(), window.statusBar().currentMessage()
    return out


def _cells(window, key: str) -> list[str]:
    row = [k for k, *_ in GLOBAL_ROWS].index(key)
    assert not window.summary.table.isRowHidden(row), key
    return [window.summary.table.item(row, c).text() for c in range(4)]


def _csv_rows(path: Path) -> dict[str, dict[str, str]]:
    with open(path, newline="", encoding="utf-8") as fh:
        return {r["quantity"]: r for r in csv.DictReader(fh) if r["quantity"]}


def _no_memory_marker(*texts: str) -> None:
    for t in texts:
        assert "from memory" not in t and "no source" not in t, t


def _check_wide_qrs(window, qtbot, monkeypatch, tmp_path: Path, reading, cause: str) -> None:
    """A QTc shown but never compared, JT, JTc and the QRS-adjusted QT beside it; the same on
    the exported page and CSV."""
    iv = reading.measurements.intervals
    assert iv.qrs_ms is not None and iv.qt_ms is not None and iv.rr_ms is not None
    for key in QTC:
        _label, value, normal, flag = _cells(window, key)
        assert value.endswith(" ms") and value != "— ms"  # the value is still shown
        assert normal == "not comparable", (key, normal)  # no range to compare it with
        assert flag.startswith(cause) and "high" not in flag and "low" not in flag, flag
    # Beside it, by the published definitions written here by hand: JT = QT - QRS
    # (Rautaharju et al. 2009), JTc = JT / sqrt(RR s) (Bazett's root), QT - 0.485 x QRS
    # (Bogossian et al. 2014); each printed to the whole ms (1 ms for the rounding).
    jt = iv.qt_ms - iv.qrs_ms
    expected = {
        "jt_ms": jt,
        "jtc_bazett_ms": jt / math.sqrt(iv.rr_ms / 1000.0),
        "qt_bogossian_ms": iv.qt_ms - 0.485 * iv.qrs_ms,
    }
    for key, want in expected.items():
        shown = float(_cells(window, key)[1].removesuffix(" ms"))
        assert abs(shown - want) <= 1.0, (key, shown, want)
    reasons = window.summary.reason_texts()
    (nc,) = [t for t in reasons if t.startswith("QTc not comparable")]
    assert cause in nc and "Rautaharju et al., Circulation 2009" in nc and "Bogossian" in nc
    gate = [t for t in reasons if t.startswith("ST/Q criteria not applied")]
    assert gate and "Thygesen et al., Circulation 2018" in gate[0]
    # The per-lead grid flags no ST level (no finding with a wide or paced QRS), and each
    # ST cell says why.
    qtbot.mouseClick(window.summary.per_lead_button, L)
    grid = window.summary.leads_table
    st_cols = [1 + i for i, (k, _) in enumerate(LEAD_COLUMNS) if k.startswith("st_")]
    for r in range(grid.rowCount()):
        for c in st_cols:
            item = grid.item(r, c)
            assert "▲" not in item.text() and "▼" not in item.text()
            assert "ST/Q criteria not applied" in item.toolTip()
    assert not [f for f in reading.findings if f.quantity in ("st_j_mv", "q_ms")]

    pdf = _squash(
        pdf_text(_export(window, monkeypatch, "export_pdf", tmp_path / "r.pdf").read_bytes())
    )
    assert _squash(f"not comparable: {cause}") in pdf
    assert "JT" in pdf and "JTc" in pdf and "QTadj." in pdf
    assert _squash("QTc not comparable with the QTc limits") in pdf and "Rautaharju" in pdf
    assert _squash("ST/Q criteria not applied") in pdf and "Thygesen" in pdf
    rows = _csv_rows(_export(window, monkeypatch, "export_csv", tmp_path / "r.csv"))
    for key in QTC:
        assert rows[key]["value"] and rows[key]["flag"] == ""
        assert "not_comparable" in rows[key]["reason_kind"]
        assert "Rautaharju et al., Circulation 2009" in rows[key]["reason"]
    for key in WIDE:
        assert abs(float(rows[key]["value"]) - expected[key]) <= 1.0
    assert "gated" in rows["st_j_mv"]["reason_kind"] and "Thygesen" in rows["st_j_mv"]["reason"]
    _no_memory_marker(*reasons, pdf, *(r["reason"] for r in rows.values()))


def _check_irregular(window, qtbot, monkeypatch, tmp_path: Path, reading) -> None:
    """The QTc's caution in an irregular rhythm; P, PR and ST without a P wave, each with its
    reason; the same on the exported page and CSV."""
    ms = reading.measurements
    assert ms.rhythm_irregular
    for key in QTC:
        if getattr(ms.intervals, key) is not None:
            assert _cells(window, key)[3].splitlines()[-1] == "caution", key
    for key in ("p_ms", "pr_ms"):
        assert _cells(window, key)[1:] == ["—", _cells(window, key)[2], "no P wave marked"]
    # Its cause and sources, in the list under the table.
    reasons = window.summary.reason_texts()
    (caution,) = [t for t in reasons if t.startswith("QTc less reliable: irregular rhythm")]
    assert "Darbar et al." in caution and "Musat et al." in caution
    # ST without a P wave: referred to the level before QRS onset, with that caution; or, with
    # flutter waves or an unsteady level, not assessed, each lead saying why.
    st_measured = {m.lead for m in ms.leads if m.st_j_mv is not None}
    st_ref = "ST levels referred to the level just before QRS onset: no P wave"
    if st_measured:
        assert any(t.startswith(st_ref) for t in reasons)
    qtbot.mouseClick(window.summary.per_lead_button, L)
    grid = window.summary.leads_table
    col = 1 + [k for k, _ in LEAD_COLUMNS].index("st_j_mv")
    for r in range(grid.rowCount()):
        lead, item = grid.item(r, 0).text(), grid.item(r, col)
        if lead in st_measured:
            assert abs(float(item.text()) - ms.lead(lead).st_j_mv) <= 0.006, lead
        else:
            assert item.text() == "—" and "ST not assessed: no P wave" in item.toolTip()

    pdf = _squash(
        pdf_text(_export(window, monkeypatch, "export_pdf", tmp_path / "r.pdf").read_bytes())
    )
    assert _squash("QTc less reliable: irregular rhythm") in pdf and "Darbar" in pdf
    if st_measured:
        assert _squash(st_ref) in pdf
    if len(st_measured) < len(ms.leads):
        assert _squash("ST not assessed: no P wave") in pdf
    assert _squash("no P wave marked") in pdf
    rows = _csv_rows(_export(window, monkeypatch, "export_csv", tmp_path / "r.csv"))
    assert rows["p_ms"]["value"] == "" and rows["p_ms"]["reason"] == "no P wave marked"
    assert any("caution" in rows[k]["reason_kind"] for k in QTC if rows[k]["value"])
    lead_st = {q.split(".")[0]: r for q, r in rows.items() if q.endswith(".st")}
    assert set(lead_st) == {m.lead for m in ms.leads} - st_measured
    assert all("ST not assessed" in r["reason"] for r in lead_st.values())
    if st_measured:
        assert "caution" in rows["st_j_mv"]["reason_kind"]
        assert rows["st_j_mv"]["reason"].startswith(st_ref)
    _no_memory_marker(*reasons, pdf, *(r["reason"] for r in rows.values()))


@pytest.mark.parametrize("side", ["left", "right"])
def test_complete_bundle_branch_block_qtc_is_not_comparable_everywhere(
    window, qtbot, monkeypatch, tmp_path, shared_data, side
) -> None:
    stem = _ludb_record(shared_data, _complete(side))
    path = _copy(shared_data / "ludb", stem, tmp_path / "rec")
    reading = _open(window, qtbot, monkeypatch, path)
    assert reading.measurements.intervals.qrs_ms >= 120.0  # complete block (Surawicz 2009)
    _check_wide_qrs(window, qtbot, monkeypatch, tmp_path, reading, "QRS >= 120 ms")


def test_atrial_fibrillation_qtc_caution_and_st_referred_to_qrs_onset_everywhere(
    window, qtbot, monkeypatch, tmp_path, shared_data
) -> None:
    stem = _ludb_record(shared_data, _af)
    path = _copy(shared_data / "ludb", stem, tmp_path / "rec")
    reading = _open(window, qtbot, monkeypatch, path)
    # Fibrillation waves average out in the median beat: ST in every lead, with its caution.
    assert all(m.st_j_mv is not None for m in reading.measurements.leads)
    _check_irregular(window, qtbot, monkeypatch, tmp_path, reading)


def test_ventricular_pacing_qtc_not_comparable_and_conduction_limits_not_applied(
    window, qtbot, monkeypatch, tmp_path, shared_data
) -> None:
    stem = _ludb_record(shared_data, _paced)
    path = _copy(shared_data / "ludb", stem, tmp_path / "rec")
    reading = _open(window, qtbot, monkeypatch, path)
    assert reading.measurements.paced
    # The paced QRS: shown, neither flagged nor given a range, and the cell says why.
    assert _cells(window, "qrs_ms")[2:] == ["not applied", "paced rhythm"]
    _check_wide_qrs(window, qtbot, monkeypatch, tmp_path, reading, "paced rhythm")


def test_demo_wide_qrs_and_atrial_fibrillation(window, qtbot, monkeypatch, tmp_path, worklist_copy):
    reading = _open(window, qtbot, monkeypatch, worklist_copy / "s011_predose.hea")
    _check_wide_qrs(window, qtbot, monkeypatch, tmp_path, reading, "QRS >= 120 ms")
    window.summary.per_lead_button.setChecked(False)
    (tmp_path / "af").mkdir()
    reading = _open(window, qtbot, monkeypatch, worklist_copy / "s014_post2h.hea")
    _check_irregular(window, qtbot, monkeypatch, tmp_path / "af", reading)
    # Flagged and less reliable at once: both in the cell.
    assert _cells(window, "qtc_bazett_ms")[3] == "▲ high\ncaution"


def test_blinded_findings_wait_for_the_readers_marks(
    window, qtbot, monkeypatch, worklist_copy, settings
) -> None:
    """A blinded second reader with the automatic marks hidden: Findings says the values wait
    for their marks, and no reason drawn from the automatic marks shows (not even "not
    comparable", which would tell the QRS is wide) until the marks it rests on are set."""
    settings.setValue("reader/id", "reader2")
    w = window
    w.act_roles[ReadMode("second", True, False)].trigger()
    reading = _open(w, qtbot, monkeypatch, worklist_copy / "s011_predose.hea")
    rep = reading.marked.representative
    (first, *_) = w.summary.finding_texts()
    assert first.startswith("Values and findings wait for your marks: set P onset, P end,")
    assert w.summary.value_text("qtc_bazett_ms") == "set marks"
    assert not any("not comparable" in t for t in w.summary.reason_texts())
    _, value, normal, flag = _cells(w, "qtc_bazett_ms")
    assert (value, flag) == ("set marks", "") and normal.endswith(" ms")  # the limit, by sex
    for fid, step in (("qrs_on", -1), ("qrs_off", 1), ("t_off", 2)):
        set_mark(w, fid, rep.marks.get(fid) + step)
    qtbot.waitUntil(lambda: w.summary.value_text("qtc_bazett_ms") != "set marks", timeout=5000)
    assert _cells(w, "qtc_bazett_ms")[2] == "not comparable"
    assert any(t.startswith("QTc not comparable") for t in w.summary.reason_texts())
    (first, *_) = w.summary.finding_texts()
    assert first.startswith("Values and findings wait for your marks: set P onset, P end on")
