"""The calipers on the paper bound to the reading's calipers.

The reading (``ReadingWorkflow``: the marks file, or the window when there is none) holds
each caliper once, in seconds and millivolts; a ``CaliperPair`` on the paper shows it and
carries its id (``store_id``). The reader's add, drag, nudges, relabel and delete become the
workflow's caliper steps; after an undo or redo the paper is put back from the reading.
A burst of arrow-key nudges is one step, made once the reader pauses (or at once before any
other step); a mouse drag is one step at its release.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace

from PySide6 import QtCore, QtWidgets

from reviewapp.core.marks.edits import new_id
from reviewapp.core.marks.model import Caliper
from reviewapp.core.workflow import Outcome, ReadingWorkflow
from reviewapp.ui.calipers import CaliperPair
from reviewapp.ui.paper_view import PaperView

PART_NAMES = {"a": "leg 1", "b": "leg 2", "bar": "the whole pair"}
NUDGE_PAUSE_MS = 600
LIST_EVERY_MS = 80


def as_saved(c: CaliperPair, fs_hz: float, caliper_id: str = "") -> Caliper:
    """A paper caliper as the reading keeps it (s from record start, mV)."""
    if c.kind == "time":
        t1, t2, v1, v2 = c.a / fs_hz, c.b / fs_hz, 0.0, 0.0
    else:
        t1 = t2 = c.at / fs_hz
        v1, v2 = c.a_mv, c.b_mv
    return Caliper(caliper_id, c.kind, t1, t2, v1, v2, c.lead, c.name)


def changes(old: Caliper, new: Caliper, fs_hz: float) -> dict[str, object]:
    """The fields of ``new`` that differ from ``old`` (times compared on the sample grid)."""
    out: dict[str, object] = {}
    for k in ("t1_s", "t2_s", "v1_mv", "v2_mv", "lead", "label"):
        a, b = getattr(old, k), getattr(new, k)
        same = round(a * fs_hz) == round(b * fs_hz) if k in ("t1_s", "t2_s") else a == b
        if not same:
            out[k] = b
    return out


class CaliperBinding(QtCore.QObject):
    """Keeps ``paper.calipers`` and the workflow's calipers one and the same."""

    lines_changed = QtCore.Signal(list)  # one text line per caliper, for the summary
    report = QtCore.Signal(object)  # an Outcome to tell the reader

    def __init__(self, paper: PaperView, parent: QtWidgets.QWidget) -> None:
        super().__init__(parent)
        self.paper = paper
        self.workflow: ReadingWorkflow | None = None
        self._known: dict[str, CaliperPair] = {}  # every pair shown for this reading, by id
        self._pending: set[CaliperPair] = set()  # nudged, not yet a step
        self._syncing = False
        self._listed: list[CaliperPair] = []
        self._nudge_timer = self._timer(NUDGE_PAUSE_MS, self.flush)
        self._list_timer = self._timer(LIST_EVERY_MS, self.update_list)
        paper.caliper_changed.connect(self._changed)
        paper.caliper_added.connect(self._added)
        paper.caliper_removed.connect(self._removed)
        paper.caliper_rename.connect(self._rename_dialog)
        paper.caliper_drag_finished.connect(self._drag_finished)

    def _timer(self, ms: int, fn: Callable[[], None]) -> QtCore.QTimer:
        t = QtCore.QTimer(self)
        t.setSingleShot(True)
        t.setInterval(ms)
        t.timeout.connect(fn)
        return t

    @property
    def fs_hz(self) -> float:
        geom = self.paper.geom
        return 1.0 if geom is None else geom.fs_hz

    # --- the reading --------------------------------------------------------------------------
    def attach(self, workflow: ReadingWorkflow | None) -> None:
        """A new reading: its calipers go on the paper; calipers drawn while the analysis ran
        (not in any reading yet) become its first steps."""
        self._pending.clear()
        self._known.clear()
        self.workflow = workflow
        if workflow is None:
            return
        drawn = [c for c in self.paper.calipers if c.store_id is None and not c.drawing]
        self.sync()
        for c in drawn:
            self._add_to_reading(c)

    def sync(self) -> None:
        """Put the paper's calipers where the reading has them (after undo, redo, a reload
        or another reader's reading)."""
        w = self.workflow
        if w is None:
            return
        wanted = {c.id: c for c in w.all_calipers()}
        self._syncing = True
        try:
            for gone in list(self.paper.calipers):
                if gone.store_id is not None and gone.store_id not in wanted:
                    self.paper.remove_caliper(gone)
            for cid, saved in wanted.items():
                pair: CaliperPair | None = self._known.get(cid) or next(
                    (p for p in self.paper.calipers if p.store_id == cid), None
                )
                if pair is None:
                    pair = self._create(saved)
                elif not self.paper.attach_caliper(pair):
                    continue
                if pair is None:
                    continue
                self._known[cid] = pair
                self._place(pair, saved)
                march = cid in w.marching
                if pair.march != march:
                    pair.march = march
                    pair.update()
        finally:
            self._syncing = False
        self.update_list()

    def _create(self, saved: Caliper) -> CaliperPair | None:
        fs = self.fs_hz
        restore: dict[str, object] = {"lead": saved.lead, "name": saved.label, "store_id": saved.id}
        if saved.kind == "time":
            restore.update(a=round(saved.t1_s * fs), b=round(saved.t2_s * fs))
        else:
            restore.update(at=round(saved.t1_s * fs), a_mv=saved.v1_mv, b_mv=saved.v2_mv)
        return self.paper.add_caliper(saved.kind, restore=restore)

    def _place(self, pair: CaliperPair, saved: Caliper) -> None:
        fs = self.fs_hz
        st = pair.state()
        if saved.kind == "time":
            st = replace(st, a=round(saved.t1_s * fs), b=round(saved.t2_s * fs))
        else:
            st = replace(st, at=round(saved.t1_s * fs), a_mv=saved.v1_mv, b_mv=saved.v2_mv)
        st = replace(st, name=saved.label)
        if st != pair.state():
            pair.apply_state(st)
        self._pending.discard(pair)

    # --- the reader's edits -------------------------------------------------------------------
    def _tell(self, out: Outcome) -> None:
        self.report.emit(out)

    def _added(self, c: CaliperPair) -> None:
        if not c.drawing and not self._syncing:
            self._add_to_reading(c)

    def _add_to_reading(self, c: CaliperPair) -> None:
        w = self.workflow
        if w is None or c.store_id is not None:
            return  # before the analysis: kept on the paper, added to the reading with it
        self.flush(keep=c)
        cid = new_id()
        c.store_id, self._known[cid] = cid, c  # before the step, so its sync finds the pair
        out = w.calipers.add(as_saved(c, self.fs_hz, cid))
        if not out.recorded:
            c.store_id = None
            del self._known[cid]
        self._tell(out)
        self.sync()

    def _drag_finished(self, c: CaliperPair) -> None:
        if c.drawing:
            c.drawing = False
            self._add_to_reading(c)
        else:
            self._commit(c)

    def _commit(self, c: CaliperPair) -> None:
        """The caliper's change since the reading last had it, as one step."""
        self._pending.discard(c)
        w = self.workflow
        if w is None or c.store_id is None:
            return
        saved = next((x for x in w.all_calipers() if x.id == c.store_id), None)
        if saved is None:
            return
        diff = changes(saved, as_saved(c, self.fs_hz, saved.id), self.fs_hz)
        if diff:
            self._tell(w.calipers.move(c.store_id, **diff))
            self.sync()

    def _changed(self, c: object) -> None:
        if (
            isinstance(c, CaliperPair)
            and not self._syncing
            and c.store_id is not None
            and not c.dragging
            and c in self.paper.calipers
        ):
            self._pending.add(c)
            self._nudge_timer.start()
        # A caliper added, deleted or restored is listed at once, so the list never names
        # calipers that are not on the paper; while a leg is dragged the list follows at most
        # every 80 ms, so dragging never waits for a dock relayout.
        if self.paper.calipers != self._listed:
            self.update_list()
        elif not self._list_timer.isActive():
            self._list_timer.start()

    def _removed(self, c: CaliperPair) -> None:
        w = self.workflow
        if self._syncing or w is None or c.store_id is None:
            self._pending.discard(c)
            return
        if c in self._pending:
            # Its last nudges are a step of their own, so undoing the delete brings it back
            # exactly where it was.
            self._commit(c)
        self._tell(w.calipers.delete(c.store_id))

    def flush(self, keep: CaliperPair | None = None) -> None:
        """Make pending nudges steps now (before any other step, undo, sign-off, close)."""
        self._nudge_timer.stop()
        for c in list(self._pending - {keep} if keep is not None else self._pending):
            if not c.dragging:  # a leg held by the mouse makes its step at the release
                self._commit(c)

    def rename(self, c: CaliperPair, label: str) -> None:
        c.name = label.strip()[:40]
        c.update()
        self._commit(c)
        self.update_list()

    def _rename_dialog(self, c: CaliperPair) -> None:
        text, ok = QtWidgets.QInputDialog.getText(
            self.paper, "Caliper label", "Label (e.g. QT, RR):", text=c.name
        )
        if ok:
            self.rename(c, text)

    # --- actions ------------------------------------------------------------------------------
    def add(self, kind: str) -> CaliperPair | None:
        return self.paper.add_caliper(kind)  # type: ignore[arg-type]

    def selected(self) -> CaliperPair | None:
        sel = self.paper.selected
        return sel if isinstance(sel, CaliperPair) else None

    def toggle_march(self) -> None:
        c = self.selected()
        if c is None or c.kind != "time":
            return
        if self.workflow is None or c.store_id is None:
            c.march = not c.march
            c.update()
            return
        self.flush()
        self._tell(self.workflow.calipers.set_march(c.store_id, not c.march))
        self.sync()

    def delete_selected(self) -> None:
        c = self.selected()
        if c is not None:
            self.paper.remove_caliper(c)

    def cycle_part(self) -> None:
        c = self.selected()
        if c is not None:
            order = ["a", "b", "bar"]
            c.part = order[(order.index(c.part) + 1) % 3]  # type: ignore[assignment]
            self._tell(Outcome(True, f"{c.name}: arrow keys move {PART_NAMES[c.part]}"))

    def nudge(self, step: tuple[int, int]) -> None:
        """An arrow key on the selected caliper (its selected leg, or the whole pair)."""
        dx, dy = step
        sel = self.selected()
        if sel is not None:
            sel.nudge(dx, dy)

    # --- the list in the summary --------------------------------------------------------------
    def lines(self) -> list[str]:
        """One line per caliper on the paper, in the order they were drawn."""
        return [c.label_text() + f"  ({c.lead})" for c in self.paper.calipers]

    def update_list(self) -> None:
        self._list_timer.stop()
        self._listed = list(self.paper.calipers)
        self.lines_changed.emit(self.lines())
