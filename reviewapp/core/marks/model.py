"""The sidecar's content as frozen values, and their exact JSON form.

Times are seconds (never samples) rounded to the record's sample grid; representative-beat
times are relative to the representative beat's R (negative before R). ``None`` means absent
(for an override's ``new_s``: the reader says the wave is absent).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any, Literal

from reviewapp.core.fiducials import FIDUCIALS

SCHEMA_VERSION = 2
# Versions this program reads: older ones are migrated on reading (codec.migrate_document).
READABLE_VERSIONS: tuple[int, ...] = (1, 2)
FORMAT_NAME = "reviewapp-marks"

Status = Literal["unread", "in_progress", "signed_off"]
Role = Literal["first", "second", "adjudicator"]
CaliperKind = Literal["time", "amplitude"]
StatementOrigin = Literal["automatic", "catalogue", "free_text", "reader"]
# The catalogue code of a statement in the reader's own words (``core.interpret.catalogue``).
FREE_TEXT_CODE = "other.free_text"
STATUSES: tuple[str, ...] = ("unread", "in_progress", "signed_off")
ROLES: tuple[str, ...] = ("first", "second", "adjudicator")

JSONValue = Any  # None | bool | int | float | str | list | dict of the same


@dataclass(frozen=True)
class RecordIdentity:
    """Which record a sidecar belongs to; ``fingerprint`` is ``record_fingerprint(record)``."""

    name: str
    fingerprint: str
    fs_hz: float
    n_samples: int
    lead_names: tuple[str, ...]


@dataclass(frozen=True)
class FiducialTimes:
    """The five boundaries of one beat in seconds; None = absent."""

    p_on: float | None = None
    p_off: float | None = None
    qrs_on: float | None = None
    qrs_off: float | None = None
    t_off: float | None = None

    def get(self, name: str) -> float | None:
        if name not in FIDUCIALS:
            raise KeyError(name)
        return getattr(self, name)


@dataclass(frozen=True)
class RepresentativeTimes:
    """Automatic marks of the representative beat, seconds relative to its R."""

    marks: FiducialTimes
    lead_marks: tuple[tuple[str, FiducialTimes], ...] = ()

    def lead(self, name: str) -> FiducialTimes | None:
        return next((m for n, m in self.lead_marks if n == name), None)


@dataclass(frozen=True)
class AutoBeat:
    """One detected beat: R time (s from record start), kind, global marks (s from start)."""

    r_s: float
    kind: str
    marks: FiducialTimes


@dataclass(frozen=True)
class AutomaticMarks:
    """What the engine found, with the engine version that found it."""

    engine_version: str
    computed_at: str
    representative: RepresentativeTimes | None
    beats: tuple[AutoBeat, ...] = ()

    def value_s(
        self, scope: str, fiducial: str, beat_r_s: float | None, lead: str | None, fs_hz: float
    ) -> float | None:
        """The automatic value an override would replace (None if unknown or absent)."""
        if scope == "representative":
            if self.representative is None:
                return None
            marks = self.representative.marks if lead is None else self.representative.lead(lead)
            return None if marks is None else marks.get(fiducial)
        if lead is not None or beat_r_s is None or not self.beats:
            return None  # per-lead marks of single beats are not kept in the sidecar
        # Same matching rule as fiducials.match_beat (nearest R within 75 ms).
        best = min(self.beats, key=lambda b: abs(b.r_s - beat_r_s))
        if abs(best.r_s - beat_r_s) > 0.075 + 0.5 / fs_hz:
            return None
        return best.marks.get(fiducial)


OverrideKey = tuple[str, float | None, str | None, str]  # scope, beat_r_s, lead, fiducial


@dataclass(frozen=True)
class Override:
    """A reader's correction of one boundary.

    scope "representative": ``new_s``/``old_s`` relative to the representative R, ``beat_r_s``
    None. scope "beat": times from record start, ``beat_r_s`` the beat's R time. ``lead`` None
    is the global (all-lead) boundary. ``old_s`` is the automatic value the override replaced.
    """

    scope: Literal["representative", "beat"]
    fiducial: str
    new_s: float | None
    old_s: float | None = None
    beat_r_s: float | None = None
    lead: str | None = None

    @property
    def key(self) -> OverrideKey:
        return (self.scope, self.beat_r_s, self.lead, self.fiducial)


def key_text(key: OverrideKey) -> str:
    """A human-readable name of an override target (audit ``target``, merge conflicts)."""
    scope, beat_r_s, lead, fiducial = key
    where = "representative beat" if scope == "representative" else f"beat at {beat_r_s} s"
    return f"{fiducial} of {where}, {'global' if lead is None else 'lead ' + lead}"


@dataclass(frozen=True)
class Caliper:
    """A caliper pair: two positions (s from record start, mV) on one lead (None = all leads)."""

    id: str
    kind: CaliperKind
    t1_s: float
    t2_s: float
    v1_mv: float = 0.0
    v2_mv: float = 0.0
    lead: str | None = None
    label: str = ""


@dataclass(frozen=True)
class Note:
    id: str
    text: str


@dataclass(frozen=True)
class ReaderStatement:
    """One statement of a reader's interpretation (their order is the list's).

    code: the catalogue code (``core.interpret.catalogue``; ``other.free_text`` for the
        reader's own words). text: the statement as the reader keeps it (edited or not).
    origin: "automatic" (the engine's statement taken over), "catalogue" (picked), "free_text"
        (typed) or "reader" (adopted from another reader's reading: ``from_reader``).
    """

    id: str
    code: str
    text: str
    origin: StatementOrigin = "catalogue"
    from_reader: str | None = None

    @property
    def key(self) -> str:
        """What two readers' statements are matched on: the catalogue code, or for free text
        the words themselves (case and spacing ignored).

        >>> ReaderStatement("a", "rhythm.sinus", "Sinus rhythm, 62 bpm").key
        'rhythm.sinus'
        >>> ReaderStatement("b", FREE_TEXT_CODE, "  Artefact in  V3 ").key
        'free: artefact in v3'
        """
        if self.code != FREE_TEXT_CODE:
            return self.code
        return "free: " + " ".join(self.text.lower().split())


@dataclass(frozen=True)
class ReviewerReading:
    """One reader's work on one record. Overrides are kept sorted by target."""

    reviewer: str
    role: Role = "first"
    blinded: bool = False
    status: Status = "unread"
    signed_off_by: str | None = None
    signed_off_at: str | None = None
    overrides: tuple[Override, ...] = ()
    calipers: tuple[Caliper, ...] = ()
    notes: tuple[Note, ...] = ()
    statements: tuple[ReaderStatement, ...] = ()

    def override(self, key: OverrideKey) -> Override | None:
        return next((o for o in self.overrides if o.key == key), None)

    def caliper(self, caliper_id: str) -> Caliper | None:
        return next((c for c in self.calipers if c.id == caliper_id), None)

    def note(self, note_id: str) -> Note | None:
        return next((n for n in self.notes if n.id == note_id), None)

    def statement(self, statement_id: str) -> ReaderStatement | None:
        return next((x for x in self.statements if x.id == statement_id), None)

    def with_override(self, key: OverrideKey, ov: Override | None) -> ReviewerReading:
        rest = [o for o in self.overrides if o.key != key]
        if ov is not None:
            rest.append(ov)
        return replace(self, overrides=tuple(sorted(rest, key=_override_sort_key)))


def _override_sort_key(o: Override) -> tuple:
    return (o.scope, -1e300 if o.beat_r_s is None else o.beat_r_s, o.lead or "", o.fiducial)


@dataclass(frozen=True)
class AuditEvent:
    """One change: who, when (UTC ISO 8601), what action on which target, old and new value."""

    id: str
    at: str
    reviewer: str
    action: str
    target: str
    old: JSONValue = None
    new: JSONValue = None


@dataclass(frozen=True)
class Sidecar:
    """Everything in one ``<record>.marks.json``. Readings are keyed (and sorted) by reviewer."""

    record: RecordIdentity
    automatic: AutomaticMarks | None = None
    readings: tuple[ReviewerReading, ...] = ()
    audit: tuple[AuditEvent, ...] = ()
    schema_version: int = SCHEMA_VERSION
    # Optional worklist cache from the batch step (derived from the automatic marks, never
    # truth); see reviewapp/batch/summary.py. Not hashed: it is a plain JSON object.
    listing_cache: Mapping[str, Any] | None = field(default=None, hash=False)

    def reading(self, reviewer: str) -> ReviewerReading | None:
        return next((r for r in self.readings if r.reviewer == reviewer), None)

    def with_reading(self, reading: ReviewerReading) -> Sidecar:
        rest = [r for r in self.readings if r.reviewer != reading.reviewer] + [reading]
        return replace(self, readings=tuple(sorted(rest, key=lambda r: r.reviewer)))


# --- JSON form -------------------------------------------------------------------------------


def _times_to_json(t: FiducialTimes) -> dict[str, float | None]:
    return {n: t.get(n) for n in FIDUCIALS}


def _times_from_json(d: Mapping[str, Any]) -> FiducialTimes:
    return FiducialTimes(**{n: _opt_float(d.get(n)) for n in FIDUCIALS})


def _opt_float(v: Any) -> float | None:
    return None if v is None else float(v)


def override_to_json(o: Override) -> dict[str, Any]:
    return {
        "scope": o.scope,
        "fiducial": o.fiducial,
        "beat_r_s": o.beat_r_s,
        "lead": o.lead,
        "old_s": o.old_s,
        "new_s": o.new_s,
    }


def override_from_json(d: Mapping[str, Any]) -> Override:
    return Override(
        scope=d["scope"],
        fiducial=d["fiducial"],
        new_s=_opt_float(d["new_s"]),
        old_s=_opt_float(d.get("old_s")),
        beat_r_s=_opt_float(d.get("beat_r_s")),
        lead=d.get("lead"),
    )


def caliper_to_json(c: Caliper) -> dict[str, Any]:
    return {
        "id": c.id,
        "kind": c.kind,
        "lead": c.lead,
        "t1_s": c.t1_s,
        "t2_s": c.t2_s,
        "v1_mv": c.v1_mv,
        "v2_mv": c.v2_mv,
        "label": c.label,
    }


def caliper_from_json(d: Mapping[str, Any]) -> Caliper:
    return Caliper(
        id=d["id"],
        kind=d["kind"],
        lead=d.get("lead"),
        t1_s=float(d["t1_s"]),
        t2_s=float(d["t2_s"]),
        v1_mv=float(d["v1_mv"]),
        v2_mv=float(d["v2_mv"]),
        label=d["label"],
    )


def note_to_json(n: Note) -> dict[str, Any]:
    return {"id": n.id, "text": n.text}


def statement_to_json(x: ReaderStatement) -> dict[str, Any]:
    return {
        "id": x.id,
        "code": x.code,
        "text": x.text,
        "origin": x.origin,
        "from_reader": x.from_reader,
    }


def statement_from_json(d: Mapping[str, Any]) -> ReaderStatement:
    return ReaderStatement(
        id=d["id"],
        code=d["code"],
        text=d["text"],
        origin=d["origin"],
        from_reader=d.get("from_reader"),
    )


def reading_to_json(r: ReviewerReading) -> dict[str, Any]:
    return {
        "reviewer": r.reviewer,
        "role": r.role,
        "blinded": r.blinded,
        "status": r.status,
        "signed_off_by": r.signed_off_by,
        "signed_off_at": r.signed_off_at,
        "overrides": [override_to_json(o) for o in r.overrides],
        "calipers": [caliper_to_json(c) for c in r.calipers],
        "notes": [note_to_json(n) for n in r.notes],
        "statements": [statement_to_json(x) for x in r.statements],
    }


def reading_from_json(d: Mapping[str, Any]) -> ReviewerReading:
    return ReviewerReading(
        reviewer=d["reviewer"],
        role=d["role"],
        blinded=bool(d["blinded"]),
        status=d["status"],
        signed_off_by=d.get("signed_off_by"),
        signed_off_at=d.get("signed_off_at"),
        overrides=tuple(
            sorted((override_from_json(o) for o in d["overrides"]), key=_override_sort_key)
        ),
        calipers=tuple(caliper_from_json(c) for c in d["calipers"]),
        notes=tuple(Note(id=n["id"], text=n["text"]) for n in d["notes"]),
        statements=tuple(statement_from_json(x) for x in d.get("statements", ())),
    )


def automatic_to_json(a: AutomaticMarks) -> dict[str, Any]:
    rep = a.representative
    return {
        "engine_version": a.engine_version,
        "computed_at": a.computed_at,
        "representative": None
        if rep is None
        else {
            "marks_s": _times_to_json(rep.marks),
            "lead_marks_s": {n: _times_to_json(m) for n, m in rep.lead_marks},
        },
        "beats": [
            {"r_s": b.r_s, "kind": b.kind, "marks_s": _times_to_json(b.marks)} for b in a.beats
        ],
    }


def automatic_from_json(d: Mapping[str, Any]) -> AutomaticMarks:
    rep = d.get("representative")
    return AutomaticMarks(
        engine_version=d["engine_version"],
        computed_at=d["computed_at"],
        representative=None
        if rep is None
        else RepresentativeTimes(
            marks=_times_from_json(rep["marks_s"]),
            lead_marks=tuple((n, _times_from_json(m)) for n, m in rep["lead_marks_s"].items()),
        ),
        beats=tuple(
            AutoBeat(r_s=float(b["r_s"]), kind=b["kind"], marks=_times_from_json(b["marks_s"]))
            for b in d["beats"]
        ),
    )


def event_to_json(e: AuditEvent) -> dict[str, Any]:
    return {
        "id": e.id,
        "at": e.at,
        "reviewer": e.reviewer,
        "action": e.action,
        "target": e.target,
        "old": e.old,
        "new": e.new,
    }


def event_from_json(d: Mapping[str, Any]) -> AuditEvent:
    return AuditEvent(
        id=d["id"],
        at=d["at"],
        reviewer=d["reviewer"],
        action=d["action"],
        target=d["target"],
        old=d.get("old"),
        new=d.get("new"),
    )


def sidecar_to_json(s: Sidecar, *, with_audit: bool = True) -> dict[str, Any]:
    doc = {
        "format": FORMAT_NAME,
        "schema_version": s.schema_version,
        "record": {
            "name": s.record.name,
            "fingerprint": s.record.fingerprint,
            "fs_hz": s.record.fs_hz,
            "n_samples": s.record.n_samples,
            "lead_names": list(s.record.lead_names),
        },
        "automatic": None if s.automatic is None else automatic_to_json(s.automatic),
        "readings": {r.reviewer: reading_to_json(r) for r in s.readings},
    }
    if s.listing_cache is not None:
        doc["listing_cache"] = dict(s.listing_cache)
    if with_audit:
        doc["audit"] = [event_to_json(e) for e in s.audit]
    return doc


def sidecar_from_json(d: Mapping[str, Any]) -> Sidecar:
    """Build the values from a schema-valid JSON document."""
    rec = d["record"]
    readings = []
    for key, r in d["readings"].items():
        reading = reading_from_json(r)
        if reading.reviewer != key:
            raise ValueError(f"reading under {key!r} names reviewer {reading.reviewer!r}")
        readings.append(reading)
    return Sidecar(
        schema_version=int(d["schema_version"]),
        record=RecordIdentity(
            name=rec["name"],
            fingerprint=rec["fingerprint"],
            fs_hz=float(rec["fs_hz"]),
            n_samples=int(rec["n_samples"]),
            lead_names=tuple(rec["lead_names"]),
        ),
        automatic=None if d["automatic"] is None else automatic_from_json(d["automatic"]),
        readings=tuple(sorted(readings, key=lambda r: r.reviewer)),
        audit=tuple(event_from_json(e) for e in d["audit"]),
        listing_cache=d.get("listing_cache"),
    )
