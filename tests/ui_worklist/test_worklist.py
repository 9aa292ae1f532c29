"""The worklist widget: listing off the GUI thread, filters, sorting, keyboard navigation.

Records are synthetic (invented signals with known heart rates, reviewapp.core.synth) marked by
the batch step; reviewer work is made through the marks store. Expected rows are computed from
the sidecars independently of the widget's model.
"""

from __future__ import annotations

import json
import threading
from pathlib import Path

import pytest
from PySide6.QtCore import Qt

from reviewapp.batch import sidecar_adapter as sidecars
from reviewapp.batch.runner import run_batch
from reviewapp.core.io import find_records, open_record
from reviewapp.core.marks import MarksStore
from reviewapp.core.synth import SynthParams, generate
from reviewapp.core.synth.wfdb_out import write_synthetic
from reviewapp.ui.worklist import COLUMNS, WorklistWidget

# (name, heart rate bpm, QT ms): long QT on two records so QTc filters have something to find.
RECORDS = (
    ("a01", 60.0, 400.0),
    ("a02", 72.0, 380.0),
    ("a03", 58.0, 520.0),
    ("b01", 90.0, 330.0),
    ("b02", 66.0, 500.0),
    ("b03", 80.0, 360.0),
)


@pytest.fixture(scope="module")
def marked_folder(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("wl")
    for i, (name, hr, qt) in enumerate(RECORDS):
        sub = folder / ("site-a" if name.startswith("a") else "site-b")
        syn = generate(SynthParams(hr_bpm=hr, qt_ms=qt, duration_s=10.0, seed=i), name=name)
        write_synthetic(syn, sub, name)
    result = run_batch(find_records(folder), workers=1)
    assert result.failed == 0
    # Reviewer work: a02 in progress by reader1, b01 signed off by reader2.
    for name, reviewer, sign in (("a02", "reader1", False), ("b01", "reader2", True)):
        path = next(folder.rglob(f"{name}.hea"))
        with MarksStore.open(open_record(path), reviewer) as store:
            store.do(store.edits.move_fiducial("t_off", 0.30))
            if sign:
                store.do(store.edits.sign_off())
    return folder


def _expected(folder: Path) -> dict[str, sidecars.SidecarView]:
    return {p.stem: sidecars.read_view(p) for p in find_records(folder)}


def _open(qtbot, folder: Path) -> WorklistWidget:
    w = WorklistWidget()
    qtbot.addWidget(w)
    with qtbot.waitSignal(w.scanFinished, timeout=30_000):
        w.open_folder(folder)
    return w


def _col(name: str) -> int:
    return [k for k, _ in COLUMNS].index(name)


def test_rows_show_status_reviewer_and_cached_values(qtbot, marked_folder: Path):
    w = _open(qtbot, marked_folder)
    views = _expected(marked_folder)
    assert w.model.rowCount() == len(RECORDS)
    for r in range(w.model.rowCount()):
        row = w.model.row_at(r)
        v = views[row.name]
        assert row.status == v.status and row.reviewer == v.reviewer
        assert row.qtc_fridericia_ms == v.summary.qtc_fridericia_ms
        assert row.folder in ("site-a", "site-b")
    statuses = {w.model.row_at(r).name: w.model.row_at(r).status for r in range(len(RECORDS))}
    assert statuses["a02"] == "in_progress" and statuses["b01"] == "signed_off"
    assert sum(s == "unread" for s in statuses.values()) == 4
    # Heart rate shown is the synthetic record's (construction-exact, invented data).
    hr_col = _col("hr_bpm")
    for r in range(w.proxy.rowCount()):
        name = w.proxy.index(r, 0).data()
        want = dict((n, h) for n, h, _ in RECORDS)[name]
        assert float(w.proxy.index(r, hr_col).data()) == pytest.approx(want, abs=1.5)


def test_filters_match_the_sidecar_values(qtbot, marked_folder: Path):
    w = _open(qtbot, marked_folder)
    views = _expected(marked_folder)
    names = lambda: {p.stem for p in w.visible_paths()}  # noqa: E731
    w.set_filters(unread_only=True)
    assert names() == {n for n, v in views.items() if v.status == "unread"}
    w.set_filters(flagged_only=True)
    assert names() == {n for n, v in views.items() if v.summary.flags}
    w.set_filters(qtc_above_ms=450.0)
    want = {n for n, v in views.items() if (v.summary.qtc_fridericia_ms or 0) > 450.0}
    assert names() == want and {"a03", "b02"} <= want  # QT 520 / 500 ms records
    w.set_filters(unread_only=True, qtc_above_ms=450.0)
    assert names() == {n for n in want if views[n].status == "unread"}
    w.set_filters()
    assert len(names()) == len(RECORDS)


def test_sorting_numeric_descending_keeps_order(qtbot, marked_folder: Path):
    w = _open(qtbot, marked_folder)
    col = _col("qtc")
    w.table.sortByColumn(col, Qt.SortOrder.DescendingOrder)
    values = [float(w.proxy.index(r, col).data()) for r in range(w.proxy.rowCount())]
    assert values == sorted(values, reverse=True)
    w.table.sortByColumn(_col("status"), Qt.SortOrder.AscendingOrder)
    first = w.proxy.index(0, _col("status")).data()
    last = w.proxy.index(w.proxy.rowCount() - 1, _col("status")).data()
    assert (first, last) == ("unread", "signed off")


def test_keyboard_next_and_previous_unread_and_the_list_keeps_its_place(qtbot, marked_folder: Path):
    w = _open(qtbot, marked_folder)
    w.show()
    w.table.sortByColumn(0, Qt.SortOrder.AscendingOrder)  # a01 a02 a03 b01 b02 b03
    w.table.setFocus()
    opened: list[Path] = []
    w.recordActivated.connect(opened.append)
    for _ in range(4):
        qtbot.keyClick(w.table, Qt.Key.Key_N)
    # Unread in name order: a01, a03, b02, b03 (a02 in progress and b01 signed off skipped).
    assert [p.stem for p in opened] == ["a01", "a03", "b02", "b03"]
    qtbot.keyClick(w.table, Qt.Key.Key_N, Qt.KeyboardModifier.ShiftModifier)
    assert opened[-1].stem == "b02" and w.current_path().stem == "b02"
    # The window signs b02 off and tells the list: the row updates, the place is kept.
    with MarksStore.open(open_record(opened[-1]), "reader1") as store:
        store.do(store.edits.sign_off())
    w.refresh_record(opened[-1])
    assert w.current_path().stem == "b02"
    r = w.proxy.mapFromSource(w.model.index(w.model.row_of(opened[-1]), 0)).row()
    assert w.proxy.index(r, _col("status")).data() == "signed off"
    # Enter opens the selected record.
    qtbot.keyClick(w.table, Qt.Key.Key_Return)
    assert opened[-1].stem == "b02"


def test_ten_thousand_records_list_off_the_gui_thread(qtbot, tmp_path: Path, marked_folder: Path):
    """10,000 records: rows arrive in chunks from a worker thread while GUI events still run."""
    big = tmp_path / "big"
    big.mkdir()
    template = next(marked_folder.rglob("a01.marks.json")).read_text()
    doc = json.loads(template)
    for i in range(10_000):
        name = f"r{i:05d}"
        (big / f"{name}.hea").write_text(f"{name} 12 500 5000\n")
        if i % 3 == 0:
            doc["record"]["name"] = name
            (big / f"{name}.marks.json").write_text(json.dumps(doc))
    w = WorklistWidget()
    qtbot.addWidget(w)
    samples: list[tuple[bool, int]] = []
    # Each chunk reaches the model as a queued event that the GUI thread handles: sampling at
    # every insertion (not on a timer, whose ticks a busy machine may not deliver in time)
    # shows the GUI thread running events while the scan was under way with a partial list.
    w.model.rowsInserted.connect(lambda *_a: samples.append((w.is_scanning(), w.model.rowCount())))
    with qtbot.waitSignal(w.scanFinished, timeout=120_000) as blocker:
        w.open_folder(big)
    assert blocker.args == [10_000]
    assert w.model.rowCount() == 10_000
    assert w._task is None
    assert len(samples) >= 2
    assert any(scanning and 0 < n < 10_000 for scanning, n in samples)
    with_values = sum(w.model.row_at(i).has_values for i in range(10_000))
    assert with_values == 3334
    assert w.last_scan_thread_id is not None
    assert w.last_scan_thread_id != threading.get_ident()  # not the GUI thread


def test_rows_from_another_engine_version_are_stale_and_bad_sidecars_are_shown(
    tmp_path: Path, marked_folder: Path
):
    from reviewapp.batch.listing import listing_row

    src = next(marked_folder.rglob("a01.marks.json"))
    doc = json.loads(src.read_text())
    doc["listing_cache"]["engine_version"] = "0.0.1-old"
    doc["record"]["name"] = "old"  # a sidecar naming another record is foreign, not listed
    (tmp_path / "old.hea").write_text("old 12 500 5000\n")
    (tmp_path / "old.marks.json").write_text(json.dumps(doc))
    row = listing_row(tmp_path / "old.hea", tmp_path, engine_version="0.1.0")
    assert row.stale and row.has_values and row.qt_ms == doc["listing_cache"]["qt_ms"]
    (tmp_path / "bad.hea").write_text("bad 12 500 5000\n")
    (tmp_path / "bad.marks.json").write_text("{ not json")
    bad = listing_row(tmp_path / "bad.hea", tmp_path)
    assert bad.problem and "not valid JSON" in bad.problem and not bad.has_values


def test_blinded_reader_sees_their_own_status_not_the_records(qtbot, marked_folder: Path):
    # Blinding in a two-reader QT study (common practice, no source): the second reader must
    # not learn whether the first reader has read or signed a record, and "unread only" must
    # list the records *they* have not read yet.
    from reviewapp.ui.worklist import STATUS_TEXT

    w = _open(qtbot, marked_folder)
    col = _col("status")

    def shown() -> dict[str, str]:
        return {
            w.model.row_at(r).name: w.model.index(r, col).data() for r in range(w.model.rowCount())
        }

    assert shown()["b01"] == STATUS_TEXT["signed_off"]  # overall status for a first reader
    w.set_blinded(True, "reader3")  # a reader with no reading anywhere
    assert set(shown().values()) == {STATUS_TEXT["unread"]}
    w.set_filters(unread_only=True)
    assert w.proxy.rowCount() == len(RECORDS)
    assert f"{len(RECORDS)} unread" in w.count_label.text()
    w.set_blinded(True, "reader2")  # signed b01 themselves
    assert shown()["b01"] == STATUS_TEXT["signed_off"]
    assert shown()["a02"] == STATUS_TEXT["unread"]  # reader1's work stays invisible
    assert w.proxy.rowCount() == len(RECORDS) - 1
    w.set_blinded(False)
    assert shown()["a02"] == STATUS_TEXT["in_progress"]
