"""The cached listing summary: a few measured values the worklist shows without opening records.

This is a *cache derived from the automatic marks*, labelled with the engine version and record
fingerprint that produced it, stored in the sidecar's ``listing_cache``. It is never truth: the
window recomputes every value from signal + marks (with the reader's overrides) when a record is
opened, and a cache made by another engine version is shown as stale. It deliberately holds no
reviewer's values, so a blinded second reader's worklist shows nothing of the first reading.

``reasons`` are the engine's own reasons of the automatic reading (``Reading.reasons``) of the
kinds a table row carries (``reason_text.CSV_KINDS``: not comparable, caution), as the panel,
the report and ``reviewapp measure`` show them; None for a cache written before it kept them.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import asdict, dataclass
from datetime import UTC, datetime
from typing import Any

from reviewapp.core.measure.reason_text import CSV_KINDS
from reviewapp.core.measure.types import ValueReason

CACHE_KIND = "listing cache: values from the automatic marks; never truth, recomputed on open"


@dataclass(frozen=True)
class CachedSummary:
    """Global values of one reading, for the worklist only (ms, bpm; None = not measurable)."""

    engine_version: str
    record_fingerprint: str
    computed_at_utc: str
    hr_bpm: float | None = None
    pr_ms: float | None = None
    qrs_ms: float | None = None
    qt_ms: float | None = None
    qtc_bazett_ms: float | None = None
    qtc_fridericia_ms: float | None = None
    flags: tuple[str, ...] = ()
    reasons: tuple[ValueReason, ...] | None = ()

    def qtc_ms(self, formula: str = "fridericia") -> float | None:
        return self.qtc_bazett_ms if formula == "bazett" else self.qtc_fridericia_ms

    def to_json(self) -> dict[str, Any]:
        d = asdict(self)
        d["flags"] = list(self.flags)
        if self.reasons is None:
            del d["reasons"]
        else:
            d["reasons"] = [
                {"quantity": r.quantity, "kind": r.kind, "text": r.text} for r in self.reasons
            ]
        d["kind"] = CACHE_KIND
        return d

    @classmethod
    def from_json(cls, d: Mapping[str, Any]) -> CachedSummary | None:
        """Parse a cache dict; None if it is not ours or is malformed (a cache is optional)."""
        if not isinstance(d, Mapping) or d.get("kind") != CACHE_KIND:
            return None
        try:

            def num(key: str) -> float | None:
                v = d.get(key)
                if v is None:
                    return None
                if isinstance(v, bool) or not isinstance(v, int | float):
                    raise TypeError(key)
                return float(v)

            flags = d.get("flags") or []
            if not isinstance(flags, list) or not all(isinstance(f, str) for f in flags):
                return None
            reasons = _reasons(d.get("reasons"))
            return cls(
                engine_version=str(d["engine_version"]),
                record_fingerprint=str(d["record_fingerprint"]),
                computed_at_utc=str(d.get("computed_at_utc", "")),
                hr_bpm=num("hr_bpm"),
                pr_ms=num("pr_ms"),
                qrs_ms=num("qrs_ms"),
                qt_ms=num("qt_ms"),
                qtc_bazett_ms=num("qtc_bazett_ms"),
                qtc_fridericia_ms=num("qtc_fridericia_ms"),
                flags=tuple(flags),
                reasons=reasons,
            )
        except (KeyError, TypeError, ValueError):
            return None


def _reasons(items: Any) -> tuple[ValueReason, ...] | None:
    if items is None:
        return None
    return tuple(
        ValueReason(str(r["quantity"]), r["kind"], str(r["text"]))
        for r in items
        if r["kind"] in CSV_KINDS
    )


def summarise(reading: Any, *, engine_version: str, fingerprint: str) -> CachedSummary:
    """Build the cache from an engine ``Reading`` made without overrides (automatic marks)."""
    if reading.overrides:
        raise ValueError("the listing cache is made from the automatic marks only")
    iv = reading.measurements.intervals

    def r1(v: float | None) -> float | None:
        return None if v is None else round(float(v), 1)

    return CachedSummary(
        engine_version=engine_version,
        record_fingerprint=fingerprint,
        computed_at_utc=datetime.now(UTC).isoformat(timespec="seconds"),
        hr_bpm=r1(iv.hr_bpm),
        pr_ms=r1(iv.pr_ms),
        qrs_ms=r1(iv.qrs_ms),
        qt_ms=r1(iv.qt_ms),
        qtc_bazett_ms=r1(iv.qtc_bazett_ms),
        qtc_fridericia_ms=r1(iv.qtc_fridericia_ms),
        flags=tuple(f.text for f in reading.findings),
        reasons=tuple(r for r in reading.reasons if r.kind in CSV_KINDS),
    )
