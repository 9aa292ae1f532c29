"""Rhythm statements: sinus rhythm and its rates, ectopic atrial and junctional rhythm, atrial
fibrillation and flutter, pacing, premature complexes.

Thresholds (each tested at its value in tests/interpret/test_thresholds.py):

- Sinus bradycardia < 50 bpm: Kusumoto FM et al., ACC/AHA/HRS bradycardia guideline,
  Circulation 2019 (from memory; the same lower limit as the heart-rate row of
  ``measure.limits``). Sinus tachycardia > 100 bpm: Mason JW et al., Circulation 2007 (from
  memory). LUDB's labels put bradycardia below 60 bpm and tachycardia from about 90 bpm, a
  different convention: reported, not followed (README).
- Sinus P wave: upright in lead II, i.e. a P axis between -30 and +150 deg (lead II lies at
  +60 deg; common practice, no source: a sinus P is upright in II, a low atrial or junctional
  P is inverted there). The P itself must repeat with a constant PR from beat to beat (the
  delineator's P-presence rule, ``dsp.delineate``). Where the recorded limb leads break
  Einthoven's relations (``measure.limb_consistency``) the P axis is unreliable and the sign
  of the P in lead II itself is read instead.
- Sinus arrhythmia: the longest and shortest dominant cycles differ by more than 120 ms
  (common practice, no source; definitions range from 120 to 160 ms or 10 %).
- Atrial flutter: no P wave, atrial rate 240-340/min (Mason 2007, from memory) and atrial
  organisation >= 0.43 (``measure.atrial_activity``: set midway between the highest
  fibrillation (0.36) and the flutter (0.50) of LUDB's odd-numbered records).
- Atrial fibrillation: no P wave and an irregular ventricular rhythm (RR coefficient of
  variation of the dominant beats > 10 %, ``measure.intervals.IRREGULAR_RR_CV``).
- Junctional rhythm: no P wave, regular rhythm, QRS < 120 ms and rate <= 100 bpm (above it
  the engine does not guess between junctional and other narrow-complex tachycardias).
- Pacing: ventricular stimuli before more than half the QRS complexes (the engine's paced
  rhythm, ``Measurements.paced``); atrial stimuli before at least half of the beats and at
  least 3 (``measure.atrial_activity``).
- Premature complexes: the beat grouping's premature beats (RR < 85 % of the local RR,
  ``dsp.beats``): of the dominant QRS shape -> atrial (only with P waves); of another shape
  with a QRS >= 120 ms -> ventricular; of another shape and narrow -> origin undetermined.
"""

from __future__ import annotations

import itertools

from reviewapp.core.fiducials import BeatKind
from reviewapp.core.interpret.context import Context
from reviewapp.core.interpret.statement import MetValue, Statement, make
from reviewapp.core.measure.atrial_activity import FLUTTER_RATE_PER_MIN as FLUTTER_RATE_PER_MIN
from reviewapp.core.measure.atrial_activity import ORGANISED_MIN, flutter_waves
from reviewapp.core.measure.intervals import dominant_group
from reviewapp.core.measure.limit_text import shown
from reviewapp.core.measure.types import ValueReason

BRADYCARDIA_BPM = 50.0
TACHYCARDIA_BPM = 100.0
SINUS_P_AXIS_DEG = (-30.0, 150.0)  # exclusive
SINUS_ARRHYTHMIA_MS = 120.0
FLUTTER_ORGANISATION = ORGANISED_MIN
JUNCTIONAL_MAX_BPM = 100.0
WIDE_QRS_MS = 120.0
ATRIAL_STIMULI_MIN = 3


def rhythm(ctx: Context) -> tuple[list[Statement], list[ValueReason]]:
    out: list[Statement] = []
    reasons: list[ValueReason] = []
    n = ctx.n_beats
    if n < 2:
        return [make("rhythm.undetermined", detail="fewer than two beats")], reasons
    atrial_paced = _pacing(ctx, out)
    if not atrial_paced:
        out += _atrial_rhythm(ctx)
    out += _premature(ctx)
    return out, reasons


def _pacing(ctx: Context, out: list[Statement]) -> bool:
    """Pacing statements; True when the atria are paced (no atrial rhythm of their own)."""
    n = ctx.n_beats
    vp = ctx.n_ventricular_paced
    at = ctx.m.atrial
    ap = 0 if at is None else at.n_atrial_stimuli
    a_paced = ap >= ATRIAL_STIMULI_MIN and 2 * ap >= n
    v_paced = ctx.m.paced
    vals = [MetValue("ventricular paced beats", vp, ""), MetValue("beats", n, "")]
    if a_paced:
        vals.insert(0, MetValue("beats with an atrial stimulus", ap, ""))
    if v_paced and a_paced:
        out.append(make("rhythm.paced_dual", vals, f"{ap} and {vp} of {n} beats"))
    elif v_paced:
        out.append(make("rhythm.paced_ventricular", vals, f"{vp} of {n} beats paced"))
    elif a_paced:
        out.append(make("rhythm.paced_atrial", vals, f"{ap} of {n} beats"))
    elif vp > 0:
        out.append(make("rhythm.paced_complexes", vals, f"{vp} of {n} beats"))
    return a_paced


def _atrial_rhythm(ctx: Context) -> list[Statement]:
    if ctx.has_p:
        return _with_p(ctx)
    return _without_p(ctx)


def _with_p(ctx: Context) -> list[Statement]:
    pax = ctx.g("p_axis_deg")
    hr = ctx.g("hr_bpm")
    if pax is None or hr is None:
        what = "P axis" if pax is None else "heart rate"
        return [make("rhythm.undetermined", detail=f"P waves present, {what} not measurable")]
    lo, hi = SINUS_P_AXIS_DEG
    upright, where = lo < pax < hi, f"P axis {pax:+.0f}°"
    vals = [MetValue("P axis", pax, "deg"), MetValue("heart rate", hr, "bpm")]
    p_ii = ctx.lv("II", "p_mv")
    limbs = ctx.m.limb_consistency
    if limbs is not None and not limbs.consistent and p_ii is not None and p_ii != 0.0:
        # The P axis rests on limb leads that break Einthoven's relations: read the
        # criterion's own words, the P in lead II, whose sign a lead's gain does not change.
        upright, where = p_ii > 0.0, f"P {p_ii:+.2f} mV in II"
        vals[0] = MetValue("P", p_ii, "mV", "II")
    pr = ctx.g("pr_ms")
    if pr is not None:
        vals.append(MetValue("PR", pr, "ms"))
    if not upright:
        return [make("rhythm.ectopic_atrial", vals, f"P inverted in II ({where})")]
    if hr < BRADYCARDIA_BPM:
        code = "rhythm.sinus_bradycardia"
    elif hr > TACHYCARDIA_BPM:
        code = "rhythm.sinus_tachycardia"
    else:
        code = "rhythm.sinus"
    out = [make(code, vals, f"{hr:.0f} bpm")]
    spread = _dominant_cycle_spread_ms(ctx)
    if spread is not None and spread > SINUS_ARRHYTHMIA_MS:
        out.append(
            make(
                "rhythm.sinus_arrhythmia",
                [MetValue("longest minus shortest cycle", spread, "ms")],
                f"cycles differ by {spread:.0f} ms",
            )
        )
    return out


def _dominant_cycle_spread_ms(ctx: Context) -> float | None:
    beats = ctx.marked.beats
    fs = ctx.marked.fs_hz
    rr = [
        (b.r - a.r) * 1000.0 / fs
        for a, b in itertools.pairwise(beats)
        if a.in_dominant_rhythm and b.in_dominant_rhythm
    ]
    if len(rr) < 2:
        return None
    return shown(max(rr) - min(rr), "ms")


def _without_p(ctx: Context) -> list[Statement]:
    vr = ctx.g("ventricular_rate_bpm")
    at = ctx.m.atrial
    rate_vals = [] if vr is None else [MetValue("ventricular rate", vr, "bpm")]
    rate_text = "" if vr is None else f"ventricular rate {vr:.0f} bpm"
    if at is not None and at.rate_per_min is not None and at.organisation is not None:
        rate = round(at.rate_per_min)
        org = round(at.organisation, 2)
        if flutter_waves(at):
            vals = [
                MetValue("atrial rate", rate, "/min"),
                MetValue("atrial organisation", org * 100.0, "%"),
                *rate_vals,
            ]
            return [make("rhythm.atrial_flutter", vals, f"atrial rate {rate}/min, {rate_text}")]
    if ctx.m.rhythm_irregular:
        vals = [*rate_vals]
        sd = ctx.g("rr_sd_ms")
        if sd is not None:
            vals.append(MetValue("RR SD", sd, "ms"))
        return [make("rhythm.atrial_fibrillation", vals, rate_text)]
    if ctx.m.paced:
        return []  # a regular paced rhythm without P waves: the atrial rhythm is not stated
    qrs = ctx.g("qrs_ms")
    hr = ctx.g("hr_bpm")
    if qrs is not None and hr is not None and qrs < WIDE_QRS_MS and hr <= JUNCTIONAL_MAX_BPM:
        vals = [MetValue("heart rate", hr, "bpm"), MetValue("QRS duration", qrs, "ms")]
        return [make("rhythm.junctional", vals, f"{hr:.0f} bpm, no P wave")]
    detail = "regular, no P wave" + (f", QRS {qrs:.0f} ms" if qrs is not None else "")
    if hr is not None:
        detail += f", {hr:.0f} bpm"
    return [make("rhythm.undetermined", detail=detail)]


def _premature(ctx: Context) -> list[Statement]:
    beats = ctx.marked.beats
    dom = dominant_group(beats)
    per_beat = ctx.m.beats
    atrial = ventricular = other = 0
    af_like = not ctx.has_p
    for i, b in enumerate(beats):
        if b.kind != BeatKind.PREMATURE:
            continue
        qrs = per_beat[i].qrs_ms if i < len(per_beat) else None
        same = dom is not None and b.group == dom
        if same:
            atrial += 0 if af_like else 1
        elif qrs is not None and shown(qrs, "ms") >= WIDE_QRS_MS:
            ventricular += 1
        else:
            other += 1
    n = len(beats)
    out = []
    for code, k in (
        ("rhythm.premature_atrial", atrial),
        ("rhythm.premature_ventricular", ventricular),
        ("rhythm.premature_other", other),
    ):
        if k:
            vals = [MetValue("premature beats", k, ""), MetValue("beats", n, "")]
            out.append(make(code, vals, f"{k} of {n} beats"))
    return out
