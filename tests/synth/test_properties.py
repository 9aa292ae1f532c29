"""Property checks over random parameters: whatever is generated keeps its exact truth."""

from __future__ import annotations

import math

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from reviewapp.core.synth import SynthParams, generate


def _runs(active: np.ndarray) -> list[tuple[int, int]]:
    d = np.diff(np.concatenate([[0], active.astype(np.int8), [0]]))
    return list(
        zip(np.flatnonzero(d == 1).tolist(), (np.flatnonzero(d == -1) - 1).tolist(), strict=True)
    )


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    fs=st.sampled_from([250.0, 360.0, 500.0, 1000.0]),
    hr=st.floats(40, 110),
    p_ms=st.floats(60, 130),
    pr_gap_ms=st.floats(10, 150),
    qrs_ms=st.floats(60, 180),
    jt_ms=st.floats(180, 380),
    qrs_axis=st.floats(-179, 180),
    p_axis=st.floats(-60, 90),
    t_axis=st.floats(-90, 150),
    wide=st.booleans(),
    ectopic=st.booleans(),
    af=st.booleans(),
)
def test_truth_is_exact_for_any_feasible_parameters(
    fs, hr, p_ms, pr_gap_ms, qrs_ms, jt_ms, qrs_axis, p_axis, t_axis, wide, ectopic, af
) -> None:
    wide = wide and qrs_ms >= 120
    try:
        params = SynthParams(
            fs_hz=fs,
            hr_bpm=hr,
            p_ms=p_ms,
            pr_ms=p_ms + pr_gap_ms,
            qrs_ms=qrs_ms,
            qt_ms=qrs_ms + jt_ms,
            qrs_axis_deg=qrs_axis,
            p_axis_deg=p_axis,
            t_axis_deg=t_axis,
            wide_qrs=wide,
            ectopic_beats=(2,) if ectopic else (),
            af=af,
            duration_s=4.0,
        )
        syn = generate(params)
    except ValueError as err:
        # Only an honest refusal is allowed: a rate too fast for the intervals asked for.
        assert "runs into" in str(err) or "beyond" in str(err), err
        return
    sig = syn.record.signal_mv
    support = np.zeros(sig.shape[0], dtype=bool)
    for b in syn.truth.beats:
        m = b.marks
        support[m.qrs_on : m.qrs_off + 1] = True
        support[b.t_on : m.t_off + 1] = True
        if m.p_on is not None:
            support[m.p_on : m.p_off + 1] = True
    assert _runs(np.any(sig != 0.0, axis=1)) == _runs(support)
    half = 1000.0 / fs / 2 + 1e-9
    assert abs(syn.truth.qrs_ms - qrs_ms) <= half
    assert abs(syn.truth.qt_ms - (qrs_ms + jt_ms)) <= half
    if not af:
        assert abs(syn.truth.pr_ms - (p_ms + pr_gap_ms)) <= half
    diff = (syn.truth.qrs_axis_deg - qrs_axis + 180.0) % 360.0 - 180.0
    assert abs(diff) < 0.01
    assert math.isfinite(syn.truth.hr_bpm)
