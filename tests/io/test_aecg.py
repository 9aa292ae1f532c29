"""HL7 aECG reader on a hand-written fixture, and write_aecg round trips of real records."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import wfdb

from reviewapp.core.errors import RecordError
from reviewapp.core.io import open_record
from reviewapp.core.io.aecg_format import read_aecg, write_aecg

FIXTURE = Path(__file__).parent / "fixtures" / "small_aecg.xml"


def test_fixture_values_follow_origin_plus_scale_times_digit() -> None:
    rec = open_record(FIXTURE)
    assert rec.source_format == "HL7 aECG"
    # increment 0.002 s in the TIME_ABSOLUTE sequence -> 500 Hz.
    assert rec.fs_hz == 500 and rec.n_samples == 12
    # HL7 aECG SLIST_PQ: value = origin + scale * digit (hand computation per sample):
    # I: 2.5 uV * [0 40 80 120 400 -40 ...] -> 0, 0.1, 0.2, 0.3, 1.0, -0.1 mV
    # II: -100 uV + 5 uV * [20 40 60 80 220 0] -> 0, 0.1, 0.2, 0.3, 1.0, -0.1 mV
    # V2: 0.5 mV + 0.001 mV * [-500 -400 ...] -> 0, 0.1, ...
    expected = np.array([0.0, 0.1, 0.2, 0.3, 1.0, -0.1, 0.0, 0.0, 0.025, 0.05, 0.075, 0.1])
    np.testing.assert_allclose(rec.signal_mv[:, rec.lead_index("I")], expected, atol=1e-6)
    exp_ii = -0.1 + 0.005 * np.array([20, 40, 60, 80, 220, 0, 20, 20, 22, 24, 26, 28])
    np.testing.assert_allclose(rec.signal_mv[:, rec.lead_index("II")], exp_ii, atol=1e-6)
    exp_v2 = 0.5 + 0.001 * np.array(
        [-500, -400, -300, -200, 500, -600, -500, -500, -490, -480, -470, -460]
    )
    np.testing.assert_allclose(rec.signal_mv[:, rec.lead_index("V2")], exp_v2, atol=1e-6)
    assert {lead.name for lead in rec.leads if lead.derived} == {"III", "aVR", "aVL", "aVF"}
    assert rec.subject.subject_id == "SUBJ-007" and rec.subject.sex == "female"
    assert rec.subject.age_years == 44  # birthTime 19800315, effectiveTime 20240315
    assert any("derived" in n for n in rec.notes)


def test_fixture_derived_series() -> None:
    rec = read_aecg(FIXTURE, series="derived")
    assert rec.fs_hz == 250  # increment 4 ms
    np.testing.assert_allclose(
        rec.signal_mv[:, rec.lead_index("I")], [0, 0.1, 1.0, 0.1, 0, 0.05], atol=1e-6
    )


@pytest.mark.parametrize("name", ["ludb/1", "ptbdb/s0010_re"])
def test_write_aecg_round_trip_real_records(shared_data: Path, tmp_path: Path, name: str) -> None:
    rec = open_record(shared_data / f"{name}.hea")
    out = write_aecg(rec, tmp_path / "rt.xml")
    back = open_record(out)
    assert back.fs_hz == rec.fs_hz and back.n_samples == rec.n_samples
    assert back.lead_names == rec.lead_names
    # Digits are written at each lead's ADC resolution (scale = 1/gain), so the values come
    # back to float32 precision. Reference: wfdb.rdrecord of the original record.
    ref = wfdb.rdrecord(str(shared_data / name)).p_signal
    cols = [i for i, lead in enumerate(back.leads) if not lead.derived]
    np.testing.assert_allclose(back.signal_mv[:, cols], ref, rtol=0, atol=1e-6)


def test_write_aecg_refuses_nan(tmp_path: Path) -> None:
    from reviewapp.core.record import record_from_array

    rec = record_from_array(np.array([[0.0], [np.nan]]), 500, ["V1"])
    with pytest.raises(RecordError, match="NaN"):
        write_aecg(rec, tmp_path / "nan.xml")


BILLION_LAUGHS = """<?xml version="1.0"?>
<!DOCTYPE lolz [
 <!ENTITY lol "lol">
 <!ENTITY lol2 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">
 <!ENTITY lol3 "&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;">
 <!ENTITY lol4 "&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;">
 <!ENTITY lol9 "&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;">
]>
<AnnotatedECG xmlns="urn:hl7-org:v3"><id root="&lol9;"/></AnnotatedECG>
"""

EXTERNAL_ENTITY = """<?xml version="1.0"?>
<!DOCTYPE foo [ <!ENTITY xxe SYSTEM "file:///etc/passwd"> ]>
<AnnotatedECG xmlns="urn:hl7-org:v3"><id root="&xxe;"/></AnnotatedECG>
"""


@pytest.mark.parametrize(
    ("text", "match"),
    [
        (BILLION_LAUGHS, "entities"),
        (EXTERNAL_ENTITY, "entit"),
        ("<AnnotatedECG xmlns='urn:hl7-org:v3'><component>", "well-formed"),
        ("<?xml version='1.0'?><html/>", "not an HL7 aECG"),
    ],
)
def test_hostile_and_broken_xml(tmp_path: Path, text: str, match: str) -> None:
    # Billion laughs / external entity: OWASP XML External Entity and entity-expansion
    # attacks, refused by defusedxml.
    path = tmp_path / "evil.xml"
    path.write_text(text)
    with pytest.raises(RecordError, match=match) as info:
        open_record(path)
    assert "evil.xml" in str(info.value)
