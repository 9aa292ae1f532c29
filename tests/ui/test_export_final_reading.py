"""File > Export when the record has an adjudicated final reading: the window asks which
reading to print, and the file says which it printed.

Readings are made through the marks store as readers' windows would (first and second reader
signed 30 ms apart on T end, an adjudicator signed between them), on a copy of a demo record.
Everything the reader does goes through the window: File > Open and File > Export reading
(menu entries triggered, the native file dialogs replaced only at their static-call boundary),
the question's buttons clicked. Reference for the values: QT = T end - QRS onset (the
definition), from the marks the readers set, not from the report code.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from PySide6 import QtCore, QtWidgets

from reviewapp.core.marks import MarksStore
from tests.report.test_report_reading_printed import (  # noqa: F401 (a fixture)
    ADJ_S,
    FIRST_S,
    RECORD,
    double_read,
)
from tests.report.test_report_reading_printed import _csv as _report_csv
from tests.ui.conftest import answer_modal
from tests.ui.test_every_action import menu_action as _menu

L = QtCore.Qt.MouseButton.LeftButton


@pytest.fixture
def adjudicated(double_read: dict) -> dict:  # noqa: F811 (the fixture imported above)
    """``double_read`` (first and second reader signed, 30 ms apart on T end) and an
    adjudicator's signed reading between them."""
    with MarksStore.open(double_read["record"], "adj1", role="adjudicator") as st:
        st.do(st.edits.move_fiducial("t_off", double_read["t_off"] + ADJ_S))
        st.do(st.edits.sign_off())
    return double_read


def _qt_ms(d: dict, shift_s: float) -> float:
    return (d["t_off"] + shift_s - d["qrs_on"]) * 1000.0


def _open(window, qtbot, monkeypatch, hea: Path) -> None:
    monkeypatch.setattr(
        QtWidgets.QFileDialog, "getOpenFileName", staticmethod(lambda *a, **k: (str(hea), ""))
    )
    _menu(window, "File/Open record…").trigger()
    qtbot.waitUntil(lambda: window.workflow is not None, timeout=20_000)


def _export_csv(window, monkeypatch, out: Path) -> None:
    monkeypatch.setattr(
        QtWidgets.QFileDialog, "getSaveFileName", staticmethod(lambda *a, **k: (str(out), ""))
    )
    _menu(window, "File/Export reading/Measurements as CSV…").trigger()


def _answer(qtbot, key: str | None, seen: dict):
    def act(dlg) -> None:
        seen["title"], seen["text"] = dlg.windowTitle(), dlg.intro.text()
        seen["tips"] = {k: b.toolTip() for k, b in dlg.buttons.items()}
        qtbot.mouseClick(dlg.cancel if key is None else dlg.buttons[key], L)

    return act


def _csv(path: Path) -> tuple[dict[str, dict[str, str]], str]:
    values, comments = _report_csv(path)
    (printed,) = [c for c in comments if c.startswith("# Printed:")]
    return values, printed


def test_the_reader_chooses_the_final_or_the_screen_reading(
    window, qtbot, settings, monkeypatch, adjudicated, tmp_path
):
    from reviewapp.ui.export_actions import WhichReadingDialog

    settings.setValue("reader/id", "reader1")
    _open(window, qtbot, monkeypatch, adjudicated["hea"])

    seen: dict = {}
    answer_modal(_answer(qtbot, "final", seen), WhichReadingDialog)
    _export_csv(window, monkeypatch, tmp_path / "final.csv")
    assert seen["title"] == "Which reading to print?"
    assert f"{RECORD} has an adjudicated final reading" in seen["text"]
    assert "the record's final reading: adjudicated by adj1" in seen["tips"]["final"]
    assert "reader1's own reading (first reader)" in seen["tips"]["screen"]
    values, printed = _csv(tmp_path / "final.csv")
    qt = values["qt_ms"]
    assert float(qt["value"]) == pytest.approx(_qt_ms(adjudicated, ADJ_S), abs=0.5)
    assert (qt["reading_status"], qt["reviewer"]) == ("adjudicated", "adj1")
    assert "final reading: adjudicated by adj1 over reader1's signed reading" in printed
    assert "Readers differ, adjudicated" in printed

    answer_modal(_answer(qtbot, "screen", {}), WhichReadingDialog)
    _export_csv(window, monkeypatch, tmp_path / "screen.csv")
    values, printed = _csv(tmp_path / "screen.csv")
    assert float(values["qt_ms"]["value"]) == pytest.approx(_qt_ms(adjudicated, FIRST_S), abs=0.5)
    assert values["qt_ms"]["reviewer"] == "reader1"
    assert "reader1's own reading (first reader), as on screen" in printed
    assert "not the record's final reading" in printed

    answer_modal(_answer(qtbot, None, {}), WhichReadingDialog)
    _export_csv(window, monkeypatch, tmp_path / "none.csv")
    assert not (tmp_path / "none.csv").exists()
    assert window.statusBar().currentMessage() == "nothing exported: no reading chosen"


def test_the_final_page_says_so_and_a_blinded_reader_is_not_asked(
    window, qtbot, settings, monkeypatch, adjudicated, tmp_path
):
    from reviewapp.ui.export_actions import WhichReadingDialog
    from tests.report.test_report_page import _squash, pdf_text

    settings.setValue("reader/id", "reader1")
    _open(window, qtbot, monkeypatch, adjudicated["hea"])
    answer_modal(_answer(qtbot, "final", {}), WhichReadingDialog)
    out = tmp_path / "final.pdf"
    monkeypatch.setattr(
        QtWidgets.QFileDialog, "getSaveFileName", staticmethod(lambda *a, **k: (str(out), ""))
    )
    qtbot.keySequence(window, "Ctrl+E")  # File > Export reading > Report page as PDF
    qtbot.waitUntil(out.exists, timeout=10_000)
    text = _squash(pdf_text(out.read_bytes())).replace("\ufb00", "ff")  # the "ff" ligature
    assert "ADJUDICATED(finalreading)" in text and "adj1(adjudicator)" in text

    # A blinded second reader never sees the other readings: no question, their own page.
    asked: list = []
    answer_modal(lambda dlg: asked.append(dlg) or dlg.reject(), WhichReadingDialog, tries=30)
    monkeypatch.setattr(
        QtWidgets.QFileDialog,
        "getOpenFileName",
        staticmethod(lambda *a, **k: (str(adjudicated["hea"]), "")),
    )
    settings.setValue("reader/id", "reader2")
    _menu(window, "File/Open as second reader (blinded)…").trigger()
    qtbot.waitUntil(
        lambda: (
            window.workflow is not None
            and window.workflow.store is not None
            and window.workflow.store.reviewer == "reader2"
        ),
        timeout=20_000,
    )
    _export_csv(window, monkeypatch, tmp_path / "blinded.csv")
    assert asked == []
    _, printed = _csv(tmp_path / "blinded.csv")
    assert "reader2's own reading (second reader), as on screen" in printed
