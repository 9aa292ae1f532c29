"""Conduction and axis statements.

Conduction (Surawicz B et al., AHA/ACCF/HRS Part III, Circulation 2009;119:e235-e240; the
numbers from memory):

- Complete right bundle branch block: QRS >= 120 ms; rsr', rsR' or rSR' in V1 or V2 (or a
  broad, often notched R there); S wave of greater duration than R or > 40 ms in I and V6;
  R-peak time > 50 ms in V1 (supporting: reported, not required; "the first three criteria
  should be present"). Incomplete: the same pattern with QRS 110-119 ms.
- Complete left bundle branch block: QRS >= 120 ms; broad notched or slurred R in I, aVL, V5,
  V6 with R-peak time > 60 ms in V5 and V6; absent q in I, V5, V6. V1 mainly negative (QS or
  rS) is added here so a terminal R in V1 (right bundle branch block) never reads as left.
  Incomplete: QRS 110-119 ms, R-peak time > 60 ms in V4, V5 or V6, no q in I, V5, V6.
- Left anterior fascicular block: axis -45 to -90 deg; qR in aVL; R-peak time in aVL >= 45
  ms; QRS < 120 ms (also read with right bundle branch block, as bifascicular block).
- Left posterior fascicular block: axis +90 to +180 deg; rS in I and aVL; qR in III and aVF;
  QRS < 120 ms (or with right bundle branch block).
- Nonspecific intraventricular conduction delay: QRS > 110 ms without the criteria above.
- First-degree AV block: PR > 200 ms (Mason 2007; the PR row of ``measure.limits``).
- Ventricular pre-excitation: ``measure.preexcitation``.

A terminal R (R') counts from ``TERMINAL_R_MIN_MV`` (0.05 mV, half a millimetre: common
practice, no source; smaller wiggles after the S are the QRS returning to baseline).

Axis (Mason 2007; Part III): left axis deviation -30 (exclusive) to -90 deg, right axis
deviation +90 (exclusive) to +180 deg, extreme (right superior) axis between -90 and -180
deg: an axis in that quadrant is not left axis deviation. Indeterminate: the limb leads'
net QRS areas are all near zero. The boundaries follow the normal range of the QRS axis row
(-30 to +90 deg, both normal).
"""

from __future__ import annotations

from reviewapp.core.interpret.context import Context
from reviewapp.core.interpret.statement import MetValue, Statement, make
from reviewapp.core.measure.preexcitation import delta_leads
from reviewapp.core.measure.types import ValueReason

FIRST_DEGREE_PR_MS = 200.0
COMPLETE_QRS_MS = 120.0
INCOMPLETE_QRS_MS = 110.0
IVCD_QRS_MS = 110.0  # IVCD: QRS > 110 ms
TERMINAL_R_MIN_MV = 0.05
# A q wave shallower than this is not read as one ("absent q" of left bundle branch block):
# 0.05 mV is half a millimetre at 10 mm/mV (common practice, no source).
Q_VISIBLE_MV = 0.05
RBBB_V1_RPT_MS = 50.0
RBBB_S_MS = 40.0
LBBB_RPT_MS = 60.0
LAFB_AXIS_DEG = (-90.0, -45.0)  # inclusive
LAFB_AVL_RPT_MS = 45.0
LPFB_AXIS_DEG = (90.0, 180.0)  # inclusive
LAD_DEG = -30.0
RAD_DEG = 90.0
EXTREME_DEG = -90.0

PACED_NOTE = (
    "conduction and axis statements not made: ventricular paced rhythm (the QRS is the "
    "paced activation; its axis is set by the lead's position)"
)
PREEXCITED_NOTE = (
    "bundle branch, fascicular and intraventricular conduction statements not made: "
    "ventricular pre-excitation alters the QRS (Surawicz et al., Circulation 2009)"
)


def conduction(ctx: Context) -> tuple[list[Statement], list[ValueReason]]:
    out: list[Statement] = []
    reasons: list[ValueReason] = []
    if ctx.m.paced:
        reasons.append(ValueReason("statement:conduction", "gated", PACED_NOTE))
        return out, reasons
    pr = ctx.g("pr_ms")
    qrs = ctx.g("qrs_ms")
    if ctx.m.pre_excitation:
        deltas = delta_leads(ctx.m.leads)
        vals = [MetValue("PR", pr or 0.0, "ms")]
        if qrs is not None:
            vals.append(MetValue("QRS duration", qrs, "ms"))
        vals += [MetValue("delta wave", ctx.lv(x, "delta_ms") or 0.0, "ms", x) for x in deltas]
        out.append(make("conduction.preexcitation", vals, "delta wave in " + ", ".join(deltas)))
        reasons.append(ValueReason("statement:conduction.bundle_branch", "gated", PREEXCITED_NOTE))
        return out, reasons
    if ctx.has_p and pr is not None and pr > FIRST_DEGREE_PR_MS:
        out.append(
            make("conduction.first_degree_av_block", [MetValue("PR", pr, "ms")], f"PR {pr:.0f} ms")
        )
    if qrs is None:
        return out, reasons
    rbbb = _rbbb_pattern(ctx)
    lbbb = _lbbb_pattern(ctx, ("V5", "V6"), all_leads=True)
    qv = MetValue("QRS duration", qrs, "ms")
    block = None
    if qrs >= COMPLETE_QRS_MS:
        if rbbb is not None:
            block = make("conduction.rbbb", [qv, *rbbb], f"QRS {qrs:.0f} ms")
        elif lbbb is not None and _v1_negative(ctx):
            block = make("conduction.lbbb", [qv, *lbbb], f"QRS {qrs:.0f} ms")
        else:
            block = make("conduction.ivcd", [qv], f"QRS {qrs:.0f} ms")
    elif qrs >= INCOMPLETE_QRS_MS:
        ilbbb = _lbbb_pattern(ctx, ("V4", "V5", "V6"), all_leads=False)
        if rbbb is not None:
            block = make("conduction.incomplete_rbbb", [qv, *rbbb], f"QRS {qrs:.0f} ms")
        elif ilbbb is not None and _v1_negative(ctx):
            block = make("conduction.incomplete_lbbb", [qv, *ilbbb], f"QRS {qrs:.0f} ms")
        elif qrs > IVCD_QRS_MS:
            block = make("conduction.ivcd", [qv], f"QRS {qrs:.0f} ms")
    if block is not None:
        out.append(block)
    narrow_or_rbbb = qrs < COMPLETE_QRS_MS or (
        block is not None and block.code == "conduction.rbbb"
    )
    if narrow_or_rbbb:
        out += _fascicular(ctx)
    return out, reasons


def _terminal_r(ctx: Context, lead: str) -> list[MetValue] | None:
    """rsr'/rsR'/rSR' (an R' after the S), or a broad dominant R with R-peak time > 50 ms."""
    m = ctx.lead(lead)
    if m is None or m.r_mv is None:
        return None
    rp = ctx.lv(lead, "r_prime_mv") or 0.0
    if rp >= TERMINAL_R_MIN_MV and (m.s_mv or 0.0) < 0.0:
        return [MetValue("R'", rp, "mV", lead)]
    rpt = ctx.lv(lead, "r_peak_time_ms")
    depth = -min(m.q_mv or 0.0, m.s_mv or 0.0)
    if rpt is not None and rpt > RBBB_V1_RPT_MS and m.r_mv > depth:
        return [MetValue("R-peak time", rpt, "ms", lead)]
    return None


def _wide_s(ctx: Context, lead: str) -> list[MetValue] | None:
    s_ms, r_ms = ctx.lv(lead, "s_ms"), ctx.lv(lead, "r_ms")
    if s_ms is None or r_ms is None or s_ms <= 0.0:
        return None
    if s_ms > r_ms or s_ms > RBBB_S_MS:
        return [MetValue("S duration", s_ms, "ms", lead), MetValue("R duration", r_ms, "ms", lead)]
    return None


def _rbbb_pattern(ctx: Context) -> list[MetValue] | None:
    terminal = _terminal_r(ctx, "V1") or _terminal_r(ctx, "V2")
    s_i, s_v6 = _wide_s(ctx, "I"), _wide_s(ctx, "V6")
    if terminal is None or s_i is None or s_v6 is None:
        return None
    vals = [*terminal, *s_i, *s_v6]
    rpt = ctx.lv("V1", "r_peak_time_ms")
    if rpt is not None:
        vals.append(MetValue("R-peak time", rpt, "ms", "V1"))
    return vals


def _no_q(ctx: Context, leads: tuple[str, ...]) -> bool:
    return all(
        (m := ctx.lead(x)) is not None and m.q_mv is not None and -m.q_mv < Q_VISIBLE_MV
        for x in leads
    )


def _lbbb_pattern(
    ctx: Context, leads: tuple[str, ...], *, all_leads: bool
) -> list[MetValue] | None:
    """R-peak time > 60 ms in ``leads`` (every one with an R when ``all_leads``, else any)
    and no q wave in I, V5 and V6."""
    rpts = [(x, ctx.lv(x, "r_peak_time_ms")) for x in leads]
    known = [(x, v) for x, v in rpts if v is not None]
    if not known:
        return None
    late = [(x, v) for x, v in known if v > LBBB_RPT_MS]
    if (all_leads and len(late) != len(known)) or not late:
        return None
    if not _no_q(ctx, ("I", "V5", "V6")):
        return None
    return [MetValue("R-peak time", v, "ms", x) for x, v in late]


def _v1_negative(ctx: Context) -> bool:
    m = ctx.lead("V1")
    if m is None or m.r_mv is None or m.s_mv is None or m.q_mv is None:
        return False
    return -min(m.q_mv, m.s_mv) > max(m.r_mv, m.r_prime_mv or 0.0)


def _q_then_r(ctx: Context, lead: str) -> bool:
    m = ctx.lead(lead)
    return m is not None and (m.q_mv or 0.0) < 0.0 and (m.r_mv or 0.0) > -(m.q_mv or 0.0)


def _r_then_s(ctx: Context, lead: str) -> bool:
    m = ctx.lead(lead)
    return (
        m is not None
        and (m.r_mv or 0.0) > 0.0
        and (m.q_mv or 0.0) == 0.0
        and -(m.s_mv or 0.0) > (m.r_mv or 0.0)
    )


def _fascicular(ctx: Context) -> list[Statement]:
    ax = ctx.g("qrs_axis_deg")
    if ax is None:
        return []
    av = MetValue("QRS axis", ax, "deg")
    lo, hi = LAFB_AXIS_DEG
    if lo <= ax <= hi and _q_then_r(ctx, "aVL"):
        rpt = ctx.lv("aVL", "r_peak_time_ms")
        if rpt is not None and rpt >= LAFB_AVL_RPT_MS:
            vals = [av, MetValue("R-peak time", rpt, "ms", "aVL")]
            return [make("conduction.lafb", vals, f"axis {ax:+.0f}°, qR in aVL")]
    lo, hi = LPFB_AXIS_DEG
    if lo <= ax <= hi and all(_r_then_s(ctx, x) for x in ("I", "aVL")):
        if all(_q_then_r(ctx, x) for x in ("III", "aVF")):
            return [
                make(
                    "conduction.lpfb", [av], f"axis {ax:+.0f}°, rS in I and aVL, qR in III and aVF"
                )
            ]
    return []


def axis(ctx: Context) -> tuple[list[Statement], list[ValueReason]]:
    if ctx.m.paced:
        return [], []
    ax = ctx.g("qrs_axis_deg")
    if ax is None:
        why = dict(ctx.m.unmeasured).get("qrs_axis_deg", "")
        if why.startswith("indeterminate"):
            return [make("axis.indeterminate", detail="limb-lead QRS areas near zero")], []
        return [], []
    av = [MetValue("QRS axis", ax, "deg")]
    text = f"{ax:+.0f}°"
    if EXTREME_DEG <= ax < LAD_DEG:
        return [make("axis.left_deviation", av, text)], []
    if RAD_DEG < ax <= 180.0:
        return [make("axis.right_deviation", av, text)], []
    if ax < EXTREME_DEG:
        return [make("axis.extreme", av, text)], []
    return [], []
