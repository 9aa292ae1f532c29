"""A problem shown to the reader: one message box, never a traceback."""

from __future__ import annotations

import logging

from PySide6 import QtWidgets

from reviewapp.core.errors import ReviewError

log = logging.getLogger(__name__)


def show_error(parent: QtWidgets.QWidget, err: BaseException | str) -> QtWidgets.QMessageBox:
    """A warning box with the problem in words (a ReviewError names its file). Offscreen it
    is shown without blocking and kept as ``parent.last_error_box`` for tests to read."""
    if isinstance(err, str):
        text = err
    elif isinstance(err, ReviewError):
        text = str(err)
    else:
        text = f"{type(err).__name__}: {err}"
    log.info("error shown to the reader: %s", text)
    box = QtWidgets.QMessageBox(
        QtWidgets.QMessageBox.Icon.Warning,
        "reviewapp",
        text,
        QtWidgets.QMessageBox.StandardButton.Ok,
        parent,
    )
    box.setModal(True)
    parent.last_error_box = box  # type: ignore[attr-defined]
    if QtWidgets.QApplication.platformName() == "offscreen":
        box.show()  # never block a headless run
    else:
        box.exec()
    return box
