"""What every rule reads: the measurements, the marked ECG, the subject, and helpers that give
values as the reader sees them (rounded as displayed, so a statement never contradicts the
number printed beside it)."""

from __future__ import annotations

from dataclasses import dataclass, field

from reviewapp.core.fiducials import BeatKind, MarkedECG
from reviewapp.core.interpret.statement import MetValue
from reviewapp.core.measure.limit_text import shown
from reviewapp.core.measure.types import LeadMeasurements, Measurements
from reviewapp.core.record import SubjectFacts

LIMB = ("I", "II", "III", "aVR", "aVL", "aVF")
PRECORDIAL = ("V1", "V2", "V3", "V4", "V5", "V6")
# Adults: the criteria here are the adult ones (Part III gives children's QRS limits apart).
ADULT_AGE_YEARS = 16.0


@dataclass(frozen=True, eq=False)
class Context:
    m: Measurements
    marked: MarkedECG
    subject: SubjectFacts
    leads: dict[str, LeadMeasurements] = field(default_factory=dict)

    @classmethod
    def of(cls, m: Measurements, marked: MarkedECG, subject: SubjectFacts) -> Context:
        return cls(m, marked, subject, {x.lead: x for x in m.leads})

    # --- global values as displayed -------------------------------------------------------
    def g(self, name: str) -> float | None:
        """A ``GlobalIntervals`` value as displayed (whole ms, bpm, deg)."""
        v = getattr(self.m.intervals, name)
        if v is None:
            return None
        unit = name.rsplit("_", 1)[-1]
        return shown(float(v), {"ms": "ms", "bpm": "bpm", "deg": "deg"}.get(unit, "ms"))

    def val(self, label: str, name: str, unit: str) -> MetValue:
        v = self.g(name)
        assert v is not None
        return MetValue(label, v, unit)

    def lead(self, name: str) -> LeadMeasurements | None:
        return self.leads.get(name)

    def lv(self, lead: str, field_name: str) -> float | None:
        """A lead's value (mV to 0.01, ms to 1), None when absent."""
        m = self.leads.get(lead)
        v = None if m is None else getattr(m, field_name)
        if v is None or isinstance(v, bool | str):
            return None
        return shown(float(v), "ms" if field_name.endswith("_ms") else "mV")

    @property
    def has_p(self) -> bool:
        rep = self.marked.representative
        return rep is not None and rep.marks.p_on is not None

    @property
    def wide(self) -> bool:
        q = self.g("qrs_ms")
        return q is not None and q >= 120.0

    @property
    def n_beats(self) -> int:
        return len(self.marked.beats)

    @property
    def n_ventricular_paced(self) -> int:
        return sum(b.kind == BeatKind.PACED for b in self.marked.beats)

    @property
    def age(self) -> float | None:
        return self.subject.age_years

    @property
    def sex(self) -> str | None:
        return self.subject.sex if self.subject.sex in ("male", "female") else None

    def qrs_amplitude(self, lead: str) -> float | None:
        """Highest minus lowest QRS wave of ``lead`` (mV, peak to peak)."""
        m = self.leads.get(lead)
        if m is None or m.r_mv is None or m.q_mv is None or m.s_mv is None:
            return None
        return shown(max(m.r_mv, m.r_prime_mv or 0.0) - min(m.q_mv, m.s_mv), "mV")
