"""Readings built from chosen measurement values, to put one criterion at its threshold.

The statement engine reads ``Measurements`` (values) and the ``MarkedECG`` (beats, whether the
median beat has a P wave, the leads); here both are made directly, so a test sets exactly the
value it checks and nothing else. Values are what the engine would have measured; the
statements are then a pure function of them.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from reviewapp.core.fiducials import Beat, BeatKind, MarkedECG, RepresentativeBeat, WaveMarks
from reviewapp.core.interpret import Interpretation, interpret
from reviewapp.core.measure.types import (
    AtrialActivity,
    GlobalIntervals,
    LeadMeasurements,
    Measurements,
    ValueReason,
)
from reviewapp.core.record import SubjectFacts

FS = 500.0
LEADS = ("I", "II", "III", "aVR", "aVL", "aVF", "V1", "V2", "V3", "V4", "V5", "V6")

# A normal adult ECG, as measured (amplitudes in mV, durations in ms): sinus rhythm at 70 bpm,
# P 100 ms, PR 160, QRS 90, QT 400, axes P +60, QRS +60, T +45.
NORMAL_GLOBAL = dict(
    rr_ms=857.0,
    rr_sd_ms=10.0,
    hr_bpm=70.0,
    ventricular_rate_bpm=70.0,
    p_ms=100.0,
    pr_ms=160.0,
    qrs_ms=90.0,
    qt_ms=380.0,
    qtc_bazett_ms=410.0,
    qtc_fridericia_ms=400.0,
    qtc_framingham_ms=400.0,
    qtc_hodges_ms=400.0,
    p_axis_deg=60.0,
    qrs_axis_deg=60.0,
    t_axis_deg=45.0,
    qrs_t_angle_deg=15.0,
)
_NORMAL_LEAD = dict(
    p_mv=0.1,
    q_mv=-0.05,
    r_mv=1.0,
    s_mv=-0.3,
    r_prime_mv=0.0,
    t_mv=0.3,
    q_ms=16.0,
    st_j_mv=0.0,
    st_j60_mv=0.02,
    st_j80_mv=0.05,
    r_peak_time_ms=36.0,
    r_ms=40.0,
    s_ms=20.0,
    r_notched=False,
    p_terminal_mv=0.0,
    p_terminal_ms=0.0,
    u_mv=0.0,
    t_min_mv=0.0,
    jp_mv=0.0,
    end_qrs="",
    delta_ms=0.0,
    delta_mv=0.0,
    delta_same_way=False,
)
# Per-lead differences from the template that a normal ECG shows (aVR negative, V1 rS...).
_LEAD_SHAPES: dict[str, dict[str, Any]] = {
    "aVR": dict(p_mv=-0.1, q_mv=0.0, r_mv=0.2, s_mv=-0.9, t_mv=-0.25, q_ms=0.0),
    "V1": dict(q_mv=0.0, r_mv=0.3, s_mv=-1.0, t_mv=0.1, q_ms=0.0, r_peak_time_ms=20.0),
    "V2": dict(q_mv=0.0, r_mv=0.6, s_mv=-1.2, q_ms=0.0),
    "V3": dict(q_mv=0.0, r_mv=0.9, s_mv=-0.8, q_ms=0.0),
}


def lead(name: str, **changes: Any) -> LeadMeasurements:
    return LeadMeasurements(name, **{**_NORMAL_LEAD, **_LEAD_SHAPES.get(name, {}), **changes})


@dataclass
class Case:
    """A reading to interpret: global values, per-lead changes, beats and rhythm facts."""

    glob: dict[str, Any] = field(default_factory=dict)
    leads: dict[str, dict[str, Any]] = field(default_factory=dict)
    has_p: bool = True
    n_beats: int = 10
    rr_samples: list[int] | None = None  # the RR of each beat after the first (samples)
    kinds: dict[int, BeatKind] = field(default_factory=dict)  # beat index -> kind
    groups: dict[int, int] = field(default_factory=dict)  # beat index -> morphology group
    beat_qrs_ms: dict[int, float] = field(default_factory=dict)
    paced: bool = False
    irregular: bool = False
    pre_excitation: bool = False
    atrial: AtrialActivity | None = None
    reasons: tuple[ValueReason, ...] = ()
    unmeasured: tuple[tuple[str, str], ...] = ()
    voltages: dict[str, float | None] = field(default_factory=dict)
    subject: SubjectFacts = field(default_factory=lambda: SubjectFacts(sex="male", age_years=50))

    def reading(self) -> Any:
        from reviewapp.core.measure.types import BeatIntervals

        rr = self.rr_samples or [round(FS * 60.0 / 70.0)] * (self.n_beats - 1)
        r = np.cumsum([500, *rr]).tolist()
        beats = []
        for i, ri in enumerate(r):
            kind = self.kinds.get(i, BeatKind.DOMINANT)
            paced_dom = kind == BeatKind.PACED and self.groups.get(i, 0) == 0
            beats.append(Beat(int(ri), kind, self.groups.get(i, 0), paced_dominant=paced_dom))
        n = int(r[-1]) + 1000
        marks = WaveMarks(
            p_on=100 if self.has_p else None,
            p_off=150 if self.has_p else None,
            qrs_on=180,
            qrs_off=225,
            t_off=380,
        )
        rep = RepresentativeBeat(
            np.zeros((600, len(LEADS)), np.float32), 200, len(beats), marks, (), None, rr[0]
        )
        marked = MarkedECG(
            FS,
            LEADS,
            (True,) * len(LEADS),
            np.zeros((n, len(LEADS)), np.float32),
            tuple(beats),
            tuple(WaveMarks() for _ in beats),
            tuple(tuple(WaveMarks() for _ in LEADS) for _ in beats),
            rep,
        )
        g = {**NORMAL_GLOBAL, **self.glob}
        per_beat = tuple(
            BeatIntervals(b.r / FS, b.kind.value, qrs_ms=self.beat_qrs_ms.get(i, g["qrs_ms"]))
            for i, b in enumerate(beats)
        )
        lm = tuple(lead(x, **self.leads.get(x, {})) for x in LEADS)
        volts = {"sokolow_lyon_mv": 2.0, "cornell_mv": 1.2, "peguero_mv": 1.8, **self.voltages}
        m = Measurements(
            GlobalIntervals(**g),
            lm,
            per_beat,
            unmeasured=self.unmeasured,
            rhythm_irregular=self.irregular,
            paced=self.paced,
            pre_excitation=self.pre_excitation,
            atrial=self.atrial,
            reasons=self.reasons,
            **volts,  # type: ignore[arg-type]
        )
        return _Reading(marked, m)

    def interpret(self) -> Interpretation:
        return interpret(self.reading(), self.subject)

    def codes(self) -> set[str]:
        return set(self.interpret().codes())

    def with_(self, **changes: Any) -> Case:
        return replace(self, **changes)


@dataclass(frozen=True)
class _Reading:
    marked: MarkedECG
    measurements: Measurements
