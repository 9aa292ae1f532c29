"""Ventricular rate counts every QRS; heart rate is the dominant rhythm's."""

from __future__ import annotations

import numpy as np
import pytest
import wfdb

from reviewapp.core.engine import analyse
from reviewapp.core.io import open_record


@pytest.mark.parametrize("rid", [105, 125, 109, 44, 1])
def test_ventricular_rate_matches_the_cardiologists_qrs_marks(shared_data, rid: int) -> None:
    # Reference: LUDB lead II 'N' annotations, one per QRS of every beat incl. ectopic ones
    # (Kalyakulina et al., IEEE Access 2020). Rate = (n - 1) intervals over the marked span.
    # The marks cover most, not all, of each 10 s record, hence 4 bpm.
    base = shared_data / "ludb" / str(rid)
    ann = wfdb.rdann(str(base), "ii")
    r = np.array([s for s, sym in zip(ann.sample, ann.symbol, strict=True) if sym == "N"])
    reference = 60.0 * (len(r) - 1) / ((r[-1] - r[0]) / ann.fs)
    iv = analyse(open_record(base.with_suffix(".hea"))).reading().measurements.intervals
    assert iv.ventricular_rate_bpm == pytest.approx(reference, abs=4.0)
    # The dominant-rhythm rate is never above the rate of every QRS.
    assert iv.hr_bpm <= iv.ventricular_rate_bpm + 1.0
