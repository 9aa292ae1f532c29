"""Application start-up: QApplication with high-DPI settings, an error hook, the window."""

from __future__ import annotations

import gc
import logging
import sys
import traceback
from pathlib import Path
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtWidgets

import reviewapp
from reviewapp.core.errors import ReviewError

if TYPE_CHECKING:
    from reviewapp.ui.main_window import MainWindow

log = logging.getLogger(__name__)


def sample_records_dir() -> Path:
    """The bundled sample worklist folder (beside the package in a checkout)."""
    return Path(reviewapp.__file__).resolve().parents[1] / "sample_records"


def create_app(argv: list[str] | None = None) -> QtWidgets.QApplication:
    app = QtWidgets.QApplication.instance()
    if isinstance(app, QtWidgets.QApplication):
        return app
    # Fractional scale factors (125 %, 150 %) pass straight through, so 1 mm stays 1 mm.
    QtGui.QGuiApplication.setHighDpiScaleFactorRoundingPolicy(
        QtCore.Qt.HighDpiScaleFactorRoundingPolicy.PassThrough
    )
    QtCore.QCoreApplication.setOrganizationName("reviewapp")
    QtCore.QCoreApplication.setApplicationName("reviewapp")
    app = QtWidgets.QApplication(argv if argv is not None else [sys.argv[0]])
    app.setApplicationDisplayName("reviewapp")
    return app


def install_excepthook(get_parent) -> None:
    """Unexpected errors become a dialog with the message (the traceback goes to the log)."""

    def hook(exc_type, exc, tb) -> None:
        if issubclass(exc_type, KeyboardInterrupt):
            sys.__excepthook__(exc_type, exc, tb)
            return
        log.error("unexpected error:\n%s", "".join(traceback.format_exception(exc_type, exc, tb)))
        if isinstance(exc, ReviewError):
            text = str(exc)
        else:
            text = (
                f"Something went wrong: {exc_type.__name__}: {exc}\n\n"
                "Your marks already saved are not affected. If this keeps happening, note what "
                "you were doing and report it."
            )
        parent = get_parent()
        if QtWidgets.QApplication.platformName() == "offscreen":
            print(f"reviewapp: {text}", file=sys.stderr)
            return
        QtWidgets.QMessageBox.critical(parent, "reviewapp", text)

    sys.excepthook = hook


def open_at_launch(window: MainWindow, path: Path | None) -> bool:
    """Open what the command line named, else the bundled demo worklist: the sample folder
    lists its own 11 records, and its count line names the QT study in ``study/`` (one tick
    of Subfolders, or File > Open folder on it, lists that study)."""
    target = path if path is not None else sample_records_dir()
    if path is None and not target.is_dir():
        return False
    return bool(window.open_path(target))


def run_app(
    path: Path | None = None,
    *,
    speed_mm_per_s: float | None = None,
    gain_mm_per_mv: float | None = None,
    layout: str | None = None,
    second_reader: bool = False,
    hide_automatic: bool = False,
) -> int:
    from reviewapp.ui.main_window import MainWindow
    from reviewapp.ui.reader import ReadMode

    app = create_app()
    median = layout == "median"
    window = MainWindow(
        speed_mm_per_s=speed_mm_per_s,
        gain_mm_per_mv=gain_mm_per_mv,
        layout=None if median else layout,
    )
    install_excepthook(lambda: window)
    if second_reader:
        window.adapter.set_read_mode(ReadMode("second", True, not hide_automatic), reopen=False)
    window.show()
    QtCore.QTimer.singleShot(0, lambda: open_at_launch(window, path))
    if median:
        QtCore.QTimer.singleShot(0, lambda: window.view.show_median(True))
    code = int(app.exec())
    # Delete the window while the application still exists: left to the interpreter's own
    # teardown, Qt and pyqtgraph objects go in no set order and can crash the process after
    # every reading is already saved.
    window.deleteLater()
    QtCore.QCoreApplication.sendPostedEvents(None, QtCore.QEvent.Type.DeferredDelete)
    gc.collect()
    return code
