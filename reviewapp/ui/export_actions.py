"""File-menu exports and printing of the current reading (the same page as `reviewapp export`).

The page is drawn by ``reviewapp.report`` at true scale; this module only asks for a file name
(or a printer), gathers the reading on screen from the ``ReadingWorkflow`` and reports what was
written in the status bar, or the clear error in a dialog. The menu entries are declared with
the window's other actions (reviewapp/ui/actions.py).

When the record has a signed adjudication (and the reader may see it: not a blinded read),
each export first asks which reading to print (``WhichReadingDialog``): the record's final
reading (``report.content.final_report_content``: ``core.marks.final.resolve_final``, the
rule of `reviewapp export`) or the reading on screen. The page says which it prints.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING

from PySide6.QtCore import QMarginsF, QObject
from PySide6.QtGui import QPageLayout, QPageSize, QPainter
from PySide6.QtWidgets import QFileDialog, QMainWindow, QWidget

from reviewapp.core.errors import ReviewError
from reviewapp.core.workflow import ReadingWorkflow
from reviewapp.ui.conflict_dialog import ChoiceDialog

if TYPE_CHECKING:
    # The report modules are imported when something is exported or printed, not at launch
    # (the window's first paint does not need them).
    from reviewapp.report.content import ReportContent

WorkflowGetter = Callable[[], ReadingWorkflow | None]


def report_content(workflow: ReadingWorkflow) -> ReportContent:
    """The report page's content for the reading on screen (corrections, status, reviewer)."""
    from reviewapp.report.content import build_report_content, own_reading_words

    store = workflow.store
    status, reviewer, signed_at, role = "unread", None, None, None
    statements: tuple = ()
    if store is not None:
        reading = store.reading
        status, reviewer, signed_at = reading.status, reading.reviewer, reading.signed_off_at
        statements, role = reading.statements, reading.role
    overrides = workflow.engine_overrides
    if overrides and status == "unread":
        status = "in_progress"
    return build_report_content(
        workflow.analysis,
        overrides,
        status=status,
        reviewer=reviewer,
        signed_off_at=signed_at,
        reader_statements=statements,
        role=role,
        printed=own_reading_words(reviewer, role, ", as on screen"),
    )


def final_content(workflow: ReadingWorkflow) -> ReportContent | None:
    """The page of the record's final reading when a signed adjudication decides it and the
    reader may see the other readings; None otherwise (a blinded read, no marks file, no
    signed adjudication)."""
    store = workflow.store
    if store is None or store.blinded:
        return None
    from reviewapp.core.marks.final import choose_adjudication
    from reviewapp.report.content import final_report_content

    sidecar = store.sidecar
    if choose_adjudication(sidecar.readings) is None:
        return None
    return final_report_content(workflow.analysis, sidecar)


class WhichReadingDialog(ChoiceDialog):
    """The record has an adjudicated final reading: print it, or the reading on screen."""

    def __init__(
        self, record_name: str, final: str, screen: str, parent: QWidget | None = None
    ) -> None:
        super().__init__(
            "which_reading_dialog",
            "Which reading to print?",
            f"{record_name} has an adjudicated final reading. The page says which reading "
            "it prints.",
            (
                ("final", "Final reading", f"Print the record's {final}."),
                ("screen", "Reading on screen", f"Print {screen}."),
            ),
            "Cancel",
            parent,
        )
        self.buttons["final"].setDefault(True)


class ExportActions(QObject):
    """One job: turn the reading on screen into files (or a printed page)."""

    def __init__(
        self,
        window: QMainWindow,
        workflow: WorkflowGetter,
        show_error: Callable[[str], None],
        paper: Callable[[], str] = lambda: "a4",
    ) -> None:
        super().__init__(window)
        self._window = window
        self._workflow = workflow
        self._show_error = show_error
        self._paper = paper
        self.which_dialog: WhichReadingDialog | None = None

    def run(self, name: str) -> object:
        """The menu's entry point: ``export_pdf``, ``export_image``, ``export_csv``,
        ``export_wfdb`` or ``print_report``, with any problem shown in words."""
        try:
            return getattr(self, name)()
        except ReviewError as err:
            self._show_error(str(err))
            return None

    def _content(self) -> ReportContent | None:
        workflow = self._workflow()
        if workflow is None:
            self._show_error("Open a record first.")
            return None
        if workflow.hide_automatic:
            # Every export draws and lists the automatic marks and values the blinded reader
            # has not set; they would see them in the file.
            self._show_error(
                "Exports and printing are off in a blinded read with the automatic marks "
                "hidden: the page would show the automatic marks and values."
            )
            return None
        screen = report_content(workflow)
        final = final_content(workflow)
        if final is None:
            return screen
        dlg = WhichReadingDialog(
            workflow.analysis.record.name, final.printed, screen.printed, self._window
        )
        self.which_dialog = dlg  # for tests and screenshots while it is open
        try:
            dlg.exec()
        finally:
            self.which_dialog = None
        if dlg.choice is None:
            self._done("nothing exported: no reading chosen")
            return None
        if dlg.choice == "final":
            return final
        return replace(screen, printed=screen.printed + "; not the record's final reading")

    def _ask(self, title: str, suffix: str, filters: str) -> Path | None:
        workflow = self._workflow()
        rec = workflow.record if workflow is not None else None
        start = ""
        if rec is not None and rec.source_path is not None:
            start = str(rec.source_path.with_name(f"{rec.name}-reading{suffix}"))
        name, _ = QFileDialog.getSaveFileName(self._window, title, start, filters)
        return Path(name) if name else None

    def _done(self, text: str) -> None:
        self._window.statusBar().showMessage(text, 6000)

    def export_pdf(self, path: Path | None = None) -> Path | None:
        content = self._content()
        if content is None:
            return None
        path = path or self._ask("Export report page", ".pdf", "PDF (*.pdf)")
        if path is None:
            return None
        from reviewapp.report.export import write_pdf
        from reviewapp.report.layout import page_layout

        write_pdf(path, content, page_layout(self._paper()))
        self._done(f"report written to {path}")
        return path

    def export_image(self, path: Path | None = None) -> Path | None:
        content = self._content()
        if content is None:
            return None
        path = path or self._ask("Export report image", ".png", "Images (*.png *.jpg *.jpeg)")
        if path is None:
            return None
        from reviewapp.report.export import write_image
        from reviewapp.report.layout import page_layout

        write_image(path, content, page_layout(self._paper()))
        self._done(f"report image written to {path}")
        return path

    def export_csv(self, path: Path | None = None) -> Path | None:
        content = self._content()
        if content is None:
            return None
        path = path or self._ask("Export measurements", ".csv", "CSV (*.csv)")
        if path is None:
            return None
        from reviewapp.report.export import write_measurements_csv

        write_measurements_csv(path, content)
        self._done(f"measurements written to {path}")
        return path

    def export_wfdb(self) -> Path | None:
        content = self._content()
        if content is None:
            return None
        if content.record.source_path is None:
            raise ReviewError("the record has no file to write annotations beside")
        from reviewapp.report.export import write_wfdb_annotations

        out = write_wfdb_annotations(content)
        self._done(f"WFDB annotations written to {out}")
        return out

    def print_report(self, printer: object | None = None) -> bool:
        """Print the page at true scale on the chosen printer (A4 or Letter landscape), then
        the interpretation page."""
        from PySide6.QtPrintSupport import QPrintDialog, QPrinter

        from reviewapp.report.export import MM_PER_INCH
        from reviewapp.report.interpretation_block import paint_interpretation_page
        from reviewapp.report.layout import page_layout
        from reviewapp.report.page import paint_page

        content = self._content()
        if content is None:
            return False
        lo = page_layout(self._paper())
        if printer is None:
            printer = QPrinter(QPrinter.PrinterMode.HighResolution)
            dialog = QPrintDialog(printer, self._window)
            if dialog.exec() != QPrintDialog.DialogCode.Accepted:
                return False
        size_id = QPageSize.PageSizeId.A4 if lo.paper == "a4" else QPageSize.PageSizeId.Letter
        printer.setFullPage(True)  # type: ignore[attr-defined]
        printer.setPageLayout(  # type: ignore[attr-defined]
            QPageLayout(
                QPageSize(size_id),
                QPageLayout.Orientation.Landscape,
                QMarginsF(0, 0, 0, 0),
                QPageLayout.Unit.Millimeter,
            )
        )
        painter = QPainter()
        if not painter.begin(printer):  # type: ignore[arg-type]
            raise ReviewError("the printer could not be started")
        try:
            # Full-page mode: the device origin is the sheet's corner, so true scale holds.
            px_per_mm = printer.resolution() / MM_PER_INCH  # type: ignore[attr-defined]
            paint_page(painter, px_per_mm, lo, content)
            printer.newPage()  # type: ignore[attr-defined]
            paint_interpretation_page(painter, px_per_mm, lo, content)
        finally:
            painter.end()
        self._done("report sent to the printer")
        return True
