"""Write a synthetic ECG as a WFDB record (format 16) plus its ``<name>.truth.json``.

WFDB header comments carry the subject facts in ``key: value`` form (``# subject: S-014``,
``# age: 34``, ``# sex: female``, then any free comments such as ``# timepoint: post-dose 2 h``).

Every file is written atomically (``marks.durable.atomic_write``): wfdb writes into a private
staging folder and each file is then published whole, the header last, so a kill or a full disk
at any instant leaves no torn file and no header naming a missing signal file.
"""

from __future__ import annotations

import math
import tempfile
from pathlib import Path

import numpy as np
import wfdb

from reviewapp.core.errors import ReviewError
from reviewapp.core.marks.durable import atomic_write
from reviewapp.core.synth.generator import SyntheticECG
from reviewapp.core.synth.truth import write_truth_json

# 1000 ADC units per mV = 1 uV resolution, +/-32.767 mV range in 16 bits: ample for an ECG.
ADC_GAIN_PER_MV = 1000.0
_DIGITAL_MAX = 32767


def header_comments(syn: SyntheticECG) -> list[str]:
    s = syn.record.subject
    out = []
    if s.subject_id is not None:
        out.append(f"subject: {s.subject_id}")
    if s.age_years is not None:
        age = s.age_years
        out.append(f"age: {int(age) if float(age).is_integer() else age}")
    if s.sex is not None:
        out.append(f"sex: {s.sex}")
    out.extend(s.comments)
    out.append("synthetic: invented signal, not a recording of a person")
    return out


def write_synthetic(
    syn: SyntheticECG, folder: str | Path, name: str, *, truth: bool = True
) -> Path:
    """Write ``<folder>/<name>.hea/.dat`` (WFDB, format 16) and ``<name>.truth.json`` (unless
    ``truth`` is False), each file atomically.

    The ADC gain is 1000 per mV unless the signal would not fit 16 bits, then the largest gain
    that fits. Returns the header path.
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    sig = np.asarray(syn.record.signal_mv, dtype=np.float64)
    peak = float(np.max(np.abs(sig))) if sig.size else 0.0
    gain = ADC_GAIN_PER_MV
    if peak * gain > _DIGITAL_MAX - 1:
        gain = float(math.floor((_DIGITAL_MAX - 1) / peak))
    digital = np.round(sig * gain).astype(np.int64)
    with tempfile.TemporaryDirectory(prefix="reviewapp-synth-") as staging:
        try:
            _stage(syn, name, digital, gain, staging)
        except OSError as exc:  # named after the record, not the staging folder
            problem = f"cannot write the record: {exc.strerror or exc}"
            raise ReviewError(problem, folder / f"{name}.dat") from None
        # The header last: it is what lists the record, so it never names a missing file.
        for staged in sorted(Path(staging).iterdir(), key=lambda f: f.suffix == ".hea"):
            if truth and staged.suffix == ".hea":
                write_truth_json(syn.truth, folder / f"{name}.truth.json", syn.params_dict())
            atomic_write(folder / staged.name, staged.read_bytes(), "cannot write the record")
    return folder / f"{name}.hea"


def _stage(syn: SyntheticECG, name: str, digital: np.ndarray, gain: float, staging: str) -> None:
    n_leads = digital.shape[1]
    acquired = syn.record.subject.acquired_at
    wfdb.wrsamp(
        record_name=name,
        fs=syn.record.fs_hz,
        units=["mV"] * n_leads,
        sig_name=list(syn.record.lead_names),
        d_signal=digital,
        fmt=["16"] * n_leads,
        adc_gain=[gain] * n_leads,
        baseline=[0] * n_leads,
        comments=header_comments(syn),
        base_date=None if acquired is None else acquired.date(),
        base_time=None if acquired is None else acquired.time(),
        write_dir=staging,
    )
