"""Keyboard shortcuts panel and the About box (with the clinical caution)."""

from __future__ import annotations

from PySide6 import QtWidgets

from reviewapp import CLINICAL_CAUTION, __version__

SHORTCUTS: tuple[tuple[str, str], ...] = (
    ("Ctrl+O", "Open a record"),
    ("Ctrl+Shift+O", "Open a folder of records"),
    ("Drag a file onto the window", "Open it"),
    ("N / Shift+N", "Next / previous unread record of the worklist"),
    ("1 / 2 / 3 / 4", "Layout: 12 stacked / 6x2 / 3x4 + 1 rhythm / 3x4 + 3 rhythm"),
    ("B", "Median (representative) beat view on / off"),
    ("Shift+B", "Superimpose every beat on the median beat"),
    ("Ctrl+L", "Lead order: standard / Cabrera"),
    ("[  ]", "Paper speed slower / faster (12.5, 25, 50, 100 mm/s)"),
    ("-  =", "Gain lower / higher (2.5, 5, 10, 20, 40 mm/mV)"),
    ("Ctrl+=  Ctrl+-", "Zoom in / out (the wheel zooms at the pointer)"),
    ("Ctrl+0", "True size (1 mm on paper = 1 mm on the glass)"),
    ("F", "Fit the page in the window"),
    ("Page Up / Page Down, Home / End", "Previous / next page, first / last page"),
    ("C", "New time caliper (ms and bpm)"),
    ("Shift + drag on a trace", "Draw a time caliper from where you press to where you let go"),
    ("A", "New amplitude caliper (mV and mm)"),
    ("Tab", "Selected caliper: choose leg 1, leg 2 or the whole pair"),
    ("Click a mark", "Select it (drawn with a halo); the arrow keys then move it"),
    ("Left / Right", "Move the selected mark, or caliper part, by one sample"),
    ("Up / Down", "Amplitude caliper: move by 0.01 mV"),
    ("M", "March-out: repeat the selected time caliper along the strip"),
    ("Delete", "Remove the selected caliper"),
    ("Drag a mark", "Correct a boundary; every interval, QTc, axis and finding updates at once"),
    ("Click a lead's median beat", "Show that lead magnified (1 ms per pixel at first)"),
    ("Double-click a mark", "Reset that mark to automatic"),
    ("Ctrl+Shift+R", "Reset all marks to automatic"),
    ("Ctrl+I", "Add an interpretation statement from the catalogue"),
    ("Ctrl+Z / Ctrl+Shift+Z", "Undo / redo a mark correction or caliper edit"),
    ("Alt+1 / Alt+2 / Alt+3", "Display filter: baseline / mains / low-pass"),
    ("Alt+4", "Centre each lead's baseline on its row (display only; on at first)"),
    ("Ctrl+E", "Export the reading as a true-scale PDF page"),
    ("Ctrl+P", "Print the reading at true scale"),
    ("Ctrl+T", "Light / dark theme"),
    ("F1", "This list"),
)


class HelpPanel(QtWidgets.QWidget):
    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        table = QtWidgets.QTableWidget(len(SHORTCUTS), 2)
        table.setHorizontalHeaderLabels(["Keys", "Action"])
        table.verticalHeader().hide()
        table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        for r, (k, a) in enumerate(SHORTCUTS):
            table.setItem(r, 0, QtWidgets.QTableWidgetItem(k))
            table.setItem(r, 1, QtWidgets.QTableWidgetItem(a))
        table.horizontalHeader().setStretchLastSection(True)
        table.resizeColumnToContents(0)
        note = QtWidgets.QLabel(
            "Display filters change only the drawing; measurements always come from the "
            "analysis of the recorded signal and the marks."
        )
        note.setWordWrap(True)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(6, 6, 6, 6)
        lay.addWidget(table)
        lay.addWidget(note)


def about_text() -> str:
    return (
        f"<h3>reviewapp {__version__}</h3>"
        "<p>A workbench for over-reading resting 12-lead ECGs: calibrated paper, calipers, "
        "corrected wave boundaries, QTc.</p>"
        f"<p><b>{CLINICAL_CAUTION}</b></p>"
    )


def show_about(parent: QtWidgets.QWidget | None) -> None:
    QtWidgets.QMessageBox.about(parent, "About reviewapp", about_text())
