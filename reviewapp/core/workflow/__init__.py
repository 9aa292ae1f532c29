"""The reading workflow: one reader's reading of one record as plain Python (no Qt).

``ReadingWorkflow`` (reading_workflow.py) is the model the window's views show and send their
edits to; ``MarkEdit`` / ``MarkTarget`` (targets.py) the one payload of every mark edit;
``Outcome`` (outcome.py) what an action actually did; ``open_marks`` (opening.py) the marks file
for a reader in a ``ReadMode`` (roles.py), ``lock_report`` who holds it; the editors of
calipers, notes and decisions live in editors.py, the undo history in history.py, a
window-only reading in memory.py.
"""

from reviewapp.core.workflow.opening import (
    LockHolder,
    LockReport,
    MarksOpening,
    holder_of,
    lock_holder,
    lock_report,
    open_marks,
    take_over_marks,
)
from reviewapp.core.workflow.outcome import Outcome
from reviewapp.core.workflow.reading_workflow import ReadingWorkflow, Resolution, WorkflowChange
from reviewapp.core.workflow.roles import (
    ADJUDICATOR,
    FIRST,
    READ_MODES,
    SECOND_BLINDED,
    SECOND_HIDDEN,
    UNIDENTIFIED,
    ReadMode,
    usable_reader_id,
)
from reviewapp.core.workflow.targets import MarkAction, MarkEdit, MarkTarget

__all__ = [
    "ADJUDICATOR",
    "FIRST",
    "READ_MODES",
    "SECOND_BLINDED",
    "SECOND_HIDDEN",
    "UNIDENTIFIED",
    "LockHolder",
    "LockReport",
    "MarkAction",
    "MarkEdit",
    "MarkTarget",
    "MarksOpening",
    "Outcome",
    "ReadMode",
    "ReadingWorkflow",
    "Resolution",
    "WorkflowChange",
    "holder_of",
    "lock_holder",
    "lock_report",
    "open_marks",
    "take_over_marks",
    "usable_reader_id",
]
