"""Which mark a reader edits, and the one payload every view sends for a mark edit.

A view (the strip, the median beats, a lead's J point) addresses a mark in its own samples:
the representative beat in window samples, a beat in record samples with the beat's R. The
correction itself is stored once, as the marks model's ``Override`` (seconds, keyed by
``OverrideKey``); ``MarkTarget.key`` is the one conversion between the two.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from reviewapp.core.fiducials import FIDUCIAL_LABELS, MarkOverride, Scope
from reviewapp.core.marks.edits import snap_s
from reviewapp.core.marks.model import OverrideKey

MarkAction = Literal["preview", "move", "reset"]


@dataclass(frozen=True)
class MarkTarget:
    """One mark: scope "representative" (the median beat) or "beat" (one beat, ``beat_r`` its
    R as a record sample), the fiducial, and ``lead`` (None: the global, all-lead mark)."""

    scope: Scope
    fiducial: str
    beat_r: int | None = None
    lead: str | None = None

    def __post_init__(self) -> None:
        self.override(None)  # the engine's own checks of fiducial, scope and beat
        if self.scope == "representative" and self.beat_r is not None:
            raise ValueError("a median-beat mark has no beat R")

    def key(self, fs_hz: float) -> OverrideKey:
        """The marks model's key of this mark's correction.

        >>> MarkTarget("beat", "t_off", beat_r=1500).key(500.0)
        ('beat', 3.0, None, 't_off')
        """
        beat_r_s = None if self.beat_r is None else snap_s(self.beat_r / fs_hz, fs_hz)
        return (self.scope, beat_r_s, self.lead, self.fiducial)

    def override(self, sample: int | None) -> MarkOverride:
        """The engine's override putting this mark at ``sample`` (None: wave absent)."""
        return MarkOverride(self.scope, self.fiducial, sample, self.beat_r, self.lead)

    def describe(self, fs_hz: float) -> str:
        """In words, for undo texts and status messages.

        >>> MarkTarget("representative", "qrs_off", lead="V2").describe(500.0)
        'QRS end of lead V2 (median beat)'
        """
        what = FIDUCIAL_LABELS[self.fiducial]
        if self.lead is not None:
            what += f" of lead {self.lead}"
        if self.beat_r is None:
            return f"{what} (median beat)"
        return f"{what} (beat at {self.beat_r / fs_hz:.2f} s)"


@dataclass(frozen=True)
class MarkEdit:
    """What a view sends for every mark edit: ``preview`` while dragging (values follow, nothing
    is recorded), ``move`` on release (``sample`` the new position; None: the wave is absent),
    ``reset`` back to the automatic mark."""

    target: MarkTarget
    action: MarkAction
    sample: int | None = None
