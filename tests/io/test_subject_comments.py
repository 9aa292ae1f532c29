"""Subject identifiers in WFDB header comments reach SubjectFacts."""

from __future__ import annotations

import numpy as np

from reviewapp.core.io import open_record
from reviewapp.core.record import record_from_array


def test_subject_line_is_read_from_wfdb_comments(tmp_path) -> None:
    import wfdb

    sig = np.zeros((500, 2))
    sig[100:110, 0] = 1.0
    # WFDB header comments are free text (PhysioNet header(5) spec); "key: value" is our convention.
    wfdb.wrsamp(
        "s1",
        fs=250,
        units=["mV", "mV"],
        sig_name=["I", "II"],
        p_signal=sig,
        fmt=["16", "16"],
        adc_gain=[1000, 1000],
        baseline=[0, 0],
        write_dir=str(tmp_path),
        comments=["subject: S-042", "age: 37", "sex: male"],
    )
    rec = open_record(tmp_path / "s1.hea")
    assert rec.subject.subject_id == "S-042"
    assert rec.subject.age_years == 37 and rec.subject.sex == "male"
    assert record_from_array(sig, 250, ["I", "II"]).subject.subject_id is None
