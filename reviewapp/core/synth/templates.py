"""Wave templates: which lobes make up each wave, in a frame where the main force points +x.

Each lobe vector is given as (frontal angle relative to the wave's main direction in deg,
posterior component z of the unit direction, relative size). The generator rotates a whole
template in the frontal plane so that the wave's net area lands on the requested axis, then
scales it by the amplitude parameter. Directions follow the usual textbook sequence of cardiac
activation (common practice, no source): septal forces rightward-anterior (small q in I and V6,
r in V1), main left-ventricular forces leftward-inferior-posterior, terminal forces
rightward-superior-posterior; the T vector roughly parallel to the QRS, slightly anterior.
"""

from __future__ import annotations

import math

from reviewapp.core.synth.lobes import Lobe


def _vec(angle_deg: float, z: float, size: float) -> tuple[float, float, float]:
    a = math.radians(angle_deg)
    planar = math.sqrt(max(0.0, 1.0 - z * z))
    return (size * planar * math.cos(a), size * planar * math.sin(a), size * z)


# P: right-atrial lobe (inferior, anterior) then left-atrial lobe (leftward, posterior), which
# makes V1 biphasic.
P_WAVE: tuple[Lobe, ...] = (
    Lobe(0.0, 0.62, _vec(20.0, -0.5, 1.0)),
    Lobe(0.38, 1.0, _vec(-15.0, 0.55, 0.9)),
)

# Narrow QRS: septal q, main R, terminal S. Index 1 is the R lobe.
QRS_NARROW: tuple[Lobe, ...] = (
    Lobe(0.0, 0.36, _vec(160.0, -0.7, 0.12)),
    Lobe(0.12, 0.74, _vec(0.0, 0.35, 1.0)),
    Lobe(0.52, 1.0, _vec(-140.0, 0.8, 0.32)),
)

# Wide, notched QRS of a left-bundle-branch-like pattern: all forces leftward and posterior,
# two overlapping main lobes give the notched broad R in I/V6 and a QS in V1.
QRS_WIDE: tuple[Lobe, ...] = (
    Lobe(0.0, 0.42, _vec(-15.0, 0.5, 0.55)),
    Lobe(0.22, 0.62, _vec(10.0, 0.85, 0.8)),
    Lobe(0.5, 1.0, _vec(0.0, 0.6, 0.8)),
)

# Premature ventricular beat: broad, mainly anterior, opposite to the sinus QRS in the frontal
# plane (placed by the generator).
QRS_ECTOPIC: tuple[Lobe, ...] = (
    Lobe(0.0, 0.66, _vec(0.0, -0.55, 1.0)),
    Lobe(0.44, 1.0, _vec(35.0, -0.2, 0.55)),
)

# T: one asymmetric lobe; peak at 62 % of the wave.
T_WAVE: tuple[Lobe, ...] = (Lobe(0.0, 1.0, _vec(0.0, -0.35, 1.0), shape="t", peak_frac=0.62),)

# Fraction of JT (QRS end to T end) taken by the T wave itself; the rest is an isoelectric ST
# segment, so QRS end is visible as a return to exactly zero.
T_FRACTION_OF_JT = 0.62

# T of a wide (bundle-branch-like) QRS: strongly anterior, discordant to the posterior QRS in
# V1-V3.
T_WIDE: tuple[Lobe, ...] = (Lobe(0.0, 1.0, _vec(0.0, -0.75, 1.0), shape="t", peak_frac=0.6),)

# T of a premature ventricular beat: posterior, placed opposite to its QRS by the generator.
T_ECTOPIC: tuple[Lobe, ...] = (Lobe(0.0, 1.0, _vec(0.0, 0.5, 1.0), shape="t", peak_frac=0.55),)
