"""From the heart vector to the 12 leads: Dower's transform plus Einthoven and Goldberger.

Dipole model: the heart is a single time-varying current dipole H(t) = (x, y, z) and each lead
voltage is a fixed linear projection of it (lead vectors; Burger & van Milaan 1946). The
projection used here is Dower's transform from the Frank XYZ leads to the 12 standard leads
(Dower GE, Machado HB, Osborne JA. On deriving the electrocardiogram from vectorcardiographic
leads. Clin Cardiol 1980;3:87-95; citation and coefficients from memory). Frank axes: x towards
the subject's left, y towards the feet, z towards the back.

Only I and II (and V1-V6) are projected; III, aVR, aVL and aVF are then computed from I and II
with Einthoven's and Goldberger's relations, so those identities hold exactly (to float32
rounding) for every generated record, noise included:
III = II - I, aVR = -(I + II) / 2, aVL = I - II / 2, aVF = II - I / 2.

Example:
    >>> import numpy as np
    >>> leads = project_leads(np.array([[1.0, 0.0, 0.0]]))
    >>> round(float(leads[0, 0]), 3), round(float(leads[0, 2]), 3)  # I and III for a pure +x dipole
    (0.632, -0.397)
"""

from __future__ import annotations

import math

import numpy as np

from reviewapp.core.record import STANDARD_12

INDEPENDENT_LEADS: tuple[str, ...] = ("I", "II", "V1", "V2", "V3", "V4", "V5", "V6")
FRANK_LEADS: tuple[str, ...] = ("X", "Y", "Z")
AVAILABLE_LEADS: tuple[str, ...] = STANDARD_12 + FRANK_LEADS

# Dower transform, rows I, II, V1..V6; columns Frank X, Y, Z. From memory (Dower et al. 1980).
DOWER_XYZ_TO_8 = np.array(
    [
        [0.632, -0.235, 0.059],  # I
        [0.235, 1.066, -0.132],  # II
        [-0.515, 0.157, -0.917],  # V1
        [0.044, 0.164, -1.387],  # V2
        [0.882, 0.098, -1.277],  # V3
        [1.213, 0.127, -0.601],  # V4
        [1.125, 0.127, -0.086],  # V5
        [0.831, 0.076, 0.230],  # V6
    ]
)

LEAD_I = DOWER_XYZ_TO_8[0]
LEAD_AVF = DOWER_XYZ_TO_8[1] - 0.5 * DOWER_XYZ_TO_8[0]  # Goldberger: aVF = II - I/2


def project_independent(heart: np.ndarray) -> np.ndarray:
    """Heart vector (n, 3) -> leads I, II, V1..V6 (n, 8), float64 mV."""
    return heart @ DOWER_XYZ_TO_8.T


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
    """Frontal axis (deg, (-180, 180]) seen in leads I and aVF for a net heart-vector area.

    Hexaxial convention (lead I at 0 deg, aVF at +90 deg): atan2(net aVF, net I).
    """
    deg = math.degrees(math.atan2(float(LEAD_AVF @ area_xyz), float(LEAD_I @ area_xyz)))
    return deg + 360.0 if deg <= -180.0 else deg


def frontal_rotation_for_axis(area_xyz: np.ndarray, axis_deg: float) -> float:
    """Frontal rotation angle (rad) that makes ``axis_of_area(R @ area) == axis_deg`` exactly.

    The net area seen by (I, aVF) after rotating by phi is ``cos(phi) P + sin(phi) Q + C`` with
    P, Q, C fixed 2-vectors; requiring it to be parallel to u = (cos a, sin a) gives
    ``p cos(phi) + q sin(phi) = -c`` (p, q, c: cross products with u), solved in closed form;
    of the two roots the one pointing along +u (not -u) is kept.
    """
    m = np.vstack([LEAD_I, LEAD_AVF])  # (2, 3)
    a_xy = np.array([area_xyz[0], area_xyz[1], 0.0])
    j_a = np.array([-area_xyz[1], area_xyz[0], 0.0])
    a_z = np.array([0.0, 0.0, area_xyz[2]])
    vp, vq, vc = m @ a_xy, m @ j_a, m @ a_z
    th = math.radians(axis_deg)
    u = np.array([math.cos(th), math.sin(th)])

    def cross(v: np.ndarray) -> float:
        return float(v[0] * u[1] - v[1] * u[0])

    p, q, c = cross(vp), cross(vq), cross(vc)
    r0 = math.hypot(p, q)
    if r0 < 1e-12 or abs(c) > r0:
        raise ValueError(f"cannot orient the wave to a frontal axis of {axis_deg} deg")
    base, half = math.atan2(q, p), math.acos(-c / r0)
    for phi in (base + half, base - half):
        n = math.cos(phi) * vp + math.sin(phi) * vq + vc
        if float(n @ u) > 0:
            return phi
    raise ValueError(f"cannot orient the wave to a frontal axis of {axis_deg} deg")
