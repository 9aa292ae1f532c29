"""Seconds <-> samples conversions, and the documented format example."""

from __future__ import annotations

import doctest
import json
import re

import jsonschema
from hypothesis import given
from hypothesis import strategies as st

import reviewapp.core.marks as marks_pkg
from reviewapp.core.fiducials import FIDUCIALS, MarkOverride
from reviewapp.core.marks import (
    ReviewerReading,
    convert,
    fingerprint,
    override_from_mark,
    overrides_for,
    schema,
    snap_s,
)

mark_overrides = st.one_of(
    st.builds(
        MarkOverride,
        scope=st.just("representative"),
        fiducial=st.sampled_from(FIDUCIALS),
        sample=st.one_of(st.none(), st.integers(0, 2000)),
        beat_r=st.none(),
        lead=st.sampled_from([None, "II", "V5"]),
    ),
    st.builds(
        MarkOverride,
        scope=st.just("beat"),
        fiducial=st.sampled_from(FIDUCIALS),
        sample=st.one_of(st.none(), st.integers(0, 10_000_000)),
        beat_r=st.integers(0, 10_000_000),
        lead=st.sampled_from([None, "II", "V5"]),
    ),
)


@given(
    st.lists(mark_overrides, max_size=8),
    st.sampled_from([250.0, 257.0, 360.0, 500.0, 1000.0]),
    st.integers(0, 1000),
)
def test_samples_seconds_samples_is_exact(marks, fs, r_index):
    """Sample -> seconds -> sample is the identity at every rate (times are stored rounded
    to the sample, and float64 holds k/fs closely enough that round(k/fs*fs) == k)."""
    reading = ReviewerReading("r")
    for m in marks:
        ov = override_from_mark(m, fs, r_index)
        reading = reading.with_override(ov.key, ov)
        if ov.new_s is not None:
            assert snap_s(ov.new_s, fs) == ov.new_s
    back = {
        (m.scope, m.beat_r, m.lead, m.fiducial): m.sample
        for m in overrides_for(reading, fs, r_index)
    }
    want = {(m.scope, m.beat_r, m.lead, m.fiducial): m.sample for m in marks}
    assert back == want


def test_representative_marks_need_a_representative_beat():
    r = ReviewerReading("r")
    ov = override_from_mark(MarkOverride("representative", "t_off", 400), 500.0, 200)
    assert ov.new_s == 0.4  # (400 - 200) / 500 Hz
    r = r.with_override(ov.key, ov)
    assert overrides_for(r, 500.0, None) == []  # left out, not misplaced


def test_documented_example_is_a_valid_sidecar():
    doc_text = marks_pkg.__doc__
    block = doc_text.split("schema-valid file; a real one has an event for every change)::")[1]
    body = block.split("\nNever losing a mark")[0]
    example = json.loads(re.sub(r"^    ", "", body, flags=re.M))
    jsonschema.validate(example, schema())
    assert example["schema_version"] == marks_pkg.SCHEMA_VERSION


def test_module_examples_run():
    for module in (convert, fingerprint):
        result = doctest.testmod(module)
        assert result.failed == 0 and result.attempted > 0, module.__name__
