"""HL7 aECG reader on a hand-written fixture and on the sample ECG published with the
standard; write_aecg round trips of real records."""

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


# The sample annotated ECG published with the HL7 aECG standard (HL7 December 2003 ballot,
# updated 2005): an excerpt, see the provenance comment at the top of the fixture. Looked for
# an openly licensed real example: PyPI (the package list has one aECG parser, "aecg" 0.1.3,
# whose wheel ships no example file), npm (HL7 v2 and FHIR packages only) and Debian (biosig
# reads aECG but ships no example) gave none; the standard's own sample is distributed by the
# FDA's aecg-python repository in the public domain (CC0 1.0), found through code search.
HL7_EXAMPLE = Path(__file__).parent / "fixtures" / "hl7_example_excerpt.xml"


def _published_digits(lead_code: str) -> np.ndarray:
    """The digits of one lead read straight from the file's text (a regular expression, not
    the reader's XML parsing)."""
    import re

    text = HL7_EXAMPLE.read_text(encoding="utf-8")
    block = re.search(rf'code="{lead_code}".*?<digits>(.*?)</digits>', text, re.S)
    assert block is not None
    return np.array(block.group(1).split(), dtype=float)


def test_hl7_published_example_reads_as_the_standard_defines() -> None:
    rec = open_record(HL7_EXAMPLE)
    assert rec.source_format == "HL7 aECG"
    # GLIST_TS head 20021122091000, increment 0.002 s: 500 Hz; 500 samples kept per lead.
    assert rec.fs_hz == 500 and rec.n_samples == 500
    # SLIST_PQ: value = origin + scale x digit; origin 0 uV, scale 2.5 uV for both leads.
    i, ii = rec.signal_mv[:, rec.lead_index("I")], rec.signal_mv[:, rec.lead_index("II")]
    np.testing.assert_allclose(i, 0.0025 * _published_digits("MDC_ECG_LEAD_I"), atol=1e-6)
    np.testing.assert_allclose(ii, 0.0025 * _published_digits("MDC_ECG_LEAD_II"), atol=1e-6)
    # Hand-read from the published digits: lead I starts -2 -2 -2 -2 -3 -4 -3 -5 and peaks at
    # 139 (sample 166): 0.3475 mV; lead II's S reaches -263 (sample 173): -0.6575 mV.
    np.testing.assert_allclose(i[:8], [-0.005] * 4 + [-0.0075, -0.01, -0.0075, -0.0125], atol=1e-6)
    assert int(np.argmax(i)) == 166 and i[166] == pytest.approx(0.3475, abs=1e-6)
    assert int(np.argmin(ii)) == 173 and ii[173] == pytest.approx(-0.6575, abs=1e-6)
    # Only I and II recorded here: III, aVR, aVL, aVF derived by Einthoven's and Goldberger's
    # relations (III = II - I, aVR = -(I + II)/2, aVL = I - II/2, aVF = II - I/2).
    derived = {lead.name for lead in rec.leads if lead.derived}
    assert derived == {"III", "aVR", "aVL", "aVF"}
    col = rec.lead_index
    np.testing.assert_allclose(rec.signal_mv[:, col("III")], ii - i, atol=1e-6)
    np.testing.assert_allclose(rec.signal_mv[:, col("aVR")], -(i + ii) / 2, atol=1e-6)
    np.testing.assert_allclose(rec.signal_mv[:, col("aVL")], i - ii / 2, atol=1e-6)
    np.testing.assert_allclose(rec.signal_mv[:, col("aVF")], ii - i / 2, atol=1e-6)
    # Subject and time: trialSubject id, administrativeGenderCode M, birthTime 19530508, and
    # the acquisition time given as effectiveTime/center (the guide allows center or low/high).
    # Age in completed years at acquisition: 49 (the example's own "Reported Age" says 46; the
    # birth date and acquisition time are what the reader uses).
    s = rec.subject
    assert (s.subject_id, s.sex, s.age_years) == ("subject1", "male", 49)
    assert s.acquired_at is not None and s.acquired_at.isoformat() == "2002-11-22T09:10:00"
