"""DICOM waveform reader checked against pydicom's own conversion (Dataset.waveform_array)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pydicom
import pytest
from pydicom.data import get_testdata_file

from reviewapp.core.io import open_record
from reviewapp.core.record import STANDARD_12


@pytest.fixture(scope="module")
def ecg_dcm() -> Path:
    path = get_testdata_file("waveform_ecg.dcm")
    if path is None:
        pytest.skip("pydicom test file waveform_ecg.dcm not available")
    return Path(path)


def test_dicom_values_equal_pydicom_waveform_array(ecg_dcm: Path) -> None:
    rec = open_record(ecg_dcm)
    ds = pydicom.dcmread(ecg_dcm)
    # Reference: pydicom's waveform_array(0) = stored * sensitivity * correction + baseline, in
    # the Channel Sensitivity Units (uV in this file); we serve mV, hence / 1000.
    ref_uv = ds.waveform_array(0)
    assert rec.n_samples == ref_uv.shape[0] == 10000
    np.testing.assert_allclose(rec.signal_mv, ref_uv / 1000.0, rtol=1e-6, atol=1e-7)
    assert rec.fs_hz == float(ds.WaveformSequence[0].SamplingFrequency) == 1000.0
    assert rec.lead_names == STANDARD_12  # code meanings "Lead I (Einthoven)", "Lead II", ...
    # Channel Sensitivity 1.25 uV per unit in this file -> 800 adu per mV.
    assert rec.leads[0].adc_gain_per_mv == pytest.approx(800.0)
    assert rec.subject.sex == "female" and rec.subject.age_years == 42  # PatientAge "042Y"
    assert any("MEDIAN BEAT" in n for n in rec.notes)  # the second (derived) group is named


def test_dicom_sensitivity_correction_and_baseline_applied(ecg_dcm: Path, tmp_path: Path) -> None:
    ds = pydicom.dcmread(ecg_dcm)
    group = ds.WaveformSequence[0]
    ch0 = group.ChannelDefinitionSequence[0]
    ch0.ChannelSensitivityCorrectionFactor = "2"
    ch0.ChannelBaseline = "-50"
    ch0.ChannelSensitivityUnitsSequence[0].CodeValue = "mV"
    out = tmp_path / "modified.dcm"
    ds.save_as(out)
    rec = open_record(out)
    ref = pydicom.dcmread(out).waveform_array(0)  # reference: pydicom, in each channel's units
    np.testing.assert_allclose(rec.signal_mv[:, 0], ref[:, 0], rtol=1e-6)  # already mV
    np.testing.assert_allclose(rec.signal_mv[:, 1], ref[:, 1] / 1000.0, rtol=1e-6, atol=1e-7)
