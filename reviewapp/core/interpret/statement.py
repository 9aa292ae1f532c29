"""A made statement: the catalogue entry, the measured values that met its criteria, and why
some statements were not made."""

from __future__ import annotations

from dataclasses import dataclass

from reviewapp.core.interpret.catalogue import CATEGORY_ORDER, entry
from reviewapp.core.measure.limit_text import value_text
from reviewapp.core.measure.types import ValueReason


@dataclass(frozen=True)
class MetValue:
    """One measured value a statement rests on: ``label`` ("QRS duration", "R-peak time"),
    ``value`` in ``unit`` ("ms", "mV", "deg", "bpm", "mm*ms", "mm*s", "/min", "" for a
    count), and the lead it was measured in (None for a global value)."""

    label: str
    value: float
    unit: str
    lead: str | None = None

    @property
    def text(self) -> str:
        where = f" in {self.lead}" if self.lead else ""
        return f"{self.label}{where} {number_with_unit(self.value, self.unit)}"


def number_with_unit(value: float, unit: str) -> str:
    """A value as the reader sees it: the project's formatter for ms, mV, deg and bpm, whole
    numbers for counts and rates per minute, three decimals for mm x s.

    >>> number_with_unit(132.4, "ms"), number_with_unit(-45.2, "deg"), number_with_unit(3, "")
    ('132 ms', '-45°', '3')
    >>> number_with_unit(0.0412, "mm*s"), number_with_unit(2650.0, "mm*ms")
    ('0.041 mm·s', '2650 mm·ms')
    """
    if unit in ("ms", "mV", "deg", "bpm"):
        return value_text(value, unit)
    if unit == "mm*s":
        return f"{value:.3f} mm·s"
    if unit == "mm*ms":
        return f"{value:.0f} mm·ms"
    if unit == "/min":
        return f"{value:.0f}/min"
    if unit == "%":
        return f"{value:.0f} %"
    if not unit:
        return f"{value:.0f}" if float(value).is_integer() else f"{value:.2f}"
    return f"{value:g} {unit}"


@dataclass(frozen=True)
class Statement:
    """One statement of an interpretation.

    code/text/category/criteria/source: from the catalogue entry (``catalogue.ENTRIES``).
    values: the measured values that met the criteria. detail: specifics in words ("2 of 12
    beats", "ventricular rate 97 bpm", "leads V2, V3"). qualifiers: how the statement is to be
    read given the rest of the ECG ("in right bundle branch block ...").
    """

    code: str
    text: str
    category: str
    criteria: str
    source: str
    values: tuple[MetValue, ...] = ()
    detail: str = ""
    qualifiers: tuple[str, ...] = ()

    @property
    def line(self) -> str:
        """The statement as one line: text, then the detail."""
        return f"{self.text}: {self.detail}" if self.detail else self.text

    @property
    def values_text(self) -> str:
        return "; ".join(v.text for v in self.values)


def make(
    code: str,
    values: tuple[MetValue, ...] | list[MetValue] = (),
    detail: str = "",
    qualifiers: tuple[str, ...] | list[str] = (),
) -> Statement:
    """A statement of the catalogue entry ``code``."""
    d = entry(code)
    return Statement(
        d.code, d.text, d.category, d.criteria, d.source, tuple(values), detail, tuple(qualifiers)
    )


@dataclass(frozen=True)
class Interpretation:
    """The engine's statements, in reading order, and why statements were not made
    (``reasons``: kind "gated", quantity "statement:<code or group>")."""

    statements: tuple[Statement, ...] = ()
    reasons: tuple[ValueReason, ...] = ()

    def codes(self) -> tuple[str, ...]:
        return tuple(s.code for s in self.statements)

    def get(self, code: str) -> Statement | None:
        return next((s for s in self.statements if s.code == code), None)


def ordered(statements: list[Statement]) -> tuple[Statement, ...]:
    """Statements by category (lead checks first), keeping the rules' order within one."""
    return tuple(sorted(statements, key=lambda s: CATEGORY_ORDER.get(s.category, 99)))
