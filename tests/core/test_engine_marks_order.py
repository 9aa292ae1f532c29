"""Automatic boundaries never come out of order or cut by the record edge."""

from __future__ import annotations

import pytest

from reviewapp.core.engine import analyse
from reviewapp.core.io import open_record


@pytest.mark.parametrize(
    "rel",
    [
        "qtdb/sel104.hea",  # paced QTDB record (PhysioNet QTDB; paced per MIT-BIH 104, from memory)
        "ludb/111.hea",  # LUDB record whose last beat is cut by the record end
        "ludb/35.hea",  # LUDB atrial flutter (ludb.csv)
    ],
)
def test_boundaries_in_order_on_real_records(shared_data, rel: str) -> None:
    # Order P onset <= P end <= QRS onset < QRS end < T end: the definition of the waves
    # (common practice, no source). A T end without a QRS end would give a QT from nothing.
    analysis = analyse(open_record(shared_data / rel))
    rows = [analysis.beat_marks, *zip(*analysis.beat_lead_marks, strict=True)]
    for marks in rows:
        for m in marks:
            seq = [v for v in (m.p_on, m.p_off, m.qrs_on, m.qrs_off, m.t_off) if v is not None]
            assert seq == sorted(seq), m
            assert m.t_off is None or m.qrs_off is not None
            assert m.t_off is None or m.t_off < analysis.record.n_samples - 1
    for b in analysis.reading().measurements.beats:
        assert b.qt_ms is None or b.qt_ms >= 200 or b.kind != "dominant"
