"""EDF, EDF+ and BDF records through pyedflib.

ECG leads are the signals whose physical dimension is a voltage; annotation channels and other
signals (respiration, SpO2, ...) are left out with a note. Leads must share one sampling rate:
when they do not, the leads at the most common rate are kept and the others named in a note.
Signals are read window by window, so long recordings stay on disk.
"""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass
from datetime import date, datetime
from pathlib import Path

import numpy as np
import pyedflib

from reviewapp.core.errors import RecordError
from reviewapp.core.io._common import (
    ChannelWindows,
    clean_lead_label,
    completed_years,
    listed,
    mv_factor,
    reading,
    unique_names,
)
from reviewapp.core.io.files import read_regular, require_regular
from reviewapp.core.io.numbers import DECIMAL, parse_int, parse_number
from reviewapp.core.record import LeadInfo, Record, SubjectFacts, build_record

_EDF_MIN_HEADER_BYTES = 256


def _open(path: Path) -> pyedflib.EdfReader:
    require_regular(path)  # pyedflib opens by name: never a FIFO or device
    with reading(path, "EDF file"):
        return pyedflib.EdfReader(str(path))


@dataclass(frozen=True)
class EdfHeader:
    """The numbers of an EDF/BDF header, parsed strictly (``numbers``): what the file declares."""

    n_records: int
    record_duration_s: float
    samples_per_record: tuple[int, ...]
    header_bytes: int
    bytes_per_sample: int
    labels: tuple[str, ...] = ()

    @property
    def data_signals(self) -> tuple[int, ...]:
        """Header indices of the signals that are not annotations, in the libraries' order
        (EDF+ section 2.2.1: the "EDF Annotations" signal; BDF+ uses "BDF Annotations")."""
        return tuple(
            i
            for i, label in enumerate(self.labels)
            if label.strip() not in ("EDF Annotations", "BDF Annotations")
        )

    @property
    def record_bytes(self) -> int:
        return sum(self.samples_per_record) * self.bytes_per_sample

    def rate_hz(self, signal: int) -> float:
        return self.samples_per_record[signal] / self.record_duration_s


def _field(raw: bytes, start: int, width: int) -> str:
    return raw[start : start + width].decode("ascii", errors="replace")


def read_edf_header(path: Path, size: int) -> EdfHeader:
    """Parse the header's numbers and check the data records are really in the file.

    EDF (Kemp et al. 1992) fixed-width ASCII header: 256 bytes, then 256 per signal. Numbers
    are plain decimals (``numbers.DECIMAL``: an exponent such as ``1e9`` is refused, where
    EDFlib would read a different number), counts are whole numbers. The file must hold every
    data record it declares (header bytes + records x record size), so a 3 KB file claiming
    14,000 records is refused before anything is read or allocated.
    """
    head = read_regular(path, 256)
    if len(head) < 256:
        raise RecordError("file is too short to be EDF (header is 256 bytes)", path)
    bdf = head[:8] == b"\xffBIOSEMI"
    n_records = parse_int(_field(head, 236, 8), "number of data records", path)
    duration = parse_number(_field(head, 244, 8), "data record duration", DECIMAL, path)
    ns = parse_int(_field(head, 252, 4), "number of signals", path)
    header_bytes = parse_int(_field(head, 184, 8), "number of header bytes", path)
    if ns <= 0:
        raise RecordError(f"EDF header declares {ns} signals", path)
    if header_bytes != 256 * (ns + 1):
        raise RecordError(
            f"EDF header declares {header_bytes} header bytes; {ns} signals need {256 * (ns + 1)}",
            path,
        )
    if n_records == -1:
        raise RecordError(
            "EDF header gives the number of data records as -1 (recording not closed)", path
        )
    if n_records <= 0:
        raise RecordError(f"EDF header declares {n_records} data records", path)
    if not duration > 0:
        raise RecordError(
            f"EDF data record duration must be positive, file says {duration:g}", path
        )
    if size < header_bytes:
        raise RecordError(f"EDF header is cut short ({size} of {header_bytes} bytes)", path)
    full = read_regular(path, header_bytes)
    base = 256 + ns * (16 + 80 + 8 + 8 + 8 + 8 + 8 + 80)
    spr = tuple(
        parse_int(_field(full, base + 8 * i, 8), f"signal {i + 1} samples per record", path)
        for i in range(ns)
    )
    if any(n < 0 for n in spr):
        raise RecordError("EDF header declares a negative number of samples per record", path)
    labels = tuple(_field(full, 256 + 16 * i, 16) for i in range(ns))
    header = EdfHeader(n_records, duration, spr, header_bytes, 3 if bdf else 2, labels)
    need = header_bytes + n_records * header.record_bytes
    if size < need:
        held = (size - header_bytes) // header.record_bytes if header.record_bytes else 0
        raise RecordError(
            f"EDF file is truncated: the header declares {n_records:,} data records, the file "
            f"holds {held:,} ({size:,} of {need:,} bytes)",
            path,
        )
    return header


@dataclass(frozen=True, eq=False)
class EdfSource(ChannelWindows):
    """Reads windows of selected EDF signals (physical values) and scales them to mV."""

    path: Path
    channels: tuple[int, ...]
    factors_to_mv: np.ndarray  # (n_leads,)
    total_samples: int

    def read(self, start: int, stop: int) -> np.ndarray:
        start, stop = self.clip(start, stop)
        out = np.empty((max(stop - start, 0), self.n_leads), dtype=np.float32)
        if stop <= start:
            return out
        reader = _open(self.path)
        try:
            with reading(self.path, "EDF signal"):
                for j, ch in enumerate(self.channels):
                    x = reader.readSignal(ch, start, stop - start)
                    if x.shape[0] != stop - start:
                        raise RecordError(
                            f"signal {ch + 1} holds fewer samples than its header declares",
                            self.path,
                        )
                    with np.errstate(over="ignore", invalid="ignore"):
                        out[:, j] = x * self.factors_to_mv[j]
        finally:
            reader.close()
        return self.refuse_overflow(
            out, self.path, "physical range gives values beyond any voltage"
        )


def read_edf(path: Path) -> Record:
    """Open an EDF/EDF+/BDF file; see the module docstring for which signals become leads."""
    path = Path(path)
    size = require_regular(path).st_size
    if size < _EDF_MIN_HEADER_BYTES:
        raise RecordError("file is too short to be EDF (header is 256 bytes)", path)
    declared = read_edf_header(path, size)
    reader = _open(path)
    try:
        with reading(path, "EDF header"):
            n_sig = int(reader.signals_in_file)
            labels = [str(reader.getLabel(i)).strip() for i in range(n_sig)]
            dims = [str(reader.getPhysicalDimension(i)).strip() for i in range(n_sig)]
            rates = [float(reader.getSampleFrequency(i)) for i in range(n_sig)]
            n_samples = [int(n) for n in reader.getNSamples()]
            phys_min = [float(reader.getPhysicalMinimum(i)) for i in range(n_sig)]
            phys_max = [float(reader.getPhysicalMaximum(i)) for i in range(n_sig)]
            dig_min = [int(reader.getDigitalMinimum(i)) for i in range(n_sig)]
            dig_max = [int(reader.getDigitalMaximum(i)) for i in range(n_sig)]
            subject = _subject(reader)
    finally:
        reader.close()
    if n_sig == 0:
        raise RecordError("EDF file holds no signals", path)
    notes: list[str] = []
    voltage = []
    no_unit = []
    other = []
    for i in range(n_sig):
        if mv_factor(dims[i]) is not None:
            voltage.append(i)
        elif dims[i] == "":
            no_unit.append(i)
        else:
            other.append(i)
    # Unlabelled dimensions count as leads (assumed mV) only when no signal names a voltage.
    if not voltage and no_unit:
        voltage = no_unit
        notes.append("physical dimension not given; assumed mV")
    elif no_unit:
        other += no_unit
    if other:
        notes.append(
            "non-voltage signals left out: "
            + listed(f"{labels[i]} ({dims[i] or 'no unit'})" for i in sorted(other))
        )
    if not voltage:
        raise RecordError("no voltage (ECG) signals in the EDF file", path)
    in_header = declared.data_signals
    if n_sig != len(in_header):
        raise RecordError(
            f"the EDF library reads {n_sig} signals, the header declares {len(in_header)}", path
        )
    for i in voltage:
        if not (math.isfinite(rates[i]) and rates[i] > 0):
            raise RecordError(f"signal {labels[i]!r} has sampling rate {rates[i]!r}", path)
        h = in_header[i]
        if not math.isclose(rates[i], declared.rate_hz(h), rel_tol=1e-9):
            raise RecordError(
                f"signal {labels[i]!r}: the EDF library reads {rates[i]:g} Hz but the header "
                f"declares {declared.samples_per_record[h]} samples per "
                f"{declared.record_duration_s:g} s record ({declared.rate_hz(h):g} Hz)",
                path,
            )
        if (
            not (math.isfinite(phys_max[i]) and math.isfinite(phys_min[i]))
            or phys_max[i] == phys_min[i]
            or dig_max[i] <= dig_min[i]
        ):
            raise RecordError(f"signal {labels[i]!r} has an empty physical or digital range", path)
    common_rate, _ = Counter(rates[i] for i in voltage).most_common(1)[0]
    off_rate = [i for i in voltage if rates[i] != common_rate]
    if off_rate:
        notes.append(
            f"leads at other sampling rates than {common_rate:g} Hz left out: "
            + listed(f"{labels[i]} ({rates[i]:g} Hz)" for i in off_rate)
        )
    channels = [i for i in voltage if rates[i] == common_rate]
    length = min(n_samples[i] for i in channels)
    if length <= 0:
        raise RecordError("EDF file holds no samples", path)
    factors = np.array(
        [mv_factor(dims[i]) if mv_factor(dims[i]) is not None else 1.0 for i in channels],
        dtype=np.float32,
    )
    names = unique_names([clean_lead_label(labels[i]) or f"signal {i + 1}" for i in channels])
    leads = [
        LeadInfo(
            name=n,
            original_name=labels[i],
            units=dims[i] or "mV",  # as in the file; samples are served in mV
            adc_gain_per_mv=(dig_max[i] - dig_min[i]) / (phys_max[i] - phys_min[i]) / float(f),
            adc_resolution_bits=24 if path.suffix.lower() == ".bdf" else 16,
        )
        for n, i, f in zip(names, channels, factors, strict=True)
    ]
    source = EdfSource(
        path=path, channels=tuple(channels), factors_to_mv=factors, total_samples=length
    )
    return build_record(
        name=path.stem,
        fs_hz=common_rate,
        source=source,
        leads=leads,
        subject=subject,
        source_path=path,
        source_format="BDF" if path.suffix.lower() == ".bdf" else "EDF",
        notes=notes,
    )


def _subject(reader: pyedflib.EdfReader) -> SubjectFacts:
    sex_text = str(getattr(reader, "getSex", reader.getGender)() or "").strip().lower()
    sex = {"female": "female", "f": "female", "male": "male", "m": "male"}.get(sex_text)
    start = reader.getStartdatetime()
    acquired = start if isinstance(start, datetime) else None
    age = None
    try:
        birth = reader.getBirthdate(string=False)
    except Exception:
        birth = None
    if isinstance(birth, (date, datetime)) and acquired is not None:
        b = birth.date() if isinstance(birth, datetime) else birth
        age = completed_years(b, acquired.date())
    code = str(reader.getPatientCode() or "").strip() or None
    return SubjectFacts(subject_id=code, age_years=age, sex=sex, acquired_at=acquired)
