"""Lead checks: warnings that the recording itself may be wrong, never silent.

Limb lead reversal (left and right arm; Batchvarov VN, Malik M, Camm AJ, Europace 2007; from
memory): swapping the arm electrodes inverts lead I and exchanges aVR and aVL, so lead I
shows a negative QRS with a negative P (or T), and aVR, normally negative throughout, shows a
positive QRS, P or T. Net QRS = R (or R') plus Q and S (signed); a P or T counts beyond
``WAVE_MV``. Set on LUDB's odd-numbered records with the arm leads swapped by construction
(tests/interpret/test_ludb_statements.py; both halves in the README): asking aVR's QRS *and*
its P or T to be positive found 34 of 60, asking either 53-55 of 60, with no false warning on
the 140 records as recorded. Dextrocardia gives the same picture, and the statement says so.

Limb leads inconsistent (Einthoven W, Fahr G, de Waart A, Pflugers Arch 1913; Goldberger E,
Am Heart J 1942; from memory): the recorded limb leads break III = II - I or Goldberger's
relations by more than ``limb_consistency.MAX_RELATIVE_RESIDUAL`` of the limb-lead signal
(the measurement, its threshold and the figures it was set on: ``measure.limb_consistency``).
The frontal axes then carry a caution and the statements resting on them are not made
(``AXIS_GATED``). The limb-lead reversal check stays: it reads the signs of the net QRS in I
and aVR, which a lead's own (positive) gain does not change, and an arm swap keeps the
relations (I becomes -I, II and III, aVR and aVL exchange), so the two checks answer
different faults and may both fire.

Precordial lead out of sequence (this program's own check, no published criterion): the
QRS-T of each chest lead (representative beat, QRS onset - 10 ms to T end) is most like its
neighbours' along V1-V6. For every pair of chest leads, the sum of correlations between
consecutive leads is computed with the pair exchanged; a gain above ``SEQUENCE_GAIN`` names
the pair. Set on LUDB's odd-numbered records: their largest gain as recorded is 0.15 (a
paced record), 0.07 without it; with two chest leads exchanged on purpose the check finds
the exchanged pair (tests/interpret/test_ludb_statements.py gives the rates on both halves).
"""

from __future__ import annotations

import itertools

import numpy as np

from reviewapp.core.interpret.catalogue import SEQUENCE_GAIN
from reviewapp.core.interpret.context import PRECORDIAL, Context
from reviewapp.core.interpret.statement import MetValue, Statement, make
from reviewapp.core.measure.limb_consistency import RELATIONS

WAVE_MV = 0.02  # the smallest wave (measure.amplitudes.MIN_WAVE_MV)


def _net_qrs(ctx: Context, lead: str) -> float | None:
    m = ctx.lead(lead)
    if m is None or m.r_mv is None or m.q_mv is None or m.s_mv is None:
        return None
    return max(m.r_mv, m.r_prime_mv or 0.0) + m.q_mv + m.s_mv


def limb_reversal(ctx: Context) -> list[Statement]:
    qi, qr = _net_qrs(ctx, "I"), _net_qrs(ctx, "aVR")
    if qi is None or qr is None:
        return []
    pi, pr = ctx.lv("I", "p_mv"), ctx.lv("aVR", "p_mv")
    ti, tr = ctx.lv("I", "t_mv"), ctx.lv("aVR", "t_mv")
    neg_i = (pi is not None and pi <= -WAVE_MV) or (ti is not None and ti <= -WAVE_MV)
    pos_r = qr > 0.0 or (pr is not None and pr >= WAVE_MV) or (tr is not None and tr >= WAVE_MV)
    if not (qi < 0.0 and neg_i and pos_r):
        return []
    vals = [
        MetValue("net QRS", round(qi, 2), "mV", "I"),
        MetValue("net QRS", round(qr, 2), "mV", "aVR"),
    ]
    for lead, p, t in (("I", pi, ti), ("aVR", pr, tr)):
        if p is not None:
            vals.append(MetValue("P", p, "mV", lead))
        if t is not None:
            vals.append(MetValue("T", t, "mV", lead))
    return [
        make(
            "lead_check.limb_reversal",
            vals,
            "QRS and P or T negative in I, positive in aVR; check the arm electrodes (or "
            "dextrocardia)",
        )
    ]


def limb_inconsistent(ctx: Context) -> list[Statement]:
    found = ctx.m.limb_consistency
    if found is None or found.consistent:
        return []
    lead, rhs, worst = found.worst
    vals = [
        MetValue(f"{lhs} vs {words}, residual", round(100.0 * r, 1), "%")
        for (lhs, r), (_, _, words) in zip(found.residual_by_lead, RELATIONS, strict=True)
    ]
    return [
        make(
            "lead_check.limb_inconsistent",
            vals,
            f"{lead} differs from {rhs} by {100.0 * worst:.0f} %: check their calibration and "
            "electrodes",
        )
    ]


def sequence_gain(ctx: Context) -> tuple[float, tuple[str, str]] | None:
    """The best gain of the chest-lead chain by exchanging one pair, and that pair."""
    rep = ctx.marked.representative
    if rep is None:
        return None
    names = list(ctx.marked.lead_names)
    if any(v not in names for v in PRECORDIAL):
        return None
    cols = [names.index(v) for v in PRECORDIAL]
    if not all(ctx.marked.usable[c] for c in cols):
        return None
    m = rep.marks
    if m.qrs_on is None or m.qrs_off is None:
        return None
    fs = ctx.marked.fs_hz
    a = max(0, m.qrs_on - round(0.01 * fs))
    b = m.t_off if m.t_off is not None else m.qrs_off + round(0.3 * fs)
    x = np.asarray(rep.waveform_mv[a : b + 1, cols], dtype=np.float64)
    x = x - x.mean(axis=0)
    if x.shape[0] < 4 or np.any(x.std(axis=0) == 0.0):
        return None
    c = np.corrcoef(x.T)

    def score(order: list[int]) -> float:
        return float(sum(c[order[k], order[k + 1]] for k in range(len(order) - 1)))

    base = score(list(range(6)))
    best = (-np.inf, ("", ""))
    for i, j in itertools.combinations(range(6), 2):
        order = list(range(6))
        order[i], order[j] = order[j], order[i]
        gain = score(order) - base
        if gain > best[0]:
            best = (gain, (PRECORDIAL[i], PRECORDIAL[j]))
    return float(best[0]), best[1]


def precordial_sequence(ctx: Context) -> list[Statement]:
    found = sequence_gain(ctx)
    if found is None or found[0] <= SEQUENCE_GAIN:
        return []
    gain, (a, b) = found
    vals = [MetValue("correlation gain by exchanging them", round(gain, 2), "")]
    return [
        make(
            "lead_check.precordial_sequence",
            vals,
            f"{a} and {b} fit the V1-V6 sequence better exchanged; check the chest electrodes",
        )
    ]


def lead_checks(ctx: Context) -> list[Statement]:
    return limb_inconsistent(ctx) + limb_reversal(ctx) + precordial_sequence(ctx)
