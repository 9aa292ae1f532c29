"""Small helpers every reader shares: unit scaling, error wrapping, column-stacked sources."""

from __future__ import annotations

import re
from collections.abc import Iterable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import date
from pathlib import Path

import numpy as np

from reviewapp.core.errors import RecordError
from reviewapp.core.record import normalise_lead_name

# Voltage unit spellings met in WFDB, EDF, DICOM (UCUM) and aECG files -> factor to mV.
_VOLT_FACTORS_TO_MV = {
    "mv": 1.0,
    "millivolt": 1.0,
    "millivolts": 1.0,
    "uv": 1e-3,
    "µv": 1e-3,
    "μv": 1e-3,
    "microvolt": 1e-3,
    "microvolts": 1e-3,
    "nv": 1e-6,
    "nanovolt": 1e-6,
    "v": 1e3,
    "volt": 1e3,
    "volts": 1e3,
}


def mv_factor(units: str | None) -> float | None:
    """Factor that turns a value in ``units`` into mV; None when ``units`` is not a voltage.

    >>> mv_factor("uV"), mv_factor("mV"), mv_factor("V"), mv_factor("mmHg")
    (0.001, 1.0, 1000.0, None)
    """
    if units is None:
        return None
    key = re.sub(r"\s+", "", str(units)).lower()
    return _VOLT_FACTORS_TO_MV.get(key)


@contextmanager
def reading(path: Path, what: str) -> Iterator[None]:
    """Turn any library failure inside the block into a RecordError naming ``path``.

    Library readers (wfdb, pyedflib, pydicom, XML parsers) raise a zoo of exception types on
    damaged files; the user must only ever see one clear line.
    """
    try:
        yield
    except RecordError:
        raise
    except MemoryError:
        raise RecordError(f"not enough memory to read this {what}", path) from None
    except RecursionError:
        raise RecordError(f"{what} is nested too deeply to read", path) from None
    except Exception as err:
        detail = str(err).strip().splitlines()[0] if str(err).strip() else type(err).__name__
        # Libraries often start with the path themselves; the RecordError adds it once.
        for prefix in (f"{path}: ", f"{path.name}: "):
            detail = detail.removeprefix(prefix)
        if len(detail) > 200:
            detail = detail[:200] + "..."
        raise RecordError(f"cannot read {what}: {detail}", path) from err


@dataclass(frozen=True, eq=False)
class ColumnStackSource:
    """Several sources side by side (e.g. a WFDB record whose signals live in two files)."""

    parts: tuple  # tuple[SignalSource, ...] with equal n_samples

    @property
    def n_samples(self) -> int:
        return min(int(p.n_samples) for p in self.parts)

    @property
    def n_leads(self) -> int:
        return sum(int(p.n_leads) for p in self.parts)

    def read(self, start: int, stop: int) -> np.ndarray:
        return np.hstack([np.asarray(p.read(start, stop), dtype=np.float32) for p in self.parts])


@dataclass(frozen=True, eq=False)
class ScaledSource:
    """Another source with per-column factors applied (unit conversion to mV)."""

    base: object  # SignalSource
    factors: np.ndarray  # (n_leads,) float32

    @property
    def n_samples(self) -> int:
        return int(self.base.n_samples)  # type: ignore[attr-defined]

    @property
    def n_leads(self) -> int:
        return int(self.base.n_leads)  # type: ignore[attr-defined]

    def read(self, start: int, stop: int) -> np.ndarray:
        x = np.asarray(self.base.read(start, stop), dtype=np.float32)  # type: ignore[attr-defined]
        return x * self.factors.astype(np.float32)


class ChannelWindows:
    """Shared part of the lazy sources that read selected channels window by window (EDF,
    WFDB formats that cannot be memory-mapped) and scale them to mV.

    Subclasses are frozen dataclasses with ``total_samples``, ``channels`` and
    ``factors_to_mv`` fields and a ``read`` method built on ``clip`` and ``refuse_overflow``.
    """

    total_samples: int
    channels: tuple[int, ...]
    factors_to_mv: np.ndarray  # (n_leads,)

    @property
    def n_samples(self) -> int:
        return self.total_samples

    @property
    def n_leads(self) -> int:
        return len(self.channels)

    def clip(self, start: int, stop: int) -> tuple[int, int]:
        """``start:stop`` limited to the record; ``stop <= start`` means nothing to read."""
        return max(0, int(start)), min(self.total_samples, int(stop))

    @staticmethod
    def refuse_overflow(out_mv: np.ndarray, path: Path, problem: str) -> np.ndarray:
        """``out_mv`` unchanged, unless scaling overflowed to infinity: then ``problem``."""
        if np.isinf(out_mv).any():
            raise RecordError(problem, path)
        return out_mv


def frozen_mv(values: np.ndarray, path: Path, problem: str) -> np.ndarray:
    """In-memory signal as a contiguous, read-only float32 mV array.

    Values that overflow float32 (absurd scale, gain or sensitivity) are refused with
    ``problem``, never stored as infinities.
    """
    with np.errstate(over="ignore", invalid="ignore"):
        data = np.ascontiguousarray(values, dtype=np.float32)
    if not np.isfinite(data).all():
        raise RecordError(problem, path)
    data.setflags(write=False)
    return data


_LABEL_PREFIX = re.compile(r"^(?:lead|ecg|ekg)[\s_:-]+(?=\S)", re.IGNORECASE)


def clean_lead_label(label: str) -> str:
    """Drop a signal-type prefix from a channel label: ``"Lead aVR"`` -> ``"aVR"``.

    EDF+ labels start with the signal type (EDF+ specification, section 2.1.3.1, "ECG V1");
    DICOM code meanings read "Lead aVR". The bare lead name is what ``normalise_lead_name``
    understands.
    """
    return _LABEL_PREFIX.sub("", label.strip()).strip() or label.strip()


def listed(items: Iterable[object], limit: int = 12) -> str:
    """``"a, b, c"``; beyond ``limit`` items ``"a, b, ... and 99,988 more"``, so a note about a
    file of 10^5 columns stays one readable line.

    >>> listed(["I", "II"]), listed(range(20), limit=3)
    ('I, II', '0, 1, 2 and 17 more')
    """
    shown: list[str] = []
    extra = 0
    for item in items:
        if len(shown) < limit:
            shown.append(str(item))
        else:
            extra += 1
    return ", ".join(shown) + (f" and {extra:,} more" if extra else "")


def unique_names(names: Sequence[str]) -> list[str]:
    """Make repeated raw channel names distinct (``II``, ``II#2``) so nothing is dropped."""
    seen: dict[str, int] = {}
    out = []
    for raw in names:
        n = str(raw).strip() or "unnamed"
        key = normalise_lead_name(n)
        seen[key] = seen.get(key, 0) + 1
        out.append(n if seen[key] == 1 else f"{n}#{seen[key]}")
    return out


def require_finite(values: np.ndarray, path: Path, what: str) -> None:
    """Refuse NaN or infinite samples in text formats, naming where the first one is."""
    bad = ~np.isfinite(values)
    if bad.any():
        row, col = (
            (int(i) for i in np.argwhere(bad)[0]) if values.ndim == 2 else (int(np.argmax(bad)), 0)
        )
        raise RecordError(
            f"{what}: sample {row} of column {col + 1} is not a finite number "
            f"({values[row, col] if values.ndim == 2 else values[row]})",
            path,
        )


def completed_years(birth: date, at: date) -> float | None:
    """Age in completed years at ``at`` (birthdays counted by calendar); None if implausible."""
    years = at.year - birth.year - ((at.month, at.day) < (birth.month, birth.day))
    return float(years) if 0 <= years <= 130 else None
