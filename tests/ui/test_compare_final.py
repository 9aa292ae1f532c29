"""The comparison's Final column holds only what an adjudicator settled: empty before anyone
adjudicates (a reader's value is never shown as final), the adjudicator's picks as they make
them in their own window, and in another reader's window only once the adjudication is signed.

Driven through the window: Tools > Compare readings, a click on a row, the "Use reader A's
value" button. The other readings are made through the marks store as other readers' windows
would. Reference: QT = T end - QRS onset (the definition), so the final QT is checked from the
final T end and the chosen reading's QRS onset as the table's own fiducial rows show them.
"""

from __future__ import annotations

import pytest
from PySide6 import QtCore

from tests.ui.test_reading import _first_reader_moves_t_end

L = QtCore.Qt.MouseButton.LeftButton
FINAL = 6


def _rows(t) -> dict[str, int]:
    return {t.item(r, 0).data(QtCore.Qt.ItemDataRole.UserRole): r for r in range(t.rowCount())}


def _finals(dlg) -> dict[str, str]:
    t = dlg.table
    return {item: t.item(r, FINAL).text() for item, r in _rows(t).items()}


def _ms(text: str) -> float:
    return float(text.removesuffix(" (auto)").removesuffix(" ms"))


@pytest.fixture
def double_read(sample_copy):
    """reader1 (first) and reader2 (second), both signed, 50 ms apart on T end."""
    an, first = _first_reader_moves_t_end(sample_copy, 0.040)
    _an, second = _first_reader_moves_t_end(sample_copy, -0.010, "reader2", "second")
    return an, first, second


def test_final_is_empty_until_the_adjudicator_picks_then_holds_only_what_they_settled(
    window, qtbot, sample_copy, settings, double_read
):
    from reviewapp.ui.reader import ADJUDICATOR

    settings.setValue("reader/id", "adj1")
    w = window
    w.act_roles[ADJUDICATOR].trigger()
    assert w.open_path(sample_copy, analyse_now=True)
    w.act_compare.trigger()
    dlg = w.adapter.compare_dialog
    # Nobody has adjudicated: every Final cell is empty, and the summary says why.
    assert set(_finals(dlg).values()) == {""}
    assert "Final: empty until an adjudicator settles a value" in dlg.summary.text()
    t = dlg.table
    tip = t.item(_rows(t)["qt_ms"], FINAL).toolTip()
    assert "not adjudicated" in tip
    # Pick reader A's T end.
    rect = t.visualItemRect(t.item(_rows(t)["t_off"], 0))
    qtbot.mouseClick(t.viewport(), L, pos=rect.center())
    qtbot.mouseClick(dlg.use_a, L)
    finals, rows = _finals(dlg), _rows(t)
    a_t_off = t.item(rows["t_off"], 1).text()
    assert finals["t_off"] == a_t_off
    # Values that depend on T end are settled; the rest (P, PR, QRS, their marks) stay empty.
    settled = {k for k, v in finals.items() if v}
    assert settled == {"t_off", "qt_ms", "qtc_bazett_ms", "qtc_fridericia_ms"}
    # QT = T end - QRS onset, with the QRS onset of the chosen (first, signed) reading.
    qrs_on_a = _ms(t.item(rows["qrs_on"], 1).text())
    assert abs(_ms(finals["qt_ms"]) - (_ms(a_t_off) - qrs_on_a)) <= 1.0  # display rounding
    assert finals["qt_ms"] == t.item(rows["qt_ms"], 1).text()  # = reader A's QT
    tip = t.item(rows["qt_ms"], FINAL).toolTip()
    assert "adjudicated by adj1 (not signed yet): T end set by the adjudicator" in tip
    assert "the other marks as in reader1's reading" in tip
    assert "4 values adjudicated by adj1 (not signed yet)" in dlg.summary.text()
    # Undo takes the pick back; the column is empty again.
    w.act_undo.trigger()
    assert set(_finals(dlg).values()) == {""}
    dlg.close()


def test_another_reader_sees_a_final_value_only_once_the_adjudication_is_signed(
    window, qtbot, sample_copy, settings, double_read
):
    from reviewapp.core.io import open_record
    from reviewapp.core.marks import MarksStore
    from reviewapp.ui.main_window import MainWindow

    _an, first, _second = double_read
    want_s = next(o.new_s for o in first.overrides if o.fiducial == "t_off")
    # adj1 settles T end in their own window, and has not signed yet.
    rec = open_record(sample_copy)
    with MarksStore.open(rec, "adj1", role="adjudicator") as st:
        st.do(st.edits.move_fiducial("t_off", want_s))
    settings.setValue("reader/id", "reader1")
    w = window
    assert w.open_path(sample_copy, analyse_now=True)
    w.act_compare.trigger()
    dlg = w.adapter.compare_dialog
    assert set(_finals(dlg).values()) == {""}  # an unsigned adjudication is not final
    assert "Final: empty until an adjudicator settles a value" in dlg.summary.text()
    dlg.close()
    w.close()  # lets go of the record, so adj1 can sign in their window
    with MarksStore.open(rec, "adj1", role="adjudicator") as st:
        st.do(st.edits.sign_off())
    other = MainWindow(settings, px_per_mm=4.0)
    qtbot.addWidget(other)
    other.show()
    assert other.open_path(sample_copy, analyse_now=True)
    other.act_compare.trigger()
    dlg = other.adapter.compare_dialog
    finals = _finals(dlg)
    assert finals["t_off"] == f"{want_s * 1000:.0f} ms"
    assert {k for k, v in finals.items() if v} == {
        "t_off",
        "qt_ms",
        "qtc_bazett_ms",
        "qtc_fridericia_ms",
    }
    assert "adjudicated by adj1 (signed)" in dlg.summary.text()
    dlg.close()
    other.close()
