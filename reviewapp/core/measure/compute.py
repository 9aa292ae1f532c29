"""``compute_measurements``: every measured value, as a pure function of a ``MarkedECG``.

Runs on every mark drag, so it touches only the representative-beat window (a second or so of
12 leads) and the beat/mark lists; nothing here reads the whole record signal.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace

import numpy as np

from reviewapp.core.fiducials import FIDUCIAL_LABELS, Beat, BeatKind, MarkedECG, WaveMarks
from reviewapp.core.measure.amplitudes import (
    cornell_mv,
    isoelectric_levels,
    lead_measurements,
    peguero_mv,
    sokolow_lyon_mv,
)
from reviewapp.core.measure.atrial_activity import atrial_activity, flutter_waves
from reviewapp.core.measure.axes import LIMB_LEADS, frontal_axis
from reviewapp.core.measure.findings import (
    WIDE_QRS_MS,
    displayed,
    infarct_criteria_skipped,
    paced_criteria_skipped,
)
from reviewapp.core.measure.intervals import (
    INTERVAL_MARKS,
    beat_intervals,
    interval_reason,
    rr_statistics,
    span_ms,
)
from reviewapp.core.measure.limb_consistency import FRONTAL_QUANTITIES, limb_consistency
from reviewapp.core.measure.limits import QTC_QUANTITIES
from reviewapp.core.measure.morphology import p_part, qrs_part, t_part
from reviewapp.core.measure.preexcitation import is_preexcited
from reviewapp.core.measure.qt_wide_qrs import jt_ms, jtc_bazett, qt_bogossian
from reviewapp.core.measure.qtc import QTC_FORMULAS
from reviewapp.core.measure.types import (
    AtrialActivity,
    GlobalIntervals,
    LeadMeasurements,
    Measurements,
    ValueReason,
)

# Common practice, no source: with RR varying beat to beat, no single RR makes the QT
# correction right for the QT it is applied to.
IRREGULAR_NOTE = "irregular rhythm: RR-based QTc correction is unreliable"

# Wave -> (start mark, end mark) for the axis net areas. T: from QRS end (J) to T end, i.e.
# the whole ST-T, since the T onset is not a mark.
_AXIS_WAVES: tuple[tuple[str, str, str], ...] = (
    ("p_axis_deg", "p_on", "p_off"),
    ("qrs_axis_deg", "qrs_on", "qrs_off"),
    ("t_axis_deg", "qrs_off", "t_off"),
)


def ventricular_rate_bpm(beats: tuple[Beat, ...], fs_hz: float) -> float | None:
    """Rate of every QRS, premature and ectopic beats included: (beats - 1) intervals over
    the time from the first to the last R. Heart rate (``hr_bpm``) is the dominant rhythm's.

    >>> ventricular_rate_bpm((Beat(0), Beat(400), Beat(700), Beat(1000)), 500.0)
    90.0
    """
    if len(beats) < 2:
        return None
    span_s = (beats[-1].r - beats[0].r) / fs_hz
    return 60.0 * (len(beats) - 1) / span_s if span_s > 0 else None


def compute_measurements(marked: MarkedECG) -> Measurements:
    """Intervals, QTc, axes, per-lead amplitudes and ST levels, voltages, beat-by-beat values.

    Global intervals use the representative beat's global marks; RR and heart rate use the
    consecutive dominant beats, or every beat in an irregular rhythm (see ``rr_from_beats``).
    Anything not measurable is None and appears in ``Measurements.unmeasured`` with the
    reason; remarks (irregular rhythm, ST/Q criteria not applied) go to ``notes``.
    """
    fs = float(marked.fs_hz)
    unmeasured: list[tuple[str, str]] = []
    g: dict[str, float | None] = {}

    rep = marked.representative
    has_p = rep is None or rep.marks.p_on is not None
    rr = rr_statistics(marked.beats, fs, has_p)
    notes: list[str] = []
    if rr.irregular:
        notes.append(IRREGULAR_NOTE)
    g["rr_ms"], g["rr_sd_ms"] = rr.mean_ms, rr.sd_ms
    g["hr_bpm"] = 60000.0 / rr.mean_ms if rr.mean_ms else None
    g["ventricular_rate_bpm"] = ventricular_rate_bpm(marked.beats, fs)
    if g["ventricular_rate_bpm"] is None:
        unmeasured.append(("ventricular_rate_bpm", "fewer than two beats"))
    if rr.mean_ms is None:
        unmeasured += [("rr_ms", rr.basis), ("hr_bpm", rr.basis)]
    elif rr.sd_ms is None:
        unmeasured.append(("rr_sd_ms", "a single RR interval"))

    marks = rep.marks if rep is not None else WaveMarks()
    for field, first, second in INTERVAL_MARKS:
        g[field] = span_ms(marks.get(first), marks.get(second), fs)
        if g[field] is None:
            why = "no representative beat" if rep is None else interval_reason(marks, first, second)
            unmeasured.append((field, why))

    qt, rr_ms = g["qt_ms"], g["rr_ms"]
    for name, formula in QTC_FORMULAS.items():
        key = f"qtc_{name}_ms"
        if qt is not None and rr_ms is not None and rr_ms > 0:
            g[key] = formula(qt, rr_ms)
        else:
            g[key] = None
            unmeasured.append((key, "no QT" if qt is None else "no RR"))
    g.update(_wide_qrs_measures(qt, g["qrs_ms"], rr_ms, unmeasured))
    paced = _mostly_paced(marked)
    gated: list[ValueReason] = []

    leads: list[LeadMeasurements] = []
    atrial = atrial_activity(marked)
    if rep is None:
        for key, *_ in _AXIS_WAVES:
            g[key] = None
            unmeasured.append((key, "no representative beat"))
        unmeasured.append(("leads", "no representative beat"))
    else:
        wave = np.asarray(rep.waveform_mv)
        lead_marks = rep.lead_marks
        bases = None
        if marks.qrs_on is not None and 0 < marks.qrs_on <= wave.shape[0]:
            bases = isoelectric_levels(wave, marks.qrs_on, marks.p_off, fs)
        for i, name in enumerate(marked.lead_names):
            usable = marked.usable[i] if i < len(marked.usable) else False
            if not usable:
                leads.append(LeadMeasurements(lead=name))
                unmeasured.append((name, f"lead {name} flat, missing or invalid"))
                continue
            own = lead_marks[i] if i < len(lead_marks) else None
            base = None if bases is None else float(bases[i])
            shapes = None if base is None else _shapes(wave, i, base, marks, own, rep, fs)
            m, lead_why = lead_measurements(name, wave[:, i], marks, own, fs, base, shapes)
            leads.append(m)
            unmeasured += lead_why
        g.update(_axes(marked, wave, marks, bases, unmeasured))
        if marks.p_on is None and marks.qrs_on is not None:
            leads = _st_without_p_wave(leads, wave, marks.qrs_on, fs, atrial, unmeasured)
            if any(m.st_j_mv is not None for m in leads):
                gated.append(ValueReason("st_j_mv", "caution", ST_WITHOUT_P_WAVE))

    g["qrs_t_angle_deg"] = qrs_t_angle(g.get("qrs_axis_deg"), g.get("t_axis_deg"))
    if g["qrs_t_angle_deg"] is None:
        unmeasured.append(("qrs_t_angle_deg", "needs the QRS and T axes"))
    pre_excited = is_preexcited(GlobalIntervals(pr_ms=g["pr_ms"]), leads, paced)
    reasons = _qtc_comparability(g["qrs_ms"], paced, g, pre_excited)
    if rr.irregular and rr.cv is not None:
        caution = QTC_IRREGULAR_CAUTION.format(cv=100.0 * rr.cv)
        rate_corrected = (*QTC_QUANTITIES, "jtc_bazett_ms")
        reasons += [
            ValueReason(k, "caution", caution) for k in rate_corrected if g.get(k) is not None
        ]
    reasons += gated
    limbs = limb_consistency(marked)
    if limbs is not None and not limbs.consistent:
        why = limbs.axis_caution()
        reasons += [
            ValueReason(k, "caution", why) for k in FRONTAL_QUANTITIES if g.get(k) is not None
        ]

    by_name = {m.lead: m for m in leads}
    sokolow = sokolow_lyon_mv(by_name.get("V1"), by_name.get("V5"), by_name.get("V6"))
    if sokolow is None:
        unmeasured.append(("sokolow_lyon_mv", "needs S in V1 and R in V5 or V6"))
    cornell = cornell_mv(by_name.get("aVL"), by_name.get("V3"))
    if cornell is None:
        unmeasured.append(("cornell_mv", "needs R in aVL and S in V3"))

    peguero = peguero_mv(leads)
    if peguero is None:
        unmeasured.append(("peguero_mv", "needs S in V4 and the QRS of the other leads"))
    product = None
    if cornell is not None and g["qrs_ms"] is not None:
        product = cornell * 10.0 * g["qrs_ms"]  # mm at 10 mm/mV x ms
    else:
        unmeasured.append(("cornell_product_mm_ms", "needs the Cornell voltage and QRS"))

    out = Measurements(
        intervals=GlobalIntervals(**g),
        leads=tuple(leads),
        beats=beat_intervals(marked.beats, marked.beat_marks, fs),
        sokolow_lyon_mv=sokolow,
        cornell_mv=cornell,
        peguero_mv=peguero,
        cornell_product_mm_ms=product,
        unmeasured=tuple(unmeasured),
        rhythm_irregular=rr.irregular,
        paced=paced,
        pre_excitation=pre_excited,
        atrial=atrial,
        reasons=tuple(reasons),
        limb_consistency=limbs,
    )
    for skipped in (paced_criteria_skipped(out), infarct_criteria_skipped(out)):
        if skipped is not None:
            notes.append(skipped)
    return replace(out, notes=tuple(notes))


# Reason texts (shown to the reader beside the values on screen, page and CSV, so each is
# short and names its source): "<what>: <cause>; <what to read instead> (<source>)".
QTC_NOT_COMPARABLE_WIDE = (
    "QTc not comparable with the QTc limits: QRS >= 120 ms, the QT holds the prolonged "
    "depolarisation; read JT, JTc and the QRS-adjusted QT (Rautaharju et al., Circulation "
    "2009; Bogossian et al., Heart Rhythm 2014)"
)
QTC_NOT_COMPARABLE_PREEXCITED = (
    "QTc not comparable with the QTc limits: ventricular pre-excitation, the delta wave "
    "widens the QRS and alters repolarisation; read JT, JTc and the QRS-adjusted QT "
    "(Surawicz et al., Circulation 2009; Rautaharju et al., Circulation 2009)"
)
QTC_NOT_COMPARABLE_PACED = (
    "QTc not comparable with the QTc limits: paced rhythm, the paced QRS is wide; read JT, "
    "JTc and the QRS-adjusted QT (Rautaharju et al., Circulation 2009; Bogossian et al., "
    "Heart Rhythm 2014)"
)
# Without a P wave there is no PR segment. The level just before QRS onset in the median
# beat still serves where the atrial waves are fibrillatory: they are not locked to the QRS
# and average out in the median beat. Checked against the TP segment, the classic baseline
# without a P wave (common practice, no source), on LUDB's atrial fibrillation records
# (tests/measure/test_ludb_st_without_p.py: ST at J 4.1 ± 15.0 µV from the TP segment's
# level). Flutter waves (``atrial_activity.flutter_waves``, the flutter statement's
# criterion) are locked to the QRS and run through the ST segment: no ST there. A lead whose
# median still moves by PRE_QRS_STEADY_MV or more over the PRE_QRS_STEADY_MS before QRS onset
# has no level either; 0.1 mV is the step of the ST criteria (Thygesen K et al., Circulation
# 2018). LUDB's fibrillation records move by at most 0.071 mV there (record 101).
PRE_QRS_STEADY_MS = 80.0
PRE_QRS_STEADY_MV = 0.1
ST_WITHOUT_P_WAVE = (
    "ST levels referred to the level just before QRS onset: no P wave, so no PR segment; "
    "in the median beat of an irregular rhythm the atrial waves average out there"
)
ST_FLUTTER_WAVES = (
    "ST not assessed: no P wave, and flutter waves ({rate:.0f}/min) run through the ST "
    "segment and the level before QRS onset"
)
ST_NO_LEVEL_IN_WINDOW = (
    "ST not assessed: no P wave, and the beat window starts too close to QRS onset"
)
ST_UNSTEADY_BEFORE_QRS = (
    "ST not assessed: no P wave, and the median beat moves by {ptp:.2f} mV in the "
    "{ms:.0f} ms before QRS onset (atrial waves), so there is no level to refer ST to"
)
# With RR varying beat to beat no single RR corrects the QT it is applied to. Sources, read
# as abstracts: Darbar D et al., J Cardiovasc Electrophysiol 2007;18:636-641 ("cycle length
# variability during AF makes rate-corrected QT impossible to calculate"); Musat DL et al.,
# Am J Cardiol 2013;112:1379-1383 (Bazett overestimates QTc during AF). The threshold that
# calls a rhythm irregular (``IRREGULAR_RR_CV``) is ours and is not stated as a criterion.
QTC_IRREGULAR_CAUTION = (
    "QTc less reliable: irregular rhythm, RR varies {cv:.0f} % beat to beat, so no single RR "
    "corrects the QT (Darbar et al., J Cardiovasc Electrophysiol 2007; Musat et al., Am J "
    "Cardiol 2013)"
)


def _wide_qrs_measures(
    qt: float | None, qrs: float | None, rr_ms: float | None, unmeasured: list[tuple[str, str]]
) -> dict[str, float | None]:
    """JT, JTc (Bazett) and the Bogossian QRS-adjusted QT (``qt_wide_qrs``), None with a
    reason where QT, QRS or RR is missing."""
    out: dict[str, float | None] = dict.fromkeys(("jt_ms", "jtc_bazett_ms", "qt_bogossian_ms"))
    if qt is None or qrs is None:
        why = "no QT" if qt is None else "no QRS duration"
        unmeasured += [(k, why) for k in out]
        return out
    out["jt_ms"] = jt_ms(qt, qrs)
    out["qt_bogossian_ms"] = qt_bogossian(qt, qrs)
    if rr_ms is not None and rr_ms > 0:
        out["jtc_bazett_ms"] = jtc_bazett(qt, qrs, rr_ms)
    else:
        unmeasured.append(("jtc_bazett_ms", "no RR"))
    return out


def _qtc_comparability(
    qrs: float | None, paced: bool, g: dict[str, float | None], pre_excited: bool = False
) -> list[ValueReason]:
    """QTc values marked not comparable with their limits for a wide, paced or pre-excited
    QRS (the QTc is still shown). QRS judged as displayed (whole ms), like the findings."""
    if paced:
        text = QTC_NOT_COMPARABLE_PACED
    elif pre_excited:
        text = QTC_NOT_COMPARABLE_PREEXCITED
    elif qrs is not None and displayed(qrs, "ms") >= WIDE_QRS_MS:
        text = QTC_NOT_COMPARABLE_WIDE
    else:
        return []
    return [ValueReason(k, "not_comparable", text) for k in QTC_QUANTITIES if g.get(k) is not None]


def _st_without_p_wave(
    leads: list[LeadMeasurements],
    wave: np.ndarray,
    qrs_on: int,
    fs: float,
    atrial: AtrialActivity | None,
    unmeasured: list[tuple[str, str]],
) -> list[LeadMeasurements]:
    """In a rhythm without P waves, ST levels removed from every lead when the atrial
    activity is flutter waves (``ST_FLUTTER_WAVES``), else from each lead whose median beat
    is not steady before QRS onset (``ST_UNSTEADY_BEFORE_QRS``); the others stay, referred to
    the level just before QRS onset (``ST_WITHOUT_P_WAVE``)."""
    flutter = flutter_waves(atrial)
    n = round(PRE_QRS_STEADY_MS * fs / 1000.0)
    before = wave[max(0, qrs_on - n) : qrs_on]
    out = []
    for i, m in enumerate(leads):
        if m.st_j_mv is None and m.st_j60_mv is None and m.st_j80_mv is None:
            out.append(m)
            continue
        seg = before[:, i]  # leads and the window's columns are the record's leads, in order
        ptp = float(np.ptp(seg)) if seg.size >= max(1, n // 2) else None
        if not flutter and ptp is not None and ptp < PRE_QRS_STEADY_MV:
            out.append(m)
            continue
        out.append(replace(m, st_j_mv=None, st_j60_mv=None, st_j80_mv=None))
        if flutter:
            assert atrial is not None and atrial.rate_per_min is not None
            why = ST_FLUTTER_WAVES.format(rate=atrial.rate_per_min)
        elif ptp is None:
            why = ST_NO_LEVEL_IN_WINDOW
        else:
            why = ST_UNSTEADY_BEFORE_QRS.format(ptp=ptp, ms=PRE_QRS_STEADY_MS)
        unmeasured.append((f"{m.lead}.st", why))
    return out


def qrs_t_angle(qrs_axis: float | None, t_axis: float | None) -> float | None:
    """The frontal QRS-T angle: the absolute difference of the two axes, folded to 0..180.

    >>> qrs_t_angle(60.0, 40.0), qrs_t_angle(-150.0, 150.0), qrs_t_angle(None, 40.0)
    (20.0, 60.0, None)
    """
    if qrs_axis is None or t_axis is None:
        return None
    d = abs(qrs_axis - t_axis) % 360.0
    return 360.0 - d if d > 180.0 else d


def _next_beat_start(rep: object, marks: WaveMarks) -> int | None:
    """The representative window index where the next beat starts (its P onset, else its
    QRS onset), one median RR after this beat's."""
    rr = getattr(rep, "rr_samples", None)
    first = marks.p_on if marks.p_on is not None else marks.qrs_on
    return None if rr is None or first is None else first + int(rr)


# Wave shapes of the last readings, by part: a mark drag changes one part of one or a few
# leads (a T end moves the T part only), so the others are reused, keeping a drag's
# recomputation near what it was before the shapes were measured. Keyed on the window's
# array (kept with the result, so a reused id never matches) and every index a part reads.
Shape = dict[str, float | bool | str | None]
_SHAPES: dict[tuple[object, ...], tuple[np.ndarray, Shape]] = {}


def _cached_part(wave: np.ndarray, key: tuple[object, ...], make: Callable[[], Shape]) -> Shape:
    k = (id(wave), *key)
    hit = _SHAPES.get(k)
    if hit is not None and hit[0] is wave:
        return hit[1]
    out = make()
    if len(_SHAPES) > 4000:
        _SHAPES.clear()
    _SHAPES[k] = (wave, out)
    return out


def _shapes(
    wave: np.ndarray,
    i: int,
    base: float,
    marks: WaveMarks,
    own: WaveMarks | None,
    rep: object,
    fs: float,
) -> Shape:
    def pick(name: str) -> int | None:
        v = own.get(name) if own is not None else None
        return marks.get(name) if v is None else v

    y: list[np.ndarray] = []

    def lead() -> np.ndarray:
        if not y:
            y.append(np.asarray(wave[:, i], dtype=np.float64) - base)
        return y[0]

    g = (marks.qrs_on, marks.qrs_off)
    q = (pick("qrs_on"), pick("qrs_off"))
    p = (pick("p_on"), pick("p_off"))
    t_off, stop = pick("t_off"), _next_beat_start(rep, marks)
    return {
        **_cached_part(wave, ("qrs", i, base, fs, g, q), lambda: qrs_part(lead(), g, q, fs)),
        **_cached_part(wave, ("p", i, base, fs, p), lambda: p_part(lead(), p, fs)),
        **_cached_part(
            wave,
            ("t", i, base, fs, q[1], t_off, stop),
            lambda: t_part(lead(), q[1], t_off, stop, fs),
        ),
    }


def _mostly_paced(marked: MarkedECG) -> bool:
    """More than half of the beats are labelled paced."""
    n = len(marked.beats)
    return n > 0 and sum(b.kind == BeatKind.PACED for b in marked.beats) * 2 > n


def _axes(
    marked: MarkedECG,
    wave: np.ndarray,
    marks: WaveMarks,
    bases: np.ndarray | None,
    unmeasured: list[tuple[str, str]],
) -> dict[str, float | None]:
    fs = float(marked.fs_hz)
    cols = {
        name: i
        for i, name in enumerate(marked.lead_names)
        if name in LIMB_LEADS and i < len(marked.usable) and marked.usable[i]
    }
    out: dict[str, float | None] = {}
    idx = list(cols.values())
    base = None if bases is None else bases[idx]
    for key, first, second in _AXIS_WAVES:
        a, b = marks.get(first), marks.get(second)
        if len(cols) < 2:
            out[key] = None
            unmeasured.append((key, "fewer than two usable limb leads"))
            continue
        if base is None or a is None or b is None or b <= a or b >= wave.shape[0] or a < 0:
            out[key] = None
            unmeasured.append(
                (key, f"no {FIDUCIAL_LABELS[first]} / {FIDUCIAL_LABELS[second]} marks")
            )
            continue
        seg = wave[a : b + 1, idx].astype(np.float64) - base[None, :]
        net = seg.sum(axis=0) / fs  # mV*s
        out[key] = frontal_axis(dict(zip(cols, net.tolist(), strict=True)))
        if out[key] is None:
            unmeasured.append((key, "indeterminate: net area near zero"))
    return out
