"""The "Reading" dock: who reads in which role, the reading's status (unread, in progress,
signed off by whom and when), the sign-off button, and the reader's notes.

Status is said in words with a glyph, never by colour alone. Notes are the marks store's note
commands, run through the window's undo stack like every other edit.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6 import QtCore, QtWidgets

if TYPE_CHECKING:
    from reviewapp.core.engine import Reading
    from reviewapp.core.marks.model import ReviewerReading

STATUS_GLYPH = {"unread": "○", "in_progress": "◐", "signed_off": "✔"}
STATUS_WORDS = {"unread": "Unread", "in_progress": "In progress", "signed_off": "Signed off"}


def when_text(at: str | None) -> str:
    """'2026-12-02 00:52 UTC' from the store's ISO time ('' when absent)."""
    if not at:
        return ""
    return at[:16].replace("T", " ") + " UTC"


def status_text(reading: ReviewerReading | None) -> str:
    if reading is None:
        return "No marks file: corrections stay in this window"
    s = reading.status
    text = f"{STATUS_GLYPH.get(s, '')} {STATUS_WORDS.get(s, s)}"
    if s == "signed_off":
        text += f" by {reading.signed_off_by} at {when_text(reading.signed_off_at)}"
    return text


def key_values_text(reading: Reading) -> str:
    """The values a reader confirms when signing off (one line each)."""
    iv = reading.measurements.intervals
    rows = (
        ("Heart rate", iv.hr_bpm, "bpm"),
        ("PR", iv.pr_ms, "ms"),
        ("QRS", iv.qrs_ms, "ms"),
        ("QT", iv.qt_ms, "ms"),
        ("QTc Fridericia", iv.qtc_fridericia_ms, "ms"),
        ("QTc Bazett", iv.qtc_bazett_ms, "ms"),
    )
    return "\n".join(f"{k}: {'—' if v is None else f'{v:.0f} {u}'}" for k, v, u in rows)


class ReadingPanel(QtWidgets.QWidget):
    """Status banner, reader line, sign-off button and the notes list."""

    sign_off_requested = QtCore.Signal()
    add_note_requested = QtCore.Signal()
    edit_note_requested = QtCore.Signal(str)  # note id
    delete_note_requested = QtCore.Signal(str)

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.banner = QtWidgets.QLabel("")
        self.banner.setObjectName("reading_status")
        self.banner.setWordWrap(True)
        f = self.banner.font()
        f.setPointSizeF(f.pointSizeF() * 1.25)
        f.setBold(True)
        self.banner.setFont(f)
        self.notice = QtWidgets.QLabel("")
        self.notice.setObjectName("reading_notice")
        self.notice.setWordWrap(True)
        self.notice.setFrameShape(QtWidgets.QFrame.Shape.StyledPanel)
        self.notice.setVisible(False)
        self.reader_label = QtWidgets.QLabel("")
        self.reader_label.setWordWrap(True)
        self.sign_button = QtWidgets.QPushButton("Sign off reading…")
        self.sign_button.setObjectName("sign_off_button")
        self.sign_button.clicked.connect(self.sign_off_requested)
        self.notes = QtWidgets.QListWidget()
        self.notes.setObjectName("notes_list")
        self.notes.setWordWrap(True)
        self.notes.setMaximumHeight(110)
        self.notes.itemDoubleClicked.connect(
            lambda it: self.edit_note_requested.emit(it.data(QtCore.Qt.ItemDataRole.UserRole))
        )
        self.add_button = QtWidgets.QPushButton("Add note…")
        self.edit_button = QtWidgets.QPushButton("Edit…")
        self.delete_button = QtWidgets.QPushButton("Delete")
        self.add_button.clicked.connect(self.add_note_requested)
        self.edit_button.clicked.connect(self._edit_selected)
        self.delete_button.clicked.connect(self._delete_selected)
        self.notes.currentItemChanged.connect(lambda *_: self._update_buttons())
        top = QtWidgets.QHBoxLayout()
        top.addWidget(self.banner, 1)
        top.addWidget(self.sign_button)
        buttons = QtWidgets.QHBoxLayout()
        buttons.addWidget(QtWidgets.QLabel("Notes"))
        buttons.addStretch(1)
        for b in (self.add_button, self.edit_button, self.delete_button):
            buttons.addWidget(b)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(6, 4, 6, 4)
        lay.addLayout(top)
        lay.addWidget(self.reader_label)
        lay.addWidget(self.notice)
        lay.addLayout(buttons)
        lay.addWidget(self.notes)
        self._writable = False
        self.show_reading(None, "", writable=False)

    def show_reading(self, reading: ReviewerReading | None, who: str, *, writable: bool) -> None:
        """Fill from the store's reading (None: no marks file). ``who``: reader and role."""
        self._writable = writable
        self.banner.setText(status_text(reading))
        self.reader_label.setText(who)
        signed = reading is not None and reading.status == "signed_off"
        self.sign_button.setEnabled(writable and reading is not None and not signed)
        self.sign_button.setToolTip(
            "Already signed off; any correction reopens the reading."
            if signed
            else "Confirm the values and sign this reading off under your reader id."
        )
        current = self.notes.currentItem()
        keep = None if current is None else current.data(QtCore.Qt.ItemDataRole.UserRole)
        self.notes.clear()
        for n in () if reading is None else reading.notes:
            it = QtWidgets.QListWidgetItem(n.text)
            it.setData(QtCore.Qt.ItemDataRole.UserRole, n.id)
            it.setToolTip(n.text)
            self.notes.addItem(it)
            if n.id == keep:
                self.notes.setCurrentItem(it)
        self.add_button.setEnabled(reading is not None)
        self._update_buttons()

    def show_notice(self, text: str) -> None:
        self.notice.setText(text)
        self.notice.setVisible(bool(text))

    def note_texts(self) -> list[str]:
        return [self.notes.item(i).text() for i in range(self.notes.count())]

    def _selected_id(self) -> str | None:
        it = self.notes.currentItem()
        return None if it is None else it.data(QtCore.Qt.ItemDataRole.UserRole)

    def _update_buttons(self) -> None:
        has = self._selected_id() is not None
        self.edit_button.setEnabled(has)
        self.delete_button.setEnabled(has)

    def _edit_selected(self) -> None:
        nid = self._selected_id()
        if nid is not None:
            self.edit_note_requested.emit(nid)

    def _delete_selected(self) -> None:
        nid = self._selected_id()
        if nid is not None:
            self.delete_note_requested.emit(nid)


class SignOffDialog(QtWidgets.QDialog):
    """Shows the key values, the corrected marks and the notes; OK signs off."""

    def __init__(
        self,
        record_name: str,
        reader: str,
        role_text: str,
        reading: Reading,
        n_corrected: int,
        n_notes: int,
        parent: QtWidgets.QWidget | None = None,
    ) -> None:
        super().__init__(parent)
        self.setWindowTitle("Sign off reading")
        self.setObjectName("sign_off_dialog")
        head = QtWidgets.QLabel(
            f"Sign off the reading of <b>{record_name}</b> as <b>{reader}</b> ({role_text})?"
        )
        head.setWordWrap(True)
        self.values = QtWidgets.QLabel(key_values_text(reading))
        self.values.setObjectName("sign_off_values")
        self.values.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
        f = self.values.font()
        f.setPointSizeF(f.pointSizeF() * 1.15)
        self.values.setFont(f)
        flags = [f"{x.text}" for x in reading.findings if x.lead is None]
        extra = QtWidgets.QLabel(
            f"Marks you corrected: {n_corrected}. Notes: {n_notes}."
            + ("\nFlagged: " + "; ".join(flags) if flags else "")
            + "\nA later correction reopens the reading; the marks file keeps both events."
        )
        extra.setWordWrap(True)
        self.buttons = QtWidgets.QDialogButtonBox()
        self.ok = self.buttons.addButton(
            "Sign off", QtWidgets.QDialogButtonBox.ButtonRole.AcceptRole
        )
        self.buttons.addButton(QtWidgets.QDialogButtonBox.StandardButton.Cancel)
        self.buttons.accepted.connect(self.accept)
        self.buttons.rejected.connect(self.reject)
        lay = QtWidgets.QVBoxLayout(self)
        lay.addWidget(head)
        lay.addWidget(self.values)
        lay.addWidget(extra)
        lay.addWidget(self.buttons)
