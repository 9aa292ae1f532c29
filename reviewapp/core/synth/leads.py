"""From the heart vector to the 12 leads: Einthoven's triangle for the limb leads, Dower's
transform for the chest leads.

Dipole model: the heart is a single time-varying current dipole H(t) = (x, y, z) and each lead
voltage is a fixed linear projection of it (lead vectors; Burger & van Milaan 1946). Frank
axes: x towards the subject's left, y towards the feet, z towards the back.

Limb leads: the frontal projection of Einthoven's equilateral triangle (Einthoven W, Fahr G,
de Waart A, Pflugers Arch 150:275-315, 1913): lead I along +x, lead II at +60 deg (towards
the feet), both with gain ``LIMB_GAIN``, so the frontal angle of the dipole is exactly the
hexaxial axis the limb leads show. Chest leads V1-V6: Dower's transform from the Frank XYZ
leads (Dower GE, Machado HB, Osborne JA. On deriving the electrocardiogram from
vectorcardiographic leads. Clin Cardiol 1980;3:87-95; coefficients from memory).

Only I and II (and V1-V6) are projected; III, aVR, aVL and aVF are then computed from I and II
with Einthoven's and Goldberger's relations, so those identities hold exactly (to float32
rounding) for every generated record, noise included:
III = II - I, aVR = -(I + II) / 2, aVL = I - II / 2, aVF = II - I / 2.

Example:
    >>> import numpy as np
    >>> leads = project_leads(np.array([[1.0, 0.0, 0.0]]))
    >>> round(float(leads[0, 0]), 3), round(float(leads[0, 2]), 3)  # I and III for a pure +x dipole
    (0.7, -0.35)
"""

from __future__ import annotations

import math

import numpy as np

from reviewapp.core.record import STANDARD_12

INDEPENDENT_LEADS: tuple[str, ...] = ("I", "II", "V1", "V2", "V3", "V4", "V5", "V6")
FRANK_LEADS: tuple[str, ...] = ("X", "Y", "Z")
AVAILABLE_LEADS: tuple[str, ...] = STANDARD_12 + FRANK_LEADS

# Gain of the limb leads (mV per dipole unit): near Dower's lead I row (|(0.632, -0.235)| =
# 0.67; his lead II row is |(0.235, 1.066)| = 1.09), so that the lateral chest leads are
# about 1.6 times lead I, as in Dower's transform (V5 row 1.13 on x). With a gain as large as
# the average of the two rows (0.9, the earlier choice) a dipole giving a normal lead II left
# every chest lead under 1 mV: low precordial voltage on a normal record. The limb-lead size
# is set by the dipole amplitudes (``SynthParams``) instead.
LIMB_GAIN = 0.7
_C60, _S60 = math.cos(math.radians(60.0)), math.sin(math.radians(60.0))

# Rows I, II (Einthoven, frontal only), V1..V6 (Dower et al. 1980, from memory); columns X, Y, Z.
LEAD_ROWS_XYZ_TO_8 = np.array(
    [
        [LIMB_GAIN, 0.0, 0.0],  # I: +x (0 deg)
        [LIMB_GAIN * _C60, LIMB_GAIN * _S60, 0.0],  # II: +60 deg
        [-0.515, 0.157, -0.917],  # V1
        [0.044, 0.164, -1.387],  # V2
        [0.882, 0.098, -1.277],  # V3
        [1.213, 0.127, -0.601],  # V4
        [1.125, 0.127, -0.086],  # V5
        [0.831, 0.076, 0.230],  # V6
    ]
)


def project_independent(heart: np.ndarray) -> np.ndarray:
    """Heart vector (n, 3) -> leads I, II, V1..V6 (n, 8), float64 mV."""
    return heart @ LEAD_ROWS_XYZ_TO_8.T


def complete_leads(independent: np.ndarray, heart: np.ndarray) -> dict[str, np.ndarray]:
    """All available leads by name from the eight independent ones (+ heart vector for X, Y, Z).

    Limb leads III, aVR, aVL, aVF come from I and II (Einthoven, Goldberger; e.g. Malmivuo &
    Plonsey, Bioelectromagnetism, 1995, ch. 15).
    """
    lead_i, lead_ii = independent[:, 0], independent[:, 1]
    out = {
        "I": lead_i,
        "II": lead_ii,
        "III": lead_ii - lead_i,
        "aVR": -(lead_i + lead_ii) / 2.0,
        "aVL": lead_i - lead_ii / 2.0,
        "aVF": lead_ii - lead_i / 2.0,
    }
    for j, name in enumerate(INDEPENDENT_LEADS[2:], start=2):
        out[name] = independent[:, j]
    for j, name in enumerate(FRANK_LEADS):
        out[name] = heart[:, j]
    return out


def project_leads(heart: np.ndarray) -> np.ndarray:
    """Heart vector (n, 3) -> the standard 12 leads (n, 12) in STANDARD_12 order."""
    leads = complete_leads(project_independent(heart), heart)
    return np.stack([leads[n] for n in STANDARD_12], axis=1)


def rotation_z(angle_rad: float) -> np.ndarray:
    """Rotation in the frontal (x, y) plane, positive from +x (left) towards +y (feet)."""
    c, s = math.cos(angle_rad), math.sin(angle_rad)
    return np.array([[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]])


def axis_of_area(area_xyz: np.ndarray) -> float:
    """Frontal axis (deg, (-180, 180]) of a net heart-vector area: its angle in the frontal
    (x, y) plane, +x (left) at 0 deg, +y (feet) at +90 deg. With the Einthoven limb leads
    above this is the hexaxial axis the limb leads show.

    >>> axis_of_area(np.array([1.0, 1.0, 5.0]))
    45.0
    """
    deg = math.degrees(math.atan2(float(area_xyz[1]), float(area_xyz[0])))
    return deg + 360.0 if deg <= -180.0 else deg


def frontal_rotation_for_axis(area_xyz: np.ndarray, axis_deg: float) -> float:
    """Frontal rotation angle (rad) that makes the wave's axis ``axis_deg`` exactly: a
    rotation about z turns the frontal angle of the net area (``axis_of_area``, the axis the
    Einthoven limb leads show) by the same amount.

    >>> round(math.degrees(frontal_rotation_for_axis(np.array([1.0, 0.0, 0.3]), 60.0)), 6)
    60.0
    """
    if math.hypot(float(area_xyz[0]), float(area_xyz[1])) < 1e-12:
        raise ValueError(f"cannot orient the wave to a frontal axis of {axis_deg} deg")
    return math.radians(axis_deg - axis_of_area(area_xyz))
