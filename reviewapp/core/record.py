"""The record model: one frozen ``Record`` every reader returns.

Signals are physical values in millivolts, float32, shaped (n_samples, n_leads). Samples are
served through a ``SignalSource`` so that a 24-hour recording can stay on disk (memory-mapped)
and be read window by window; short resting ECGs are simply held in memory.
"""

from __future__ import annotations

import math
import os
import re
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from datetime import datetime
from functools import cached_property
from pathlib import Path
from typing import Protocol

import numpy as np

from reviewapp.core.errors import RecordError

STANDARD_12 = ("I", "II", "III", "aVR", "aVL", "aVF", "V1", "V2", "V3", "V4", "V5", "V6")
LIMB_LEADS = STANDARD_12[:6]
CABRERA_ORDER = ("aVL", "I", "-aVR", "II", "aVF", "III")

# Peak-to-peak below this over the scanned span counts as a flat (disconnected) lead.
# Common practice, no source: 20 uV is below any physiological ECG deflection.
FLAT_PEAK_TO_PEAK_MV = 0.02

_ALIASES = {
    "i": "I",
    "ii": "II",
    "iii": "III",
    "avr": "aVR",
    "avl": "aVL",
    "avf": "aVF",
    "lead i": "I",
    "lead ii": "II",
    "lead iii": "III",
    "mdc_ecg_lead_i": "I",
    "mdc_ecg_lead_ii": "II",
    "mdc_ecg_lead_iii": "III",
    "mdc_ecg_lead_avr": "aVR",
    "mdc_ecg_lead_avl": "aVL",
    "mdc_ecg_lead_avf": "aVF",
    "vx": "X",
    "vy": "Y",
    "vz": "Z",
    "x": "X",
    "y": "Y",
    "z": "Z",
}
_V_LEAD = re.compile(r"^(?:lead\s*|mdc_ecg_lead_)?v\s*([1-9])([r]?)$", re.IGNORECASE)


def normalise_lead_name(name: str) -> str:
    """Return the standard spelling of a lead name (``avl`` -> ``aVL``, ``v1`` -> ``V1``).

    Names that are not standard 12-lead or Frank leads are kept as given (stripped), e.g.
    ``MLII`` on Holter-style records.

    >>> [normalise_lead_name(n) for n in ("avf", "MDC_ECG_LEAD_V2", "MLII")]
    ['aVF', 'V2', 'MLII']
    """
    raw = name.strip()
    key = raw.lower().replace("-", "_") if raw.upper().startswith("MDC") else raw.lower()
    if key in _ALIASES:
        return _ALIASES[key]
    m = _V_LEAD.match(raw)
    if m:
        return f"V{m.group(1)}{'R' if m.group(2) else ''}"
    return raw


@dataclass(frozen=True)
class LeadInfo:
    """Facts about one lead. ``derived`` leads were computed, not recorded."""

    name: str
    original_name: str = ""
    units: str = "mV"
    derived: bool = False
    missing: bool = False
    flat: bool = False
    adc_gain_per_mv: float | None = None
    adc_baseline: int | None = None
    adc_resolution_bits: int | None = None
    signal_file: str | None = None


@dataclass(frozen=True)
class SubjectFacts:
    """What the file says about the subject and acquisition; None where it says nothing."""

    subject_id: str | None = None
    age_years: float | None = None
    sex: str | None = None  # "female" | "male" | None
    acquired_at: datetime | None = None
    comments: tuple[str, ...] = ()
    # False when the file gives only the acquisition date: ``acquired_at`` is then midnight
    # of that day and its time of day must not be shown.
    acquired_time_known: bool = True


class SignalSource(Protocol):
    """Serves windows of a signal in mV as float32 (n, n_leads)."""

    @property
    def n_samples(self) -> int: ...

    @property
    def n_leads(self) -> int: ...

    def read(self, start: int, stop: int) -> np.ndarray: ...


@dataclass(frozen=True)
class ArraySource:
    """A signal held in memory."""

    data: np.ndarray  # (n_samples, n_leads) float32 mV

    @property
    def n_samples(self) -> int:
        return int(self.data.shape[0])

    @property
    def n_leads(self) -> int:
        return int(self.data.shape[1])

    def read(self, start: int, stop: int) -> np.ndarray:
        return self.data[start:stop]


@dataclass(frozen=True)
class DigitalMemmapSource:
    """Integer samples on disk (memory-mapped), converted to mV window by window.

    ``physical = (digital - baseline) / gain``; ``invalid`` digital codes (WFDB's NaN sentinel)
    become NaN.
    """

    digital: np.ndarray  # (n_samples, n_leads) integer memmap
    gain_per_mv: np.ndarray  # (n_leads,)
    baseline: np.ndarray  # (n_leads,)
    invalid_code: int | None = None

    @property
    def n_samples(self) -> int:
        return int(self.digital.shape[0])

    @property
    def n_leads(self) -> int:
        return int(self.digital.shape[1])

    def read(self, start: int, stop: int) -> np.ndarray:
        d = np.asarray(self.digital[start:stop])
        out = (d.astype(np.float32) - self.baseline.astype(np.float32)) / self.gain_per_mv.astype(
            np.float32
        )
        if self.invalid_code is not None:
            out[d == self.invalid_code] = np.nan
        return out


@dataclass(frozen=True)
class LinearSource:
    """Leads computed as linear combinations of another source's leads: ``out = x @ matrix``.

    Used to reorder leads and to derive III, aVR, aVL, aVF from I and II.
    """

    base: SignalSource
    matrix: np.ndarray  # (base.n_leads, n_out) float32

    @property
    def n_samples(self) -> int:
        return self.base.n_samples

    @property
    def n_leads(self) -> int:
        return int(self.matrix.shape[1])

    def read(self, start: int, stop: int) -> np.ndarray:
        x = self.base.read(start, stop)
        gaps = np.isnan(x)
        if not gaps.any():
            return (x @ self.matrix).astype(np.float32, copy=False)
        # NaN * 0 is NaN: a gap in one lead must not blank the leads that do not use it.
        out = (np.where(gaps, np.float32(0), x) @ self.matrix).astype(np.float32, copy=False)
        uses = (self.matrix != 0).astype(np.float32)
        out[(gaps.astype(np.float32) @ uses) > 0] = np.nan
        return out


@dataclass(frozen=True, eq=False)
class PickSource:
    """Leads picked (and scaled) from another source's columns, plus a few weighted sums.

    ``out[:, j] = base[:, pick[j]] * scale[j]`` where ``pick[j] >= 0``; the leads listed in
    ``sums`` (output column, ((base column, weight), ...)) are computed. Unlike a dense
    ``LinearSource`` matrix its size and cost grow linearly with the number of leads, so a
    file of 10^5 columns costs 10^5, not 10^10. A gap (NaN) in a lead reaches only the leads
    made from it.
    """

    base: SignalSource
    pick: np.ndarray  # (n_out,) int64, -1 where the lead is a sum
    scale: np.ndarray  # (n_out,) float32
    sums: tuple[tuple[int, tuple[tuple[int, float], ...]], ...] = ()

    @property
    def n_samples(self) -> int:
        return self.base.n_samples

    @property
    def n_leads(self) -> int:
        return int(self.pick.shape[0])

    def read(self, start: int, stop: int) -> np.ndarray:
        x = np.asarray(self.base.read(start, stop), dtype=np.float32)
        out = np.empty((x.shape[0], self.n_leads), dtype=np.float32)
        picked = self.pick >= 0
        with np.errstate(over="ignore", invalid="ignore"):
            out[:, picked] = x[:, self.pick[picked]] * self.scale[picked]
            for j, terms in self.sums:
                acc = np.zeros(x.shape[0], dtype=np.float32)
                for col, weight in terms:
                    acc += np.float32(weight) * x[:, col]
                out[:, j] = acc
        return out


# The memory budget of a whole record held in memory (``signal_mv``, text formats read whole,
# the analysis): a resting ECG (10 s x 12 leads at 500 Hz) is 0.24 MB as float32; the default
# of 64 MB still holds 23 minutes of 12 leads at 1 kHz, and the analysis needs a few times the
# signal on top (3-4x measured on a 5-minute record), so a workstation with a few GB is safe.
# Longer records stay on disk and are paged in windows. Set REVIEWAPP_SIGNAL_BUDGET_MB to change
# it (common practice, no source: sized for a resting-ECG workstation).
DEFAULT_SIGNAL_BUDGET_MB = 64.0
SIGNAL_BUDGET_ENV = "REVIEWAPP_SIGNAL_BUDGET_MB"
# Bytes of one sample of one lead as held (float32 mV).
_BYTES_PER_VALUE = 4


def signal_budget_bytes() -> int:
    """The memory budget for one record's samples held in memory, in bytes.

    From ``REVIEWAPP_SIGNAL_BUDGET_MB`` when it is a positive number, else 64 MB.
    """
    text = os.environ.get(SIGNAL_BUDGET_ENV, "").strip()
    try:
        mb = float(text) if text else DEFAULT_SIGNAL_BUDGET_MB
    except ValueError:
        mb = DEFAULT_SIGNAL_BUDGET_MB
    if not (math.isfinite(mb) and mb > 0):
        mb = DEFAULT_SIGNAL_BUDGET_MB
    return int(mb * 2**20)


PAGE_IT = "page through it in the window instead"
READ_WHOLE = "this format is read whole, so the file cannot be opened within the budget"


def check_signal_budget(
    n_samples: int,
    n_leads: int,
    path: Path | None,
    what: str = "the record",
    advice: str = PAGE_IT,
) -> None:
    """Refuse (RecordError naming ``path``) before holding ``n_samples`` x ``n_leads`` values
    above the memory budget (``signal_budget_bytes``).

    >>> check_signal_budget(5000, 12, None)  # a resting ECG: 0.24 MB
    >>> check_signal_budget(49_000_000, 1, None)
    Traceback (most recent call last):
    ...
    reviewapp.core.errors.RecordError: the record would hold 49,000,000 samples x 1 leads ...
    """
    need = int(n_samples) * int(n_leads) * _BYTES_PER_VALUE
    budget = signal_budget_bytes()
    if need > budget:
        raise RecordError(
            f"{what} would hold {int(n_samples):,} samples x {int(n_leads):,} leads "
            f"({need / 2**20:,.0f} MB) in memory, above the {budget / 2**20:,.0f} MB budget "
            f"for one record ({SIGNAL_BUDGET_ENV}); {advice}",
            path,
        )


@dataclass(frozen=True, eq=False)
class Record:
    """One ECG recording, as every reader returns it.

    Attributes:
        name: record name (file stem).
        fs_hz: sampling rate in Hz.
        leads: per-lead facts, in signal column order; ``lead_names`` gives the names.
        source: serves the signal in mV.
        subject: subject and acquisition facts from the file.
        source_path: the file the record came from (header file for WFDB).
        source_format: short format name ("WFDB", "EDF", "CSV", "HL7 aECG", "DICOM", "synthetic").
        notes: non-fatal remarks from reading (e.g. "units not given, assumed mV").
    """

    name: str
    fs_hz: float
    leads: tuple[LeadInfo, ...]
    source: SignalSource
    subject: SubjectFacts = field(default_factory=SubjectFacts)
    source_path: Path | None = None
    source_format: str = ""
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        where = self.source_path
        if not np.isfinite(self.fs_hz) or self.fs_hz <= 0:
            raise RecordError(f"sampling rate must be a positive number, got {self.fs_hz!r}", where)
        if len(self.leads) != self.source.n_leads:
            raise RecordError(
                f"{len(self.leads)} lead names but {self.source.n_leads} signal columns", where
            )
        if len(self.leads) == 0:
            raise RecordError("the record has no leads", where)
        if self.source.n_samples <= 0:
            raise RecordError("the record has no samples", where)

    @cached_property
    def lead_names(self) -> tuple[str, ...]:
        return tuple(lead.name for lead in self.leads)

    @cached_property
    def _column_of(self) -> dict[str, int]:
        out: dict[str, int] = {}
        for i, name in enumerate(self.lead_names):
            out.setdefault(name, i)
        return out

    @property
    def n_samples(self) -> int:
        return self.source.n_samples

    @property
    def n_leads(self) -> int:
        return len(self.leads)

    @property
    def duration_s(self) -> float:
        return self.n_samples / self.fs_hz

    def lead_index(self, name: str) -> int:
        """Column of a lead by (any spelling of) its name; KeyError if absent."""
        column = self._column_of.get(normalise_lead_name(name))
        if column is None:
            raise KeyError(name)
        return column

    def window(self, start: int, stop: int) -> np.ndarray:
        """Samples ``start:stop`` (clipped to the record) of every lead, mV float32 (n, n_leads)."""
        start = max(0, int(start))
        stop = min(self.n_samples, int(stop))
        if stop <= start:
            return np.zeros((0, self.n_leads), dtype=np.float32)
        return np.asarray(self.source.read(start, stop), dtype=np.float32)

    def window_s(self, start_s: float, stop_s: float) -> np.ndarray:
        """Like ``window`` with times in seconds from record start."""
        return self.window(round(start_s * self.fs_hz), round(stop_s * self.fs_hz))

    @cached_property
    def signal_mv(self) -> np.ndarray:
        """The whole signal in mV, float32 (n_samples, n_leads), read-only. Loaded once."""
        check_signal_budget(
            self.n_samples,
            self.n_leads,
            self.source_path,
            f"the whole record ({_duration_text(self.duration_s)})",
        )
        data = np.ascontiguousarray(self.window(0, self.n_samples))
        data.setflags(write=False)
        return data

    def with_leads(self, leads: Sequence[LeadInfo]) -> Record:
        return replace(self, leads=tuple(leads))


# Shortest record analysed: two beats even at 30 bpm, and enough signal for the filters
# (common practice, no source). The engine's filters fail on shorter records (a 1 ms aECG).
MIN_ANALYSIS_S = 2.0
# Lowest sampling rate analysed: the QRS detector's pass band reaches 18 Hz and is designed
# below 0.4 x the rate (core/dsp/qrs.py), so 45 Hz is its floor; at 50 Hz a QRS of 80-120 ms
# still spans 4-6 samples. Below that no QRS can be told (common practice, no source).
MIN_ANALYSIS_FS_HZ = 50.0


def check_analysable(record: Record, path: Path | None = None) -> None:
    """Refuse (RecordError naming ``path``, default the record's file) a record the analysis
    cannot work on: shorter than MIN_ANALYSIS_S, sampled below MIN_ANALYSIS_FS_HZ, or too
    large to hold whole within the memory budget. Cheap: nothing is read.

    >>> import numpy as np
    >>> check_analysable(record_from_array(np.zeros((5000, 1)), 500.0, ["V1"]))
    >>> check_analysable(record_from_array(np.zeros((1, 1)), 1000.0, ["V1"]))
    Traceback (most recent call last):
    ...
    reviewapp.core.errors.RecordError: record too short to measure (1 samples, 0.001 s; ...
    """
    where = path if path is not None else record.source_path
    if record.duration_s < MIN_ANALYSIS_S:
        raise RecordError(
            f"record too short to measure ({record.n_samples} samples, "
            f"{record.duration_s:.3g} s; at least {MIN_ANALYSIS_S:g} s needed)",
            where,
        )
    if record.fs_hz < MIN_ANALYSIS_FS_HZ:
        raise RecordError(
            f"sampling rate {record.fs_hz:g} Hz is too low to measure (at least "
            f"{MIN_ANALYSIS_FS_HZ:g} Hz needed: a QRS complex must span several samples)",
            where,
        )
    check_signal_budget(
        record.n_samples,
        record.n_leads,
        where,
        f"the whole record ({_duration_text(record.duration_s)})",
    )


def _duration_text(seconds: float) -> str:
    if seconds >= 3600:
        return f"{seconds / 3600:.1f} h"
    if seconds >= 60:
        return f"{seconds / 60:.1f} min"
    return f"{seconds:.3g} s"


def flat_lead_mask(signal_mv: np.ndarray) -> np.ndarray:
    """True for leads that are all NaN or whose peak-to-peak is below FLAT_PEAK_TO_PEAK_MV."""
    with np.errstate(invalid="ignore"):
        if signal_mv.shape[0] == 0:
            return np.ones(signal_mv.shape[1], dtype=bool)
        finite = np.isfinite(signal_mv)
        all_nan = ~finite.any(axis=0)
        safe = np.where(finite, signal_mv, np.nan)
        ptp = np.nanmax(safe, axis=0, initial=-np.inf, where=finite) - np.nanmin(
            safe, axis=0, initial=np.inf, where=finite
        )
        return all_nan | (ptp < FLAT_PEAK_TO_PEAK_MV)


def _normalised(lead: LeadInfo) -> LeadInfo:
    name = normalise_lead_name(lead.name)
    if name == lead.name and lead.original_name:
        return lead
    return replace(lead, name=name, original_name=lead.original_name or lead.name)


# At most this many values are read to judge which leads are flat (a minute of 12 leads at
# 1 kHz is 720,000).
_FLAT_SCAN_VALUES = 1_000_000


def build_record(
    *,
    name: str,
    fs_hz: float,
    source: SignalSource,
    leads: Sequence[LeadInfo],
    subject: SubjectFacts | None = None,
    source_path: Path | None = None,
    source_format: str = "",
    notes: Sequence[str] = (),
    derive_limb_leads: bool = True,
    flat_scan_samples: int = 60_000,
) -> Record:
    """Assemble a Record: normalise names, flag flat leads, derive missing limb leads.

    Readers call this rather than constructing ``Record`` directly so every format gets the
    same treatment. Flatness is judged on the first ``flat_scan_samples`` samples (a minute at
    1 kHz) so that opening a 24-hour file stays fast.
    """
    where = source_path
    if not np.isfinite(fs_hz) or fs_hz <= 0:
        raise RecordError(f"sampling rate must be a positive number, got {fs_hz!r}", where)
    if source.n_samples <= 0:
        raise RecordError("the record has no samples", where)
    leads = [_normalised(lead) for lead in leads]
    counts = Counter(lead.name for lead in leads)
    dupes = sorted(n for n, k in counts.items() if k > 1)
    if dupes:
        shown = ", ".join(dupes[:10]) + (f" and {len(dupes) - 10} more" if len(dupes) > 10 else "")
        raise RecordError(f"lead names appear more than once: {shown}", where)
    # Judge flatness on at most _FLAT_SCAN_VALUES values, so a file of very many columns is
    # not read whole just to open it.
    scan = min(source.n_samples, flat_scan_samples, max(1, _FLAT_SCAN_VALUES // max(1, len(leads))))
    head = np.asarray(source.read(0, scan), dtype=np.float32)
    flat = flat_lead_mask(head)
    # dataclasses.replace costs ~15 us: only for the leads that change (10^5 columns).
    leads = [
        replace(lead, flat=True) if f and not lead.flat else lead
        for lead, f in zip(leads, flat.tolist(), strict=True)
    ]
    record = Record(
        name=name,
        fs_hz=float(fs_hz),
        leads=tuple(leads),
        source=source,
        subject=subject or SubjectFacts(),
        source_path=source_path,
        source_format=source_format,
        notes=tuple(notes),
    )
    if derive_limb_leads:
        record = with_derived_limb_leads(record)
    return record


def with_derived_limb_leads(record: Record) -> Record:
    """Add III, aVR, aVL, aVF computed from I and II where the record lacks them.

    Einthoven: III = II - I. Goldberger: aVR = -(I + II)/2, aVL = I - II/2, aVF = II - I/2.
    (Standard lead relations; e.g. Malmivuo & Plonsey, Bioelectromagnetism, 1995, ch. 15.)
    Derived leads are flagged ``derived=True`` and placed in standard order after II.
    """
    names = list(record.lead_names)
    if "I" not in names or "II" not in names:
        return record
    recipes = {
        "III": {"I": -1.0, "II": 1.0},
        "aVR": {"I": -0.5, "II": -0.5},
        "aVL": {"I": 1.0, "II": -0.5},
        "aVF": {"I": -0.5, "II": 1.0},
    }
    wanted = [n for n in ("III", "aVR", "aVL", "aVF") if n not in names]
    if not wanted:
        return record
    column = {n: i for i, n in enumerate(names)}
    i_col, ii_col = column["I"], column["II"]
    # Output order: existing leads, with derived ones inserted in standard limb order.
    new_names = [n for n in STANDARD_12 if n in column or n in wanted]
    placed = set(new_names)
    new_names += [n for n in names if n not in placed]
    pick = np.full(len(new_names), -1, dtype=np.int64)
    sums: list[tuple[int, tuple[tuple[int, float], ...]]] = []
    new_leads: list[LeadInfo] = []
    for j, n in enumerate(new_names):
        if n in column:
            pick[j] = column[n]
            new_leads.append(record.leads[column[n]])
        else:
            sums.append((j, ((i_col, recipes[n]["I"]), (ii_col, recipes[n]["II"]))))
            src = record.leads[i_col]
            new_leads.append(
                LeadInfo(
                    name=n,
                    original_name=n,
                    derived=True,
                    flat=record.leads[i_col].flat and record.leads[ii_col].flat,
                    units=src.units,
                )
            )
    source = PickSource(record.source, pick, np.ones(len(new_names), np.float32), tuple(sums))
    return replace(
        record,
        leads=tuple(new_leads),
        source=source,
        notes=(*record.notes, f"leads {', '.join(wanted)} derived from I and II (not recorded)"),
    )


def record_from_array(
    signal_mv: np.ndarray,
    fs_hz: float,
    lead_names: Sequence[str],
    *,
    name: str = "array",
    source_format: str = "array",
    subject: SubjectFacts | None = None,
    source_path: Path | None = None,
    derive_limb_leads: bool = True,
) -> Record:
    """Wrap an in-memory (n_samples, n_leads) mV array as a Record (tests, synth, CSV)."""
    data = np.asarray(signal_mv, dtype=np.float32)
    if data.ndim != 2:
        raise RecordError(
            f"signal must be 2-D (samples x leads), got shape {data.shape}", source_path
        )
    if data.shape[1] != len(lead_names):
        raise RecordError(
            f"{len(lead_names)} lead names but {data.shape[1]} signal columns", source_path
        )
    data = np.ascontiguousarray(data)
    data.setflags(write=False)
    return build_record(
        name=name,
        fs_hz=fs_hz,
        source=ArraySource(data),
        leads=[LeadInfo(name=n) for n in lead_names],
        subject=subject,
        source_path=source_path,
        source_format=source_format,
        derive_limb_leads=derive_limb_leads,
    )
