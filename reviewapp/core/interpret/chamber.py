"""Chamber statements: left and right ventricular hypertrophy, atrial abnormality, low voltage.

Left ventricular hypertrophy by voltage (each named in the statement when met):

- Sokolow-Lyon: SV1 + RV5/V6 > 3.5 mV (Sokolow M, Lyon TP, Am Heart J 1949); the row of
  ``measure.limits``.
- Cornell voltage: RaVL + SV3 > 2.8 mV men, > 2.0 mV women (Casale PN et al., JACC 1985);
  the rows of ``measure.limits`` (sex not stated: the narrower, women's).
- Cornell product: (RaVL + SV3, with 0.6 mV added in women) x QRS duration > 2440 mm x ms
  (Molloy TJ et al., JACC 1992; from memory). Sex not stated: the women's adjustment (more
  statements rather than fewer, as the limits do).
- Peguero-Lo Presti: deepest S in any lead + SV4 >= 2.8 mV men, >= 2.3 mV women (Peguero JG
  et al., JACC 2017; from memory). Sex not stated: 2.3 mV.

Not applied under 35 years (voltage is high in young adults: Hancock EW et al., AHA/ACCF/HRS
Part V, Circulation 2009, from memory, "voltage criteria are not reliable under 35 years"),
nor with a QRS >= 120 ms, a paced rhythm or pre-excitation (the voltage criteria assume
normal conduction); age not stated: applied, and the statement says so. Secondary
repolarization abnormality ("strain"): ST at J+60 <= -0.05 mV with T <= -0.1 mV in I, aVL,
V5 or V6 (common practice, no source).

Right ventricular hypertrophy (Hancock 2009; Sokolow M, Lyon TP, Am Heart J 1949;38:273 for
RV1 + SV5/V6; both from memory): QRS axis > +90 deg and QRS < 120 ms, with a dominant R in V1
(R/S >= 1, R >= 0.5 mV) or RV1 + SV5/V6 >= 1.05 mV; adults.

Atrial abnormality (Hancock 2009; Morris JJ et al., Circulation 1964; from memory): left, P
duration >= 120 ms or P terminal force in V1 >= 0.04 mm x s; right, P >= 0.25 mV in II, III
or aVF, or an upright P >= 0.15 mV in V1 or V2.

Low QRS voltage (Mason 2007, from memory): QRS amplitude < 0.5 mV in every limb lead, or
< 1.0 mV in every precordial lead.
"""

from __future__ import annotations

from reviewapp.core.interpret.context import ADULT_AGE_YEARS, LIMB, PRECORDIAL, Context
from reviewapp.core.interpret.statement import MetValue, Statement, make
from reviewapp.core.measure.amplitudes import s_depth_mv
from reviewapp.core.measure.limit_text import shown
from reviewapp.core.measure.limits import normal_range
from reviewapp.core.measure.types import ValueReason

LVH_MIN_AGE_YEARS = 35.0
CORNELL_PRODUCT_MM_MS = 2440.0
CORNELL_PRODUCT_WOMEN_MV = 0.6
PEGUERO_MV = {"male": 2.8, "female": 2.3}
STRAIN_ST_MV = -0.05
STRAIN_T_MV = -0.1
STRAIN_LEADS = ("I", "aVL", "V5", "V6")
RVH_AXIS_DEG = 90.0
RVH_R_V1_MV = 0.5
RVH_SOKOLOW_MV = 1.05
LAA_P_MS = 120.0
LAA_PTF_MM_S = 0.04
RAA_P_MV = 0.25
RAA_P_V1_MV = 0.15
LOW_LIMB_MV = 0.5
LOW_PRECORDIAL_MV = 1.0

AGE_GATE = (
    "left ventricular hypertrophy voltage criteria not applied under 35 years (Hancock et "
    "al., Circulation 2009)"
)
CONDUCTION_GATE = (
    "left ventricular hypertrophy voltage criteria not applied: {why} (the criteria assume "
    "normal ventricular conduction)"
)


def chamber(ctx: Context) -> tuple[list[Statement], list[ValueReason]]:
    out: list[Statement] = []
    reasons: list[ValueReason] = []
    lvh = _lvh(ctx, reasons)
    if lvh is not None:
        out.append(lvh)
    out += _rvh(ctx) + _atria(ctx) + _low_voltage(ctx)
    return out, reasons


def lvh_criteria(ctx: Context) -> list[MetValue]:
    """The voltage criteria met (each as the value that met it), ignoring the gates."""
    met: list[MetValue] = []
    sex = ctx.sex
    for q, label in (
        ("sokolow_lyon_mv", "Sokolow-Lyon voltage"),
        ("cornell_mv", "Cornell voltage"),
    ):
        v = getattr(ctx.m, q)
        nr = normal_range(q, ctx.subject)
        if v is not None and nr is not None and nr.is_above(shown(v, "mV")):
            met.append(MetValue(label, shown(v, "mV"), "mV"))
    cornell, qrs = ctx.m.cornell_mv, ctx.g("qrs_ms")
    if cornell is not None and qrs is not None:
        add = 0.0 if sex == "male" else CORNELL_PRODUCT_WOMEN_MV
        product = round((shown(cornell, "mV") + add) * 10.0 * qrs)
        if product > CORNELL_PRODUCT_MM_MS:
            met.append(MetValue("Cornell product", product, "mm*ms"))
    peg = ctx.m.peguero_mv
    if peg is not None:
        limit = PEGUERO_MV["male"] if sex == "male" else PEGUERO_MV["female"]
        if shown(peg, "mV") >= limit:
            met.append(MetValue("Peguero-Lo Presti voltage", shown(peg, "mV"), "mV"))
    return met


def strain_leads(ctx: Context) -> list[str]:
    out = []
    for x in STRAIN_LEADS:
        st, t = ctx.lv(x, "st_j60_mv"), ctx.lv(x, "t_mv")
        if st is not None and t is not None and st <= STRAIN_ST_MV and t <= STRAIN_T_MV:
            out.append(x)
    return out


def _lvh(ctx: Context, reasons: list[ValueReason]) -> Statement | None:
    met = lvh_criteria(ctx)
    if not met:
        return None
    why = "paced rhythm" if ctx.m.paced else None
    if why is None and ctx.m.pre_excitation:
        why = "ventricular pre-excitation"
    if why is None and ctx.wide:
        why = "QRS >= 120 ms"
    if why is not None:
        reasons.append(
            ValueReason("statement:chamber.lvh", "gated", CONDUCTION_GATE.format(why=why))
        )
        return None
    if ctx.age is not None and ctx.age < LVH_MIN_AGE_YEARS:
        reasons.append(ValueReason("statement:chamber.lvh", "gated", AGE_GATE))
        return None
    quals = []
    if ctx.age is None:
        quals.append("age not stated: voltage criteria applied as for 35 years or older")
    if ctx.sex is None:
        quals.append("sex not stated: the women's (lower) voltage limits used")
    names = ", ".join(v.label.replace(" voltage", "") for v in met)
    strain = strain_leads(ctx)
    if strain:
        vals = [*met]
        for x in strain:
            vals.append(MetValue("ST at J+60", ctx.lv(x, "st_j60_mv") or 0.0, "mV", x))
            vals.append(MetValue("T", ctx.lv(x, "t_mv") or 0.0, "mV", x))
        detail = f"{names}; ST depression and T inversion in {', '.join(strain)}"
        return make("chamber.lvh_repolarization", vals, detail, quals)
    return make("chamber.lvh", met, names, quals)


def _rvh(ctx: Context) -> list[Statement]:
    ax, qrs = ctx.g("qrs_axis_deg"), ctx.g("qrs_ms")
    if ctx.m.paced or ax is None or qrs is None or ax <= RVH_AXIS_DEG or qrs >= 120.0:
        return []
    if ctx.age is not None and ctx.age < ADULT_AGE_YEARS:
        return []
    v1 = ctx.lead("V1")
    if v1 is None or v1.r_mv is None:
        return []
    r1 = shown(v1.r_mv, "mV")
    s1 = s_depth_mv(v1) or 0.0
    vals = [MetValue("QRS axis", ax, "deg"), MetValue("R", r1, "mV", "V1")]
    dominant = r1 >= RVH_R_V1_MV and r1 >= shown(s1, "mV")
    s56 = [s_depth_mv(ctx.lead(x)) for x in ("V5", "V6")]
    s56k = [s for s in s56 if s is not None]
    index = None if not s56k else shown(r1 + max(s56k), "mV")
    if dominant:
        vals.append(MetValue("S", shown(s1, "mV"), "mV", "V1"))
        return [make("chamber.rvh", vals, f"axis {ax:+.0f}°, dominant R in V1")]
    if index is not None and index >= RVH_SOKOLOW_MV:
        vals.append(MetValue("RV1 + SV5/V6", index, "mV"))
        return [make("chamber.rvh", vals, f"axis {ax:+.0f}°, RV1 + SV5/V6 {index:.2f} mV")]
    return []


def _atria(ctx: Context) -> list[Statement]:
    if not ctx.has_p:
        return []
    out = []
    left: list[MetValue] = []
    p_ms = ctx.g("p_ms")
    if p_ms is not None and p_ms >= LAA_P_MS:
        left.append(MetValue("P duration", p_ms, "ms"))
    v1 = ctx.lead("V1")
    if v1 is not None and v1.p_terminal_mv is not None and v1.p_terminal_ms is not None:
        ptf = round(-shown(v1.p_terminal_mv, "mV") * 10.0 * round(v1.p_terminal_ms) / 1000.0, 3)
        if ptf >= LAA_PTF_MM_S:
            left.append(MetValue("P terminal force", ptf, "mm*s", "V1"))
    if left:
        out.append(make("chamber.left_atrial", left, "; ".join(v.text for v in left)))
    right: list[MetValue] = []
    for x in ("II", "III", "aVF"):
        p = ctx.lv(x, "p_mv")
        if p is not None and p >= RAA_P_MV:
            right.append(MetValue("P", p, "mV", x))
    for x in ("V1", "V2"):
        p = ctx.lv(x, "p_mv")
        if p is not None and p >= RAA_P_V1_MV:
            right.append(MetValue("P", p, "mV", x))
    if right:
        out.append(make("chamber.right_atrial", right, "; ".join(v.text for v in right)))
    return out


def _low_voltage(ctx: Context) -> list[Statement]:
    out = []
    for leads, limit, code in (
        (LIMB, LOW_LIMB_MV, "chamber.low_voltage_limb"),
        (PRECORDIAL, LOW_PRECORDIAL_MV, "chamber.low_voltage_precordial"),
    ):
        found = [ctx.qrs_amplitude(x) for x in leads]
        amps = [a for a in found if a is not None]
        if not amps or len(amps) < len(found):
            continue
        if all(a < limit for a in amps):
            top = max(amps)
            out.append(
                make(code, [MetValue("largest QRS amplitude", top, "mV")], f"largest {top:.2f} mV")
            )
    return out
