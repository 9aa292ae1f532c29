"""Frontal-plane electrical axes (P, QRS, T) from limb-lead net areas.

Method (hexaxial reference system, common practice; the axis statements of the AHA/ACCF/HRS
recommendations use the same frame: Part I, Kligfield et al., Circulation 115:1306-1324, 2007;
Part II, Mason et al., Circulation 115:1325-1332, 2007 — from memory): each limb lead is the
projection of the frontal heart vector V (angle theta, lead I at 0 deg, positive angles
clockwise, i.e. downward) on its axis in Einthoven's equilateral triangle (Einthoven W,
Fahr G, de Waart A, Pflugers Arch 150:275-315, 1913; Goldberger's augmented leads): lead I
at 0, II at +60, III at +120, aVL at -30, aVF at +90, aVR at -150 deg, with

    I = |V| cos(theta), II = |V| cos(theta - 60), aVF = II - I/2 = (sqrt(3)/2) |V| sin(theta).

aVF carries only sqrt(3)/2 of the vertical component, so

    axis = atan2(2 aVF / sqrt(3), I), in degrees, on (-180, 180].

(atan2(aVF, I) would read a true -30 deg as -26.6 deg.) Worked checks of the isoelectric-lead
rule (common practice): lead II isoelectric -> -30 deg; aVL isoelectric -> +60 deg; lead I
isoelectric -> +90 or -90 deg; lead III isoelectric -> +30 deg.

Net area (sum of baseline-corrected samples between the wave's global marks, times the sample
interval) is used rather than net amplitude because it is less sensitive to a single noisy
sample and to notched complexes (common practice in computerized ECG analysis, no source).

When lead I or aVF is not usable, lead I and aVF are derived from any two usable limb leads
with Einthoven's law and Goldberger's relations (III = II - I, aVR = -(I + II)/2,
aVL = I - II/2, aVF = II - I/2): the usable leads are solved, by least squares, for the (I, II)
pair that explains them.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

LIMB_LEADS: tuple[str, ...] = ("I", "II", "III", "aVR", "aVL", "aVF")

# Each limb lead as a combination of (I, II): Einthoven (III) and Goldberger (aVR, aVL, aVF).
_IN_TERMS_OF_I_II: Mapping[str, tuple[float, float]] = {
    "I": (1.0, 0.0),
    "II": (0.0, 1.0),
    "III": (-1.0, 1.0),
    "aVR": (-0.5, -0.5),
    "aVL": (1.0, -0.5),
    "aVF": (-0.5, 1.0),
}

# Below this net-vector magnitude (mV*s) the direction is noise: axis indeterminate.
# Common practice, no source: 0.1 uV*s is far below any P, QRS or T net area.
MIN_NET_MV_S = 1e-7


def axis_from_i_avf(net_i: float, net_avf: float) -> float | None:
    """Frontal axis in degrees on (-180, 180] from the net values of lead I and aVF:
    atan2(2 aVF / sqrt(3), I) (see the module docstring). None when both are near zero.

    Worked checks on Einthoven-consistent values (I = cos t, aVF = (sqrt(3)/2) sin t):

    >>> axis_from_i_avf(1.0, 0.0), axis_from_i_avf(0.0, 1.0), axis_from_i_avf(-1.0, 0.0)
    (0.0, 90.0, 180.0)
    >>> t = math.radians(-30.0)  # lead II isoelectric: II = cos(t - 60 deg) = 0
    >>> round(axis_from_i_avf(math.cos(t), math.sqrt(3) / 2 * math.sin(t)), 6)
    -30.0
    """
    v = 2.0 * net_avf / math.sqrt(3.0)
    if math.hypot(net_i, v) < MIN_NET_MV_S:
        return None
    deg = math.degrees(math.atan2(v, net_i))
    if deg <= -180.0:  # atan2(-0.0, -x) gives -180: fold onto +180
        deg += 360.0
    return deg


def frontal_axis(net_by_lead: Mapping[str, float]) -> float | None:
    """Axis from whatever limb leads are present in ``net_by_lead`` (name -> net value).

    Uses I and aVF directly when both are present; otherwise needs two or more limb leads and
    derives I and aVF from them. None when fewer than two limb leads are given.

    >>> round(frontal_axis({"II": 1.0, "III": 1.0}), 6)  # I = 0: straight down
    90.0
    >>> round(frontal_axis({"II": 0.0, "aVL": 0.75}), 6)  # lead II isoelectric
    -30.0
    """
    if "I" in net_by_lead and "aVF" in net_by_lead:
        return axis_from_i_avf(float(net_by_lead["I"]), float(net_by_lead["aVF"]))
    names = [n for n in LIMB_LEADS if n in net_by_lead]
    if len(names) < 2:
        return None
    a = np.array([_IN_TERMS_OF_I_II[n] for n in names])
    b = np.array([float(net_by_lead[n]) for n in names])
    (lead_i, lead_ii), *_ = np.linalg.lstsq(a, b, rcond=None)
    return axis_from_i_avf(float(lead_i), float(lead_ii - lead_i / 2.0))
