"""The limb-lead consistency check (``measure.limb_consistency``) against limb leads made
independently of it: the potentials of the three limb electrodes from a known frontal dipole,
each lead the difference its definition names (Einthoven W, Fahr G, de Waart A, Pflugers
Arch Ges Physiol 1913;150:275-315: I = L - R, II = F - R, III = F - L; Goldberger E, Am Heart
J 1942;23:483-492: aVR = R - (L + F)/2 and likewise; from memory). The check itself tests the
relations between the leads, which these definitions imply but the test never uses.

Then through the engine, as a reader meets it: a synthetic 12-lead record (heart-vector
model, ``core.synth``) with one limb lead's gain changed, or the arm electrodes swapped.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from reviewapp.core.dsp.filters import condition
from reviewapp.core.engine import analyse
from reviewapp.core.interpret import interpret
from reviewapp.core.measure.limb_consistency import (
    LIMB_ORDER,
    MAX_RELATIVE_RESIDUAL,
    limb_consistency,
    relative_residuals,
)
from reviewapp.core.measure.reason_text import cell_text, for_quantity
from reviewapp.core.record import record_from_array
from reviewapp.core.synth.generator import generate
from reviewapp.core.synth.params import SynthParams

FS = 500.0
# Electrode directions in the frontal plane (deg, lead I at 0, positive downward): the
# vertices of Einthoven's triangle seen from the heart, right arm, left arm, left foot.
ELECTRODE_DEG = {"R": -150.0, "L": -30.0, "F": 90.0}


def _dipole(n_beats: int = 10, rr_s: float = 1.0) -> np.ndarray:
    """A frontal heart vector (n, 2) in mV: P, a QRS loop of three lobes, T, each a Gaussian
    lobe in its own direction (deg, amplitude mV, centre s, width s)."""
    t = np.arange(round(n_beats * rr_s * FS)) / FS
    ph = t % rr_s
    out = np.zeros((t.size, 2))
    for deg, amp, centre, width in (
        (60.0, 0.15, 0.10, 0.020),
        (-30.0, 0.30, 0.27, 0.008),
        (50.0, 1.20, 0.29, 0.010),
        (150.0, 0.40, 0.31, 0.008),
        (40.0, 0.35, 0.55, 0.050),
    ):
        g = amp * np.exp(-0.5 * ((ph - centre) / width) ** 2)
        a = math.radians(deg)
        out += np.stack([g * math.cos(a), g * math.sin(a)], axis=1)
    return out


def _limb_leads(
    dipole: np.ndarray,
    rng: np.random.Generator,
    *,
    electrode_noise_mv: float = 0.02,
    channel_noise_mv: float = 0.0,
    swap_arms: bool = False,
) -> np.ndarray:
    """The six limb leads (n, 6, ``LIMB_ORDER``) from the electrode potentials: each electrode
    picks up its own noise (shared by every lead it enters), each channel its own amplifier
    noise, and samples are quantised to 1 uV."""
    phi = {}
    for name, deg in ELECTRODE_DEG.items():
        a = math.radians(deg)
        phi[name] = dipole @ np.array([math.cos(a), math.sin(a)])
        phi[name] = phi[name] + rng.normal(0.0, electrode_noise_mv, phi[name].shape)
    if swap_arms:
        phi["R"], phi["L"] = phi["L"], phi["R"]
    r, left, f = phi["R"], phi["L"], phi["F"]
    six = np.stack(
        [left - r, f - r, f - left, r - (left + f) / 2, left - (r + f) / 2, f - (r + left) / 2],
        axis=1,
    )
    six = six + rng.normal(0.0, channel_noise_mv, six.shape) if channel_noise_mv else six
    return np.round(six / 0.001) * 0.001


def _worst(six: np.ndarray) -> float:
    return max(relative_residuals(condition(six.astype(np.float32), FS)).values())


def test_electrode_model_leads_are_consistent():
    six = _limb_leads(_dipole(), np.random.default_rng(1))
    assert _worst(six) < MAX_RELATIVE_RESIDUAL / 10


def test_amplifier_noise_at_the_standards_limit_stays_below_the_threshold():
    # 5 uV rms per channel, not shared between the leads (IEC 60601-2-25 allows about 30 uV
    # peak to peak; from memory) on a small ECG: the threshold's margin for recorders that
    # digitise every limb lead on their own. 10 uV rms: still below, narrowly.
    dip = _dipole()
    for sd, limit in ((0.005, MAX_RELATIVE_RESIDUAL / 2), (0.010, MAX_RELATIVE_RESIDUAL)):
        six = _limb_leads(dip, np.random.default_rng(2), channel_noise_mv=sd)
        assert _worst(six) < limit, sd


@pytest.mark.parametrize("gain", [1.25, 0.75, 1.5, 0.5])
@pytest.mark.parametrize("lead", LIMB_ORDER)
def test_one_lead_off_by_a_quarter_or_a_half_is_inconsistent(lead, gain):
    six = _limb_leads(_dipole(), np.random.default_rng(3))
    six[:, LIMB_ORDER.index(lead)] *= gain
    assert _worst(six) > MAX_RELATIVE_RESIDUAL


@pytest.mark.parametrize("gain", [1.1, 0.9])
def test_one_lead_off_by_a_tenth_is_found_in_the_larger_leads(gain):
    """A 10 % gain error gives a residual of about 0.1 x the lead's std over the limb-lead
    scale: found in I, II, aVR and aVF here, not in III and aVL (about half of it). The axes
    are computed from I and aVF (``measure.axes``): an error in either is found."""
    six = _limb_leads(_dipole(), np.random.default_rng(4))
    x = condition(six.astype(np.float32), FS)
    scale = float(np.sqrt(np.mean(np.var(x, axis=0))))
    for k, lead in enumerate(LIMB_ORDER):
        off = six.copy()
        off[:, k] *= gain
        ratio = float(np.std(x[:, k])) / scale
        if ratio >= 0.9 or lead in ("I", "aVF"):
            assert _worst(off) > MAX_RELATIVE_RESIDUAL, (lead, ratio)
        assert _worst(off) == pytest.approx(0.1 * ratio, rel=0.25), lead


def test_arm_electrodes_swapped_stay_consistent():
    """A reversal keeps Einthoven's relations (the leads are still differences of the same
    three potentials): a separate check must find it (below, through the engine)."""
    six = _limb_leads(_dipole(), np.random.default_rng(5), swap_arms=True)
    assert _worst(six) < MAX_RELATIVE_RESIDUAL / 10


# --- through the engine ----------------------------------------------------------------------


def _synthetic(qrs_axis_deg: float = -60.0, **kw) -> tuple[np.ndarray, tuple[str, ...]]:
    p = SynthParams(
        qrs_axis_deg=qrs_axis_deg,
        emg_snr_db=25.0,
        baseline_wander_mv=0.2,
        mains_hz=50.0,
        mains_mv=0.02,
        seed=11,
        **kw,
    )
    rec = generate(p).record
    return np.array(rec.signal_mv, dtype=np.float64), rec.lead_names


def _read(signal: np.ndarray, names: tuple[str, ...]):
    rec = record_from_array(signal, FS, names, derive_limb_leads=False)
    reading = analyse(rec).reading()
    return reading, interpret(reading)


def test_synthetic_record_at_realistic_noise_is_consistent_and_axis_statements_made():
    sig, names = _synthetic()
    reading, it = _read(sig, names)
    found = reading.measurements.limb_consistency
    assert found is not None and found.consistent
    assert max(v for _, v in found.residual_by_lead) < MAX_RELATIVE_RESIDUAL / 10
    assert "axis.left_deviation" in it.codes()  # generated at -60 deg
    assert "lead_check.limb_inconsistent" not in it.codes()
    assert not for_quantity(reading.reasons, "qrs_axis_deg")


def test_one_limb_lead_scaled_warns_marks_the_axes_and_withholds_axis_statements():
    sig, names = _synthetic()
    sig[:, names.index("aVF")] *= 1.5  # aVF's channel calibrated 50 % high
    reading, it = _read(sig, names)
    codes = it.codes()
    assert codes[0] == "lead_check.limb_inconsistent"
    warning = it.get("lead_check.limb_inconsistent")
    assert warning is not None and "aVF differs from (II + III)/2" in warning.detail
    assert "Einthoven" in warning.source and "Goldberger" in warning.source
    assert not any(c.startswith("axis.") for c in codes)
    assert "conduction.lafb" not in codes
    gated = {r.quantity for r in it.reasons if r.kind == "gated"}
    assert {"statement:axis", "statement:repolarization.wide_qrs_t_angle"} <= gated
    for q in ("p_axis_deg", "qrs_axis_deg", "t_axis_deg"):
        assert cell_text(for_quantity(reading.reasons, q)) == "caution: limb leads inconsistent"
    # The values are still shown (never altered, never hidden).
    assert reading.measurements.intervals.qrs_axis_deg is not None


def test_reversal_is_still_found_and_a_scaled_lead_on_top_warns_as_well():
    sig, names = _synthetic(qrs_axis_deg=60.0)
    col = {n: k for k, n in enumerate(names)}
    perm = list(range(len(names)))
    for a, b in (("II", "III"), ("aVR", "aVL")):
        perm[col[a]], perm[col[b]] = col[b], col[a]
    swapped = sig[:, perm]
    swapped[:, col["I"]] *= -1.0
    _reading, it = _read(swapped, names)
    assert "lead_check.limb_reversal" in it.codes()
    assert "lead_check.limb_inconsistent" not in it.codes()
    swapped[:, col["III"]] *= 0.7
    _, it = _read(swapped, names)
    assert {"lead_check.limb_reversal", "lead_check.limb_inconsistent"} <= set(it.codes())


def test_not_applied_to_limb_leads_this_program_derived():
    sig, names = _synthetic()
    keep = [k for k, n in enumerate(names) if n not in ("III", "aVR", "aVL", "aVF")]
    rec = record_from_array(sig[:, keep], FS, [names[k] for k in keep])
    assert {"III", "aVF"} <= set(rec.lead_names)  # derived from I and II
    reading = analyse(rec).reading()
    assert limb_consistency(reading.marked) is None
    assert reading.measurements.limb_consistency is None


def test_not_applied_with_a_flat_limb_lead():
    sig, names = _synthetic()
    sig[:, names.index("aVL")] = 0.0
    reading, it = _read(sig, names)
    assert reading.measurements.limb_consistency is None
    assert "lead_check.limb_inconsistent" not in it.codes()


def test_recomputed_on_the_same_signal_after_a_mark_moves_gives_the_same_result():
    sig, names = _synthetic()
    sig[:, names.index("I")] *= 1.3
    an = analyse(record_from_array(sig, FS, names, derive_limb_leads=False))
    first = an.reading().measurements.limb_consistency
    marked, _ = an.marked()
    assert limb_consistency(marked) == first
    # A different signal array is never answered from the cache.
    other = replace(marked, conditioned_mv=np.array(marked.conditioned_mv) * 1.0)
    other.conditioned_mv[:, names.index("I")] /= 1.3
    again = limb_consistency(other)
    assert again is not None and again.consistent


def test_the_axes_caution_reaches_measure_json_csv_and_table():
    import jsonschema

    from reviewapp.core.measure.output import (
        MEASURE_JSON_SCHEMA,
        csv_row,
        reading_to_dict,
        table_text,
    )

    sig, names = _synthetic()
    sig[:, names.index("II")] *= 0.6
    an = analyse(record_from_array(sig, FS, names, derive_limb_leads=False))
    reading = an.reading()
    d = reading_to_dict(an, reading, path="scaled", interpretation=interpret(reading))
    jsonschema.validate(d, MEASURE_JSON_SCHEMA)
    kinds = {(r["quantity"], r["kind"]) for r in d["reasons"]}
    assert {("qrs_axis_deg", "caution"), ("statement:axis", "gated")} <= kinds
    row = csv_row(d)
    assert row["less_reliable"].startswith("p_axis_deg qrs_axis_deg t_axis_deg: frontal axis")
    axis_line = next(x for x in table_text(d).splitlines() if x.startswith("QRS axis"))
    assert axis_line.endswith("caution: limb leads inconsistent")
