"""The marks file changed on disk since this window read it: the reader chooses reload, keep
theirs aside, or merge (``ReadingWorkflow.resolve_conflict``)."""

from __future__ import annotations

from collections.abc import Callable

from PySide6 import QtWidgets

from reviewapp.core.workflow import Outcome, Resolution

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


class ConflictDialog(QtWidgets.QDialog):
    """Three buttons; ``resolve(choice)`` runs the choice. A choice that fails (a merge of the
    same item changed twice) is said in the dialog, which stays for another choice."""

    def __init__(
        self,
        file_name: str,
        resolve: Callable[[Resolution], Outcome],
        parent: QtWidgets.QWidget | None = None,
    ) -> None:
        super().__init__(parent)
        self.setObjectName("conflict_dialog")
        self.setWindowTitle("Marks file changed on disk")
        self._resolve = resolve
        self.outcome: Outcome | None = None
        intro = QtWidgets.QLabel(
            f"{file_name} was changed by another window or program since this window read "
            "it. Nothing was saved. How should the two be reconciled?"
        )
        intro.setWordWrap(True)
        lay = QtWidgets.QVBoxLayout(self)
        lay.addWidget(intro)
        self.buttons: dict[Resolution, QtWidgets.QPushButton] = {}
        for choice, text, tip in CHOICES:
            b = QtWidgets.QPushButton(text)
            b.setObjectName(f"resolve_{choice}")
            b.setToolTip(tip)
            b.setAutoDefault(False)
            b.clicked.connect(lambda _c=False, ch=choice: self._choose(ch))
            explain = QtWidgets.QLabel(tip)
            explain.setWordWrap(True)
            row = QtWidgets.QHBoxLayout()
            row.addWidget(b)
            row.addWidget(explain, 1)
            lay.addLayout(row)
            self.buttons[choice] = b
        self.problem = QtWidgets.QLabel("")
        self.problem.setObjectName("conflict_problem")
        self.problem.setWordWrap(True)
        lay.addWidget(self.problem)
        later = QtWidgets.QDialogButtonBox(QtWidgets.QDialogButtonBox.StandardButton.Cancel)
        later.button(QtWidgets.QDialogButtonBox.StandardButton.Cancel).setText("Decide later")
        later.rejected.connect(self.reject)
        lay.addWidget(later)

    def _choose(self, choice: Resolution) -> None:
        out = self._resolve(choice)
        if out.done:
            self.outcome = out
            self.accept()
            return
        self.problem.setText(out.message)
        if choice == "merge":
            self.buttons["merge"].setEnabled(False)
