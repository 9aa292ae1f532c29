"""DICOM waveform objects (12-lead ECG, general ECG) through pydicom.

Conversion (DICOM PS3.3 C.10.9.1, Waveform Module; the same formula as pydicom's
``Dataset.waveform_array``)::

    value [sensitivity units] = stored * ChannelSensitivity * ChannelSensitivityCorrectionFactor
                                + ChannelBaseline

then the Channel Sensitivity Units (UCUM: ``uV``, ``mV``) are converted to mV.

Of the multiplex groups, the first ORIGINAL group with the most channels is read (a DERIVED
group usually holds median beats); the others are named in the notes.
"""

from __future__ import annotations

import re
from datetime import datetime
from pathlib import Path

import numpy as np
import pydicom
from pydicom.dataset import Dataset

from reviewapp.core.errors import RecordError
from reviewapp.core.io._common import (
    clean_lead_label,
    frozen_mv,
    mv_factor,
    reading,
    unique_names,
)
from reviewapp.core.io.files import require_regular
from reviewapp.core.io.numbers import DECIMAL_EXP, parse_number
from reviewapp.core.record import (
    READ_WHOLE,
    ArraySource,
    LeadInfo,
    Record,
    SubjectFacts,
    build_record,
    check_signal_budget,
)

# (WaveformBitsAllocated, WaveformSampleInterpretation) -> numpy dtype; PS3.3 C.10.9.1.5.
_DTYPES = {
    (8, "SB"): "<i1",
    (8, "UB"): "<u1",
    (16, "SS"): "<i2",
    (16, "US"): "<u2",
    (32, "SL"): "<i4",
    (32, "UL"): "<u4",
    (64, "SV"): "<i8",
    (64, "UV"): "<u8",
}
MAX_DICOM_BYTES = 2_000_000_000


def read_dicom(path: Path) -> Record:
    """Open a DICOM ECG waveform file; see the module docstring for the conversion."""
    path = Path(path)
    size = require_regular(path).st_size
    if size > MAX_DICOM_BYTES:
        raise RecordError("file is too large to be a DICOM ECG", path)
    with reading(path, "DICOM file"):
        # Large values (the waveform data) are read only once their declared size is checked
        # against the file and the memory budget (_read_group).
        ds = pydicom.dcmread(
            str(path), force=path.suffix.lower() in (".dcm", ".dicom"), defer_size="256 KB"
        )
        if "WaveformSequence" not in ds:
            modality = ds.get("Modality", "unknown")
            raise RecordError(f"DICOM file holds no waveform (modality {modality})", path)
        groups = list(ds.WaveformSequence)
        index, notes = _choose_group(groups, path)
        return _read_group(ds, groups[index], index, notes, path, size)


def _label(item: Dataset) -> str:
    return str(item.get("MultiplexGroupLabel", "") or "").strip()


def _choose_group(groups: list[Dataset], path: Path) -> tuple[int, list[str]]:
    usable = []
    for i, g in enumerate(groups):
        n_ch = int(g.get("NumberOfWaveformChannels", 0) or 0)
        n_s = int(g.get("NumberOfWaveformSamples", 0) or 0)
        if n_ch > 0 and n_s > 0 and "WaveformData" in g and "ChannelDefinitionSequence" in g:
            original = str(g.get("WaveformOriginality", "")).upper() == "ORIGINAL"
            usable.append((not original, -n_ch, i))
    if not usable:
        raise RecordError("no multiplex group with channels and samples", path)
    index = min(usable)[2]
    notes = [
        f"multiplex group {i + 1} ({_label(g) or 'unlabelled'}) not read"
        for i, g in enumerate(groups)
        if i != index
    ]
    if len(groups) > 1:
        notes.insert(
            0, f"multiplex group {index + 1} ({_label(groups[index]) or 'unlabelled'}) read"
        )
    return index, notes


def _lead_name(ch: Dataset, k: int) -> str:
    src = ch.get("ChannelSourceSequence")
    meaning = ""
    if src:
        meaning = str(src[0].get("CodeMeaning", "") or "").strip()
    if not meaning:
        meaning = str(ch.get("ChannelLabel", "") or "").strip()
    # "Lead I (Einthoven)" -> "Lead I": the parenthesis names the lead system, not the lead.
    meaning = clean_lead_label(re.sub(r"\s*\([^)]*\)\s*$", "", meaning))
    return meaning or f"channel {k + 1}"


def _number(ch: Dataset, keyword: str, default: float, path: Path, k: int) -> float:
    value = ch.get(keyword, None)
    if value is None or value == "":
        return default
    return parse_number(str(value), f"channel {k + 1}: {keyword}", DECIMAL_EXP, path)


def _read_group(
    ds: Dataset, g: Dataset, index: int, notes: list[str], path: Path, size: int
) -> Record:
    n_ch = int(g.NumberOfWaveformChannels)
    n_s = int(g.NumberOfWaveformSamples)
    fs_text = str(g.get("SamplingFrequency", "") or "")
    fs = parse_number(
        fs_text or "0", f"multiplex group {index + 1}: sampling frequency", DECIMAL_EXP, path
    )
    if fs <= 0:
        raise RecordError(f"multiplex group {index + 1}: sampling frequency {fs_text!r}", path)
    bits = int(g.get("WaveformBitsAllocated", 0) or 0)
    interp = str(g.get("WaveformSampleInterpretation", "")).strip()
    dtype = _DTYPES.get((bits, interp))
    if dtype is None:
        raise RecordError(
            f"waveform sample encoding {bits}-bit {interp!r} is not supported "
            "(signed/unsigned integers only)",
            path,
        )
    need = n_s * n_ch * np.dtype(dtype).itemsize
    if need > size:
        raise RecordError(
            f"{n_s:,} samples x {n_ch} channels need {need:,} bytes of waveform data but the "
            f"file holds {size:,} bytes",
            path,
        )
    check_signal_budget(n_s, n_ch, path, "this DICOM waveform", READ_WHOLE)
    raw_bytes = bytes(g.WaveformData)
    if len(raw_bytes) < need:
        raise RecordError(
            f"waveform data holds {len(raw_bytes)} bytes but {n_s} samples x {n_ch} channels "
            f"need {need}",
            path,
        )
    channels = list(g.ChannelDefinitionSequence)
    if len(channels) != n_ch:
        raise RecordError(
            f"{n_ch} waveform channels declared but {len(channels)} channel definitions", path
        )
    raw = np.frombuffer(raw_bytes[:need], dtype=dtype).reshape(n_s, n_ch)
    out = np.empty((n_s, n_ch), dtype=np.float64)
    names: list[str] = []
    leads: list[tuple[float, int | None, int]] = []  # ADC gain per mV, baseline, bits
    assumed = []
    for k, ch in enumerate(channels):
        sens = _number(ch, "ChannelSensitivity", 1.0, path, k)
        corr = _number(ch, "ChannelSensitivityCorrectionFactor", 1.0, path, k)
        base = _number(ch, "ChannelBaseline", 0.0, path, k)
        units_seq = ch.get("ChannelSensitivityUnitsSequence")
        unit = str(units_seq[0].get("CodeValue", "")).strip() if units_seq else ""
        factor = mv_factor(unit) if unit else None
        if not unit:
            # ECG waveforms are stored in uV in practice (common practice, no source).
            assumed.append(k)
            factor = 1e-3
        if factor is None:
            raise RecordError(f"channel {k + 1}: units {unit!r} are not a voltage", path)
        if sens * corr == 0:
            raise RecordError(f"channel {k + 1}: channel sensitivity is zero", path)
        out[:, k] = (raw[:, k] * (sens * corr) + base) * factor
        names.append(_lead_name(ch, k))
        step_mv = sens * corr * factor
        b = -base / (sens * corr)
        leads.append(
            (
                1.0 / step_mv,
                int(b) if float(b).is_integer() else None,
                int(ch.get("WaveformBitsStored", bits) or bits),
            )
        )
    if assumed:
        notes.append(
            "channel sensitivity units not given for channels "
            + ", ".join(str(k + 1) for k in assumed)
            + "; assumed uV"
        )
    data = frozen_mv(out, path, "sensitivity or baseline give values beyond any voltage")
    lead_infos = [
        LeadInfo(
            name=n,
            original_name=n,
            units="mV",
            adc_gain_per_mv=gain,
            adc_baseline=baseline,
            adc_resolution_bits=bits_stored,
        )
        for n, (gain, baseline, bits_stored) in zip(unique_names(names), leads, strict=True)
    ]
    return build_record(
        name=path.stem,
        fs_hz=fs,
        source=ArraySource(data),
        leads=lead_infos,
        subject=_subject(ds),
        source_path=path,
        source_format="DICOM",
        notes=notes,
    )


_AGE = re.compile(r"^(\d{3})([DWMY])$")


def _subject(ds: Dataset) -> SubjectFacts:
    sex = {"F": "female", "M": "male"}.get(str(ds.get("PatientSex", "") or "").upper())
    age = None
    m = _AGE.match(str(ds.get("PatientAge", "") or ""))
    if m:
        age = int(m.group(1)) / {"D": 365.25, "W": 52.18, "M": 12.0, "Y": 1.0}[m.group(2)]
    acquired = None
    for text in (
        str(ds.get("AcquisitionDateTime", "") or ""),
        str(ds.get("ContentDate", "") or "") + str(ds.get("ContentTime", "") or ""),
    ):
        digits = text.split(".")[0].split("+")[0][:14]
        for fmt in ("%Y%m%d%H%M%S", "%Y%m%d"):
            try:
                acquired = datetime.strptime(digits[: len(datetime(2000, 1, 1).strftime(fmt))], fmt)
                break
            except ValueError:
                continue
        if acquired:
            break
    pid = str(ds.get("PatientID", "") or "").strip() or None
    return SubjectFacts(subject_id=pid, age_years=age, sex=sex, acquired_at=acquired)
