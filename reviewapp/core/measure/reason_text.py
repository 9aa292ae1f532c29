"""The one writer of a reason: why a value is not measured, not comparable with its limits, not
judged, or less reliable (``ValueReason``).

Every place a reader sees a value (the summary dock's tables and its list of reasons, the
report page's table and its statements, the report CSV) takes the reason's words from here, so
a blank cell or a QTc in a wide QRS never stands without its reason, and the reason never reads
two ways:

- ``cell_text``: the few words in the cell beside the value: the not-measured cause ("no P wave
  marked"), else the kind and its cause ("not comparable: QRS >= 120 ms", "not applied: paced
  rhythm", "caution: irregular rhythm").
- ``statements``: each reason's full text once (with its source), naming the values it
  concerns when the text does not; most important first: not comparable, caution, not
  applied, not measured.
- ``brief``: a statement's what, cause and source without the explanation between them,
  where room is scarce (the report page).
- ``csv_cells``: the two table columns of a whole record's reasons, ``not_comparable`` and
  ``less_reliable`` (``reviewapp measure`` CSV and the batch summary).

The cause is the part of a text after "<what>: " up to the first " (", ";" or "," (the
convention of ``ValueReason.text``).
"""

from __future__ import annotations

import re
from collections.abc import Collection, Iterable, Mapping
from dataclasses import dataclass

from reviewapp.core.measure.findings import LABELS
from reviewapp.core.measure.types import ValueReason

KIND_ORDER: tuple[str, ...] = ("not_comparable", "caution", "gated", "not_measured")
KIND_WORDS: dict[str, str] = {
    "not_comparable": "not comparable",
    "caution": "caution",
    "gated": "not applied",
    "not_measured": "not measured",
}
# A lead's own values, as ``Measurements.unmeasured`` names them ("V1.p_mv", "V1.st").
FIELD_LABELS: dict[str, str] = {
    "p_mv": "P amplitude",
    "q_mv": "Q amplitude",
    "r_mv": "R amplitude",
    "s_mv": "S amplitude",
    "r_prime_mv": "R' amplitude",
    "t_mv": "T amplitude",
    "q_ms": "Q duration",
    "st_j_mv": "ST at J",
    "st_j60_mv": "ST at J+60",
    "st_j80_mv": "ST at J+80",
    "st": "ST levels",
    "qrs": "Q, R and S amplitudes",
}


# In a cell a missing value's cause comes first (there is no value to compare or doubt).
CELL_ORDER: tuple[str, ...] = ("not_measured", "not_comparable", "gated", "caution")


def _rank(kind: str, order: tuple[str, ...] = KIND_ORDER) -> int:
    return order.index(kind) if kind in order else len(order)


def _cell_rank(reason: ValueReason) -> int:
    return _rank(reason.kind, CELL_ORDER)


def cause(text: str) -> str:
    """The cause of a reason in a few words ("" when the text states none).

    >>> cause("QTc not comparable with the QTc limits: QRS >= 120 ms, the QT holds ...")
    'QRS >= 120 ms'
    >>> cause("ST/Q criteria not applied: paced rhythm; bundle branch block ... (Thygesen)")
    'paced rhythm'
    >>> cause("no P wave marked")
    ''
    """
    _, sep, rest = text.partition(": ")
    if not sep:
        return ""
    return re.split(r" \(|;|,", rest, maxsplit=1)[0].strip()


def short_text(reason: ValueReason) -> str:
    """One reason in a few words: a not-measured cause as it is (up to its source), else the
    kind and its cause.

    >>> short_text(ValueReason("p_ms", "not_measured", "no P wave marked"))
    'no P wave marked'
    >>> short_text(ValueReason("pr_ms", "gated", "PR, QRS duration ... not applied: paced rhythm"))
    'not applied: paced rhythm'
    """
    if reason.kind == "not_measured":
        return reason.text.split(" (", 1)[0].strip()
    why = cause(reason.text)
    word = KIND_WORDS.get(reason.kind, reason.kind)
    return f"{word}: {why}" if why else word


def cell_text(reasons: Iterable[ValueReason], *, every: bool = False, sep: str = " · ") -> str:
    """The words in the cell beside one value: its most important reason (``every``: each
    distinct one, joined by " · "); "" when there is none. A missing value's cause comes
    first, then not comparable, not applied, caution (``CELL_ORDER``).

    >>> nc = ValueReason("qtc_bazett_ms", "not_comparable", "QTc not comparable: QRS >= 120 ms")
    >>> ca = ValueReason("qtc_bazett_ms", "caution", "QTc less reliable: irregular rhythm, ...")
    >>> cell_text([ca, nc]), cell_text([ca, nc], every=True)
    ('not comparable: QRS >= 120 ms', 'not comparable: QRS >= 120 ms · caution: irregular rhythm')
    """
    ordered = sorted(reasons, key=_cell_rank)
    texts = list(dict.fromkeys(short_text(r) for r in ordered))
    if not texts:
        return ""
    return sep.join(texts) if every else texts[0]


def brief(text: str) -> str:
    """A reason in its shortest full form: what, the cause and the source, without the
    explanation between them (the report page, where room is scarce).

    >>> brief("ST not assessed: no P wave, so no PR segment to serve as the baseline "
    ...       "(Kligfield et al., Circulation 2007)")
    'ST not assessed: no P wave (Kligfield et al., Circulation 2007)'
    >>> brief("no P wave marked")
    'no P wave marked'
    """
    head, sep, _ = text.partition(": ")
    if not sep:
        return text
    source = re.search(r"\(([^()]*)\)\s*$", text)
    why = cause(text)
    out = f"{head}: {why}" if why else head
    return f"{out} ({source.group(1)})" if source else out


def cell_parts(
    reasons: Iterable[ValueReason], *, sep: str = " · ", caution_word_only: bool = False
) -> tuple[str, str]:
    """The cell words split for a table with a normal-range column and a flag column: (what
    stands in place of the range: "not comparable" or "not applied", else ""; the rest: the
    cause and every other reason in a few words). ``caution_word_only``: a caution says only
    "caution" (a narrow column; its cause is in the statement beside the table).

    >>> nc = ValueReason("qtc_bazett_ms", "not_comparable", "QTc not comparable: QRS >= 120 ms")
    >>> ca = ValueReason("qtc_bazett_ms", "caution", "QTc less reliable: irregular rhythm, ...")
    >>> cell_parts([ca, nc])
    ('not comparable', 'QRS >= 120 ms · caution: irregular rhythm')
    >>> cell_parts([ca])
    ('', 'caution: irregular rhythm')
    >>> cell_parts([ca, nc], sep="/", caution_word_only=True)
    ('not comparable', 'QRS >= 120 ms/caution')
    """
    ordered = sorted(reasons, key=_cell_rank)
    if not ordered:
        return "", ""

    def words(r: ValueReason) -> str:
        return KIND_WORDS["caution"] if caution_word_only and r.kind == "caution" else short_text(r)

    first = ordered[0]
    if first.kind not in ("not_comparable", "gated"):
        return "", sep.join(dict.fromkeys(words(r) for r in ordered))
    rest = [cause(first.text)] + [words(r) for r in ordered[1:]]
    return KIND_WORDS[first.kind], sep.join(dict.fromkeys(t for t in rest if t))


# The kinds a record's table row carries: a value shown but not to be compared with its
# limits, and one shown and compared but less reliable. (Not measured is a blank cell's own
# column; a criterion not applied is a statement's reason.)
CSV_KINDS: tuple[str, ...] = ("not_comparable", "caution")


def csv_cells(reasons: Iterable[ValueReason]) -> tuple[str, str]:
    """A record's reasons as two table cells: (not comparable, less reliable).

    Not comparable names every quantity with the first reason's full text; less reliable
    gives each distinct caution text once, after the quantities it concerns, "" when none.

    >>> nc = ValueReason("qtc_bazett_ms", "not_comparable", "QTc not comparable: QRS >= 120 ms")
    >>> ca = ValueReason("p_axis_deg", "caution", "axis less reliable: limb leads differ")
    >>> csv_cells([nc, ca])[0]
    'qtc_bazett_ms: QTc not comparable: QRS >= 120 ms'
    >>> from dataclasses import replace
    >>> csv_cells([nc, ca, replace(ca, quantity="t_axis_deg")])[1]
    'p_axis_deg t_axis_deg: axis less reliable: limb leads differ'
    >>> csv_cells([])
    ('', '')
    """
    rs = list(reasons)
    nc = [r for r in rs if r.kind == "not_comparable"]
    ca = [r for r in rs if r.kind == "caution"]
    not_comparable = " ".join(r.quantity for r in nc) + ": " + nc[0].text if nc else ""
    less_reliable = " | ".join(
        " ".join(r.quantity for r in ca if r.text == t) + ": " + t
        for t in dict.fromkeys(r.text for r in ca)
    )
    return not_comparable, less_reliable


def for_quantity(reasons: Iterable[ValueReason], quantity: str) -> tuple[ValueReason, ...]:
    """The reasons that concern ``quantity``, most important first."""
    return tuple(
        sorted((r for r in reasons if r.quantity == quantity), key=lambda r: _rank(r.kind))
    )


def for_lead_value(
    reasons: Iterable[ValueReason], lead: str, field: str
) -> tuple[ValueReason, ...]:
    """The reasons for one lead's value: its own, its group's ("<lead>.st" for an ST level,
    "<lead>.qrs" for a Q/R/S amplitude), the whole lead's, and a criterion not applied to the
    field in every lead (``gated`` on the field itself, e.g. the ST criteria)."""
    group = "st" if field.startswith("st_") else "qrs" if field in ("q_mv", "r_mv", "s_mv") else ""
    names = {f"{lead}.{field}", lead, "leads"} | ({f"{lead}.{group}"} if group else set())
    # The criterion a lead's value is judged by: every ST level by the ST criteria (on
    # "st_j_mv"), the Q wave by the Q-wave criteria (on "q_ms").
    criterion = "st_j_mv" if group == "st" else "q_ms" if field == "q_mv" else field
    out = [r for r in reasons if r.quantity in names]
    out += [r for r in reasons if r.quantity == criterion and r.kind == "gated"]
    return tuple(sorted(dict.fromkeys(out), key=lambda r: _rank(r.kind)))


def describe_quantities(quantities: Iterable[str], labels: Mapping[str, str] = LABELS) -> str:
    """The values a reason concerns, in words.

    >>> describe_quantities(["p_ms", "pr_ms"])
    'P duration; PR'
    >>> describe_quantities([f"{n}.p_mv" for n in ("I", "II", "III", "aVR", "aVL")])
    'P amplitude in 5 leads (I to aVL)'
    >>> describe_quantities(["V1.st", "V2.st", "V5"])
    'ST levels in V1, V2; lead V5'
    """
    by_field: dict[str, list[str]] = {}
    order: list[str] = []  # a field ("V1.st" -> "st" first seen) or a finished part, in order
    for q in quantities:
        lead, sep, field = q.partition(".")
        if sep:
            if field not in by_field:
                order.append("." + field)
            by_field.setdefault(field, []).append(lead)
        elif q in labels:
            order.append(labels[q])
        elif q == "leads":
            order.append("per-lead values")
        else:
            order.append(f"lead {q}" if "_" not in q else q)
    parts = []
    for item in order:
        if item.startswith("."):
            leads = by_field[item[1:]]
            where = (
                ", ".join(leads)
                if len(leads) <= 4
                else (f"{len(leads)} leads ({leads[0]} to {leads[-1]})")
            )
            item = f"{FIELD_LABELS.get(item[1:], item[1:])} in {where}"
        parts.append(item)
    return "; ".join(dict.fromkeys(parts))


@dataclass(frozen=True)
class Statement:
    """One reason's full text as the reader reads it, and what it concerns."""

    text: str
    kind: str  # the most important kind among the reasons with this text
    quantities: tuple[str, ...]


def statements(
    reasons: Iterable[ValueReason],
    *,
    shown: Collection[str] = (),
    measured_too: bool = True,
) -> tuple[Statement, ...]:
    """Each distinct reason once, most important kind first (then in the engine's order).

    A not-measured text names the values it concerns ("P amplitude in 12 leads: no P wave
    marked"); a group of not-measured values all in ``shown`` (each with its cell) is left out,
    and with ``measured_too`` False every not-measured-only group is (a page that shows no
    per-lead values).
    """
    groups: dict[str, list[ValueReason]] = {}
    for r in reasons:
        groups.setdefault(r.text, []).append(r)
    out: list[Statement] = []
    for text, rs in groups.items():
        kinds = {r.kind for r in rs}
        qs = tuple(dict.fromkeys(r.quantity for r in rs))
        if kinds == {"not_measured"}:
            elsewhere = [q for q in qs if q not in shown]  # the values without a cell of their own
            if not measured_too or not elsewhere:
                continue
            text = f"{describe_quantities(elsewhere)}: {text}"
        out.append(Statement(text, min(kinds, key=_rank), qs))
    out.sort(key=lambda s: _rank(s.kind))
    return tuple(out)
