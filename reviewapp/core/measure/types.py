"""Measured values and findings: frozen, units in every field name, None = not measurable."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal


@dataclass(frozen=True)
class GlobalIntervals:
    """Global (all-lead) values from the representative beat and the RR series."""

    rr_ms: float | None = None
    rr_sd_ms: float | None = None
    hr_bpm: float | None = None
    ventricular_rate_bpm: float | None = None  # every QRS, premature beats included
    p_ms: float | None = None
    pr_ms: float | None = None
    qrs_ms: float | None = None
    qt_ms: float | None = None
    qtc_bazett_ms: float | None = None
    qtc_fridericia_ms: float | None = None
    qtc_framingham_ms: float | None = None
    qtc_hodges_ms: float | None = None
    p_axis_deg: float | None = None
    qrs_axis_deg: float | None = None
    t_axis_deg: float | None = None
    # Beside the QTc for a wide, paced or pre-excited QRS (``qt_wide_qrs``); always computed
    # where QT, QRS (and RR) are measured.
    jt_ms: float | None = None
    jtc_bazett_ms: float | None = None
    qt_bogossian_ms: float | None = None
    # Angle between the frontal QRS and T axes, folded to 0..180 deg.
    qrs_t_angle_deg: float | None = None


# Why a value is left out: "not_measured" (no value), "not_comparable" (shown, but not to be
# compared with its normal limits), "gated" (a criterion not applied to this reading),
# "caution" (shown and compared, but less reliable, e.g. QTc in an irregular rhythm).
ReasonKind = Literal["not_measured", "not_comparable", "gated", "caution"]


@dataclass(frozen=True)
class ValueReason:
    """The reason one quantity (or group of quantities) is not measured, not comparable, not
    judged or less reliable. ``quantity`` uses the names of ``Measurements.unmeasured``;
    ``text`` is for the reader and names its source where it rests on one.

    A text other than a plain not-measured cause reads "<what>: <cause>[; or , more] (<source>)"
    ("QTc not comparable with the QTc limits: QRS >= 120 ms; ... (Rautaharju et al., ...)"),
    so a table cell can say the cause in a few words (``reason_text.cell_text``)."""

    quantity: str
    kind: ReasonKind
    text: str


@dataclass(frozen=True)
class AtrialActivity:
    """Atrial activity of the whole record once each beat's QRST is taken away
    (``atrial_activity``): the dominant atrial rate and how much of the activity's power lies
    at that rate and its harmonics (``organisation``, 0..1); the RMS of that activity (mV);
    and the counts of beats with an atrial pacing stimulus before them."""

    rate_per_min: float | None = None
    organisation: float | None = None
    rms_mv: float | None = None
    n_beats: int = 0
    n_atrial_stimuli: int = 0


@dataclass(frozen=True)
class LeadMeasurements:
    """One lead's amplitudes (mV, from the isoelectric level at QRS onset) and ST levels.

    Amplitudes are signed: ``q_mv`` and ``s_mv`` <= 0, ``r_mv`` and ``r_prime_mv`` >= 0; a wave
    looked for but absent is 0.0 (no Q: ``q_mv == q_ms == 0.0``); a QS complex is reported as Q.
    """

    lead: str
    p_mv: float | None = None
    q_mv: float | None = None
    r_mv: float | None = None
    s_mv: float | None = None
    r_prime_mv: float | None = None
    t_mv: float | None = None
    q_ms: float | None = None
    st_j_mv: float | None = None
    st_j60_mv: float | None = None
    st_j80_mv: float | None = None
    # Wave shapes (``morphology``): None where not measurable.
    r_peak_time_ms: float | None = None  # QRS onset to the peak of the last R (R'); None: no R
    r_ms: float | None = None  # R lobe duration (0.0: no R)
    s_ms: float | None = None  # S lobe duration (0.0: no S)
    r_notched: bool | None = None
    p_terminal_mv: float | None = None  # negative terminal part of P (<= 0; 0.0: none)
    p_terminal_ms: float | None = None
    u_mv: float | None = None  # U wave height (0.0: none found)
    t_min_mv: float | None = None  # lowest level from J+80 ms to T end (a negative T's depth)
    jp_mv: float | None = None  # J peak of a terminal QRS notch or slur (0.0: none)
    end_qrs: str | None = None  # "notch", "slur" or "" (none)
    delta_ms: float | None = None  # initial QRS slur: onset to half the steepest slope
    delta_mv: float | None = None  # deflection reached by then (signed)
    delta_same_way: bool | None = None  # the QRS goes on in that direction


@dataclass(frozen=True)
class BeatIntervals:
    """Beat-to-beat values for one beat (global marks of that beat)."""

    r_s: float
    kind: str
    rr_ms: float | None = None  # from the previous beat's R
    pr_ms: float | None = None
    qrs_ms: float | None = None
    qt_ms: float | None = None


@dataclass(frozen=True)
class Measurements:
    intervals: GlobalIntervals
    leads: tuple[LeadMeasurements, ...] = ()
    beats: tuple[BeatIntervals, ...] = ()
    sokolow_lyon_mv: float | None = None
    cornell_mv: float | None = None
    # Peguero-Lo Presti: deepest S in any lead + S in V4 (mV).
    peguero_mv: float | None = None
    # Cornell product: (R aVL + S V3) x QRS duration, mm x ms at 10 mm/mV (no sex adjustment).
    cornell_product_mm_ms: float | None = None
    # (quantity, reason it is None). quantity: a field name ("qt_ms"), "<lead>.<field>"
    # ("V4.p_mv"), "<lead>.qrs" / "<lead>.st" for a group of a lead's fields, or "<lead>" for
    # a whole lead (flat or missing).
    unmeasured: tuple[tuple[str, str], ...] = ()
    # RR coefficient of variation of the dominant morphology group above the irregularity
    # threshold (e.g. atrial fibrillation): rate from all its intervals, QTc less reliable.
    rhythm_irregular: bool = False
    # Most beats paced: Q-wave and ST criteria for infarction do not apply.
    paced: bool = False
    # Ventricular pre-excitation (short PR with a delta wave, ``preexcitation``): QTc not
    # comparable, infarct criteria not applied.
    pre_excitation: bool = False
    # Atrial activity without P waves, pacing stimuli (``atrial_activity``, ``pacing_modes``).
    atrial: AtrialActivity | None = None
    # Remarks on how values were obtained ("irregular rhythm: ...", "ST/Q criteria not ...").
    notes: tuple[str, ...] = ()
    # Values shown but not comparable with their limits (e.g. QTc with a QRS >= 120 ms), and
    # values set aside (ST without an isoelectric baseline): structured reasons.
    reasons: tuple[ValueReason, ...] = ()

    def lead(self, name: str) -> LeadMeasurements | None:
        return next((m for m in self.leads if m.lead == name), None)


@dataclass(frozen=True)
class NormalRange:
    """A limit pair for one quantity; either side may be open. ``source`` names the reference."""

    quantity: str
    low: float | None
    high: float | None
    unit: str
    source: str
    # Whether a value equal to the limit is still normal (PR 200 ms is normal; QTc 450 ms in
    # men is prolonged: ">= 450").
    low_is_normal: bool = True
    high_is_normal: bool = True
    applies_to: str = ""  # who/where the limit is for: "female", "men >= 40 y, V2-V3", ...

    def is_above(self, value: float) -> bool:
        if self.high is None:
            return False
        return value > self.high or (not self.high_is_normal and value == self.high)

    def is_below(self, value: float) -> bool:
        if self.low is None:
            return False
        return value < self.low or (not self.low_is_normal and value == self.low)


@dataclass(frozen=True)
class Finding:
    """A value outside its limit: a flag for the reader, not a diagnosis."""

    quantity: str
    value: float
    unit: str
    limit: float
    direction: Literal["above", "below"]
    source: str
    text: str
    lead: str | None = None
