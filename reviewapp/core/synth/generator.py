"""Synthetic 12-lead ECG with exact ground truth, from a heart-vector (dipole) model.

Method: the cardiac dipole model with fixed lead vectors (Burger & van Milaan 1946); the heart
vector H(t) in Frank XYZ is built from compact-support lobes (``lobes``), projected onto I, II,
V1-V6 with Dower's transform (Dower et al., Clin Cardiol 1980), and III, aVR, aVL, aVF derived
with Einthoven's and Goldberger's relations (``leads``). Because every lobe is exactly zero
outside its support, each wave's first and last non-zero samples are known by construction
(``truth``), and the intervals and frontal axes asked for are realised to the sample and to
floating-point precision respectively.

Example:
    >>> syn = generate(SynthParams(hr_bpm=75, qt_ms=420, duration_s=4))
    >>> syn.truth.qt_ms, syn.truth.hr_bpm, syn.record.n_leads
    (420.0, 75.0, 12)
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from typing import Any

import numpy as np

from reviewapp.core.fiducials import BeatKind, WaveMarks
from reviewapp.core.record import Record, SubjectFacts, record_from_array
from reviewapp.core.synth import noise, templates
from reviewapp.core.synth.leads import (
    axis_of_area,
    complete_leads,
    dower_legacy_axis,
    frontal_rotation_for_axis,
    project_independent,
    rotation_z,
)
from reviewapp.core.synth.lobes import Lobe, render_wave, wave_area_vector
from reviewapp.core.synth.params import SynthParams
from reviewapp.core.synth.truth import BeatTruth, GroundTruth

# Premature ventricular beats (common practice, no source): QRS at least 150 ms, coupling
# interval 62 % of the preceding RR, and never before the previous T has ended + 40 ms.
ECTOPIC_QRS_MIN_MS = 150.0
ECTOPIC_COUPLING = 0.62
ECTOPIC_GAP_MS = 40.0
# Where the first beat's first wave starts.
FIRST_ONSET_S = 0.12


@dataclass(frozen=True, eq=False)
class SyntheticECG:
    """A generated record, its exact truth, the parameters, and the noise-free signal."""

    record: Record
    truth: GroundTruth
    params: SynthParams
    clean_mv: np.ndarray  # (n_samples, n_leads) float64, noise-free, in record lead order

    def params_dict(self) -> dict[str, Any]:
        d = asdict(self.params)
        d["ectopic_beats"] = list(self.params.ectopic_beats)
        d["lead_names"] = list(self.params.lead_names)
        # Truth files written before limb_leads existed were all made with Dower's limb rows:
        # an absent key means "dower", so it is written only for the Einthoven projection.
        if d["limb_leads"] == "dower":
            del d["limb_leads"]
        return d


@dataclass(frozen=True)
class _Plan:
    """One beat's wave placement in samples (non-zero ranges, inclusive)."""

    kind: BeatKind
    p: tuple[int, int] | None
    qrs: tuple[int, int]
    t: tuple[int, int]
    qt_samples: int

    @property
    def first(self) -> int:
        return self.p[0] if self.p is not None else self.qrs[0]


def _samples(ms: float, fs_hz: float) -> int:
    return round(ms * fs_hz / 1000.0)


def _rr_sequence(
    p: SynthParams, n_events: int, rr_min: float, rng: np.random.Generator
) -> np.ndarray:
    """Sinus-node (or AF ventricular) cycle lengths in whole samples."""
    mean = 60.0 * p.fs_hz / p.hr_bpm
    if p.af:
        if p.rr_sd_ms > 0:
            cv = p.rr_sd_ms / (60000.0 / p.hr_bpm)
        else:
            cv = p.af_rr_cv
        sigma = math.sqrt(math.log1p(cv * cv))
        rr = mean * np.exp(sigma * rng.standard_normal(n_events) - sigma * sigma / 2.0)
    elif p.rr_sd_ms > 0:
        rr = mean + p.rr_sd_ms * p.fs_hz / 1000.0 * rng.standard_normal(n_events)
    else:
        rr = np.full(n_events, mean)
    return np.round(np.clip(rr, rr_min, max(2.0 * mean, rr_min + 1))).astype(np.int64)


def _qt_for(p: SynthParams, rr_samples: float) -> int:
    if not p.qt_rate_adapt:
        return _samples(p.qt_ms, p.fs_hz)
    # Fridericia (1920): QT = QTc * RR_s ** (1/3).
    return _samples(p.qt_ms * (rr_samples / p.fs_hz) ** (1.0 / 3.0), p.fs_hz)


def _t_range(qrs_on: int, qrs_off: int, qt: int) -> tuple[int, int]:
    t_off = qrs_on + qt
    t_len = round(templates.T_FRACTION_OF_JT * (t_off - qrs_off))
    return t_off - t_len, t_off


def _plan_beats(p: SynthParams, n: int, rng: np.random.Generator) -> list[_Plan]:
    fs = p.fs_hz
    pr = 0 if p.af else _samples(p.pr_ms, fs)
    p_len = 0 if p.af else _samples(p.p_ms, fs)
    qrs = _samples(p.qrs_ms, fs)
    qrs_e = _samples(max(ECTOPIC_QRS_MIN_MS, p.qrs_ms + 30.0), fs)
    gap = _samples(ECTOPIC_GAP_MS, fs)
    mean_rr = 60.0 * fs / p.hr_bpm
    qt_worst = _qt_for(p, 2.0 * mean_rr)
    # The next beat's first wave must start after this beat's T (one zero sample between).
    rr_min = float(qt_worst + pr + 2) if not p.af else float(qt_worst + gap)
    if not p.af and p.rr_sd_ms == 0 and round(mean_rr) < rr_min:
        raise ValueError(
            f"at hr_bpm={p.hr_bpm} the T wave (qt_ms={p.qt_ms}) runs into the next P wave "
            f"(pr_ms={p.pr_ms}); lower hr_bpm, qt_ms or pr_ms"
        )
    n_events = int(n / max(rr_min, 1.0)) + 4
    rr = _rr_sequence(p, n_events, rr_min, rng)
    first_qrs = _samples(FIRST_ONSET_S * 1000.0, fs) + pr
    sinus_on = first_qrs + np.concatenate([[0], np.cumsum(rr)])
    ectopic = set(int(i) for i in p.ectopic_beats)

    plans: list[_Plan] = []
    k = 0
    while k < len(sinus_on):
        prev = plans[-1] if plans else None
        if prev is not None and len(plans) in ectopic:
            prev_rr = prev.qrs[0] - plans[-2].qrs[0] if len(plans) > 1 else mean_rr
            on = prev.qrs[0] + max(round(ECTOPIC_COUPLING * prev_rr), prev.qt_samples + gap)
            qt = _qt_for(p, on - prev.qrs[0]) + (qrs_e - qrs)
            plan = _Plan(
                BeatKind.PREMATURE, None, (on, on + qrs_e), _t_range(on, on + qrs_e, qt), qt
            )
            # Sinus impulses that would fire before this beat has ended are hidden / blocked:
            # a full compensatory pause.
            while k < len(sinus_on) and sinus_on[k] - pr <= plan.t[1] + 1:
                k += 1
        else:
            on = int(sinus_on[k])
            k += 1
            rr_before = on - prev.qrs[0] if prev is not None else mean_rr
            qt = _qt_for(p, rr_before)
            p_rng = None if p.af else (on - pr, on - pr + p_len)
            plan = _Plan(BeatKind.DOMINANT, p_rng, (on, on + qrs), _t_range(on, on + qrs, qt), qt)
        if plan.t[1] + 2 > n:
            break
        plans.append(plan)
    missing = sorted(i for i in ectopic if i >= len(plans))
    if missing:
        raise ValueError(
            f"ectopic_beats {missing} lie beyond the {len(plans)} beats that fit in "
            f"{p.duration_s} s"
        )
    return plans


def _peak(heart: np.ndarray, lo: int, hi: int) -> int:
    return lo + int(np.argmax(np.linalg.norm(heart[lo : hi + 1], axis=1)))


def _scaled(lobes: tuple[Lobe, ...], size: float) -> tuple[Lobe, ...]:
    return tuple(
        Lobe(
            lb.start_frac,
            lb.stop_frac,
            tuple(size * v for v in lb.vector),  # type: ignore[arg-type]
            lb.shape,
            lb.peak_frac,
        )
        for lb in lobes
    )


def _r6(x: float) -> float:
    # Realised values are rounded to 1e-6 so that their JSON text does not depend on the last
    # bit of platform maths (the demo files must regenerate identically).
    return round(float(x), 6)


def _frontal_deg(v: np.ndarray) -> float:
    return math.degrees(math.atan2(float(v[1]), float(v[0])))


def generate(
    params: SynthParams | None = None,
    *,
    name: str = "synthetic",
    subject: SubjectFacts | None = None,
) -> SyntheticECG:
    """Generate a synthetic ECG with exact ground truth (see module docstring).

    Args:
        params: what to generate (defaults: 60 bpm sinus rhythm, 10 s, 500 Hz, 12 leads).
        name: record name.
        subject: subject facts to attach to the record (demo data).

    Raises:
        ValueError: the parameters cannot be realised (e.g. T running into the next P).
    """
    p = params or SynthParams()
    fs = p.fs_hz
    n = round(p.duration_s * fs)
    rr_rng, wander_rng, mains_rng, emg_rng, f_rng = (
        np.random.default_rng(s) for s in np.random.SeedSequence(p.seed).spawn(5)
    )
    plans = _plan_beats(p, n, rr_rng)
    if not plans:
        raise ValueError(f"no complete beat fits in duration_s={p.duration_s}")

    qrs_tpl = _scaled(templates.QRS_WIDE if p.wide_qrs else templates.QRS_NARROW, p.r_amp_mv)
    t_tpl = _scaled(templates.T_WIDE if p.wide_qrs else templates.T_WAVE, p.t_amp_mv)
    p_tpl = _scaled(templates.P_WAVE, p.p_amp_mv)
    eqrs_tpl = _scaled(templates.QRS_ECTOPIC, 1.4 * p.r_amp_mv)
    et_tpl = _scaled(templates.T_ECTOPIC, 1.3 * p.t_amp_mv)

    dom = (
        next(pl for pl in plans if pl.kind is BeatKind.DOMINANT)
        if any(pl.kind is BeatKind.DOMINANT for pl in plans)
        else None
    )

    def oriented(tpl: tuple[Lobe, ...], n_nonzero: int, axis_deg: float) -> np.ndarray:
        area = wave_area_vector(tpl, n_nonzero, np.eye(3))
        return rotation_z(frontal_rotation_for_axis(area, axis_deg, p.limb_leads))

    qrs_n = _samples(p.qrs_ms, fs) + 1
    rot_qrs = oriented(qrs_tpl, qrs_n, p.qrs_axis_deg)
    t_n = (dom.t[1] - dom.t[0] + 1) if dom else 2
    rot_t = oriented(t_tpl, t_n, p.t_axis_deg)
    rot_p = None if p.af else oriented(p_tpl, _samples(p.p_ms, fs) + 1, p.p_axis_deg)
    # Ectopic focus: main force about 150 deg away from the sinus QRS axis; its T opposite.
    rot_eq = rotation_z(math.radians(p.qrs_axis_deg - 150.0))
    rot_et = rotation_z(math.radians(p.qrs_axis_deg + 30.0))

    heart = np.zeros((n, 3))
    for pl in plans:
        if pl.kind is BeatKind.DOMINANT:
            if pl.p is not None and rot_p is not None:
                render_wave(heart, p_tpl, *pl.p, rot_p)
            render_wave(heart, qrs_tpl, *pl.qrs, rot_qrs)
            render_wave(heart, t_tpl, *pl.t, rot_t)
        else:
            render_wave(heart, eqrs_tpl, *pl.qrs, rot_eq)
            render_wave(heart, et_tpl, *pl.t, rot_et)

    beats = []
    for i, pl in enumerate(plans):
        r = _peak(heart, *pl.qrs)
        marks = WaveMarks(
            p_on=None if pl.p is None else pl.p[0],
            p_off=None if pl.p is None else pl.p[1],
            qrs_on=pl.qrs[0],
            qrs_off=pl.qrs[1],
            t_off=pl.t[1],
            p_peak=None if pl.p is None else _peak(heart, *pl.p),
            r_peak=r,
            t_peak=_peak(heart, *pl.t),
        )
        beats.append((r, pl, marks, i))
    rs = np.array([b[0] for b in beats], dtype=np.float64)
    rr_ms = np.diff(rs) * 1000.0 / fs
    beat_truths = tuple(
        BeatTruth(
            r=r,
            kind=pl.kind,
            marks=marks,
            t_on=pl.t[0],
            qt_ms=pl.qt_samples * 1000.0 / fs,
            rr_before_ms=None if i == 0 else float(rr_ms[i - 1]),
        )
        for r, pl, marks, i in beats
    )

    def dipole_axis(lo: int, hi: int) -> float:
        return _frontal_deg(heart[lo : hi + 1].sum(axis=0))

    def truth_axis(lo: int, hi: int) -> float:
        # From the generating dipole, not from the leads (the hexaxial axis the Einthoven
        # limb leads show); the legacy Dower projection keeps its recorded definition.
        area = heart[lo : hi + 1].sum(axis=0)
        return dower_legacy_axis(area) if p.limb_leads == "dower" else axis_of_area(area)

    if p.af and p.f_wave_mv > 0:
        heart = heart + noise.fibrillatory_waves(n, fs, p.f_wave_mv, f_rng)
    clean_indep = project_independent(heart, p.limb_leads)
    indep = clean_indep.copy()
    if p.baseline_wander_mv > 0:
        indep += noise.baseline_wander(n, fs, 8, p.baseline_wander_mv, wander_rng)
    if p.mains_hz is not None and p.mains_mv > 0:
        indep += noise.mains(n, fs, 8, p.mains_hz, p.mains_mv, mains_rng)
    snr = None
    if p.emg_snr_db is not None:
        emg = noise.emg(clean_indep, fs, p.emg_snr_db, emg_rng)
        indep += emg
        emg_leads = complete_leads(emg, np.zeros_like(heart))
        clean_all = complete_leads(clean_indep, heart)
        snr = tuple(
            _r6(10.0 * np.log10(np.mean(clean_all[nm] ** 2) / np.mean(emg_leads[nm] ** 2)))
            if np.mean(emg_leads[nm] ** 2) > 0
            else math.inf
            for nm in p.lead_names
        )

    noisy_all = complete_leads(indep, heart)
    clean_all = complete_leads(clean_indep, heart)
    signal = np.stack([noisy_all[nm] for nm in p.lead_names], axis=1)
    clean = np.stack([clean_all[nm] for nm in p.lead_names], axis=1)
    record = record_from_array(
        signal,
        fs,
        p.lead_names,
        name=name,
        source_format="synthetic",
        subject=subject,
        derive_limb_leads=False,
    )

    doms = [b for b in beat_truths if b.kind is BeatKind.DOMINANT]
    ref = doms[0] if doms else beat_truths[0]
    ref_m = ref.marks

    def med(values: list[int]) -> float:
        return float(np.median(values)) * 1000.0 / fs

    pool = doms or list(beat_truths)
    mean_rr = float(np.mean(rr_ms)) if len(rr_ms) else 60000.0 / p.hr_bpm
    truth = GroundTruth(
        fs_hz=fs,
        n_samples=n,
        lead_names=tuple(p.lead_names),
        rhythm="af" if p.af else "sinus",
        beats=beat_truths,
        pr_ms=None if p.af else med([b.marks.qrs_on - b.marks.p_on for b in doms]),
        p_ms=None if p.af else med([b.marks.p_off - b.marks.p_on for b in doms]),
        qrs_ms=med([b.marks.qrs_off - b.marks.qrs_on for b in pool]),
        qt_ms=med([b.marks.t_off - b.marks.qrs_on for b in pool]),
        rr_ms=_r6(mean_rr),
        rr_sd_ms=_r6(np.std(rr_ms)) if len(rr_ms) > 1 else 0.0,
        hr_bpm=_r6(60000.0 / mean_rr),
        qrs_axis_deg=_r6(truth_axis(ref_m.qrs_on, ref_m.qrs_off)),
        p_axis_deg=None if ref_m.p_on is None else _r6(truth_axis(ref_m.p_on, ref_m.p_off)),
        t_axis_deg=_r6(truth_axis(ref.t_on, ref_m.t_off)),
        qrs_dipole_axis_deg=_r6(dipole_axis(ref_m.qrs_on, ref_m.qrs_off)),
        p_dipole_axis_deg=None if ref_m.p_on is None else _r6(dipole_axis(ref_m.p_on, ref_m.p_off)),
        t_dipole_axis_deg=_r6(dipole_axis(ref.t_on, ref_m.t_off)),
        emg_snr_db=snr,
    )
    return SyntheticECG(record=record, truth=truth, params=p, clean_mv=clean)
