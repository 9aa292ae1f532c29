"""What the arrow keys move: the item the reader selected last, on the paper or on the median beat.

One selection for the whole window: selecting a global mark of the median beat lets go of the
paper's caliper or beat mark, and the other way round. ← and → move a selected mark one sample
(never a caliper behind it); a caliper's nudges stay the calipers' own (``CaliperBinding``).

A mark moves at once, on every press (its lines move and the values follow, as while dragging);
a burst of presses is one correction, recorded (saved and undoable as one step) when the reader
pauses, or before any other step, like a caliper's nudges.
"""

from __future__ import annotations

from PySide6 import QtCore

from reviewapp.core.workflow import MarkEdit, MarkTarget, Outcome
from reviewapp.ui.caliper_binding import NUDGE_PAUSE_MS, CaliperBinding
from reviewapp.ui.mark_items import SHORT_LABELS, FiducialMark
from reviewapp.ui.median_view import MedianBeatView
from reviewapp.ui.paper_view import PaperView


class SelectionKeys(QtCore.QObject):
    """The arrow keys' target across the paper and the median beats."""

    edit = QtCore.Signal(object)  # a MarkEdit: "preview" at each press, "move" at the pause
    report = QtCore.Signal(object)  # an Outcome for the status bar

    def __init__(
        self,
        paper: PaperView,
        median: MedianBeatView,
        calipers: CaliperBinding,
        parent: QtCore.QObject,
    ) -> None:
        super().__init__(parent)
        self.paper = paper
        self.median = median
        self.calipers = calipers
        self._pending: tuple[MarkTarget, int] | None = None
        self._timer = QtCore.QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(NUDGE_PAUSE_MS)
        self._timer.timeout.connect(self.flush)
        paper.selection_changed.connect(self._paper_selected)
        median.selection_changed.connect(self._median_selected)

    # --- one selection -------------------------------------------------------------------
    def _paper_selected(self, item: object) -> None:
        if item is not None:
            self._let_go_of_other(self.median.selected_target())
            self.median.select(None)
        if isinstance(item, FiducialMark) and item.target is not None:
            self._tell_selected(item.target, item.time_s)

    def _median_selected(self, fid: str | None) -> None:
        if fid is None:
            return
        self._let_go_of_other(MarkTarget("representative", fid))
        self.paper.select_item(None)
        k = self.median.shown_sample(fid)
        if k is not None:
            self._tell_selected(MarkTarget("representative", fid), self.median.window_ms(k))

    def _let_go_of_other(self, keep: MarkTarget | None) -> None:
        if self._pending is not None and self._pending[0] != keep:
            self.flush()

    def _tell_selected(self, target: MarkTarget, at: float) -> None:
        where = (
            f"at {at:+.0f} ms from R"
            if target.scope == "representative"
            else f"of the beat at {at:.3f} s"
        )
        step = 1000.0 / self.paper.geom.fs_hz if self.paper.geom is not None else None
        one = "" if step is None else f" ({step:g} ms)"
        scope = "median beat" if target.scope == "representative" else "beat"
        self.report.emit(
            Outcome(
                True,
                f"Selected: {SHORT_LABELS[target.fiducial]} of the {scope} {where}; "
                f"← → move it one sample{one}.",
            )
        )

    # --- the keys --------------------------------------------------------------------------
    def nudge(self, step: tuple[int, int]) -> None:
        """An arrow key: a selected mark moves one sample sideways (up and down do nothing to
        a mark); otherwise the selected caliper takes the key."""
        dx, _dy = step
        target = self.median.selected_target()
        if target is not None:
            if dx:
                self._nudge_median(target, dx)
            return
        sel = self.paper.selected
        if isinstance(sel, FiducialMark):
            if dx:
                self._nudge_paper(sel, dx)
            return
        self.calipers.nudge(step)

    def _nudge_median(self, target: MarkTarget, dx: int) -> None:
        k = self.median.shown_sample(target.fiducial)
        if k is None:
            return
        k2 = self.median._clamp(k + dx)
        self.median.snap(target.fiducial, k2)
        self.median.keep_in_sight(target.fiducial)
        self._moved(target, k2)

    def _nudge_paper(self, mark: FiducialMark, dx: int) -> None:
        if mark.target is None:
            return
        mark.set_sample(mark.sample + dx)
        self._moved(mark.target, mark.sample)

    def _moved(self, target: MarkTarget, sample: int) -> None:
        if self._pending is not None and self._pending[0] != target:
            self.flush()
        self._pending = (target, sample)
        self.edit.emit(MarkEdit(target, "preview", sample))
        self._timer.start()

    def flush(self) -> None:
        """Record the pending nudges of a mark as one correction now."""
        self._timer.stop()
        pending, self._pending = self._pending, None
        if pending is not None:
            target, sample = pending
            self.edit.emit(MarkEdit(target, "move", sample))

    @property
    def pending(self) -> tuple[MarkTarget, int] | None:
        return self._pending
