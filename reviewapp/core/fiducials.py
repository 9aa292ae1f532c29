"""Beats, wave boundaries (fiducials) and reviewer overrides: the values that cross layers.

Inside core every boundary is an integer sample index; at every boundary with the outside world
(JSON, CSV, sidecar) it is seconds. Absent is ``None``, never a guess.

Three scopes of marks:
- representative beat, global (all leads together): indices into the representative-beat window;
- each beat, global: indices into the record;
- each lead (of the representative beat and of each beat): per-lead boundaries for J point,
  Q duration and ST level.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, fields, replace
from enum import StrEnum
from typing import Literal

import numpy as np

FIDUCIALS: tuple[str, ...] = ("p_on", "p_off", "qrs_on", "qrs_off", "t_off")
FIDUCIAL_LABELS: Mapping[str, str] = {
    "p_on": "P onset",
    "p_off": "P end",
    "qrs_on": "QRS onset",
    "qrs_off": "QRS end",
    "t_off": "T end",
}


@dataclass(frozen=True)
class WaveMarks:
    """The five boundaries of one beat (sample indices), plus optional peaks; None = absent."""

    p_on: int | None = None
    p_off: int | None = None
    qrs_on: int | None = None
    qrs_off: int | None = None
    t_off: int | None = None
    p_peak: int | None = None
    r_peak: int | None = None
    t_peak: int | None = None

    def get(self, name: str) -> int | None:
        if name not in _ALL_MARK_NAMES:
            raise KeyError(name)
        return getattr(self, name)

    def with_mark(self, name: str, sample: int | None) -> WaveMarks:
        if name not in _ALL_MARK_NAMES:
            raise KeyError(name)
        return replace(self, **{name: None if sample is None else int(sample)})

    def shifted(self, offset: int) -> WaveMarks:
        """All present marks moved by ``offset`` samples (window <-> record coordinates)."""
        return WaveMarks(
            **{
                f.name: (None if getattr(self, f.name) is None else getattr(self, f.name) + offset)
                for f in fields(self)
            }
        )

    def as_seconds(self, fs_hz: float, offset: int = 0) -> dict[str, float | None]:
        """Boundaries in seconds (``(index + offset) / fs_hz``), None where absent."""
        return {
            name: (None if (v := self.get(name)) is None else (v + offset) / fs_hz)
            for name in FIDUCIALS
        }

    def ordered(self, n_samples: int | None = None) -> WaveMarks:
        """These marks with every inconsistency removed rather than guessed at.

        Boundaries must run P onset <= P end <= QRS onset < QRS end < T end. A P whose onset
        is not before its end is dropped; a P end past QRS onset is pulled back to it; a QRS
        whose onset is not before its end is dropped together with T end; a T end without a
        QRS end, or not after it, is dropped. With ``n_samples``, a T end or P onset on the
        record's first or last sample is a wave cut by the record edge and is dropped.

        >>> m = WaveMarks(p_on=50, p_off=40, qrs_on=60, qrs_off=100, t_off=300).ordered()
        >>> (m.p_on, m.p_off, m.qrs_on, m.qrs_off, m.t_off)
        (None, None, 60, 100, 300)
        >>> WaveMarks(qrs_on=60, qrs_off=None, t_off=300).ordered().t_off is None
        True
        """
        p_on, p_off, q_on, q_off, t_off = (
            self.p_on,
            self.p_off,
            self.qrs_on,
            self.qrs_off,
            self.t_off,
        )
        if n_samples is not None:
            if t_off is not None and t_off >= n_samples - 1:
                t_off = None
            if p_on is not None and p_on <= 0:
                p_on = None
        if p_on is not None and p_off is not None and p_on >= p_off:
            p_on = p_off = None
        if p_off is not None and q_on is not None and p_off > q_on:
            p_off = q_on
        if p_on is not None and q_on is not None and p_on >= q_on:
            p_on = p_off = None
        if q_on is not None and q_off is not None and q_on >= q_off:
            q_on = q_off = None
        if t_off is not None and (q_off is None or t_off <= q_off):
            t_off = None
        if (p_on, p_off, q_on, q_off, t_off) == (
            self.p_on,
            self.p_off,
            self.qrs_on,
            self.qrs_off,
            self.t_off,
        ):
            return self
        return replace(self, p_on=p_on, p_off=p_off, qrs_on=q_on, qrs_off=q_off, t_off=t_off)

    def as_array(self) -> np.ndarray:
        """The five boundaries as int64 with -1 for absent (vectorised work)."""
        return np.array(
            [-1 if (v := self.get(n)) is None else v for n in FIDUCIALS], dtype=np.int64
        )

    @classmethod
    def from_array(cls, values: Iterable[int]) -> WaveMarks:
        vals = [int(v) for v in values]
        return cls(**{n: (None if v < 0 else v) for n, v in zip(FIDUCIALS, vals, strict=True)})


_ALL_MARK_NAMES = frozenset(f.name for f in fields(WaveMarks))


class BeatKind(StrEnum):
    DOMINANT = "dominant"
    PREMATURE = "premature"
    PACED = "paced"
    UNKNOWN = "unknown"


@dataclass(frozen=True)
class Beat:
    """One detected beat: R (fiducial point) sample index, kind, and morphology group id."""

    r: int
    kind: BeatKind = BeatKind.DOMINANT
    group: int = 0
    # For a PACED beat: it is of the dominant morphology group and normally timed, i.e. part
    # of the (paced) dominant rhythm, not an occasional paced beat of another shape. Ignored
    # for the other kinds.
    paced_dominant: bool = False

    @property
    def in_dominant_rhythm(self) -> bool:
        """Part of the dominant rhythm: DOMINANT, or PACED within the dominant group.

        The one test for "counts as a dominant beat" (median-beat membership, template-carried
        marks, dominant-rhythm heart rate): a paced rhythm keeps every dominant-beat behaviour.

        >>> Beat(0).in_dominant_rhythm, Beat(0, BeatKind.PACED).in_dominant_rhythm
        (True, False)
        >>> Beat(0, BeatKind.PACED, paced_dominant=True).in_dominant_rhythm
        True
        """
        if self.kind == BeatKind.DOMINANT:
            return True
        return self.kind == BeatKind.PACED and self.paced_dominant


@dataclass(frozen=True, eq=False)
class RepresentativeBeat:
    """Median of the aligned dominant beats, per lead.

    ``waveform_mv[k, lead]`` is the median at record-relative time ``k - r_index`` samples from
    each beat's R. ``marks`` are global boundaries (indices into the window: earliest onset
    and latest end over the leads, the standard's definition); ``lead_marks`` are each lead's
    own boundaries, in lead order.
    """

    waveform_mv: np.ndarray  # (n_window, n_leads) float32
    r_index: int
    n_beats_used: int
    marks: WaveMarks = field(default_factory=WaveMarks)
    lead_marks: tuple[WaveMarks, ...] = ()
    # The multi-lead marks found before the global marks were widened to the standard's
    # earliest onset / latest end (``dsp.delineate_global``): each beat is aligned to the
    # median beat around these (None: around ``marks``). Automatic, never overridden.
    align_marks: WaveMarks | None = None
    # The median RR the window was cut for (samples), None with a single beat.
    rr_samples: int | None = None


Scope = Literal["representative", "beat"]


@dataclass(frozen=True)
class MarkOverride:
    """A reviewer's correction of one boundary.

    scope: "representative" (the median beat) or "beat" (one beat of the record).
    fiducial: one of FIDUCIALS.
    sample: the corrected position (window index for the representative beat, record index for
        a beat); None means the reader says the wave is absent.
    beat_r: for scope "beat", the R sample of the beat (matched to the nearest detected beat
        within 75 ms, so an override survives re-detection by a newer engine).
    lead: None for the global (all-lead) boundary, else a lead name for that lead's own mark.
    """

    scope: Scope
    fiducial: str
    sample: int | None
    beat_r: int | None = None
    lead: str | None = None

    def __post_init__(self) -> None:
        if self.fiducial not in FIDUCIALS:
            raise ValueError(f"unknown fiducial {self.fiducial!r}; expected one of {FIDUCIALS}")
        if self.scope not in ("representative", "beat"):
            raise ValueError(f"unknown scope {self.scope!r}")
        if self.scope == "beat" and self.beat_r is None:
            raise ValueError("a beat override needs beat_r")


BEAT_MATCH_S = 0.075


def match_beat(beats: tuple[Beat, ...] | list[Beat], r_sample: int, fs_hz: float) -> int | None:
    """Index of the beat whose R is nearest ``r_sample`` within 75 ms, else None."""
    if not beats:
        return None
    rs = np.fromiter((b.r for b in beats), dtype=np.int64, count=len(beats))
    i = int(np.argmin(np.abs(rs - r_sample)))
    return i if abs(int(rs[i]) - r_sample) <= BEAT_MATCH_S * fs_hz else None


@dataclass(frozen=True, eq=False)
class MarkedECG:
    """Everything the measurement functions need, with reviewer overrides already applied.

    Measurements are a pure function of this object; nothing here is a measured value.
    """

    fs_hz: float
    lead_names: tuple[str, ...]
    usable: tuple[bool, ...]  # leads fit for global boundaries and axes (not flat, not missing)
    conditioned_mv: np.ndarray  # (n_samples, n_leads) float32, the signal measured on
    beats: tuple[Beat, ...]
    beat_marks: tuple[WaveMarks, ...]  # global, record indices, one per beat
    beat_lead_marks: tuple[tuple[WaveMarks, ...], ...]  # [beat][lead], record indices
    representative: RepresentativeBeat | None  # marks/lead_marks are the effective ones
