"""The numbers of a WFDB header, parsed strictly as header(5) defines them.

wfdb-python reads headers with regular expressions that stop at the first character they do not
expect and silently drop the rest of the line: the frequency ``5e2`` is read as 5 Hz (and the
signal length after it is lost), ``0.5e3`` as 0.5 Hz, an ADC gain ``2E2`` as gain 2 with units
"E2". The WFDB library itself reads these floating-point fields with C's ``sscanf("%lf")``, so
``5e2`` is 500 (PhysioNet, WFDB Programmer's Guide, header(5) and the library source's
``readheader``). This module parses the record line and the fields of each signal line that
decide sample values, with the one strict number parser (``numbers``); the reader then uses
these values and refuses a header the library would read differently where the library reads
the samples itself.

Record line:  ``name[/segments] signals [frequency[/counter[(base)]] [length [time [date]]]]``
Signal line:  ``file format[xframe][:skew][+offset] [gain[(baseline)][/units] [resolution ...]]``
Segment line: ``name length``
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import date, datetime, time
from pathlib import Path

from reviewapp.core.errors import RecordError
from reviewapp.core.io.numbers import DECIMAL_EXP, parse_int, parse_number

# header(5): "If the ADC gain is missing or zero, the default value (200) is assumed".
DEFAULT_ADC_GAIN = 200.0
_FORMAT = re.compile(
    r"(?P<fmt>[0-9]+)(?:x(?P<spf>[0-9]+))?(?::(?P<skew>[0-9]+))?(?:\+(?P<off>[0-9]+))?"
)
_GAIN = re.compile(r"(?P<gain>[^(/]+)(?:\((?P<base>[^)]*)\))?(?:/(?P<units>\S*))?")
_FREQ = re.compile(r"(?P<fs>[^/(]+)(?:/(?P<cf>[^(]+))?(?:\((?P<bc>[^)]*)\))?")


@dataclass(frozen=True)
class SignalFields:
    """The value-deciding fields of one signal line (None = not written: WFDB default)."""

    file_name: str
    fmt: str
    samps_per_frame: int | None
    skew: int | None
    byte_offset: int | None
    adc_gain: float | None
    baseline: int | None
    units: str | None
    uncalibrated: bool = False  # gain written as 0: WFDB's "uncalibrated", 200 adu per unit used


@dataclass(frozen=True)
class HeaderFields:
    """The record line's numbers and each signal (or segment) line's fields."""

    name: str
    n_segments: int | None  # multi-segment records only
    n_signals: int
    fs_hz: float | None
    sig_len: int | None
    signals: tuple[SignalFields, ...] = ()
    segments: tuple[tuple[str, int], ...] = ()
    base_time: str | None = None
    base_date: str | None = None


def body_lines(text: str) -> list[str]:
    """Header lines that are neither blank nor comments."""
    return [
        ln.strip() for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")
    ]


def parse_header(text: str, path: Path) -> HeaderFields:
    """Parse the header text strictly; RecordError naming ``path`` and the field otherwise."""
    lines = body_lines(text)
    if not lines:
        raise RecordError("WFDB header is empty", path)
    fields = lines[0].split()
    if len(fields) < 2:
        raise RecordError(
            f"record line {lines[0][:80]!r} must give the record name and number of signals", path
        )
    name, _, seg_text = fields[0].partition("/")
    n_segments = parse_int(seg_text, "number of segments", path) if seg_text else None
    n_signals = parse_int(fields[1], "number of signals", path)
    declared = n_segments if n_segments is not None else n_signals
    what = "segments" if n_segments is not None else "signals"
    if declared < 0 or len(lines) - 1 != declared:
        raise RecordError(
            f"header declares {declared} {what} but has {len(lines) - 1} {what[:-1]} lines", path
        )
    fs_hz = None
    if len(fields) > 2:
        m = _FREQ.fullmatch(fields[2])
        if m is None:
            raise RecordError(f"sampling frequency field {fields[2]!r} is not a number", path)
        fs_hz = parse_number(m.group("fs"), "sampling frequency", DECIMAL_EXP, path, positive=True)
        if m.group("cf") is not None:
            parse_number(m.group("cf"), "counter frequency", DECIMAL_EXP, path, positive=True)
        if m.group("bc") is not None:
            parse_number(m.group("bc"), "base counter value", DECIMAL_EXP, path)
    sig_len = None
    if len(fields) > 3:
        sig_len = parse_int(fields[3], "number of samples per signal", path)
    base_time = fields[4] if len(fields) > 4 else None
    base_date = fields[5] if len(fields) > 5 else None
    if n_segments is not None:
        segments = []
        for k, line in enumerate(lines[1:], start=1):
            parts = line.split()
            if len(parts) < 2:
                raise RecordError(f"segment line {k} {line[:60]!r} has no length", path)
            segments.append((parts[0], parse_int(parts[1], f"segment {parts[0]!r} length", path)))
        return HeaderFields(
            name,
            n_segments,
            n_signals,
            fs_hz,
            sig_len,
            segments=tuple(segments),
            base_time=base_time,
            base_date=base_date,
        )
    signals = tuple(_signal_line(k, line, path) for k, line in enumerate(lines[1:], start=1))
    return HeaderFields(
        name,
        None,
        n_signals,
        fs_hz,
        sig_len,
        signals=signals,
        base_time=base_time,
        base_date=base_date,
    )


def _time_of(text: str) -> time | None:
    """header(5) base time ``HH:MM:SS[.sss]`` (or ``MM:SS``, ``SS``); None if unreadable."""
    m = re.fullmatch(r"(?:(?:(\d{1,2}):)?(\d{1,2}):)?(\d{1,2})(?:\.(\d{1,6}))?", text)
    if m is None:
        return None
    h, mi, sec, frac = m.groups()
    try:
        return time(int(h or 0), int(mi or 0), int(sec), int((frac or "0").ljust(6, "0")))
    except ValueError:
        return None


def _date_of(text: str) -> date | None:
    """header(5) base date ``DD/MM/YYYY``; None if unreadable."""
    try:
        return datetime.strptime(text, "%d/%m/%Y").date()
    except ValueError:
        return None


def _signal_line(k: int, line: str, path: Path) -> SignalFields:
    parts = line.split()
    if len(parts) < 2:
        raise RecordError(f"signal line {k} {line[:60]!r} gives no storage format", path)
    m = _FORMAT.fullmatch(parts[1])
    if m is None:
        raise RecordError(
            f"signal line {k}: storage format field {parts[1][:40]!r} is not "
            "format[xsamples][:skew][+offset] in whole numbers",
            path,
        )

    def opt_int(text: str | None, what: str) -> int | None:
        return None if text is None else parse_int(text, f"signal line {k}: {what}", path)

    gain = baseline = units = None
    uncalibrated = False
    if len(parts) > 2:
        g = _GAIN.fullmatch(parts[2])
        if g is None:
            raise RecordError(
                f"signal line {k}: ADC gain field {parts[2][:40]!r} is not "
                "gain[(baseline)][/units]",
                path,
            )
        gain = parse_number(g.group("gain"), f"signal line {k}: ADC gain", DECIMAL_EXP, path)
        if gain == 0:  # header(5): a gain of 0 means uncalibrated; the default 200 applies
            gain, uncalibrated = DEFAULT_ADC_GAIN, True
        baseline = opt_int(g.group("base"), "baseline")
        units = g.group("units") or None
    return SignalFields(
        file_name=parts[0],
        fmt=m.group("fmt"),
        samps_per_frame=opt_int(m.group("spf"), "samples per frame"),
        skew=opt_int(m.group("skew"), "skew"),
        byte_offset=opt_int(m.group("off"), "byte offset"),
        adc_gain=gain,
        baseline=baseline,
        units=units,
        uncalibrated=uncalibrated,
    )


def _same(ours: object, theirs: object) -> bool:
    if ours is None:
        return True  # not written: both use WFDB's default
    if isinstance(ours, float):
        try:
            return theirs is not None and float(theirs) == ours  # type: ignore[arg-type]
        except (TypeError, ValueError):
            return False
    return theirs is not None and str(theirs) == str(ours)


def misread_fields(fields: HeaderFields, header: object) -> list[str]:
    """Fields that wfdb-python parsed differently from ``fields`` (strict header(5) reading)."""
    out = []
    for k, sig in enumerate(fields.signals):
        theirs = {
            "storage format": header.fmt[k],  # type: ignore[attr-defined]
            "samples per frame": header.samps_per_frame[k],  # type: ignore[attr-defined]
            "skew": header.skew[k],  # type: ignore[attr-defined]
            "byte offset": header.byte_offset[k],  # type: ignore[attr-defined]
            "ADC gain": header.adc_gain[k],  # type: ignore[attr-defined]
            "baseline": header.baseline[k],  # type: ignore[attr-defined]
        }
        ours = {
            "storage format": sig.fmt,
            "samples per frame": sig.samps_per_frame,
            "skew": sig.skew,
            "byte offset": sig.byte_offset,
            "ADC gain": sig.adc_gain,
            "baseline": sig.baseline,
        }
        out += [
            f"signal line {k + 1} {what}" for what in ours if not _same(ours[what], theirs[what])
        ]
    return out


def apply_fields(fields: HeaderFields, header: object) -> None:
    """Put the strictly parsed values into wfdb's header object (which our readers use).

    Where wfdb stopped early on the record line (``5e2``), the base time and date after the
    frequency were dropped with the rest of the line: they are read again from the tokens.
    """
    h = header
    if fields.fs_hz is not None:
        h.fs = fields.fs_hz  # type: ignore[attr-defined]
    if fields.sig_len is not None:
        h.sig_len = fields.sig_len  # type: ignore[attr-defined]
    if getattr(h, "base_time", None) is None and fields.base_time is not None:
        h.base_time = _time_of(fields.base_time)  # type: ignore[attr-defined]
    if getattr(h, "base_date", None) is None and fields.base_date is not None:
        h.base_date = _date_of(fields.base_date)  # type: ignore[attr-defined]
    for k, sig in enumerate(fields.signals):
        h.fmt[k] = sig.fmt  # type: ignore[attr-defined]
        if sig.samps_per_frame is not None:
            h.samps_per_frame[k] = sig.samps_per_frame  # type: ignore[attr-defined]
        if sig.skew is not None:
            h.skew[k] = sig.skew  # type: ignore[attr-defined]
        if sig.byte_offset is not None:
            h.byte_offset[k] = sig.byte_offset  # type: ignore[attr-defined]
        if sig.adc_gain is not None:
            h.adc_gain[k] = sig.adc_gain  # type: ignore[attr-defined]
        if sig.baseline is not None:
            h.baseline[k] = sig.baseline  # type: ignore[attr-defined]
        if sig.adc_gain is not None:
            h.units[k] = sig.units or "mV"  # type: ignore[attr-defined]
