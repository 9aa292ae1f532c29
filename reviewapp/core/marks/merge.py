"""Three-way merge of two sidecars that both grew from one loaded version.

Items are merged one by one: each override (by target: scope, beat, lead, fiducial), each
caliper and note (by id), each reading's status and role, its interpretation statements (the
ordered list as one item: an order is not merged piece by piece), and the automatic marks. An item
changed on one side only takes that side's value; changed on both sides to different values it
is a conflict and nothing is merged. The audit trail is append-only, so the merged trail is
theirs followed by our events that they do not have.
"""

from __future__ import annotations

from collections.abc import Hashable
from dataclasses import replace
from pathlib import Path
from typing import Any

from reviewapp.core.marks.errors import MergeConflictError
from reviewapp.core.marks.model import (
    Caliper,
    Note,
    Override,
    ReviewerReading,
    Sidecar,
    key_text,
)

_MISSING = object()


def _items(r: ReviewerReading | None) -> dict[Hashable, Any]:
    if r is None:
        return {}
    out: dict[Hashable, Any] = {
        ("meta",): (r.role, r.blinded),
        ("status",): (r.status, r.signed_off_by, r.signed_off_at),
    }
    out.update({("override", o.key): o for o in r.overrides})
    out.update({("caliper", c.id): c for c in r.calipers})
    out.update({("note", n.id): n for n in r.notes})
    out[("statements",)] = r.statements
    return out


def _describe(reviewer: str, key: Hashable) -> str:
    kind = key[0]  # type: ignore[index]
    if kind == "override":
        return f"{reviewer}: {key_text(key[1])}"  # type: ignore[index]
    if kind in ("caliper", "note"):
        return f"{reviewer}: {kind} {key[1]}"  # type: ignore[index]
    if kind == "statements":
        return f"{reviewer}: interpretation statements"
    return f"{reviewer}: reading {kind}"


def _three_way(base: Any, ours: Any, theirs: Any) -> tuple[Any, bool]:
    """(merged value, conflict?)"""
    if ours == theirs:
        return ours, False
    if ours == base:
        return theirs, False
    if theirs == base:
        return ours, False
    return ours, True


def _order(ours: tuple, theirs: tuple, merged: dict[Hashable, Any], kind: str) -> tuple:
    """Theirs' order first, then our additions, keeping only items present after merging."""
    out, seen = [], set()
    for item in (*theirs, *ours):
        key = (kind, item.id)
        if key in seen or merged.get(key, _MISSING) is _MISSING:
            continue
        seen.add(key)
        out.append(merged[key])
    return tuple(out)


def _merge_reading(
    reviewer: str,
    base: ReviewerReading | None,
    ours: ReviewerReading | None,
    theirs: ReviewerReading | None,
    conflicts: list[str],
) -> ReviewerReading | None:
    b, o, t = _items(base), _items(ours), _items(theirs)
    merged: dict[Hashable, Any] = {}
    for key in {*b, *o, *t}:
        value, clash = _three_way(b.get(key, _MISSING), o.get(key, _MISSING), t.get(key, _MISSING))
        if clash:
            conflicts.append(_describe(reviewer, key))
        if value is not _MISSING:
            merged[key] = value
    if ("meta",) not in merged:
        return None  # deleted on one side and untouched on the other (never done by the app)
    role, blinded = merged[("meta",)]
    status = merged[("status",)]
    overrides: list[Override] = [v for k, v in merged.items() if k[0] == "override"]  # type: ignore[index]
    r = ReviewerReading(reviewer=reviewer, role=role, blinded=blinded)
    for ov in overrides:
        r = r.with_override(ov.key, ov)
    calipers: tuple[Caliper, ...] = _order(
        ours.calipers if ours else (), theirs.calipers if theirs else (), merged, "caliper"
    )
    notes: tuple[Note, ...] = _order(
        ours.notes if ours else (), theirs.notes if theirs else (), merged, "note"
    )
    return replace(
        r,
        status=status[0],
        signed_off_by=status[1],
        signed_off_at=status[2],
        calipers=calipers,
        notes=notes,
        statements=merged.get(("statements",), ()),
    )


def merge_sidecars(
    base: Sidecar, ours: Sidecar, theirs: Sidecar, path: Path | None = None
) -> Sidecar:
    """Merge our changes (since ``base``) with theirs (since ``base``).

    Raises MergeConflictError listing every item both sides changed differently, or when the
    two files do not share ``base`` as their common history (e.g. one was replaced wholesale).
    """
    if not (base.record == ours.record == theirs.record):
        raise MergeConflictError(
            "cannot merge: the marks on disk belong to a different record version",
            path,
            ("record",),
        )
    n = len(base.audit)
    base_ids = [e.id for e in base.audit]
    if [e.id for e in theirs.audit[:n]] != base_ids or [e.id for e in ours.audit[:n]] != base_ids:
        raise MergeConflictError(
            "cannot merge: the marks on disk do not continue the version this window loaded "
            "(their audit trail differs), so there is no common history to merge from",
            path,
            ("audit",),
        )
    conflicts: list[str] = []
    automatic, clash = _three_way(base.automatic, ours.automatic, theirs.automatic)
    if clash:
        conflicts.append("automatic marks (both sides recomputed them)")
    readings: list[ReviewerReading] = []
    for reviewer in sorted({r.reviewer for s in (base, ours, theirs) for r in s.readings}):
        merged = _merge_reading(
            reviewer,
            base.reading(reviewer),
            ours.reading(reviewer),
            theirs.reading(reviewer),
            conflicts,
        )
        if merged is not None:
            readings.append(merged)
    if conflicts:
        raise MergeConflictError(
            "cannot merge: both windows changed " + "; ".join(sorted(conflicts)[:10]),
            path,
            tuple(sorted(conflicts)),
        )
    cache, clash = _three_way(base.listing_cache, ours.listing_cache, theirs.listing_cache)
    if clash:
        # derived from the automatic marks, never truth: keep the one matching them
        cache = ours.listing_cache if automatic is ours.automatic else theirs.listing_cache
    their_ids = {e.id for e in theirs.audit}
    audit = theirs.audit + tuple(e for e in ours.audit[n:] if e.id not in their_ids)
    return replace(
        theirs, automatic=automatic, readings=tuple(readings), audit=audit, listing_cache=cache
    )
