"""Between the sidecar's seconds and the engine's samples.

The engine works in sample indices (``MarkOverride``, ``WaveMarks``); the sidecar in seconds,
representative-beat times relative to its R. ``rep_r_index`` is
``analysis.representative.r_index`` (the R's index in the representative window).
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from reviewapp.core.errors import MarksError, printable
from reviewapp.core.fiducials import FIDUCIALS, MarkOverride, WaveMarks
from reviewapp.core.marks.durable import utc_now
from reviewapp.core.marks.fingerprint import record_fingerprint
from reviewapp.core.marks.model import (
    AutoBeat,
    AutomaticMarks,
    FiducialTimes,
    Override,
    RecordIdentity,
    RepresentativeTimes,
    ReviewerReading,
)
from reviewapp.core.record import Record

if TYPE_CHECKING:
    from reviewapp.core.engine import Analysis

SIDECAR_SUFFIX = ".marks.json"


def sidecar_path_for(record: Record, folder: Path | None = None) -> Path:
    """``<folder or the record's folder>/<record name>.marks.json``; record name = the source
    file's stem (the ``.hea`` stem for WFDB)."""
    src = record.source_path
    stem = Path(src).stem if src is not None else record.name
    if folder is None:
        if src is None:
            raise MarksError(
                f"record {record.name!r} has no file, so its marks need an explicit folder"
            )
        folder = Path(src).parent
    return Path(folder) / f"{stem}{SIDECAR_SUFFIX}"


def record_identity(record: Record, fingerprint: str | None = None) -> RecordIdentity:
    """Which record a sidecar is for. The name is the record file's stem as printable text
    (``errors.printable``): a file name that is not UTF-8 cannot be written in JSON as is."""
    name = Path(record.source_path).stem if record.source_path is not None else record.name
    return RecordIdentity(
        name=printable(name),
        fingerprint=fingerprint or record_fingerprint(record),
        fs_hz=float(record.fs_hz),
        n_samples=int(record.n_samples),
        lead_names=tuple(record.lead_names),
    )


def _times(marks: WaveMarks, fs_hz: float, offset: int) -> FiducialTimes:
    return FiducialTimes(**marks.as_seconds(fs_hz, offset))


def automatic_from_analysis(analysis: Analysis, computed_at: str | None = None) -> AutomaticMarks:
    """The engine's marks in sidecar form (seconds; representative relative to its R)."""
    fs = analysis.fs_hz
    rep = analysis.representative
    rep_times = None
    if rep is not None:
        names = analysis.record.lead_names
        rep_times = RepresentativeTimes(
            marks=_times(rep.marks, fs, -rep.r_index),
            lead_marks=tuple(
                (name, _times(m, fs, -rep.r_index))
                for name, m in zip(names, rep.lead_marks, strict=False)
            ),
        )
    beats = tuple(
        AutoBeat(r_s=b.r / fs, kind=str(getattr(b.kind, "value", b.kind)), marks=_times(m, fs, 0))
        for b, m in zip(analysis.beats, analysis.beat_marks, strict=True)
    )
    return AutomaticMarks(
        engine_version=str(analysis.engine_version),
        computed_at=computed_at or utc_now(),
        representative=rep_times,
        beats=beats,
    )


def _samples(t_s: float | None, fs_hz: float) -> int | None:
    return None if t_s is None else round(t_s * fs_hz)


def overrides_for(
    reading: ReviewerReading, fs_hz: float, rep_r_index: int | None
) -> list[MarkOverride]:
    """A reader's overrides as engine ``MarkOverride`` values (sample indices).

    Representative-beat overrides become window indices ``rep_r_index + round(t * fs)``; they
    are left out when there is no representative beat (``rep_r_index`` None).

    >>> from reviewapp.core.marks.model import Override, ReviewerReading
    >>> r = ReviewerReading("a").with_override(
    ...     ("representative", None, None, "qrs_on"),
    ...     Override("representative", "qrs_on", new_s=-0.048))
    >>> overrides_for(r, 500.0, 300)[0].sample
    276
    """
    out: list[MarkOverride] = []
    for ov in reading.overrides:
        if ov.scope == "representative":
            if rep_r_index is None:
                continue
            sample = None if ov.new_s is None else rep_r_index + round(ov.new_s * fs_hz)
            out.append(MarkOverride("representative", ov.fiducial, sample, None, ov.lead))
        else:
            out.append(
                MarkOverride(
                    "beat",
                    ov.fiducial,
                    _samples(ov.new_s, fs_hz),
                    _samples(ov.beat_r_s, fs_hz),
                    ov.lead,
                )
            )
    return out


def override_from_mark(
    mark: MarkOverride, fs_hz: float, rep_r_index: int | None, old_s: float | None = None
) -> Override:
    """The reverse of ``overrides_for`` for one override (samples -> seconds)."""
    if mark.fiducial not in FIDUCIALS:
        raise MarksError(f"unknown fiducial {mark.fiducial!r}")
    if mark.scope == "representative":
        if rep_r_index is None:
            raise MarksError("a representative-beat mark needs the representative beat's R index")
        new_s = None if mark.sample is None else (mark.sample - rep_r_index) / fs_hz
        return Override("representative", mark.fiducial, new_s, old_s, None, mark.lead)
    new_s = None if mark.sample is None else mark.sample / fs_hz
    return Override("beat", mark.fiducial, new_s, old_s, int(mark.beat_r or 0) / fs_hz, mark.lead)
