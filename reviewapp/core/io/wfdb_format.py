"""WFDB records (PhysioNet): header + signal files, single- and multi-segment.

Every storage format wfdb-python reads is accepted. Signals stay on disk: format 16/61/80/160/32
files are memory-mapped; other formats (212, 310, 311, 8, 24, FLAC, multi-segment) are read
window by window through ``wfdb.rdrecord(sampfrom, sampto)``, so a 24-hour Holter record never
has to fit in memory.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass, replace
from datetime import date, datetime, time
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from reviewapp.core.errors import RecordError
from reviewapp.core.io._common import (
    ChannelWindows,
    ColumnStackSource,
    listed,
    mv_factor,
    reading,
    unique_names,
)
from reviewapp.core.io.files import is_regular, read_regular, require_regular
from reviewapp.core.io.wfdb_header import (
    HeaderFields,
    apply_fields,
    body_lines,
    misread_fields,
    parse_header,
)
from reviewapp.core.record import (
    DigitalMemmapSource,
    LeadInfo,
    PickSource,
    Record,
    SignalSource,
    SubjectFacts,
    build_record,
)

if TYPE_CHECKING:
    # wfdb imports pandas (~0.2 s): it is imported where a WFDB file is read, not here.
    import wfdb

# Memory-mappable formats: numpy dtype of the stored value, offset to subtract to get the
# signed digital value, and the stored code WFDB reserves for "no sample" (invalid).
# WFDB format specification (PhysioNet, signal(5) man page): 16 = 16-bit two's complement
# little-endian, 61 = big-endian, 80 = 8-bit offset binary, 160 = 16-bit offset binary,
# 32 = 32-bit two's complement; invalid sample = the most negative value.
_MEMMAP_FORMATS: dict[str, tuple[str, int, int]] = {
    "16": ("<i2", 0, -32768),
    "61": (">i2", 0, -32768),
    "80": ("<u1", 128, 0),
    "160": ("<u2", 32768, 0),
    "32": ("<i4", 0, -(2**31)),
}
# Stored bits per sample (WFDB signal(5)); FLAC formats (5xx) are compressed: no size check.
_BITS_PER_SAMPLE = {
    "8": 8,
    "16": 16,
    "24": 24,
    "32": 32,
    "61": 16,
    "80": 8,
    "160": 16,
    "212": 12,
    "310": 32 / 3,
    "311": 32 / 3,
}
_FLAC_FORMATS = {"508", "516", "524"}
_MAX_HEADER_BYTES = 1_000_000
# Sanity limit on the declared record length: 10^11 samples per signal is far beyond any ECG
# (about 3 years at 1 kHz); larger values come from damaged headers.
_MAX_SIG_LEN = 100_000_000_000

HEADER_SUFFIX = ".hea"
_MIN_ABS_GAIN = 1e-6
# Above 1e12 adu per unit one step is below a femtovolt: a damaged header (and the float32
# gain used when reading would overflow to infinity, silently flattening the signal).
_MAX_ABS_GAIN = 1e12


def record_base(path: Path) -> Path:
    """The record path without extension (what wfdb wants) for a .hea, signal file or stem."""
    if path.name in ("", ".", ".."):
        raise RecordError("is a folder, not a record file", path)
    if path.suffix.lower() == HEADER_SUFFIX:
        return path.with_suffix("")
    if is_regular(path.with_name(path.name + HEADER_SUFFIX)):
        return path  # a record name given without extension (LUDB records are named "1")
    return path.with_suffix("")


def is_wfdb_record(path: Path) -> bool:
    """True for a header file, or a file/stem that has a regular header file beside it."""
    if path.suffix.lower() == HEADER_SUFFIX:
        return True
    if path.name in ("", ".", ".."):
        return False
    base = record_base(path)
    return is_regular(base.with_name(base.name + HEADER_SUFFIX))


@dataclass(frozen=True, eq=False)
class WfdbWindowSource(ChannelWindows):
    """Reads windows through ``wfdb.rdrecord`` (formats that cannot be memory-mapped)."""

    base: str  # record path without extension
    total_samples: int
    channels: tuple[int, ...]
    factors_to_mv: np.ndarray  # (n_leads,) float32
    header_path: Path

    def read(self, start: int, stop: int) -> np.ndarray:
        start, stop = self.clip(start, stop)
        if stop <= start:
            return np.zeros((0, self.n_leads), dtype=np.float32)
        import wfdb

        with reading(self.header_path, "WFDB signal"):
            rec = wfdb.rdrecord(
                self.base,
                sampfrom=start,
                sampto=stop,
                channels=list(self.channels),
                physical=True,
                m2s=True,
                return_res=32,
            )
        sig = rec.p_signal
        if sig is None or sig.shape != (stop - start, self.n_leads):
            got = None if sig is None else sig.shape
            raise RecordError(
                f"WFDB signal read returned {got} for samples {start}:{stop}", self.header_path
            )
        with np.errstate(over="ignore", invalid="ignore"):
            out = np.asarray(sig, dtype=np.float32) * self.factors_to_mv
        return self.refuse_overflow(
            out, self.header_path, "gain and baseline give values beyond any voltage"
        )


@dataclass(frozen=True, eq=False)
class Format212Source:
    """Format 212 signal file (MIT-BIH, QTDB) decoded window by window from a memory map.

    WFDB signal(5): samples of all signals in a frame are interleaved; each pair of
    consecutive 12-bit two's-complement samples is packed into three bytes: the first sample
    is byte0 + (low nibble of byte1) << 8, the second byte2 + (high nibble of byte1) << 4.
    The value -2048 marks "no sample" (served as NaN).
    """

    packed: np.ndarray  # uint8 memmap of the file from its byte offset
    n_signals: int  # signals in the file (interleaved)
    total_samples: int
    gain_per_mv: np.ndarray  # (n_signals,) adu per mV
    baseline: np.ndarray  # (n_signals,)
    path: Path | None = None  # for error messages

    @property
    def n_samples(self) -> int:
        return self.total_samples

    @property
    def n_leads(self) -> int:
        return self.n_signals

    def read(self, start: int, stop: int) -> np.ndarray:
        start = max(0, int(start))
        stop = min(self.total_samples, int(stop))
        if stop <= start:
            return np.zeros((0, self.n_signals), dtype=np.float32)
        first = start * self.n_signals
        last = stop * self.n_signals
        pair0, pair1 = first // 2, (last + 1) // 2
        raw = np.asarray(self.packed[pair0 * 3 : pair1 * 3], dtype=np.int32)
        n_pairs = raw.size // 3
        # An odd number of samples ends the file with two bytes: the last pair's first sample
        # (byte0 + low nibble of byte1) without its second one.
        half = raw.size - n_pairs * 3 == 2
        if half:
            raw = np.concatenate([raw, np.zeros(1, dtype=np.int32)])
        raw = raw[: (raw.size // 3) * 3].reshape(-1, 3)
        flat = np.empty(raw.shape[0] * 2, dtype=np.int32)
        flat[0::2] = raw[:, 0] | ((raw[:, 1] & 0x0F) << 8)
        flat[1::2] = raw[:, 2] | ((raw[:, 1] & 0xF0) << 4)
        flat[flat > 2047] -= 4096
        if half:
            flat = flat[:-1]
        if flat.size < last - pair0 * 2:
            raise RecordError(
                f"format 212 signal file ends before sample {stop} of {self.total_samples}",
                self.path,
            )
        d = flat[first - pair0 * 2 : last - pair0 * 2].reshape(stop - start, self.n_signals)
        out = (d.astype(np.float32) - self.baseline.astype(np.float32)) / self.gain_per_mv.astype(
            np.float32
        )
        out[d == -2048] = np.nan
        return out


def read_wfdb(path: Path, *, units: str | None = None) -> Record:
    """Open a WFDB record from its header, a signal file or the bare record name.

    Args:
        path: ``.hea`` file, one of its signal files, or the record path without extension.
        units: override the header's units for every signal (e.g. ``"uV"``).

    Returns a Record in mV. Non-voltage signals (blood pressure, respiration) are left out with
    a note. Raises RecordError naming the header for anything unreadable or inconsistent.
    """
    base = record_base(Path(path))
    hea = base.with_name(base.name + HEADER_SUFFIX)
    content = _header_text(hea)
    fields = parse_header(content, hea)
    import wfdb

    with reading(hea, "WFDB header"):
        header = wfdb.rdheader(str(base))
    fs_note = None
    if fields.fs_hz is None:
        fs_note = "sampling rate not given in the header; WFDB's default 250 Hz used"
    if isinstance(header, wfdb.MultiRecord):
        apply_fields(fields, header)
        record = _read_multi_segment(base, hea, header, units)
    else:
        misread = misread_fields(fields, header)
        if misread:
            # The library's reading of the rest of such a line (names, units, and the samples
            # wfdb.rdrecord reads itself) cannot be trusted either.
            raise RecordError(
                f"{', '.join(misread[:3])} written in a form the WFDB reading library "
                "misreads (e.g. an exponent with a capital E); write the number plainly",
                hea,
            )
        apply_fields(fields, header)
        record = _read_single_segment(base, hea, header, units, fields)
    if fs_note:
        record = replace(record, notes=(fs_note, *record.notes))
    return record


def _header_text(hea: Path) -> str:
    """The header's text, read only from a regular file of a header's size."""
    st = require_regular(hea, _header_error)
    if st.st_size > _MAX_HEADER_BYTES:
        raise RecordError("file is too large to be a WFDB header", hea)
    content = read_regular(hea, _MAX_HEADER_BYTES + 1).decode("latin-1")
    if not content.strip():
        raise RecordError("cannot read WFDB header: the header is empty", hea)
    if not body_lines(content):
        raise RecordError("cannot read WFDB header: the header has no record line", hea)
    return content


def _header_error(problem: str, path: Path) -> RecordError:
    if problem == "file not found":
        problem = "WFDB header file not found"
    return RecordError(problem, path)


def _length_from_file_size(base: Path, hea: Path, header: wfdb.Record) -> int:
    """Samples per signal implied by the first signal file's size (header(5): length optional)."""
    name = header.file_name[0]
    chans = [c for c, f in enumerate(header.file_name) if f == name]
    fmt = header.fmt[chans[0]]
    fpath = base.with_name(name)
    if fmt not in _BITS_PER_SAMPLE or not fpath.is_file():
        raise RecordError("header gives no signal length and it cannot be told from the file", hea)
    offset = max(int(header.byte_offset[chans[0]] or 0), 0)
    spf = sum(int(header.samps_per_frame[c] or 1) for c in chans)
    n = int(max(fpath.stat().st_size - offset, 0) * 8 // (_BITS_PER_SAMPLE[fmt] * spf))
    if n <= 0:
        raise RecordError(f"signal file {name} holds no samples", hea)
    return n


def _check_fs(fs: object, hea: Path) -> float:
    try:
        fs_hz = float(fs)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise RecordError(f"sampling frequency {fs!r} is not a number", hea) from None
    if not math.isfinite(fs_hz) or fs_hz <= 0:
        raise RecordError(f"sampling frequency must be positive, header says {fs!r}", hea)
    return fs_hz


def _check_sig_len(sig_len: object, hea: Path) -> int:
    if sig_len is None:
        raise RecordError("header gives no signal length", hea)
    n = int(sig_len)  # type: ignore[call-overload]
    if n <= 0:
        raise RecordError(f"header declares {n} samples", hea)
    if n > _MAX_SIG_LEN:
        raise RecordError(f"header declares an implausible {n} samples per signal", hea)
    return n


def _units_factors(
    names: list[str], header_units: list[str | None], override: str | None, hea: Path
) -> tuple[list[int], list[float], list[str], list[str]]:
    """Keep voltage channels; return (kept indices, factors to mV, unit names, notes)."""
    if override is not None:
        f = mv_factor(override)
        if f is None:
            raise RecordError(f"units {override!r} are not a voltage unit (mV, uV, V)", hea)
        return list(range(len(names))), [f] * len(names), [override] * len(names), []
    kept, factors, unit_names, dropped = [], [], [], []
    for i, (n, u) in enumerate(zip(names, header_units, strict=True)):
        f = mv_factor(u)
        if f is None:
            dropped.append(f"{n} ({u})")
            continue
        kept.append(i)
        factors.append(f)
        unit_names.append(str(u))
    notes = [f"non-voltage signals left out: {listed(dropped)}"] if dropped else []
    if not kept:
        raise RecordError(
            f"no voltage (ECG) signals in the record; signals: {listed(dropped)}", hea
        )
    return kept, factors, unit_names, notes


def _expected_bytes(fmt: str, n_samples: int, samples_per_frame_in_file: int) -> int:
    return math.ceil(n_samples * samples_per_frame_in_file * _BITS_PER_SAMPLE[fmt] / 8)


def _check_signal_files(base: Path, hea: Path, header: wfdb.Record, sig_len: int) -> None:
    """Refuse missing or truncated signal files before any read touches them."""
    files: dict[str, list[int]] = {}
    for ch, name in enumerate(header.file_name):
        files.setdefault(name, []).append(ch)
    for name, chans in files.items():
        fmts = {header.fmt[c] for c in chans}
        if len(fmts) != 1:
            raise RecordError(f"signals in {name} declare different formats {sorted(fmts)}", hea)
        fmt = fmts.pop()
        if fmt not in _BITS_PER_SAMPLE and fmt not in _FLAC_FORMATS:
            raise RecordError(f"signal format {fmt!r} of {name} is not a WFDB format", hea)
        if "/" in name or "\\" in name or name in ("", ".", ".."):
            raise RecordError(f"signal file name {name!r} is not a plain file name", hea)
        fpath = base.with_name(name)
        have = require_regular(fpath, _signal_file_error(name, hea)).st_size
        if fmt in _FLAC_FORMATS:
            continue
        offset = max(int(header.byte_offset[chans[0]] or 0), 0)
        spf = sum(int(header.samps_per_frame[c] or 1) for c in chans)
        need = offset + _expected_bytes(fmt, sig_len, spf)
        # Formats 310/311 pack three samples in a 32-bit word; allow the last partial word.
        slack = 3 if fmt in ("310", "311") else 0
        if have + slack < need:
            held = max(have - offset, 0) * 8 // int(_BITS_PER_SAMPLE[fmt] * spf or 1)
            raise RecordError(
                f"signal file {name} is truncated: header declares {sig_len} samples, the file "
                f"holds about {held}",
                hea,
            )


def _signal_file_error(name: str, hea: Path) -> Callable[[str, Path], RecordError]:
    """Errors about a signal file are reported on the header that names it."""

    def error(problem: str, _path: Path) -> RecordError:
        if problem == "file not found":
            return RecordError(f"signal file {name} named in the header is missing", hea)
        return RecordError(f"signal file {name} named in the header {problem}", hea)

    return error


def _memmap_source(
    base: Path, header: wfdb.Record, kept: list[int], factors: list[float], sig_len: int
) -> SignalSource | None:
    """Memory-mapped digital source in header order, or None when the layout does not allow it."""
    n_sig = len(header.sig_name)
    if any(int(s or 1) != 1 for s in header.samps_per_frame):
        return None
    if any(int(s or 0) != 0 for s in header.skew):
        return None
    # Signals of one file must be contiguous in the header (the usual layout).
    order: list[str] = []
    for name in header.file_name:
        if not order or order[-1] != name:
            if name in order:
                return None
            order.append(name)
    parts: list[SignalSource] = []
    for name in order:
        chans = [c for c in range(n_sig) if header.file_name[c] == name]
        fmt = header.fmt[chans[0]]
        offset = max(int(header.byte_offset[chans[0]] or 0), 0)
        gains = np.array([float(header.adc_gain[c]) for c in chans], dtype=np.float64)
        if fmt == "212":
            packed = np.memmap(base.with_name(name), dtype=np.uint8, mode="r", offset=offset)
            parts.append(
                Format212Source(
                    packed=packed,
                    n_signals=len(chans),
                    total_samples=sig_len,
                    gain_per_mv=gains.astype(np.float32),
                    path=base.with_name(name),
                    baseline=np.array(
                        [float(header.baseline[c] or 0) for c in chans], dtype=np.float32
                    ),
                )
            )
            continue
        if fmt not in _MEMMAP_FORMATS:
            return None
        dtype, shift, invalid = _MEMMAP_FORMATS[fmt]
        mm = np.memmap(
            base.with_name(name), dtype=dtype, mode="r", offset=offset, shape=(sig_len, len(chans))
        )
        baselines = np.array([float(header.baseline[c] or 0) + shift for c in chans])
        parts.append(
            DigitalMemmapSource(
                digital=mm,
                gain_per_mv=gains.astype(np.float32),
                baseline=baselines.astype(np.float32),
                invalid_code=invalid,
            )
        )
    whole: SignalSource = parts[0] if len(parts) == 1 else ColumnStackSource(tuple(parts))
    # Select voltage channels and convert units to mV (linear in the number of signals).
    if kept == list(range(n_sig)) and all(f == 1.0 for f in factors):
        return whole
    return PickSource(whole, np.array(kept, dtype=np.int64), np.array(factors, dtype=np.float32))


def _lead_infos(
    header: wfdb.Record, kept: list[int], factors: list[float], unit_names: list[str], base: Path
) -> list[LeadInfo]:
    names = unique_names([str(header.sig_name[c] or f"signal {c + 1}") for c in kept])
    infos = []
    for j, c in enumerate(kept):
        gain = header.adc_gain[c]
        res = header.adc_res[c] if header.adc_res else None
        infos.append(
            LeadInfo(
                name=names[j],
                original_name=str(header.sig_name[c] or names[j]),
                units=unit_names[j],  # as in the file; samples are served in mV
                adc_gain_per_mv=float(gain) / factors[j] if gain else None,
                adc_baseline=int(header.baseline[c]) if header.baseline[c] is not None else None,
                adc_resolution_bits=int(res) if res else None,
                signal_file=str(header.file_name[c]) if hasattr(header, "file_name") else None,
            )
        )
    return infos


def _read_single_segment(
    base: Path,
    hea: Path,
    header: wfdb.Record,
    units: str | None,
    fields: HeaderFields,
) -> Record:
    fs_hz = _check_fs(header.fs, hea)
    n_sig = int(header.n_sig or 0)
    if n_sig <= 0 or not header.sig_name:
        raise RecordError("the header declares no signals", hea)
    notes: list[str] = []
    if header.sig_len is None:
        header.sig_len = _length_from_file_size(base, hea, header)
        notes.append(f"signal length not in the header; {header.sig_len} samples from file size")
    sig_len = _check_sig_len(header.sig_len, hea)
    with reading(hea, "WFDB header"):
        _check_signal_files(base, hea, header, sig_len)
        gains = [float(g) for g in header.adc_gain]
    # Below 1e-6 adu per unit one step would exceed a kilovolt: a damaged header, and float32
    # mV values could overflow.
    if not all(math.isfinite(g) and _MIN_ABS_GAIN <= abs(g) <= _MAX_ABS_GAIN for g in gains):
        raise RecordError(
            f"ADC gains must be finite, not near zero and not absurdly large, header says {gains}",
            hea,
        )
    names = [str(n) for n in header.sig_name]
    kept, factors, unit_names, unit_notes = _units_factors(names, list(header.units), units, hea)
    notes += unit_notes
    source: SignalSource | None = None
    with reading(hea, "WFDB signal file"):
        source = _memmap_source(base, header, kept, factors, sig_len)
    if source is None:
        if any(int(s or 1) != 1 for s in header.samps_per_frame):
            notes.append("signals with several samples per frame were averaged to the frame rate")
        source = WfdbWindowSource(
            base=str(base),
            total_samples=sig_len,
            channels=tuple(kept),
            factors_to_mv=np.array(factors, dtype=np.float32),
            header_path=hea,
        )
        if any(f in _FLAC_FORMATS for f in header.fmt):
            # Compressed data cannot be size-checked: prove the last sample is readable.
            source.read(sig_len - 1, sig_len)
    uncalibrated = [c for c, sig in enumerate(fields.signals) if sig.uncalibrated]
    if uncalibrated:
        notes.append(
            "ADC gain 0 (uncalibrated) in the header for "
            + listed(str(header.sig_name[c]) for c in uncalibrated if c in kept)
            + "; WFDB's default 200 adu per mV used, amplitudes may be off"
        )
    if units is not None:
        notes.append(
            f"units given as {units} (header says {', '.join(sorted(set(map(str, header.units))))})"
        )
    return build_record(
        name=base.name,
        fs_hz=fs_hz,
        source=source,
        leads=_lead_infos(header, kept, factors, unit_names, base),
        subject=subject_from_header(header),
        source_path=hea,
        source_format="WFDB",
        notes=notes,
    )


def _read_multi_segment(
    base: Path, hea: Path, header: wfdb.MultiRecord, units: str | None
) -> Record:
    import wfdb

    fs_hz = _check_fs(header.fs, hea)
    sig_len = _check_sig_len(header.sig_len, hea)
    seg_names = [str(s) for s in header.seg_name]
    seg_lens = [int(n) for n in header.seg_len]
    if sum(seg_lens) < sig_len:
        raise RecordError(
            f"segments hold {sum(seg_lens)} samples but the header declares {sig_len}", hea
        )
    layout: wfdb.Record | None = None
    for name, n in zip(seg_names, seg_lens, strict=True):
        if name == "~":
            continue  # a gap: wfdb fills it with NaN
        if "/" in name or "\\" in name:
            raise RecordError(f"segment name {name!r} is not a plain record name", hea)
        seg_base = base.with_name(name)
        seg_hea = seg_base.with_name(name + HEADER_SUFFIX)
        if not is_regular(seg_hea):
            raise RecordError(f"segment header {seg_hea.name} is missing", hea)
        seg_fields = parse_header(_header_text(seg_hea), seg_hea)
        with reading(seg_hea, "WFDB segment header"):
            seg = wfdb.rdheader(str(seg_base))
        if isinstance(seg, wfdb.MultiRecord) or seg_fields.n_segments is not None:
            raise RecordError(f"segment {name} is itself multi-segment", hea)
        misread = misread_fields(seg_fields, seg)
        if misread:
            raise RecordError(
                f"segment {name}: {', '.join(misread[:3])} written in a form the WFDB reading "
                "library misreads; write the number plainly",
                hea,
            )
        if n == 0:
            layout = seg  # variable-layout records: the layout segment names the signals
            continue
        if not seg.n_sig:
            continue
        with reading(seg_hea, "WFDB segment header"):
            _check_signal_files(seg_base, seg_hea, seg, n)
        if layout is None:
            layout = seg
    if layout is None or not layout.sig_name:
        raise RecordError("no segment of the multi-segment record names any signal", hea)
    names = [str(n) for n in layout.sig_name]
    kept, factors, _unit_names, notes = _units_factors(names, list(layout.units), units, hea)
    notes.append(f"multi-segment record ({len(seg_names)} segments)")
    source = WfdbWindowSource(
        base=str(base),
        total_samples=sig_len,
        channels=tuple(kept),
        factors_to_mv=np.array(factors, dtype=np.float32),
        header_path=hea,
    )
    leads = [
        LeadInfo(name=n, original_name=names[c], units="mV")
        for n, c in zip(unique_names([names[c] for c in kept]), kept, strict=True)
    ]
    return build_record(
        name=base.name,
        fs_hz=fs_hz,
        source=source,
        leads=leads,
        subject=subject_from_header(header),
        source_path=hea,
        source_format="WFDB",
        notes=notes,
    )


# Header comment styles of the reference databases:
#   PTB:      "age: 81", "sex: female", "ECG date: 01/10/1990" (day/month/year)
#   LUDB:     "<age>: 51", "<sex>: F"
#   MIT-BIH:  "69 M 1085 1629 x1" (age, sex, then database bookkeeping)
#   QTDB sele* (European ST-T): "Age: 47  Sex: M" (both on one line)
_AGE = re.compile(r"^<?age>?\s*:\s*(\d{1,3}(?:\.\d+)?)\b", re.IGNORECASE)
_SEX = re.compile(r"(?:^|\s)<?(?:sex|gender)>?\s*:\s*([A-Za-z]+)", re.IGNORECASE)
_SUBJECT = re.compile(r"^<?(?:subject|subject id|patient id)>?\s*:\s*(\S.{0,63})$", re.IGNORECASE)
_MIT_AGE_SEX = re.compile(r"^(\d{1,3}|\?+)\s+([MF?])\b")
_ECG_DATE = re.compile(r"^ECG date\s*:\s*(\d{1,2})/(\d{1,2})/(\d{4})", re.IGNORECASE)


def _sex(word: str) -> str | None:
    w = word.strip().lower()
    if w in ("f", "female", "woman", "w"):
        return "female"
    if w in ("m", "male", "man"):
        return "male"
    return None


def subject_from_header(header: wfdb.Record | wfdb.MultiRecord) -> SubjectFacts:
    """Age, sex and acquisition time from header fields and comment lines."""
    comments = tuple(str(c).strip() for c in (header.comments or []) if str(c).strip())
    age: float | None = None
    sex: str | None = None
    acquired: datetime | None = None
    subject_id: str | None = None
    time_known = True
    for line in comments:
        if subject_id is None and (m := _SUBJECT.match(line)):
            subject_id = m.group(1).strip()
            continue
        age_line = age is None and (m_age := _AGE.match(line)) is not None
        if age_line and m_age is not None:
            age = float(m_age.group(1))
        if sex is None and (m := _SEX.search(line)):  # may share the line with the age
            sex = _sex(m.group(1))
        elif age_line:
            pass
        elif (m := _MIT_AGE_SEX.match(line)) and age is None and sex is None:
            age = float(m.group(1)) if m.group(1).isdigit() else None
            sex = _sex(m.group(2))
        elif acquired is None and (m := _ECG_DATE.match(line)):
            day, month, year = (int(g) for g in m.groups())
            try:
                acquired = datetime(year, month, day)
                time_known = False  # a date only
            except ValueError:
                acquired = None
    if age is not None and not 0 <= age <= 130:
        age = None
    base_date = getattr(header, "base_date", None)
    base_time = getattr(header, "base_time", None)
    if isinstance(base_date, date):
        time_known = isinstance(base_time, time)
        acquired = datetime.combine(base_date, base_time if isinstance(base_time, time) else time())
    return SubjectFacts(
        subject_id=subject_id,
        age_years=age,
        sex=sex,
        acquired_at=acquired,
        comments=comments,
        acquired_time_known=acquired is None or time_known,
    )
