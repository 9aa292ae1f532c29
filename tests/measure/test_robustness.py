"""Any marks a reader can drag to (absent, reversed, outside the window) give values or None."""

from __future__ import annotations

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from reviewapp.core.fiducials import FIDUCIALS, WaveMarks
from reviewapp.core.measure import compute_measurements, evaluate_findings
from reviewapp.core.record import STANDARD_12, SubjectFacts

N = 600
_rng = np.random.default_rng(7)
WAVES = {n: _rng.normal(0.0, 0.3, N).cumsum() / 10.0 for n in STANDARD_12}  # invented signal

mark = st.one_of(st.none(), st.integers(min_value=-50, max_value=N + 50))
marks_st = st.builds(lambda *v: WaveMarks(**dict(zip(FIDUCIALS, v, strict=True))), *[mark] * 5)


@settings(max_examples=60, deadline=None)
@given(marks=marks_st, lead_marks=marks_st, sex=st.sampled_from([None, "male", "female"]))
def test_arbitrary_marks_never_raise(kit, marks, lead_marks, sex):
    m = compute_measurements(kit.marked(WAVES, marks=marks, lead_marks={"V2": lead_marks}))
    iv = m.intervals
    for v in (iv.p_ms, iv.pr_ms, iv.qrs_ms, iv.qt_ms):
        assert v is None or (math.isfinite(v) and v >= 0)
    quantities = {q for q, _ in m.unmeasured}
    for name in ("p_ms", "pr_ms", "qrs_ms", "qt_ms"):
        assert (getattr(iv, name) is None) == (name in quantities)  # every None has a reason
    evaluate_findings(m, SubjectFacts(sex=sex, age_years=50.0))


@settings(max_examples=40, deadline=None)
@given(
    fs=st.sampled_from([250.0, 360.0, 500.0, 1000.0]),
    qrs_on=st.integers(min_value=180, max_value=215),
    n=st.integers(min_value=-20, max_value=20),
)
def test_interval_change_is_exactly_n_over_fs(kit, fs, qrs_on, n):
    marks = WaveMarks(p_on=100, p_off=150, qrs_on=qrs_on, qrs_off=250, t_off=430)
    a = compute_measurements(kit.marked(WAVES, marks=marks, fs_hz=fs)).intervals
    b = compute_measurements(
        kit.marked(WAVES, marks=marks.with_mark("qrs_on", qrs_on + n), fs_hz=fs)
    ).intervals
    assert math.isclose(b.qt_ms - a.qt_ms, -n * 1000.0 / fs, abs_tol=1e-9)
    assert math.isclose(b.qrs_ms - a.qrs_ms, -n * 1000.0 / fs, abs_tol=1e-9)
