"""Parameters of one synthetic ECG (all units in the field names)."""

from __future__ import annotations

from dataclasses import dataclass

from reviewapp.core.record import STANDARD_12


@dataclass(frozen=True)
class SynthParams:
    """What to generate. Intervals are the realised ones, rounded to whole samples.

    Timing (ms): ``pr_ms`` P onset to QRS onset, ``p_ms`` P onset to P end, ``qrs_ms`` QRS
    onset to QRS end, ``qt_ms`` QRS onset to T end; each measured between first and last
    non-zero samples, so e.g. qrs_ms=90 at 500 Hz gives QRS on/off 45 samples apart.

    Axes (deg, hexaxial: lead I at 0, aVF at +90): the frontal angle of the generating
    dipole's net area over the wave, which the Einthoven limb leads (``leads``) show as the
    hexaxial axis.

    Amplitudes (mV): size of the main heart-vector lobe of the R, P and T waves (dipole units;
    lead amplitudes follow from the lead vectors).

    Rhythm: ``hr_bpm`` mean rate; ``rr_sd_ms`` beat-to-beat RR standard deviation (sinus);
    ``ectopic_beats`` indices (0-based, in beat order, >= 1) of beats replaced by premature
    wide ventricular beats with a full compensatory pause; ``af`` atrial fibrillation: no P
    waves, irregular RR (coefficient of variation ``af_rr_cv`` unless ``rr_sd_ms`` is given),
    optional fibrillatory waves of amplitude ``f_wave_mv``; ``wide_qrs`` left bundle branch block
    wide notched QRS (needs qrs_ms >= 120); ``qt_rate_adapt`` makes each beat's QT follow the
    preceding RR as qt_ms * RR_s ** (1/3) (Fridericia 1920), i.e. qt_ms is then the QTcF.

    Noise (added after the heart-vector projection, to I, II, V1-V6 independently, the other
    limb leads then derived so Einthoven/Goldberger still hold): ``baseline_wander_mv`` peak
    wander, ``mains_hz``/``mains_mv`` mains interference (peak amplitude), ``emg_snr_db``
    broadband 20-250 Hz muscle-like noise at that signal-to-noise ratio (power) in each of those
    eight leads. ``seed`` fixes every random choice.
    """

    hr_bpm: float = 60.0
    rr_sd_ms: float = 0.0
    pr_ms: float = 160.0
    p_ms: float = 100.0
    qrs_ms: float = 90.0
    qt_ms: float = 400.0
    qrs_axis_deg: float = 60.0
    p_axis_deg: float = 60.0
    t_axis_deg: float = 45.0
    # Defaults give a normal adult tracing (common practice, no source; values from memory):
    # R about 1 mV and P about 0.11 mV in lead II, precordial QRS up to 1.4-1.6 mV peak to
    # peak (V2), T 0.2-0.5 mV. The delineator's QRS end on these shapes reads 3 samples
    # (6 ms) late from r_amp_mv = 1.4 on (tests/dsp/test_delineate_synthetic.py).
    r_amp_mv: float = 1.3
    p_amp_mv: float = 0.17
    t_amp_mv: float = 0.45
    duration_s: float = 10.0
    fs_hz: float = 500.0
    ectopic_beats: tuple[int, ...] = ()
    af: bool = False
    af_rr_cv: float = 0.2
    f_wave_mv: float = 0.0
    wide_qrs: bool = False
    qt_rate_adapt: bool = False
    baseline_wander_mv: float = 0.0
    mains_hz: float | None = None
    mains_mv: float = 0.0
    emg_snr_db: float | None = None
    seed: int = 0
    lead_names: tuple[str, ...] = STANDARD_12

    def __post_init__(self) -> None:
        from reviewapp.core.synth.leads import AVAILABLE_LEADS

        positive = {
            "hr_bpm": self.hr_bpm,
            "qrs_ms": self.qrs_ms,
            "qt_ms": self.qt_ms,
            "duration_s": self.duration_s,
            "fs_hz": self.fs_hz,
            "r_amp_mv": self.r_amp_mv,
            "t_amp_mv": self.t_amp_mv,
        }
        if not self.af:
            positive.update(pr_ms=self.pr_ms, p_ms=self.p_ms, p_amp_mv=self.p_amp_mv)
        for key, value in positive.items():
            if not value > 0:
                raise ValueError(f"{key} must be positive, got {value!r}")
        non_negative = {
            "rr_sd_ms": self.rr_sd_ms,
            "f_wave_mv": self.f_wave_mv,
            "af_rr_cv": self.af_rr_cv,
            "baseline_wander_mv": self.baseline_wander_mv,
            "mains_mv": self.mains_mv,
        }
        for key, value in non_negative.items():
            if not value >= 0:
                raise ValueError(f"{key} must be zero or positive, got {value!r}")
        if not self.af and self.pr_ms <= self.p_ms:
            raise ValueError(f"pr_ms ({self.pr_ms}) must exceed p_ms ({self.p_ms})")
        if self.qt_ms < self.qrs_ms + 100:
            raise ValueError(f"qt_ms ({self.qt_ms}) must exceed qrs_ms + 100 ms")
        if self.wide_qrs and self.qrs_ms < 120:
            raise ValueError(f"wide_qrs needs qrs_ms >= 120, got {self.qrs_ms}")
        if any(int(i) < 1 for i in self.ectopic_beats):
            raise ValueError("ectopic_beats are beat indices >= 1 (beat 0 has no predecessor)")
        if self.mains_hz is not None and not 0 < self.mains_hz < self.fs_hz / 2:
            raise ValueError(f"mains_hz must lie between 0 and fs_hz/2, got {self.mains_hz}")
        if self.fs_hz < 100:
            raise ValueError(f"fs_hz must be at least 100 Hz, got {self.fs_hz}")
        if not self.lead_names:
            raise ValueError("lead_names is empty")
        unknown = [n for n in self.lead_names if n not in AVAILABLE_LEADS]
        if unknown:
            raise ValueError(f"unknown lead names {unknown}; choose from {AVAILABLE_LEADS}")
        if len(set(self.lead_names)) != len(self.lead_names):
            raise ValueError("lead_names has duplicates")
