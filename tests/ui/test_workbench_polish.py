"""The workbench as a reader meets it: the caliper list matches the paper, the worklist opens
with a folder, the frequent tools fit the toolbar, the median beats fill the room below the page
in either theme. Real key presses where the window has a shortcut for the step."""

from __future__ import annotations

import pytest
from PySide6 import QtCore, QtWidgets

from reviewapp.core.workflow import MarkTarget
from tests.ui.conftest import set_mark

Key = QtCore.Qt.Key


def listed_names(w) -> list[str]:
    """Caliper names in the summary's list, as the reader reads it (first word of each line)."""
    text = w.summary.caliper_label.text()
    lines = text.splitlines()[1:] if text else []
    return [ln.split()[0] for ln in lines]


def paper_names(w) -> list[str]:
    return [c.name for c in w.paper.calipers]


def test_caliper_list_follows_add_delete_undo_and_record_switch(loaded, qtbot, ptb_12lead):
    w = loaded
    w.view.set_layout("3x4+1")
    w.activateWindow()
    # No wait after any step: the list must already match when the key press returns.
    qtbot.keyClick(w, Key.Key_C)
    qtbot.keyClick(w, Key.Key_A)
    assert paper_names(w) == ["C1", "C2"] == listed_names(w)
    assert w.summary.caliper_label.text().splitlines()[1:] == w.calipers.lines()
    # Delete the selected one (the newest, C2), then select C1 and delete it with the key too.
    qtbot.keyClick(w, Key.Key_Delete)
    assert paper_names(w) == ["C1"] == listed_names(w)
    qtbot.keyClick(w, Key.Key_C)
    assert paper_names(w) == ["C1", "C2"] == listed_names(w)
    w.paper._select(w.paper.calipers[0])
    qtbot.keyClick(w, Key.Key_Delete)
    assert paper_names(w) == ["C2"] == listed_names(w)
    # The lowest free number is reused: no "C3" while only one other caliper exists.
    qtbot.keyClick(w, Key.Key_C)
    assert sorted(paper_names(w)) == ["C1", "C2"] == sorted(listed_names(w))
    # Undo of a mark edit leaves the calipers (and their list) alone.
    s = w.workflow
    rep = s.reading.marked.representative
    set_mark(w, "t_off", rep.marks.t_off + 20)
    qtbot.keyClick(w, Key.Key_Z, QtCore.Qt.KeyboardModifier.ControlModifier)
    assert not s.is_corrected(MarkTarget("representative", "t_off"))
    assert paper_names(w) == listed_names(w) and len(paper_names(w)) == 2
    # Another record: the old record's calipers leave the paper and the list together.
    w.load_record(ptb_12lead, analyse_now=True)
    assert w.paper.calipers == [] and listed_names(w) == []
    assert w.summary.caliper_label.text() == ""


def test_caliper_list_after_restore_from_sidecar(window, qtbot, sample_copy, settings):
    w = window
    settings.setValue("reader/id", "reader1")
    assert w.open_path(sample_copy, analyse_now=True)
    w.view.set_layout("3x4+1")
    w.activateWindow()
    for k in (Key.Key_C, Key.Key_A, Key.Key_C):
        qtbot.keyClick(w, k)
    w.paper._select(w.paper.calipers[1])
    qtbot.keyClick(w, Key.Key_Delete)
    assert paper_names(w) == ["C1", "C3"] == listed_names(w)
    w.calipers.flush()
    assert w.open_path(sample_copy, analyse_now=True)  # reopen: restored from the sidecar
    assert sorted(paper_names(w)) == ["C1", "C3"] == sorted(listed_names(w))
    # A new one takes the free number 2, not 4.
    qtbot.keyClick(w, Key.Key_A)
    assert "C2" in paper_names(w) and sorted(paper_names(w)) == sorted(listed_names(w))


def test_opening_a_folder_shows_the_worklist_beside_a_true_size_page(
    qtbot, settings, worklist_copy
):
    from reviewapp.ui.main_window import MainWindow
    from reviewapp.ui.records_dock import list_records
    from reviewapp.ui.worklist import COLUMNS, COMPACT_COLUMNS

    ppm = 96.0 / 25.4  # the screenshots' 96 dpi scale
    w = MainWindow(settings, px_per_mm=ppm, speed_mm_per_s=25.0, gain_mm_per_mv=10.0)
    qtbot.addWidget(w)
    w.resize(1760, 1120)
    w.show()
    qtbot.waitExposed(w)
    with qtbot.waitSignal(w.worklist.scanFinished, timeout=20_000):
        assert w.open_path(worklist_copy, analyse_now=True)
    records = list_records(worklist_copy)
    assert len(records) > 1
    assert w.records_dock.isVisible()
    assert w.worklist.visible_paths() == sorted(records, key=lambda p: p.stem)
    assert w.record is not None and w.record.source_path == records[0]
    qtbot.waitUntil(lambda: w.worklist.current_path() == records[0], timeout=5000)
    # Few columns by default, status among them; the others can be shown again.
    shown = w.worklist.visible_columns()
    assert shown == [k for k, _t in COLUMNS if k in COMPACT_COLUMNS]
    status_col = [k for k, _t in COLUMNS].index("status")
    status = w.worklist.proxy.index(0, status_col).data()
    assert status in ("unread", "in progress", "signed off")
    # Room for the longest status word, so "in progress" is never cut to "in ...".
    from PySide6 import QtGui

    bold = QtGui.QFont(w.worklist.table.font())
    bold.setBold(True)
    need = QtGui.QFontMetrics(bold).horizontalAdvance("in progress")
    assert w.worklist.table.columnWidth(status_col) > need
    w.worklist.set_compact(False)
    assert len(w.worklist.visible_columns()) == len(COLUMNS)
    w.worklist.set_compact(True)
    # The 3 x 4 page at true size still fits beside the worklist and the reading panels.
    w.view.set_layout("3x4+1")
    w.paper.true_size()
    qtbot.wait(20)
    page_px = w.paper.geom.width_mm * ppm
    assert abs(w.paper.zoom - 1.0) < 1e-6
    assert w.paper.vb.width() >= page_px, (w.paper.vb.width(), page_px)
    w.close()


def _on_toolbar(w, widget: QtWidgets.QWidget | None) -> bool:
    """Shown on the toolbar itself, not moved into its overflow menu."""
    tb = w.toolbar
    if widget is None or not widget.isVisible():
        return False
    right = widget.mapTo(tb, QtCore.QPoint(widget.width(), 0)).x()
    return right <= tb.width()


def test_frequent_tools_fit_the_toolbar_at_1600_px(window, qtbot):
    w = window
    w.resize(1600, 1000)
    qtbot.wait(20)
    tb = w.toolbar
    frequent = [w.act_median, w.act_time_cal, w.act_amp_cal, w.act_sign_off, w.act_true]
    for a in frequent:
        assert _on_toolbar(w, tb.widgetForAction(a)), a.text()
    for box in (w.view.speed_box, w.view.gain_box, w.view.layout_box, w.view.rhythm_box):
        assert _on_toolbar(w, box), box.toolTip()
    # The check can fail: at 700 px the sign-off button is in the overflow menu.
    w.resize(700, 600)
    qtbot.wait(20)
    assert not _on_toolbar(w, tb.widgetForAction(w.act_sign_off))
    # Rare toggles are still one menu away.
    menu_actions = {a for m in w.menuBar().actions() if m.menu() for a in m.menu().actions()}
    for a in (w.act_superimpose, w.act_cabrera, w.act_march, w.act_f_base, w.act_f_low):
        assert a in menu_actions, a.text()


@pytest.mark.parametrize("theme", ["light", "dark"])
def test_median_beats_fill_the_room_below_the_page_in_both_themes(loaded, qtbot, theme):
    w = loaded
    w.view.set_theme(theme)
    w.view.set_layout("3x4+1")
    qtbot.wait(20)
    assert w.view.median_room_px() >= 240  # 1000 px window at 4 px/mm: room for the median beats
    assert w.median.isVisible()
    # The reader hides them (B), switches theme (Ctrl+T), then goes back to automatic.
    w.activateWindow()
    qtbot.keyClick(w, Key.Key_B)
    assert not w.median.isVisible()
    qtbot.keyClick(w, Key.Key_T, QtCore.Qt.KeyboardModifier.ControlModifier)
    assert w.view.theme.name != theme
    w.act_median_auto.trigger()  # View ▸ Median beat where there is room
    assert w.median.isVisible() and w.view.median_auto
    w.view.set_theme("light")


def _contrast(a, b) -> float:
    """WCAG 2.1 contrast ratio (https://www.w3.org/TR/WCAG21/#dfn-contrast-ratio)."""

    def lum(c) -> float:
        def ch(v: float) -> float:
            return v / 12.92 if v <= 0.04045 else ((v + 0.055) / 1.055) ** 2.4

        return 0.2126 * ch(c.redF()) + 0.7152 * ch(c.greenF()) + 0.0722 * ch(c.blueF())

    hi, lo = sorted((lum(a), lum(b)), reverse=True)
    return (hi + 0.05) / (lo + 0.05)


@pytest.mark.parametrize("theme", ["light", "dark"])
def test_worklist_alert_text_is_readable_in_both_themes(qtbot, theme):
    from PySide6 import QtGui

    from reviewapp.ui.theme import DARK, LIGHT, apply_palette
    from reviewapp.ui.worklist import _alert_colour

    app = QtWidgets.QApplication.instance()
    apply_palette(app, DARK if theme == "dark" else LIGHT)
    try:
        base = QtGui.QGuiApplication.palette().color(QtGui.QPalette.ColorRole.Base)
        # WCAG 2.1 level AA asks 4.5:1 for normal text.
        assert _contrast(_alert_colour(), base) >= 4.5
    finally:
        apply_palette(app, LIGHT)


def test_amplitude_caliper_label_sits_above_the_higher_leg(loaded):
    w = loaded
    w.view.set_layout("3x4+1")
    c = w.paper.add_caliper("amplitude", center_sample=2000)
    for a_mv, b_mv in ((0.0, 1.2), (1.2, 0.0), (-0.5, 0.3)):
        c.set_levels(a_mv=a_mv, b_mv=b_mv)
        anchor = c._label_anchor()
        # The label is drawn above its anchor: at the higher voltage's leg, not mid-bar.
        assert anchor.y() == pytest.approx(w.paper.geom.y_of_mv(c.row, max(a_mv, b_mv), c.lead))


def test_blinded_second_reader_sees_no_values_in_the_worklist(window, qtbot, tmp_path):
    from reviewapp.batch.listing import ListingRow
    from reviewapp.ui.reader import FIRST, SECOND_BLINDED
    from reviewapp.ui.worklist import COLUMNS

    wl = window.worklist
    # A first reader's signed-off row with long QTc and a flag (invented values: blinding is
    # about what is shown, not about the numbers).
    row = ListingRow(
        tmp_path / "r1.hea",
        "r1",
        "",
        "signed_off",
        reviewer="reader1",
        qt_ms=480.0,
        qtc_fridericia_ms=505.0,
        qtc_bazett_ms=512.0,
        flags=("QTc above 500 ms",),
        has_values=True,
    )
    wl.model.append_rows([row])
    col = {k: i for i, (k, _t) in enumerate(COLUMNS)}

    def shown(key: str) -> str:
        return wl.model.index(0, col[key]).data()

    assert shown("qtc") == "505" and shown("reviewer") == "reader1" and shown("flags")
    window.adapter.set_read_mode(SECOND_BLINDED, reopen=False)
    for key in ("qtc", "qt_ms", "flags", "reviewer"):
        assert shown(key) == "", key
    tip = wl.model.index(0, col["name"]).data(QtCore.Qt.ItemDataRole.ToolTipRole)
    assert "500" not in tip and "QTc" not in tip
    assert shown("name") == "r1"
    # Value filters would reveal the values: they are off while blinded.
    wl.set_filters(flagged_only=True)
    assert wl.proxy.rowCount() == 1 and not wl.flagged_box.isEnabled()
    window.adapter.set_read_mode(FIRST, reopen=False)
    assert shown("qtc") == "505" and wl.flagged_box.isEnabled()


def test_median_mark_labels_leave_the_lead_names_readable(loaded, qtbot):
    import pyqtgraph as pg

    w = loaded
    w.view.show_median(True)

    def rects():
        small = [
            ln.label
            for lines in w.median.lines.values()
            for ln in lines
            if getattr(ln, "label", None) is not None and ln.label.isVisible()
        ]
        assert small == []  # the lead panels carry no labels: the magnified beat does
        labels = [
            ln.label.sceneBoundingRect()
            for ln in w.median.mag_lines.values()
            if ln.label.isVisible()
            and w.median.magnifier.sceneBoundingRect().contains(
                ln.label.sceneBoundingRect().center()
            )
        ]
        titles = [
            it.sceneBoundingRect()
            for p in w.median.plots
            for it in p.addedItems
            if isinstance(it, pg.TextItem) and not isinstance(it, pg.InfLineLabel)
        ]
        return labels, titles

    for size in ((1300, 1000), (2600, 1500)):
        w.resize(*size)
        qtbot.wait(50)
        labels, titles = rects()
        assert len(titles) == len(w.median.plots)
        # No lead panel is pushed out of the widget, whatever its width.
        right = max(p.sceneBoundingRect().right() for p in w.median.plots)
        assert right <= w.median.width() + 1, (right, w.median.width())
        # The labels in sight in the magnified beat stay clear of each other.
        for i, a in enumerate(labels):
            for b in labels[i + 1 :]:
                assert not a.intersects(b), (a, b)
    # The whole beat magnified: every mark's label in sight, apart, also after a rebuild.
    w.median.set_magnification(None)
    for rebuild in (False, True):
        if rebuild:
            w.median.rebuild()
        qtbot.wait(20)
        labels, _titles = rects()
        assert len(labels) == 5
        for i, a in enumerate(labels):
            for b in labels[i + 1 :]:
                assert not a.intersects(b), (a, b)


def test_a_layout_saved_before_the_docks_changed_gives_way_to_the_default(qtbot, settings):
    """A window layout saved by an older release (no layout version, and no Interpretation
    dock) is not restored: the Interpretation dock stays a tab beside the Reading dock instead
    of landing wherever Qt puts an unknown dock. A layout saved by this release is restored."""
    from PySide6 import QtCore

    from reviewapp.ui.main_window import MainWindow

    def make() -> MainWindow:
        w = MainWindow(settings, px_per_mm=4.0, speed_mm_per_s=25.0, gain_mm_per_mv=10.0)
        qtbot.addWidget(w)
        w.show()
        qtbot.waitExposed(w)
        return w

    old = make()
    old.removeDockWidget(old.interpretation_dock)  # the docks of a release before it existed
    old.addDockWidget(QtCore.Qt.DockWidgetArea.LeftDockWidgetArea, old.summary_dock)
    state = old.saveState()  # version 0, as older releases saved it
    old.close()  # (closing saves this release's layout; the older one is put back below)
    settings.setValue("window/state", state)
    settings.sync()

    w = make()
    assert w.interpretation_dock in w.tabifiedDockWidgets(w.reading_dock)
    assert w.dockWidgetArea(w.summary_dock) == QtCore.Qt.DockWidgetArea.RightDockWidgetArea
    w.addDockWidget(QtCore.Qt.DockWidgetArea.LeftDockWidgetArea, w.summary_dock)
    w.close()  # saves this release's layout, with its version

    again = make()
    assert again.dockWidgetArea(again.summary_dock) == QtCore.Qt.DockWidgetArea.LeftDockWidgetArea
