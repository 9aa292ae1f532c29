"""Ischemia and infarction statements: ST elevation, ST depression, Q waves.

The criteria are the Fourth Universal Definition of Myocardial Infarction's (Thygesen K et
al., Circulation 2018), as ``measure.findings.infarct_findings`` applies them (two contiguous
leads, ST backed at J+60/J+80 ms). Gating:

- Not made in complete left bundle branch block, a ventricular paced rhythm or ventricular
  pre-excitation: the altered activation changes the initial QRS forces and the ST-T (the
  4th UDMI names left bundle branch block and pacing; pre-excitation does the same).
- Any other QRS >= 120 ms follows the global rule of ``measure.findings`` (criteria not
  applied) except right bundle branch block, where the initial forces are normal: Q waves
  are read (qualified), and ST deviation outside V1-V3 (qualified; in V1-V3 the ST-T is
  secondary to the block).
- In left ventricular hypertrophy with strain, ST depression in I, aVL, V5, V6 is qualified
  as possibly secondary.
"""

from __future__ import annotations

from reviewapp.core.interpret.chamber import STRAIN_LEADS, lvh_criteria, strain_leads
from reviewapp.core.interpret.context import Context
from reviewapp.core.interpret.statement import MetValue, Statement, make
from reviewapp.core.measure.findings import infarct_findings
from reviewapp.core.measure.types import Finding, ValueReason

TERRITORIES = (
    ("anterior", ("V1", "V2", "V3", "V4")),
    ("lateral", ("I", "aVL", "V5", "V6")),
    ("inferior", ("II", "III", "aVF")),
    ("posterior", ("V7", "V8", "V9")),
    ("right ventricular", ("V3R", "V4R")),
)
GATE = "ST/Q infarct statements not made: {why} (Thygesen et al., Circulation 2018)"
RBBB_Q = "in right bundle branch block the Q-wave criteria still apply (initial forces normal)"
RBBB_ST = "in right bundle branch block, ST-T changes in V1-V3 are secondary and not counted"
LVH_ST = "in left ventricular hypertrophy with strain, lateral ST depression may be secondary"


def _territory(leads: list[str]) -> str:
    names = [t for t, group in TERRITORIES if set(leads) & set(group)]
    return ", ".join(leads) + (f" ({', '.join(names)})" if names else "")


def infarction(
    ctx: Context, conduction_codes: set[str]
) -> tuple[list[Statement], list[ValueReason]]:
    why = None
    if "conduction.lbbb" in conduction_codes:
        why = "complete left bundle branch block"
    elif ctx.m.paced:
        why = "ventricular paced rhythm"
    elif ctx.m.pre_excitation:
        why = "ventricular pre-excitation"
    rbbb = "conduction.rbbb" in conduction_codes
    if why is None and ctx.wide and not rbbb:
        why = "QRS >= 120 ms"
    if why is not None:
        return [], [ValueReason("statement:infarction", "gated", GATE.format(why=why))]
    findings = infarct_findings(ctx.m, ctx.subject)
    strain = bool(lvh_criteria(ctx) and strain_leads(ctx))
    out: list[Statement] = []
    for code, quantity, direction in (
        ("infarction.st_elevation", "st_j_mv", "above"),
        ("infarction.st_depression", "st_j_mv", "below"),
        ("infarction.q_waves", "q_ms", None),
    ):
        hits = [
            f
            for f in findings
            if f.quantity == quantity and (direction is None or f.direction == direction)
        ]
        quals: list[str] = []
        if rbbb and quantity == "st_j_mv":
            hits = [f for f in hits if f.lead not in ("V1", "V2", "V3")]
            quals.append(RBBB_ST)
        if rbbb and quantity == "q_ms":
            quals.append(RBBB_Q)
        if (
            strain
            and code == "infarction.st_depression"
            and any(f.lead in STRAIN_LEADS for f in hits)
        ):
            quals.append(LVH_ST)
        if hits:
            out.append(make(code, _values(hits), _territory([f.lead or "" for f in hits]), quals))
    return out, []


def _values(hits: list[Finding]) -> list[MetValue]:
    unit = {"mV": "mV", "ms": "ms"}
    return [
        MetValue(
            "ST at J" if f.quantity == "st_j_mv" else "Q duration", f.value, unit[f.unit], f.lead
        )
        for f in hits
    ]
