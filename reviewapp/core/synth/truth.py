"""Exact ground truth of a synthetic ECG, and its JSON form (``<name>.truth.json``).

Inside the program boundaries are record sample indices; in JSON they are seconds from record
start (``sample / fs_hz``), so ``sample == round(seconds * fs_hz)``.

Definitions (by construction, noise-free signal):
- ``p_on``/``qrs_on``: first sample where the wave is non-zero in some lead; the sample before
  it is exactly baseline (0 mV). ``p_off``/``qrs_off``/``t_off``: last non-zero sample; the
  sample after it is exactly baseline. Those five edges are linear (>= several uV on the edge
  sample at 250-1000 Hz), so they survive 1 uV quantisation in the WFDB copy. ``t_on`` is
  defined the same way (the ST segment is isoelectric) but its edge is quadratic (sub-uV on
  the first samples): in a quantised copy the T wave appears a few samples later. It is not
  one of the five fiducials.
- Peaks (``p_peak``, ``r_peak`` = ``r``, ``t_peak``): sample of the largest heart-vector
  magnitude within the wave.
- Global intervals are the median over dominant beats: PR = qrs_on - p_on, P = p_off - p_on,
  QRS = qrs_off - qrs_on, QT = t_off - qrs_on, in ms.
- Axes are the frontal angle of the generating dipole's net area over the wave in the first
  dominant beat (+x at 0 deg, +y, the feet, at +90 deg), computed from the dipole and not from
  the leads; the limb leads are Einthoven-triangle projections (``leads``), so this is the
  hexaxial axis they show. ``*_dipole_axis_deg`` hold the same values (kept for readers of
  older truth files).
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from reviewapp.core.errors import MarksError
from reviewapp.core.fiducials import Beat, BeatKind, WaveMarks
from reviewapp.core.marks.durable import atomic_write

TRUTH_FORMAT = "reviewapp-synthetic-truth"
TRUTH_VERSION = 1

_MARKS_IN_JSON = (
    "p_on",
    "p_off",
    "qrs_on",
    "qrs_off",
    "t_on",
    "t_off",
    "p_peak",
    "r_peak",
    "t_peak",
)


@dataclass(frozen=True)
class BeatTruth:
    """One beat as constructed: R sample, kind, global boundaries (record sample indices)."""

    r: int
    kind: BeatKind
    marks: WaveMarks
    t_on: int
    qt_ms: float
    rr_before_ms: float | None

    @property
    def beat(self) -> Beat:
        return Beat(r=self.r, kind=self.kind)

    def sample_of(self, name: str) -> int | None:
        return self.t_on if name == "t_on" else self.marks.get(name)

    def seconds(self, fs_hz: float) -> dict[str, float | None]:
        """Every boundary and peak in seconds from record start (None where absent)."""
        out: dict[str, float | None] = {"r_s": self.r / fs_hz}
        for name in _MARKS_IN_JSON:
            v = self.sample_of(name)
            out[f"{name}_s"] = None if v is None else v / fs_hz
        return out


@dataclass(frozen=True)
class GroundTruth:
    """Everything known exactly about a synthetic record (see module docstring)."""

    fs_hz: float
    n_samples: int
    lead_names: tuple[str, ...]
    rhythm: str  # "sinus" | "af"
    beats: tuple[BeatTruth, ...]
    pr_ms: float | None
    p_ms: float | None
    qrs_ms: float
    qt_ms: float
    rr_ms: float
    rr_sd_ms: float
    hr_bpm: float
    qrs_axis_deg: float
    p_axis_deg: float | None
    t_axis_deg: float
    qrs_dipole_axis_deg: float
    p_dipole_axis_deg: float | None
    t_dipole_axis_deg: float
    emg_snr_db: tuple[float, ...] | None = None  # realised, per lead in lead_names order

    @property
    def dominant(self) -> tuple[BeatTruth, ...]:
        return tuple(b for b in self.beats if b.kind is BeatKind.DOMINANT)

    @property
    def fiducial_beats(self) -> tuple[Beat, ...]:
        return tuple(b.beat for b in self.beats)

    @property
    def beat_marks(self) -> tuple[WaveMarks, ...]:
        return tuple(b.marks for b in self.beats)

    def representative_marks(self, r_index: int) -> WaveMarks:
        """Dominant-beat boundaries in a representative-beat window whose R is at ``r_index``.

        Each boundary is the median over dominant beats of (boundary - R), shifted by
        ``r_index`` (the ``RepresentativeBeat`` convention: window index k is k - r_index
        samples from each beat's R). With constant intervals (the default) every dominant
        beat gives the same offsets, so this is exact.
        """
        doms = self.dominant
        if not doms:
            raise ValueError("no dominant beat in this record")
        out: dict[str, int | None] = {}
        for name in ("p_on", "p_off", "qrs_on", "qrs_off", "t_off", "p_peak", "r_peak", "t_peak"):
            vals = [v - b.r for b in doms if (v := b.marks.get(name)) is not None]
            out[name] = None if not vals else r_index + round(float(np.median(vals)))
        return WaveMarks(**out)

    def to_json_dict(self, params: dict[str, Any] | None = None) -> dict[str, Any]:
        return {
            "format": TRUTH_FORMAT,
            "version": TRUTH_VERSION,
            "description": (
                "Invented synthetic ECG with exact ground truth. Times are seconds from record "
                "start (sample = round(seconds * fs_hz)); a boundary is the first (onset) or "
                "last (end) sample where the wave is non-zero in the noise-free signal. "
                "Intervals in ms; axes in degrees, the frontal angle of the generating "
                "dipole's net area over the wave (the hexaxial axis of the Einthoven limb "
                "leads). Not clinical data."
            ),
            "fs_hz": self.fs_hz,
            "n_samples": self.n_samples,
            "lead_names": list(self.lead_names),
            "rhythm": self.rhythm,
            "intervals_ms": {
                "pr_ms": self.pr_ms,
                "p_ms": self.p_ms,
                "qrs_ms": self.qrs_ms,
                "qt_ms": self.qt_ms,
                "rr_ms": self.rr_ms,
                "rr_sd_ms": self.rr_sd_ms,
            },
            "hr_bpm": self.hr_bpm,
            "axes_deg": {
                "qrs_axis_deg": self.qrs_axis_deg,
                "p_axis_deg": self.p_axis_deg,
                "t_axis_deg": self.t_axis_deg,
                "qrs_dipole_axis_deg": self.qrs_dipole_axis_deg,
                "p_dipole_axis_deg": self.p_dipole_axis_deg,
                "t_dipole_axis_deg": self.t_dipole_axis_deg,
            },
            "emg_snr_db": None if self.emg_snr_db is None else list(self.emg_snr_db),
            "beats": [
                {
                    "kind": b.kind.value,
                    "qt_ms": b.qt_ms,
                    "rr_before_ms": b.rr_before_ms,
                    **b.seconds(self.fs_hz),
                }
                for b in self.beats
            ],
            "params": params,
        }

    @classmethod
    def from_json_dict(cls, data: dict[str, Any], path: Path | None = None) -> GroundTruth:
        try:
            if data.get("format") != TRUTH_FORMAT:
                raise MarksError(
                    f"not a synthetic truth file (format {data.get('format')!r})", path
                )
            fs = float(data["fs_hz"])

            def idx(v: float | None) -> int | None:
                return None if v is None else round(float(v) * fs)

            beats = []
            for b in data["beats"]:
                marks = WaveMarks(**{n: idx(b[f"{n}_s"]) for n in _MARKS_IN_JSON if n != "t_on"})
                beats.append(
                    BeatTruth(
                        r=round(float(b["r_s"]) * fs),
                        kind=BeatKind(b["kind"]),
                        marks=marks,
                        t_on=round(float(b["t_on_s"]) * fs),
                        qt_ms=float(b["qt_ms"]),
                        rr_before_ms=b["rr_before_ms"],
                    )
                )
            iv, ax = data["intervals_ms"], data["axes_deg"]
            snr = data.get("emg_snr_db")
            return cls(
                fs_hz=fs,
                n_samples=int(data["n_samples"]),
                lead_names=tuple(data["lead_names"]),
                rhythm=str(data["rhythm"]),
                beats=tuple(beats),
                pr_ms=iv["pr_ms"],
                p_ms=iv["p_ms"],
                qrs_ms=iv["qrs_ms"],
                qt_ms=iv["qt_ms"],
                rr_ms=iv["rr_ms"],
                rr_sd_ms=iv["rr_sd_ms"],
                hr_bpm=float(data["hr_bpm"]),
                qrs_axis_deg=ax["qrs_axis_deg"],
                p_axis_deg=ax["p_axis_deg"],
                t_axis_deg=ax["t_axis_deg"],
                qrs_dipole_axis_deg=ax["qrs_dipole_axis_deg"],
                p_dipole_axis_deg=ax["p_dipole_axis_deg"],
                t_dipole_axis_deg=ax["t_dipole_axis_deg"],
                emg_snr_db=None if snr is None else tuple(float(s) for s in snr),
            )
        except MarksError:
            raise
        except (KeyError, TypeError, ValueError) as err:
            raise MarksError(f"synthetic truth file is malformed ({err!r})", path) from None


def write_truth_json(truth: GroundTruth, path: Path, params: dict[str, Any] | None = None) -> None:
    data = json.dumps(truth.to_json_dict(params), indent=1) + "\n"
    atomic_write(path, data.encode("utf-8"), "cannot write the truth file")


def load_truth(path: str | Path) -> GroundTruth:
    """Read a ``<name>.truth.json`` written by ``write_synthetic``; MarksError if unusable."""
    p = Path(path)
    try:
        data = json.loads(p.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as err:
        raise MarksError(f"cannot read synthetic truth file ({err})", p) from None
    if not isinstance(data, dict):
        raise MarksError("synthetic truth file is not a JSON object", p)
    return GroundTruth.from_json_dict(data, p)
