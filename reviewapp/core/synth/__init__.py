"""Synthetic 12-lead ECGs with exact ground truth (demo data and construction-exact tests).

Invented data: useful to check that code finds what was put in, never a reference for clinical
values.

>>> from reviewapp.core.synth import SynthParams, generate
>>> syn = generate(SynthParams(hr_bpm=60, pr_ms=200, duration_s=3))
>>> syn.truth.pr_ms, syn.truth.beats[0].marks.qrs_on - syn.truth.beats[0].marks.p_on
(200.0, 100)
"""

from __future__ import annotations

from pathlib import Path

from reviewapp.core.synth.generator import SyntheticECG, generate
from reviewapp.core.synth.params import SynthParams
from reviewapp.core.synth.truth import BeatTruth, GroundTruth, load_truth


def write_synthetic(syn: SyntheticECG, folder: str | Path, name: str) -> Path:
    """WFDB (format 16) + ``<name>.truth.json``; see ``wfdb_out.write_synthetic``."""
    from reviewapp.core.synth.wfdb_out import write_synthetic as _write  # wfdb loads slowly

    return _write(syn, folder, name)


__all__ = [
    "BeatTruth",
    "GroundTruth",
    "SynthParams",
    "SyntheticECG",
    "generate",
    "load_truth",
    "write_synthetic",
]
