"""Interpretation: statements from the measurements, each with its criteria, the measured
values that met them and the published source (plain Python, no Qt).

- ``catalogue``: every statement (this program's own identifiers, the trade terms of the
  AHA/ACCF/HRS statement list), with criteria in words and sources; ``search`` for the
  reader's picker.
- ``engine.interpret(reading, subject)``: the automatic statements of a reading, in reading
  order, and the reasons for statements not made (``ValueReason`` kind "gated").
- One module per group of rules, each with its thresholds and sources: ``lead_checks``,
  ``rhythm``, ``conduction`` (and axis), ``chamber``, ``repolarization`` (and QT),
  ``infarction`` (with its gating).
- ``statement``: the ``Statement`` values (``MetValue``: a value that met a criterion).
- ``sources``: the citations the reader sees.

The reader's own interpretation (statements picked, edited, ordered) is kept in the marks
file (``core.marks``) and edited through ``core.workflow.StatementEditor``.
"""

from reviewapp.core.interpret.catalogue import (
    CATALOGUE,
    CATEGORIES,
    CATEGORY_NAMES,
    ENTRIES,
    FREE_TEXT,
    StatementDef,
    entry,
    search,
)
from reviewapp.core.interpret.engine import interpret
from reviewapp.core.interpret.statement import Interpretation, MetValue, Statement

__all__ = [
    "CATALOGUE",
    "CATEGORIES",
    "CATEGORY_NAMES",
    "ENTRIES",
    "FREE_TEXT",
    "Interpretation",
    "MetValue",
    "Statement",
    "StatementDef",
    "entry",
    "interpret",
    "search",
]
