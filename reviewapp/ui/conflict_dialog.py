"""The marks file's conflicts, each a dialog of choices, every choice a button with its
consequence written beside it:

- ``ConflictDialog``: the file changed on disk since this window read it: reload, keep mine
  aside, or merge (``ReadingWorkflow.resolve_conflict``).
- ``LockDialog``: the record is open for writing in another window (who, since when): open it
  read-only, take it over (``MarksStore.take_over``; the other window can no longer save), or
  cancel.
- ``DisplacedDialog``: this window's record was taken over by another window: keep this
  reading as a separate file, or continue read-only.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6 import QtWidgets

from reviewapp.core.workflow import LockHolder, Outcome, Resolution

Choice = tuple[str, str, str]  # (key, button text, what it does)

CHOICES: tuple[tuple[Resolution, str, str], ...] = (
    (
        "reload",
        "Reload from disk",
        "Continue from the file as it is now; the changes made in this window since it was "
        "last saved are dropped.",
    ),
    (
        "keep_aside",
        "Keep mine aside",
        "Save this window's reading as a separate file beside the record, then continue from "
        "the file on disk.",
    ),
    (
        "merge",
        "Merge",
        "Combine both: the other window's changes and this window's; refused if both changed "
        "the same item.",
    ),
)
TAKE_OVER_WARNING = (
    "Save here from this window. The other window will no longer be able to save: its next "
    "change is refused (it can keep its reading as a separate file). The take-over is "
    "recorded in the marks file's audit trail."
)
LOCK_CHOICES: tuple[Choice, ...] = (
    (
        "read_only",
        "Open read-only",
        "See the record and its reading; nothing you do here is saved to the marks file.",
    ),
    ("take_over", "Take over", TAKE_OVER_WARNING),
)
DISPLACED_CHOICES: tuple[Choice, ...] = (
    (
        "keep_aside",
        "Save my reading as a separate file",
        "Keep this window's reading, with the change that was not saved, as a file of its own "
        "beside the record; then continue read-only from the marks file.",
    ),
    (
        "read_only",
        "Continue read-only",
        "Drop the change that was not saved and continue from the marks file, read-only.",
    ),
)


class ChoiceDialog(QtWidgets.QDialog):
    """An introduction, one button per choice with its consequence beside it, and a cancel
    button. ``choice`` is the key of the button clicked (None if cancelled)."""

    def __init__(
        self,
        name: str,
        title: str,
        intro: str,
        choices: tuple[Choice, ...],
        cancel_text: str,
        parent: QtWidgets.QWidget | None = None,
    ) -> None:
        super().__init__(parent)
        self.setObjectName(name)
        self.setWindowTitle(title)
        self.choice: str | None = None
        self.intro = QtWidgets.QLabel(intro)
        self.intro.setWordWrap(True)
        lay = QtWidgets.QVBoxLayout(self)
        lay.addWidget(self.intro)
        self.buttons: dict[str, QtWidgets.QPushButton] = {}
        for key, text, tip in choices:
            b = QtWidgets.QPushButton(text)
            b.setObjectName(f"choose_{key}")
            b.setToolTip(tip)
            b.setAutoDefault(False)
            b.clicked.connect(lambda _c=False, k=key: self._choose(k))
            explain = QtWidgets.QLabel(tip)
            explain.setWordWrap(True)
            row = QtWidgets.QHBoxLayout()
            row.addWidget(b)
            row.addWidget(explain, 1)
            lay.addLayout(row)
            self.buttons[key] = b
        self.problem = QtWidgets.QLabel("")
        self.problem.setObjectName(f"{name}_problem")
        self.problem.setWordWrap(True)
        lay.addWidget(self.problem)
        later = QtWidgets.QDialogButtonBox(QtWidgets.QDialogButtonBox.StandardButton.Cancel)
        self.cancel = later.button(QtWidgets.QDialogButtonBox.StandardButton.Cancel)
        self.cancel.setText(cancel_text)
        later.rejected.connect(self.reject)
        lay.addWidget(later)
        self.setMinimumWidth(560)

    def _choose(self, key: str) -> None:
        self.choice = key
        self.accept()


class ConflictDialog(ChoiceDialog):
    """Three buttons; ``resolve(choice)`` runs the choice. A choice that fails (a merge of the
    same item changed twice) is said in the dialog, which stays for another choice."""

    def __init__(
        self,
        file_name: str,
        resolve: Callable[[Resolution], Outcome],
        parent: QtWidgets.QWidget | None = None,
    ) -> None:
        super().__init__(
            "conflict_dialog",
            "Marks file changed on disk",
            f"{file_name} was changed by another window or program since this window read "
            "it. Nothing was saved. How should the two be reconciled?",
            CHOICES,
            "Decide later",
            parent,
        )
        self._resolve = resolve
        self.outcome: Outcome | None = None
        for key in list(self.buttons):
            self.buttons[key].setObjectName(f"resolve_{key}")

    def _choose(self, key: str) -> None:
        choice = next(c for c, _text, _tip in CHOICES if c == key)
        out = self._resolve(choice)
        if out.done:
            self.outcome = out
            super()._choose(key)
            return
        self.problem.setText(out.message)
        if choice == "merge":
            self.buttons["merge"].setEnabled(False)


class LockDialog(ChoiceDialog):
    """The record is open for writing in another window: read-only, take over, or cancel."""

    def __init__(
        self,
        record_name: str,
        holder: LockHolder,
        *,
        can_cancel: bool = True,
        parent: QtWidgets.QWidget | None = None,
    ) -> None:
        since = f", since {holder.since}" if holder.since else ""
        super().__init__(
            "lock_dialog",
            "Record open in another window",
            f"{record_name} is open for writing in another window: {holder.reviewer} "
            f"({holder.where}{since}). Only one window at a time saves a record's reading.",
            LOCK_CHOICES,
            "Cancel" if can_cancel else "Read-only",
            parent,
        )


class DisplacedDialog(ChoiceDialog):
    """Another window took this record over: keep the reading aside, or continue read-only."""

    def __init__(self, message: str, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(
            "displaced_dialog",
            "This window can no longer save",
            message,
            DISPLACED_CHOICES,
            "Decide later",
            parent,
        )
