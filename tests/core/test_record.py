"""Record model: lead-name spelling, derived limb leads, windows, flat leads, bad values."""

from __future__ import annotations

import numpy as np
import pytest

from reviewapp.core.errors import RecordError
from reviewapp.core.record import (
    STANDARD_12,
    ArraySource,
    DigitalMemmapSource,
    LeadInfo,
    build_record,
    normalise_lead_name,
    record_from_array,
)


@pytest.mark.parametrize(
    ("given", "expected"),
    [
        # Standard 12-lead spellings (IEC 60601-2-25 / AHA lead names; common practice, no source).
        ("i", "I"),
        ("II", "II"),
        ("iii", "III"),
        ("AVR", "aVR"),
        ("avl", "aVL"),
        ("aVF", "aVF"),
        ("v1", "V1"),
        ("V6", "V6"),
        ("V4R", "V4R"),
        # HL7 aECG uses the ISO/IEEE 11073 MDC codes (HL7 aECG implementation guide).
        ("MDC_ECG_LEAD_AVL", "aVL"),
        ("MDC_ECG_LEAD_V3", "V3"),
        # Holter-style and Frank leads are kept (PhysioNet MIT-BIH uses "MLII").
        ("MLII", "MLII"),
        ("vx", "X"),
        ("CM5", "CM5"),
    ],
)
def test_normalise_lead_name(given: str, expected: str) -> None:
    assert normalise_lead_name(given) == expected


def test_limb_leads_derived_from_i_and_ii_follow_einthoven_and_goldberger() -> None:
    # Einthoven III = II - I; Goldberger aVR = -(I+II)/2, aVL = I - II/2, aVF = II - I/2
    # (standard lead relations; Malmivuo & Plonsey, Bioelectromagnetism, 1995, ch. 15).
    rng = np.random.default_rng(1)
    lead_i, lead_ii = rng.normal(size=(2, 1000)).astype(np.float32)
    rec = record_from_array(
        np.stack([lead_i, lead_ii, lead_i * 0.3], axis=1), 500, ["I", "II", "V1"]
    )
    assert rec.lead_names == ("I", "II", "III", "aVR", "aVL", "aVF", "V1")
    sig = rec.signal_mv
    np.testing.assert_allclose(sig[:, 2], lead_ii - lead_i, atol=1e-6)
    np.testing.assert_allclose(sig[:, 3], -(lead_i + lead_ii) / 2, atol=1e-6)
    np.testing.assert_allclose(sig[:, 4], lead_i - lead_ii / 2, atol=1e-6)
    np.testing.assert_allclose(sig[:, 5], lead_ii - lead_i / 2, atol=1e-6)
    assert [lead.derived for lead in rec.leads] == [False, False, True, True, True, True, False]
    assert any("derived" in n for n in rec.notes)


def test_windows_equal_the_whole_signal() -> None:
    rng = np.random.default_rng(2)
    data = rng.normal(size=(5000, 12)).astype(np.float32)
    rec = record_from_array(data, 500, list(STANDARD_12))
    np.testing.assert_array_equal(rec.window(1234, 2345), data[1234:2345])
    np.testing.assert_array_equal(rec.window_s(1.0, 2.0), data[500:1000])
    assert rec.window(-10, 3).shape == (3, 12)
    assert rec.window(4990, 9999).shape == (10, 12)
    assert rec.window(7000, 8000).shape == (0, 12)
    assert not rec.signal_mv.flags.writeable


def test_memmap_source_converts_digital_to_millivolts(tmp_path) -> None:
    digital = np.array([[0, 200], [100, -200], [-32768, 0]], dtype=np.int16)
    path = tmp_path / "d.bin"
    digital.tofile(path)
    mm = np.memmap(path, dtype=np.int16, mode="r", shape=digital.shape)
    src = DigitalMemmapSource(mm, np.array([200.0, 100.0]), np.array([0, 0]), invalid_code=-32768)
    rec = build_record(name="d", fs_hz=100, source=src, leads=[LeadInfo("V1"), LeadInfo("V2")])
    out = rec.window(0, 3)
    np.testing.assert_allclose(out[:2], [[0.0, 2.0], [0.5, -2.0]])
    assert np.isnan(out[2, 0]) and out[2, 1] == 0.0


def test_flat_and_nan_leads_are_flagged() -> None:
    data = np.zeros((1000, 3), dtype=np.float32)
    data[:, 0] = np.sin(np.linspace(0, 20, 1000))
    data[:, 2] = np.nan
    rec = record_from_array(data, 250, ["V1", "V2", "V3"])
    assert [lead.flat for lead in rec.leads] == [False, True, True]


@pytest.mark.parametrize("fs", [0, -250, float("nan"), float("inf")])
def test_bad_sampling_rate_is_a_clear_error(fs: float) -> None:
    with pytest.raises(RecordError, match="sampling rate"):
        build_record(
            name="x",
            fs_hz=fs,
            source=ArraySource(np.zeros((10, 1), np.float32)),
            leads=[LeadInfo("I")],
        )


def test_duplicate_and_mismatched_leads_are_clear_errors(tmp_path) -> None:
    with pytest.raises(RecordError, match="more than once") as err:
        record_from_array(np.zeros((10, 2)), 250, ["V1", "v1"], source_path=tmp_path / "a.csv")
    assert "a.csv" in str(err.value)
    with pytest.raises(RecordError, match="2 lead names but 3"):
        record_from_array(np.zeros((10, 3)), 250, ["V1", "V2"])
