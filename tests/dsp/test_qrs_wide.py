"""A wide, slow QRS after a sharp P wave is one beat, not two."""

from __future__ import annotations

import numpy as np

from reviewapp.core.dsp.filters import condition
from reviewapp.core.dsp.qrs import detect_qrs
from reviewapp.core.synth import SynthParams, generate


def test_wide_qrs_is_not_split_into_p_and_qrs() -> None:
    # Exact ground truth by construction (reviewapp.core.synth); the check is our own
    # arithmetic, not a clinical reference: every detected R must fall inside a true QRS.
    syn = generate(
        SynthParams(
            hr_bpm=70,
            pr_ms=172,
            qrs_ms=148,
            qt_ms=462,
            qrs_axis_deg=-25,
            t_axis_deg=155,
            wide_qrs=True,
            seed=1101,
        )
    )
    rec = syn.record
    x = condition(rec.signal_mv, rec.fs_hz)
    r = detect_qrs(x, rec.fs_hz, np.ones(rec.n_leads, dtype=bool))
    truth = syn.truth.beats
    assert len(r) == len(truth)
    for det, beat in zip(r, truth, strict=True):
        assert beat.marks.qrs_on <= det <= beat.marks.qrs_off
