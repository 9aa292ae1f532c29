"""The interpretation in the window, through the widgets: the automatic statements show their
criteria and source; the comparison window lists both readers' statements (agree / differ)
and the adjudicator takes one into the final interpretation by clicking.

Record: LUDB 108 (Kalyakulina AI et al., IEEE Access 2020), complete right bundle branch block
by its label and by the criteria of Surawicz B et al., Circulation 2009; readings written
through the marks store as the readers' own windows would.
"""

from __future__ import annotations

import json
import shutil

from PySide6 import QtCore

from reviewapp.core.io import open_record
from reviewapp.core.marks import MarksStore

L = QtCore.Qt.MouseButton.LeftButton


def _reading(path, reviewer: str, role: str, codes: list[tuple[str, str]]) -> None:
    with MarksStore.open(open_record(path), reviewer, role=role) as st:
        for code, text in codes:
            st.do(st.edits.add_statement(code, text))
        st.do(st.edits.sign_off())


def test_compare_and_adjudicate_statements(window, qtbot, settings, shared_data, tmp_path):
    for ext in (".hea", ".dat"):
        shutil.copy(shared_data / "ludb" / f"108{ext}", tmp_path / f"108{ext}")
    hea = tmp_path / "108.hea"
    _reading(
        hea,
        "reader1",
        "first",
        [
            ("rhythm.sinus", "sinus rhythm"),
            ("conduction.rbbb", "complete right bundle branch block"),
        ],
    )
    _reading(
        hea,
        "reader2",
        "second",
        [("rhythm.sinus", "sinus rhythm"), ("conduction.lafb", "left anterior fascicular block")],
    )
    w = window
    settings.setValue("reader/id", "adj1")
    w.acts["role_3"].trigger()  # File > Reading role > Adjudicator
    assert w.open_path(hea, analyse_now=True)
    # The automatic statements, each with its criteria and source in the tooltip and box.
    from tests.ui.test_every_action import Ctx, show_tab

    show_tab(Ctx(w, qtbot, None, tmp_path, tmp_path), "Interpretation")  # type: ignore[arg-type]
    panel = w.interpretation_panel
    codes = [
        panel.automatic.item(i).data(QtCore.Qt.ItemDataRole.UserRole)
        for i in range(panel.automatic.count())
    ]
    row = codes.index("conduction.rbbb")
    item = panel.automatic.item(row)
    qtbot.mouseClick(
        panel.automatic.viewport(), L, pos=panel.automatic.visualItemRect(item).center()
    )
    tip = item.toolTip()
    assert "Criteria: QRS >= 120 ms" in tip and "Source: Surawicz B et al." in tip
    assert "R-peak time in V1" in panel.detail.toPlainText()
    # Tools > Compare readings, the Interpretation tab.
    w.acts["compare"].trigger()
    dlg = w.adapter.compare_dialog
    bar = dlg.tabs.tabBar()
    qtbot.mouseClick(bar, L, pos=bar.tabRect(1).center())
    view = dlg.statements
    assert dlg.tabs.currentWidget() is view
    verdicts = {r.key: r.verdict for r in view.rows}
    assert verdicts == {
        "rhythm.sinus": "agree",
        "conduction.rbbb": "differ: only A",
        "conduction.lafb": "differ: only B",
    }
    i = [r.key for r in view.rows].index("conduction.rbbb")
    cell = view.table.visualItemRect(view.table.item(i, 0)).center()
    qtbot.mouseClick(view.table.viewport(), L, pos=cell)
    assert view.use_a.isEnabled() and not view.use_b.isEnabled()
    qtbot.mouseClick(view.use_a, L)
    side = json.loads((tmp_path / "108.marks.json").read_text())
    (x,) = side["readings"]["adj1"]["statements"]
    assert (x["code"], x["origin"], x["from_reader"]) == ("conduction.rbbb", "reader", "reader1")
    assert side["audit"][-1]["action"] == "add_statement"
    i = [r.key for r in view.rows].index("conduction.rbbb")
    assert view.table.item(i, 4).text() == "in final"
    # The adjudicator's own list shows it too.
    assert panel.mine_texts() == ["complete right bundle branch block"]
    dlg.close()
