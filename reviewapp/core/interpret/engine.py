"""``interpret``: the statements of one reading, from its measurements (no Qt, no I/O).

Runs the rule groups in reading order (lead checks, rhythm, conduction, axis, chambers,
repolarization and QT, ischemia and infarction) and gathers the statements and the reasons
for statements not made. A pure function of the reading and the subject, cheap enough to run
after every mark a reader moves.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from reviewapp.core.interpret.chamber import chamber
from reviewapp.core.interpret.conduction import axis, conduction
from reviewapp.core.interpret.context import Context
from reviewapp.core.interpret.infarction import infarction
from reviewapp.core.interpret.lead_checks import lead_checks
from reviewapp.core.interpret.repolarization import repolarization
from reviewapp.core.interpret.rhythm import rhythm
from reviewapp.core.interpret.statement import Interpretation, Statement, ordered
from reviewapp.core.measure.types import ValueReason
from reviewapp.core.record import SubjectFacts

if TYPE_CHECKING:
    from reviewapp.core.engine import Reading


def interpret(reading: Reading, subject: SubjectFacts | None = None) -> Interpretation:
    """The automatic statements of ``reading`` (an ``engine.Reading``) for ``subject`` (age
    and sex pick the criteria that depend on them; None: not stated).

    Example: ``interpret(analyse(record).reading(), record.subject).statements``.
    """
    ctx = Context.of(reading.measurements, reading.marked, subject or SubjectFacts())
    out: list[Statement] = list(lead_checks(ctx))
    reasons: list[ValueReason] = []
    for rule in (rhythm, conduction, axis, chamber, repolarization):
        s, r = rule(ctx)
        out += s
        reasons += r
    s, r = infarction(ctx, {x.code for x in out})
    out += s
    reasons += r
    return Interpretation(ordered(out), tuple(reasons))
