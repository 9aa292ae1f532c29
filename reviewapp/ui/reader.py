"""Who is reading: the reviewer id kept in the settings, the reading role, and the dialog that
asks for the id.

The id is what the marks sidecar records for every edit and sign-off, so it is never taken
silently from the operating-system login: the dialog offers the login name as a suggestion and
uses it only when the reader confirms it.
"""

from __future__ import annotations

import getpass
import re

from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.workflow.roles import (
    ADJUDICATOR,
    FIRST,
    READ_MODES,
    READER_ID,
    SECOND_BLINDED,
    SECOND_HIDDEN,
    UNIDENTIFIED,
    ReadMode,
)

__all__ = [
    "ADJUDICATOR",
    "FIRST",
    "READER_ID",
    "READ_MODES",
    "SECOND_BLINDED",
    "SECOND_HIDDEN",
    "UNIDENTIFIED",
    "ReadMode",
    "ReaderDialog",
    "ask_reader",
    "stored_reader",
]

SETTING_KEY = "reader/id"


def stored_reader(settings: QtCore.QSettings) -> str | None:
    """The reader id from the settings, or None when not set (or not usable)."""
    rid = str(settings.value(SETTING_KEY, "") or "").strip()
    return rid if READER_ID.match(rid) else None


def login_suggestion() -> str:
    """The login name made into a usable id ('' when there is none)."""
    try:
        name = getpass.getuser()
    except Exception:  # no login name in this environment
        return ""
    name = re.sub(r"[^A-Za-z0-9_.@-]", "_", name).lstrip("_.@-")[:64]
    return name if READER_ID.match(name) else ""


class ReaderDialog(QtWidgets.QDialog):
    """Asks for the reviewer id (letters, digits, '.', '_', '@', '-'); OK only when valid."""

    def __init__(
        self, current: str | None, parent: QtWidgets.QWidget | None = None, reason: str = ""
    ) -> None:
        super().__init__(parent)
        self.setWindowTitle("Reader")
        self.setObjectName("reader_dialog")
        intro = QtWidgets.QLabel(
            (reason + "\n\n" if reason else "")
            + "Your reader id is written with every mark you correct and every reading you sign "
            "off. Use your study or core-lab reviewer id."
        )
        intro.setWordWrap(True)
        self.edit = QtWidgets.QLineEdit(current or "")
        self.edit.setObjectName("reader_id")
        self.edit.setPlaceholderText("e.g. reader1")
        self.edit.setValidator(QtGui.QRegularExpressionValidator(READER_ID.pattern, self.edit))
        self.login = login_suggestion()
        self.use_login = QtWidgets.QPushButton(
            f"Use my login name ({self.login})" if self.login else "No login name available"
        )
        self.use_login.setEnabled(bool(self.login))
        self.use_login.setAutoDefault(False)
        self.use_login.clicked.connect(lambda: self.edit.setText(self.login))
        self.problem = QtWidgets.QLabel("")
        self.buttons = QtWidgets.QDialogButtonBox(
            QtWidgets.QDialogButtonBox.StandardButton.Ok
            | QtWidgets.QDialogButtonBox.StandardButton.Cancel
        )
        self.buttons.accepted.connect(self.accept)
        self.buttons.rejected.connect(self.reject)
        form = QtWidgets.QFormLayout()
        form.addRow("Reader id:", self.edit)
        form.addRow("", self.use_login)
        lay = QtWidgets.QVBoxLayout(self)
        lay.addWidget(intro)
        lay.addLayout(form)
        lay.addWidget(self.problem)
        lay.addWidget(self.buttons)
        self.edit.textChanged.connect(self._check)
        self._check()

    def _check(self) -> None:
        ok = bool(READER_ID.match(self.value()))
        self.buttons.button(QtWidgets.QDialogButtonBox.StandardButton.Ok).setEnabled(ok)
        self.problem.setText(
            ""
            if ok or not self.value()
            else "Use 1-64 letters, digits, '.', '_', '@' or '-', starting with a letter or digit."
        )

    def value(self) -> str:
        return self.edit.text().strip()


def ask_reader(
    parent: QtWidgets.QWidget | None, settings: QtCore.QSettings, reason: str = ""
) -> str | None:
    """Show the dialog; on OK store and return the id, else None (nothing stored)."""
    dlg = ReaderDialog(stored_reader(settings), parent, reason)
    if dlg.exec() != QtWidgets.QDialog.DialogCode.Accepted or not READER_ID.match(dlg.value()):
        return None
    settings.setValue(SETTING_KEY, dlg.value())
    settings.sync()
    return dlg.value()
