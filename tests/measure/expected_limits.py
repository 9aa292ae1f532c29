"""The normal limits as the published sources state them, written out by hand for the tests.

Independent of ``reviewapp.core.measure.limits``: every row of that table must match exactly
one entry here, and the tests compare the two, so a changed limit, a changed inclusive or
exclusive bound, or a new untested row fails. Each entry says where the value comes from:
``cite`` is (first author, year) of the publication the limit is taken from; ``recalled``
marks a value recalled, not read from the document here ("from memory"); ``cite`` None means
common practice, no source.

Sources (all values from memory unless marked common practice):
- Kusumoto FM et al., ACC/AHA/HRS bradycardia guideline, Circulation 2019;140:e382-e482:
  sinus bradycardia < 50 bpm. Upper heart-rate limit 100 bpm: common practice, no source.
- PR 120-200 ms, P duration < 120 ms, QRS axis -30 to +90 deg: common practice, no source.
  P axis 0 to +75 deg: common practice, no source, and from memory.
- Surawicz B et al., AHA/ACCF/HRS Part III, Circulation 2009;119:e235-e240: QRS > 110 ms
  adults, > 90 ms age 8-16, > 80 ms under 8.
- Rautaharju PM et al., AHA/ACCF/HRS Part IV, Circulation 2009;119:e241-e250: QTc >= 450 ms
  men, >= 460 ms women prolonged; short QTc <= 340 ms (Priori et al., Eur Heart J 2015, short
  QT syndrome; the 2009 statement's <= 390 ms flags a fifth of LUDB's records).
- Sokolow M, Lyon TP, Am Heart J 1949;37:161-186: SV1 + RV5/V6 > 3.5 mV.
- Casale PN et al., J Am Coll Cardiol 1985;6:572-580: RaVL + SV3 > 2.8 mV men, > 2.0 mV women.
- Thygesen K et al., Fourth Universal Definition of MI, Circulation 2018;138:e618-e651: ST
  elevation at J >= 0.1 mV (V2-V3: >= 0.2 mV men >= 40 y, >= 0.25 mV men < 40 y, >= 0.15 mV
  women; V7-V9 >= 0.05 mV; V3R-V4R >= 0.05 mV, >= 0.1 mV men < 30 y); ST depression
  >= 0.05 mV; Q in V2-V3 > 20 ms; elsewhere Q >= 30 ms (and >= 0.1 mV deep).
"""

from __future__ import annotations

from dataclasses import dataclass

from reviewapp.core.measure import GlobalIntervals, LeadMeasurements, Measurements
from reviewapp.core.record import SubjectFacts

MAN = SubjectFacts(sex="male", age_years=55)
MAN_35 = SubjectFacts(sex="male", age_years=35)
MAN_25 = SubjectFacts(sex="male", age_years=25)
WOMAN = SubjectFacts(sex="female", age_years=55)
CHILD_12 = SubjectFacts(sex="female", age_years=12)
CHILD_5 = SubjectFacts(sex="male", age_years=5)
STEP = {"ms": 1.0, "bpm": 1.0, "deg": 1.0, "mV": 0.01}
QTC = ("qtc_bazett_ms", "qtc_fridericia_ms", "qtc_framingham_ms", "qtc_hodges_ms")
VOLTAGES = ("sokolow_lyon_mv", "cornell_mv")
# Q waves outside V2-V3 count only when >= 0.1 mV deep (4th UDMI, from memory): placed deeper
# than that so the duration alone decides.
Q_DEPTH_MV = -0.15


@dataclass(frozen=True)
class Expected:
    """One published limit. ``leads``: where the value is placed (a contiguous pair for the ST
    and Q criteria, one lead for Q in V2/V3); () for a global value. Bounds: None = open.
    ``range_text``: what every output must print as the normal range."""

    quantity: str
    subject: SubjectFacts
    leads: tuple[str, ...]
    unit: str
    low: float | None
    high: float | None
    low_is_normal: bool
    high_is_normal: bool
    range_text: str
    cite: tuple[str, int] | None
    recalled: bool


def _qtc(q: str, subject: SubjectFacts, high: float) -> Expected:
    # Rautaharju et al. 2009 (from memory): >= 450 / >= 460 prolonged; Priori et al. 2015
    # (from memory): short QTc <= 340.
    return Expected(q, subject, (), "ms", 340.0, high, False, False,
                    f"> 340 and < {high:.0f} ms", ("Rautaharju", 2009), True)  # fmt: skip


def _st(subject: SubjectFacts, leads: tuple[str, ...], high: float) -> Expected:
    # Thygesen et al. 2018 (from memory): elevation >= high, depression >= 0.05 mV.
    return Expected("st_j_mv", subject, leads, "mV", -0.05, high, False, False,
                    f"> -0.05 and < {high:.2f} mV", ("Thygesen", 2018), True)  # fmt: skip


# fmt: off
EXPECTED: tuple[Expected, ...] = (
    # Kusumoto et al. 2019 (lower, from memory); upper 100 bpm common practice, no source.
    Expected("hr_bpm", MAN, (), "bpm", 50.0, 100.0, True, True, "50 to 100 bpm",
             ("Kusumoto", 2019), True),
    # Common practice, no source.
    Expected("pr_ms", MAN, (), "ms", 120.0, 200.0, True, True, "120 to 200 ms",
             None, False),
    Expected("p_ms", MAN, (), "ms", None, 120.0, True, False, "< 120 ms",
             None, False),
    # Surawicz et al. 2009 (from memory).
    Expected("qrs_ms", MAN, (), "ms", None, 110.0, True, True, "<= 110 ms",
             ("Surawicz", 2009), True),
    Expected("qrs_ms", CHILD_12, (), "ms", None, 90.0, True, True, "<= 90 ms",
             ("Surawicz", 2009), True),
    Expected("qrs_ms", CHILD_5, (), "ms", None, 80.0, True, True, "<= 80 ms",
             ("Surawicz", 2009), True),
    *(_qtc(q, MAN, 450.0) for q in QTC),
    *(_qtc(q, WOMAN, 460.0) for q in QTC),
    # Common practice, no source.
    Expected("qrs_axis_deg", MAN, (), "deg", -30.0, 90.0, True, True, "-30° to +90°",
             None, False),
    # Common practice, no source; values from memory.
    Expected("p_axis_deg", MAN, (), "deg", 0.0, 75.0, True, True, "0° to +75°",
             None, True),
    # Sokolow & Lyon 1949; Casale et al. 1985 (from memory).
    Expected("sokolow_lyon_mv", MAN, (), "mV", None, 3.5, True, True, "<= 3.50 mV",
             ("Sokolow", 1949), True),
    Expected("cornell_mv", MAN, (), "mV", None, 2.8, True, True, "<= 2.80 mV",
             ("Casale", 1985), True),
    Expected("cornell_mv", WOMAN, (), "mV", None, 2.0, True, True, "<= 2.00 mV",
             ("Casale", 1985), True),
    # Thygesen et al. 2018 (from memory).
    _st(MAN, ("V2", "V3"), 0.20),
    _st(MAN_35, ("V2", "V3"), 0.25),
    _st(WOMAN, ("V2", "V3"), 0.15),
    _st(MAN, ("V7", "V8"), 0.05),
    _st(WOMAN, ("V8", "V9"), 0.05),
    _st(MAN_25, ("V3R", "V4R"), 0.10),
    _st(MAN_35, ("V3R", "V4R"), 0.05),
    _st(WOMAN, ("V3R", "V4R"), 0.05),
    _st(MAN, ("II", "III"), 0.10),
    _st(WOMAN, ("V5", "V6"), 0.10),
    # Q in V2-V3 > 20 ms counts in one lead; elsewhere >= 30 ms in two contiguous leads.
    Expected("q_ms", MAN, ("V2",), "ms", None, 20.0, True, True, "<= 20 ms",
             ("Thygesen", 2018), True),
    Expected("q_ms", WOMAN, ("V3",), "ms", None, 20.0, True, True, "<= 20 ms",
             ("Thygesen", 2018), True),
    Expected("q_ms", MAN, ("II", "aVF"), "ms", None, 30.0, True, False, "< 30 ms",
             ("Thygesen", 2018), True),
    Expected("q_ms", WOMAN, ("V5", "V6"), "ms", None, 30.0, True, False, "< 30 ms",
             ("Thygesen", 2018), True),
)
# fmt: on


def entry_id(e: Expected) -> str:
    who = f"{e.subject.sex or 'any'}-{e.subject.age_years:g}y"
    return "-".join(x for x in (e.quantity, who, "+".join(e.leads)) if x)


def measurements_for(e: Expected, value: float) -> Measurements:
    """Measurements holding ``value`` where ``e`` judges it (its leads for ST and Q)."""
    if e.quantity in VOLTAGES:
        return Measurements(GlobalIntervals(), **{e.quantity: value})
    if e.quantity == "st_j_mv":
        # A flat ST segment: J+60 at the J level, as a finding needs the ST segment itself to
        # deviate (a J point inside a slurred QRS end is not ST deviation).
        leads = tuple(LeadMeasurements(n, st_j_mv=value, st_j60_mv=value) for n in e.leads)
        return Measurements(GlobalIntervals(), leads=leads)
    if e.quantity == "q_ms":
        leads = tuple(LeadMeasurements(n, q_ms=value, q_mv=Q_DEPTH_MV) for n in e.leads)
        return Measurements(GlobalIntervals(), leads=leads)
    return Measurements(GlobalIntervals(**{e.quantity: value}))
