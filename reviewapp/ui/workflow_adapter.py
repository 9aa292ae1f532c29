"""The thin Qt adapter over the reading workflow (reviewapp.core.workflow).

It opens a ``ReadingWorkflow`` for each analysed record in the reader's role, turns the
workflow's changes into Qt signals for the views, asks the questions only a window can ask
(who is reading, the sign-off confirmation, a note's text, how to reconcile a marks file
changed on disk) and tells the reader what each action actually did.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtWidgets
from shiboken6 import isValid

from reviewapp.core.errors import MarksError, ReviewError
from reviewapp.core.record import Record
from reviewapp.core.workflow import (
    FIRST,
    READ_MODES,
    UNIDENTIFIED,
    LockHolder,
    MarkEdit,
    MarksOpening,
    Outcome,
    ReadingWorkflow,
    ReadMode,
    WorkflowChange,
    holder_of,
    lock_holder,
    open_marks,
    take_over_marks,
)
from reviewapp.ui.conflict_dialog import ConflictDialog, DisplacedDialog, LockDialog
from reviewapp.ui.errors import show_error
from reviewapp.ui.reader import ask_reader, stored_reader
from reviewapp.ui.reading_panel import STATUS_WORDS, ReadingPanel, SignOffDialog

if TYPE_CHECKING:
    from reviewapp.core.engine import Analysis
    from reviewapp.ui.compare_view import CompareDialog
    from reviewapp.ui.records_dock import RecordsDock

BLINDED_COMPARE_TIP = (
    "Not available in a blinded read: other readers' values stay hidden until your own "
    "reading is signed off and you reopen the record unblinded"
)


def window_title(record: Record, status: str) -> str:
    """The record, its subject and the reading status: the reader always sees whose ECG is
    on the page."""
    subj = record.subject
    subject = f"subject {subj.subject_id}" if subj.subject_id else "subject not stated"
    facts = [
        x for x in (subj.sex, None if subj.age_years is None else f"{subj.age_years:g} y") if x
    ]
    if facts:
        subject += f" ({', '.join(facts)})"
    return " — ".join(x for x in (record.name, subject, status, "reviewapp") if x)


class WorkflowAdapter(QtCore.QObject):
    """One reading at a time (``workflow``), the reading mode, and the reader's dialogs."""

    started = QtCore.Signal(object)  # the new ReadingWorkflow, or None when closed
    values_changed = QtCore.Signal(object)  # the Reading on screen
    marks_changed = QtCore.Signal()  # committed corrections: re-place the marks
    calipers_changed = QtCore.Signal()
    message = QtCore.Signal(str, int)  # status bar text, milliseconds

    def __init__(
        self,
        window: QtWidgets.QMainWindow,
        settings: QtCore.QSettings,
        actions: dict[str, QtGui.QAction],
        panel: ReadingPanel,
        records: RecordsDock,
        before_step: Callable[[], None],
    ) -> None:
        super().__init__(window)
        self.window = window
        self.settings = settings
        self.actions = actions
        self.panel = panel
        self.records = records
        self.before_step = before_step  # e.g. pending caliper nudges become their step first
        self.workflow: ReadingWorkflow | None = None
        self.record: Record | None = None
        self.mode: ReadMode = FIRST
        self.compare_dialog: CompareDialog | None = None
        self.sign_off_dialog: SignOffDialog | None = None
        self.conflict_dialog: ConflictDialog | None = None
        self.lock_dialog: LockDialog | None = None
        self.displaced_dialog: DisplacedDialog | None = None
        self._lock_choice: str | None = None
        self.reader_label = QtWidgets.QLabel()
        self.reader_label.setObjectName("reader_label")
        panel.sign_off_requested.connect(lambda: self.sign_off())
        panel.add_note_requested.connect(lambda: self.add_note())
        panel.edit_note_requested.connect(lambda nid: self.edit_note(nid))
        panel.delete_note_requested.connect(lambda nid: self.delete_note(nid))

    def reader_id(self) -> str | None:
        """The reader's id (Settings ``reader/id``); None until the reader has given it (the
        login name is only a suggestion in the Reader dialog)."""
        return stored_reader(self.settings)

    def status(self, text: str, ms: int = 8000) -> None:
        self.message.emit(text, ms)

    # --- one reading per record ---------------------------------------------------------------
    def start(self, analysis: Analysis) -> ReadingWorkflow:
        self.close()
        self.record = analysis.record
        opening = self._open(analysis.record)
        w = ReadingWorkflow(analysis, opening, mode=self.mode, reader=self.reader_id())
        w.edit_guard = self.ensure_reader
        w.subscribe(self._changed)
        self.workflow = w
        self.started.emit(w)
        self.refresh()
        notes = ["Analysis: " + "; ".join(analysis.notes)] if analysis.notes else []
        self.status("; ".join([*notes, opening.note]))
        return w

    def show_record(self, record: Record) -> None:
        """A record drawn, its analysis to come: the previous reading is closed."""
        self.close()
        self.record = record
        self.refresh()

    def close(self) -> None:
        dlg, self.compare_dialog = self.compare_dialog, None
        if dlg is not None and isValid(dlg):
            dlg.close()
        w, self.workflow = self.workflow, None
        if w is not None:
            self.before_step()
            w.close()
            self.started.emit(None)
        self.panel.show_notice("")
        self.refresh()

    # --- the record's lock --------------------------------------------------------------------
    def ask_lock(self, record: Record) -> str | None:
        """Before a record is opened: if another live window holds it for writing, say who
        and since when and ask: "read_only", "take_over" or "cancel" (None: nobody holds it,
        or this window would open it read-only anyway). The answer is used when the record's
        marks are opened."""
        self._lock_choice = None
        same = self.record is not None and self.record.source_path == record.source_path
        if same or self.reader_id() is None or record.source_path is None:
            return None
        holder = lock_holder(record)
        if holder is None:
            return None
        choice = self._ask_lock_dialog(record.name, holder, can_cancel=True)
        self._lock_choice = choice
        return choice

    def _ask_lock_dialog(self, name: str, holder: LockHolder, *, can_cancel: bool) -> str:
        dlg = LockDialog(name, holder, can_cancel=can_cancel, parent=self.window)
        self.lock_dialog = dlg
        try:
            dlg.exec()
        finally:
            self.lock_dialog = None
        if dlg.choice is not None:
            return dlg.choice
        return "cancel" if can_cancel else "read_only"

    def _open(self, record: Record, lock_choice: str | None = None) -> MarksOpening:
        """The record's marks for the reader in the reading mode. A record another window
        holds: as the reader chose before it was opened (``ask_lock``), else they are asked
        now (read-only or take over)."""
        choice = lock_choice or self._lock_choice
        self._lock_choice = None
        reader = self.reader_id()
        if choice == "take_over" and reader is not None:
            opening = take_over_marks(record, reader, self.mode)
        else:
            opening = open_marks(record, reader, self.mode)
            if opening.locked is not None and choice is None and reader is not None:
                holder = holder_of(opening.locked.holder)
                if self._ask_lock_dialog(record.name, holder, can_cancel=False) == "take_over":
                    if opening.store is not None:
                        opening.store.close()
                    opening = take_over_marks(record, reader, self.mode)
                    choice = "take_over"
                else:
                    choice = "read_only"
        for problem in opening.problems:
            if opening.locked is not None and problem is opening.locked and choice:
                continue  # the reader chose read-only knowingly: no error box
            show_error(self.window, problem)
        if opening.warning:
            self.panel.show_notice("⚠ " + opening.warning)
        return opening

    def _changed(self, ch: WorkflowChange) -> None:
        w = self.workflow
        if w is None:
            return
        if ch.values:
            self.values_changed.emit(w.reading)
        if ch.marks:
            # Re-placed after the event that made the edit (a mark's own release) returns.
            QtCore.QTimer.singleShot(0, self.marks_changed.emit)
        if ch.calipers:
            self.calipers_changed.emit()
        if ch.stored:
            self.refresh()
            if w.store is not None and self.record is not None and self.record.source_path:
                self.records.refresh_record(self.record.source_path)
        if ch.reopened is not None:
            by, at = ch.reopened
            from reviewapp.core.workflow.editors import when_text

            text = (
                f"⚠ Reopened: this reading was signed off by {by} at {when_text(at)}; your "
                "change reopened it (recorded in the marks file). Sign off again when done."
            )
            self.panel.show_notice(text)
            self.status(text, 10000)

    # --- what happened ------------------------------------------------------------------------
    def tell(self, out: Outcome) -> None:
        """Say what an action did; offer the three ways out of a changed marks file, or the
        two of a window whose record another window took over."""
        if out.message:
            self.status(out.message)
        if out.displaced:
            self._displaced(out.message)
        elif out.conflict:
            self._reconcile()
        elif out.problem is not None:
            show_error(self.window, out.problem)

    def _displaced(self, message: str) -> None:
        """Another window took this record over: this one can no longer save there. The
        reader keeps the reading as a separate file, or continues read-only."""
        w = self.workflow
        if w is None or w.store is None or self.displaced_dialog is not None:
            return
        self.panel.show_notice("⚠ " + message)
        dlg = DisplacedDialog(message, self.window)
        self.displaced_dialog = dlg
        try:
            dlg.exec()
        finally:
            self.displaced_dialog = None
        if dlg.choice is None:
            self.status(
                "Not saved: another window holds this record; you are asked again at "
                "your next change."
            )
            return
        kept = ""
        if dlg.choice == "keep_aside":
            out = w.resolve_conflict("keep_aside")
            if not out.done:
                show_error(self.window, out.problem or out.message)
                return
            kept = out.message.split(";")[0] + "; "
        self._reopen(carry=False, lock_choice="read_only")
        text = f"{kept}this window now reads the record read-only (another window holds it)."
        self.panel.show_notice("⚠ " + text[0].upper() + text[1:])
        self.status(text[0].upper() + text[1:], 12000)

    def _reconcile(self) -> None:
        w = self.workflow
        if w is None or w.store is None or self.conflict_dialog is not None:
            return
        dlg = ConflictDialog(w.store.path.name, w.resolve_conflict, self.window)
        self.conflict_dialog = dlg
        try:
            accepted = dlg.exec() == QtWidgets.QDialog.DialogCode.Accepted
        finally:
            self.conflict_dialog = None
        if accepted and dlg.outcome is not None:
            self.status(dlg.outcome.message)
        else:
            self.status(
                "Not saved: the marks file changed on disk; you are asked again at your next "
                "change."
            )

    # --- edits --------------------------------------------------------------------------------
    def mark_edit(self, edit: MarkEdit) -> None:
        """Every mark edit of every view (median beat, beat, a lead's J point)."""
        w = self.workflow
        if w is None:
            return
        if edit.action == "preview":
            w.mark_edit(edit)
            return
        self.before_step()
        self.tell(w.mark_edit(edit))

    def _step(self, act: Callable[[ReadingWorkflow], Outcome]) -> None:
        if self.workflow is not None:
            self.before_step()
            self.tell(act(self.workflow))

    def undo(self) -> None:
        self._step(lambda w: w.undo())

    def redo(self) -> None:
        self._step(lambda w: w.redo())

    def reset_all(self) -> None:
        self._step(lambda w: w.reset_all())

    # --- who reads, and how -------------------------------------------------------------------
    def ensure_reader(self) -> bool:
        """Before every edit: asks who is reading when no id is set yet. False (the edit is
        dropped, a caliper stays in the window) when the reader cancels."""
        w = self.workflow
        if w is None or w.identified:
            return True
        rid = ask_reader(
            self.window, self.settings, "Who is reading? Your corrections are saved under this id."
        )
        if rid is None:
            self.status("Not changed: no reader id given.", 6000)
            return False
        self._reopen(carry=True)
        st = w.store
        return st is not None and not st.read_only and st.reviewer == rid

    def _reopen(self, *, carry: bool, lock_choice: str | None = None) -> MarksOpening | None:
        """The open record's marks again, for the current reader id and mode."""
        w = self.workflow
        if w is None:
            return None
        self.before_step()
        w.release_marks()  # the record's lock goes before it is taken again
        opening = self._open(w.record, lock_choice)
        out = w.use_marks(opening, self.mode, self.reader_id(), carry_window_calipers=carry)
        if out.problem is not None:
            show_error(self.window, out.problem)
        self.status(opening.note)
        return opening

    def choose_reader(self) -> None:
        """File ▸ Reader…: set or change the reader id; the open record continues under it."""
        old = self.reader_id()
        rid = ask_reader(self.window, self.settings)
        if rid is not None and rid != old:
            self._reopen(carry=False)
        if rid is not None and self.mode.blinded:
            self.records.set_blinded(True, rid)  # the list shows this reader's own status
        self.refresh()

    def set_read_mode(self, mode: ReadMode, *, reopen: bool = True) -> None:
        """Read as first reader, blinded second reader or adjudicator; the open record's
        marks are reopened in that role (refused: back to the previous role, said so)."""
        old, self.mode = self.mode, mode
        self.actions[f"role_{READ_MODES.index(mode)}"].setChecked(True)
        if reopen and self.workflow is not None:
            opening = self._reopen(carry=False)
            rec = self.workflow.record
            if opening is not None and opening.store is None and rec.source_path and old != mode:
                # Refused (e.g. this id already reads the record in another role): go back,
                # so edits are never kept in the window only by surprise.
                self.set_read_mode(old)
                self.status(f"Still reading as {old.text}.")
                return
        if self.compare_dialog is not None and mode.blinded and isValid(self.compare_dialog):
            self.compare_dialog.close()
        self.records.set_blinded(self.mode.blinded, self.reader_id())
        self.refresh()

    # --- notes and sign-off -------------------------------------------------------------------
    def _writable(self, what: str) -> ReadingWorkflow | None:
        """The workflow if its marks file can take ``what`` (asking who reads first)."""
        w = self.workflow
        if w is None:
            return None
        if w.store is None:
            show_error(self.window, MarksError(f"{what} need a marks file; this record has none"))
            return None
        if not self.ensure_reader():
            return None
        st = w.store
        if st is None or st.read_only:
            show_error(
                self.window,
                MarksError("this reading is open read-only here", None if st is None else st.path),
            )
            return None
        return w

    def add_note(self, text: str | None = None) -> bool:
        w = self._writable("notes")
        if w is None:
            return False
        if text is None:
            text, ok = QtWidgets.QInputDialog.getMultiLineText(self.window, "Add note", "Note:")
            if not ok:
                return False
        out = w.notes.add(text)
        self.tell(out)
        return out.done

    def edit_note(self, note_id: str, text: str | None = None) -> bool:
        w = self._writable("notes")
        note = None if w is None else w.marks.note(note_id)
        if w is None or note is None:
            return False
        if text is None:
            text, ok = QtWidgets.QInputDialog.getMultiLineText(
                self.window, "Edit note", "Note:", note.text
            )
            if not ok:
                return False
        out = w.notes.edit(note_id, text)
        self.tell(out)
        return out.done

    def delete_note(self, note_id: str) -> bool:
        w = self._writable("notes")
        if w is None:
            return False
        out = w.notes.delete(note_id)
        self.tell(out)
        return out.done

    def sign_off(self) -> bool:
        """Show the key values and sign off on confirmation (undoable, audited)."""
        w = self.workflow
        if w is None:
            return False
        refusal = w.decisions.sign_off_refusal()
        if refusal == "this reading is already signed off":
            self.status("This reading is already signed off.", 5000)
            return False
        if refusal is not None:
            show_error(self.window, MarksError(refusal, None if w.store is None else w.store.path))
            return False
        if self._writable("sign-offs") is None or w.store is None:
            return False
        self.before_step()  # calipers moved just now are saved first
        st = w.store
        dlg = SignOffDialog(
            w.record.name,
            st.reviewer,
            self.mode.text,
            w.reading,
            len(st.reading.overrides),
            len(st.reading.notes),
            self.window,
        )
        self.sign_off_dialog = dlg
        try:
            if dlg.exec() != QtWidgets.QDialog.DialogCode.Accepted:
                return False
        finally:
            self.sign_off_dialog = None
        out = w.decisions.sign_off()
        if out.done:
            self.panel.show_notice("")
        self.tell(out)
        return out.done

    # --- comparison ---------------------------------------------------------------------------
    def open_compare(self) -> None:
        """Tools ▸ Compare readings… (disabled, with the reason, for a blinded reader)."""
        from reviewapp.ui.compare_view import CompareDialog

        w = self.workflow
        if w is None or w.store is None:
            show_error(self.window, ReviewError("open a record file to compare its readings"))
            return
        if not w.can_compare:
            show_error(
                self.window, ReviewError("a blinded reader cannot see other readings", w.store.path)
            )
            return
        if self.compare_dialog is not None and isValid(self.compare_dialog):
            self.compare_dialog.close()
        dlg = CompareDialog(w, self.window, self.tell)
        # Gone once closed: the window never holds on to a closed comparison.
        dlg.setAttribute(QtCore.Qt.WidgetAttribute.WA_DeleteOnClose)
        dlg.finished.connect(lambda _r, d=dlg: self._compare_closed(d))
        self.compare_dialog = dlg
        dlg.show()

    def _compare_closed(self, dlg: CompareDialog) -> None:
        if self.compare_dialog is dlg:
            self.compare_dialog = None

    # --- what the window shows of the reading -------------------------------------------------
    def refresh(self) -> None:
        """Reader line, reading panel, title and the actions that depend on the reading."""
        w = self.workflow
        st = None if w is None else w.store
        rid = self.reader_id()
        who = (
            f"Reader {rid} · {self.mode.text}"
            if rid
            else f"Reader not set (asked at your first edit) · {self.mode.text}"
        )
        self.reader_label.setText(who)
        if st is not None and st.read_only and st.reviewer != UNIDENTIFIED:
            who += " · read-only"
        if w is None:
            self.panel.show_reading(None, who, writable=False)
            self.panel.banner.setText("No record open" if self.record is None else "…")
        else:
            reading = None if st is None else st.reading
            self.panel.show_reading(
                reading, who, writable=st is not None and (not st.read_only or rid is None)
            )
            if reading is not None and reading.status == "signed_off":
                self.panel.show_notice("")
        a = self.actions
        a["sign_off"].setEnabled(
            st is not None and st.reading.status != "signed_off" and (not st.read_only or not rid)
        )
        a["add_note"].setEnabled(st is not None)
        can_compare = w is not None and w.can_compare
        a["compare"].setEnabled(can_compare)
        blinded = self.mode.blinded
        a["compare"].setToolTip(
            BLINDED_COMPARE_TIP
            if blinded
            else "Both readers' values side by side; an adjudicator records final values"
        )
        a["compare"].setStatusTip(a["compare"].toolTip())
        for name, text in (
            ("undo", None if w is None else w.history.undo_text),
            ("redo", None if w is None else w.history.redo_text),
        ):
            a[name].setEnabled(text is not None)
            a[name].setText(f"{name.capitalize()} {text}" if text else name.capitalize())
        if self.record is not None:
            status = "" if st is None else STATUS_WORDS.get(st.reading.status, "").lower()
            self.window.setWindowTitle(window_title(self.record, status))
