"""Repolarization and QT statements.

- QTc categories of drug-safety reading: QTc (Fridericia) > 450, > 480, > 500 ms, the highest
  one met (ICH E14, 2005; the same categories as ``study.ich_e14``).
- Prolonged / short QT: the QTc (Fridericia) rows of ``measure.limits`` (Rautaharju PM et al.,
  AHA/ACCF/HRS Part IV, Circulation 2009: >= 450 ms men, >= 460 ms women; short <= 340 ms).
- QT statements follow the global measurement rules: with a QRS >= 120 ms, a paced rhythm or
  pre-excitation the QTc is marked not comparable (``Measurements.reasons``) and no QTc
  statement is made; the reason says why.
- Wide frontal QRS-T angle: > 100 deg (Aro AL et al., Europace 2012; from memory).
- T-wave inversion: T <= -0.1 mV in two contiguous leads of I-aVL, II-aVF, V2-V6 (aVR, III and
  V1 excluded, where a negative T is a normal variant; V2 counts only with V3) (Rautaharju
  2009, from memory).
- U wave: a positive wave >= 0.05 mV after the T end in V2, V3 or V4 (Rautaharju 2009, from
  memory; ``measure.morphology.u_wave_mv``).
- Poor R-wave progression: R in V3 <= 0.3 mV (Zema MJ, Kligfield P, Arch Intern Med 1982;
  from memory).
- Early repolarization pattern: a notch or slur on the terminal QRS with its J peak >= 0.1 mV
  in two contiguous inferior or lateral leads (not V1-V3), QRS < 120 ms (Macfarlane PW et al.,
  JACC 2015; from memory).
- Brugada type 1 pattern: coved ST elevation >= 0.2 mV at J in V1 or V2, falling through J+60
  and J+80 ms into a negative T (Priori SG et al., Heart Rhythm 2013; from memory).

ST-T statements (QRS-T angle, T inversion, early repolarization, poor R-wave progression)
are not made with a QRS >= 120 ms, a paced rhythm or pre-excitation, where the ST-T is
secondary to the abnormal activation.
"""

from __future__ import annotations

import itertools

from reviewapp.core.interpret.chamber import STRAIN_LEADS, lvh_criteria, strain_leads
from reviewapp.core.interpret.context import Context
from reviewapp.core.interpret.statement import MetValue, Statement, make
from reviewapp.core.measure.limits import normal_range
from reviewapp.core.measure.types import ValueReason

QTC_CATEGORIES_MS = (500.0, 480.0, 450.0)
QRS_T_ANGLE_DEG = 100.0
T_INVERSION_MV = -0.1
T_PAIRS = (("I", "aVL"), ("II", "aVF"), ("V2", "V3"), ("V3", "V4"), ("V4", "V5"), ("V5", "V6"))
U_WAVE_MV = 0.05
U_LEADS = ("V2", "V3", "V4")
PRWP_R_V3_MV = 0.3
ER_JP_MV = 0.1
ER_GROUPS = (("II", "III", "aVF"), ("I", "aVL"), ("V4", "V5", "V6"))
BRUGADA_J_MV = 0.2
BRUGADA_T_MV = -0.05

SECONDARY = "ST-T statements not made: {why} (the ST-T is secondary to the abnormal activation)"


def _secondary_why(ctx: Context) -> str | None:
    if ctx.m.paced:
        return "paced rhythm"
    if ctx.m.pre_excitation:
        return "ventricular pre-excitation"
    if ctx.wide:
        return "QRS >= 120 ms"
    return None


def repolarization(ctx: Context) -> tuple[list[Statement], list[ValueReason]]:
    out: list[Statement] = []
    reasons: list[ValueReason] = []
    out += _qt(ctx, reasons)
    why = _secondary_why(ctx)
    if why is not None:
        reasons.append(
            ValueReason("statement:repolarization.st_t", "gated", SECONDARY.format(why=why))
        )
    else:
        out += _angle(ctx) + _t_inversion(ctx) + _prwp(ctx) + _early_repolarization(ctx)
    out += _u_wave(ctx)
    if not ctx.m.paced:
        out += _brugada(ctx)
    return out, reasons


def _qt(ctx: Context, reasons: list[ValueReason]) -> list[Statement]:
    q = "qtc_fridericia_ms"
    nc = next((r for r in ctx.m.reasons if r.quantity == q and r.kind == "not_comparable"), None)
    v = ctx.g(q)
    if v is None:
        return []
    if nc is not None:
        reasons.append(
            ValueReason(
                "statement:repolarization.qtc", "gated", "QTc statements not made: " + nc.text
            )
        )
        return []
    out = []
    val = MetValue("QTc (Fridericia)", v, "ms")
    for limit in QTC_CATEGORIES_MS:
        if v > limit:
            out.append(make(f"repolarization.qtc_over_{limit:.0f}", [val], f"QTcF {v:.0f} ms"))
            break
    nr = normal_range(q, ctx.subject)
    if nr is not None and nr.is_above(v):
        out.append(make("repolarization.prolonged_qt", [val], f"QTcF {v:.0f} ms ({nr.applies_to})"))
    elif nr is not None and nr.is_below(v):
        out.append(make("repolarization.short_qt", [val], f"QTcF {v:.0f} ms"))
    return out


def _angle(ctx: Context) -> list[Statement]:
    a = ctx.g("qrs_t_angle_deg")
    if a is None or a <= QRS_T_ANGLE_DEG:
        return []
    vals = [
        MetValue("frontal QRS-T angle", a, "deg"),
        ctx.val("QRS axis", "qrs_axis_deg", "deg"),
        ctx.val("T axis", "t_axis_deg", "deg"),
    ]
    return [make("repolarization.wide_qrs_t_angle", vals, f"{a:.0f}°")]


def _t_inversion(ctx: Context) -> list[Statement]:
    neg = {
        x
        for pair in T_PAIRS
        for x in pair
        if (t := ctx.lv(x, "t_mv")) is not None and t <= T_INVERSION_MV
    }
    hit = sorted(
        {x for a, b in T_PAIRS if a in neg and b in neg for x in (a, b)},
        key=lambda x: [p for pair in T_PAIRS for p in pair].index(x),
    )
    if not hit:
        return []
    quals = []
    if lvh_criteria(ctx) and strain_leads(ctx) and set(hit) & set(STRAIN_LEADS):
        quals.append(
            "in left ventricular hypertrophy, lateral T inversion may be secondary (strain)"
        )
    vals = [MetValue("T", ctx.lv(x, "t_mv") or 0.0, "mV", x) for x in hit]
    return [make("repolarization.t_inversion", vals, "leads " + ", ".join(hit), quals)]


def _u_wave(ctx: Context) -> list[Statement]:
    hit = [(x, u) for x in U_LEADS if (u := ctx.lv(x, "u_mv")) is not None and u >= U_WAVE_MV]
    if not hit:
        return []
    vals = [MetValue("U", u, "mV", x) for x, u in hit]
    return [make("repolarization.u_wave", vals, "leads " + ", ".join(x for x, _ in hit))]


def _prwp(ctx: Context) -> list[Statement]:
    r3 = ctx.lv("V3", "r_mv")
    if r3 is None or r3 > PRWP_R_V3_MV:
        return []
    return [
        make(
            "repolarization.poor_r_progression",
            [MetValue("R", r3, "mV", "V3")],
            f"R in V3 {r3:.2f} mV",
        )
    ]


def _early_repolarization(ctx: Context) -> list[Statement]:
    hit: list[str] = []
    for group in ER_GROUPS:
        found = [
            x
            for x in group
            if (m := ctx.lead(x)) is not None
            and m.end_qrs in ("notch", "slur")
            and (jp := ctx.lv(x, "jp_mv")) is not None
            and jp >= ER_JP_MV
        ]
        pairs = [(a, b) for a, b in itertools.combinations(group, 2) if a in found and b in found]
        if group == ("V4", "V5", "V6"):
            pairs = [(a, b) for a, b in pairs if (a, b) != ("V4", "V6")]
        hit += sorted({x for p in pairs for x in p}, key=group.index)
    if not hit:
        return []
    vals = []
    for x in hit:
        m = ctx.lead(x)
        assert m is not None
        vals.append(MetValue(f"J peak ({m.end_qrs})", ctx.lv(x, "jp_mv") or 0.0, "mV", x))
    return [make("repolarization.early_repolarization", vals, "leads " + ", ".join(hit))]


def _brugada(ctx: Context) -> list[Statement]:
    for x in ("V1", "V2"):
        j, j60, j80 = ctx.lv(x, "st_j_mv"), ctx.lv(x, "st_j60_mv"), ctx.lv(x, "st_j80_mv")
        t = ctx.lv(x, "t_min_mv")
        if None in (j, j60, j80, t):
            continue
        assert j is not None and j60 is not None and j80 is not None and t is not None
        if j >= BRUGADA_J_MV and j60 < j and j80 <= j60 and t <= BRUGADA_T_MV:
            vals = [
                MetValue("ST at J", j, "mV", x),
                MetValue("ST at J+60", j60, "mV", x),
                MetValue("ST at J+80", j80, "mV", x),
                MetValue("T (lowest)", t, "mV", x),
            ]
            return [make("repolarization.brugada_coved", vals, f"coved ST elevation in {x}")]
    return []
