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


# P: right-atrial lobe (inferior, anterior) then left-atrial lobe (leftward, slightly
# posterior), which makes V1 biphasic: positive, then a small negative terminal part. Sized so
# that a normal P (axis +60 deg, default amplitude) reads about 0.11 mV in II, 0.12 mV in V2
# (under the 0.15 mV of right atrial abnormality) and its terminal force in V1 is about 0.03
# mm x s, under the 0.04 mm x s of left atrial abnormality (common practice, no source: a
# normal terminal P in V1 is under 1 mm deep and 40 ms long). The earlier left-atrial lobe
# (posterior component 0.55) gave 0.05 mm x s: left atrial abnormality on normal records.
P_WAVE: tuple[Lobe, ...] = (
    Lobe(0.0, 0.62, _vec(20.0, -0.4, 1.0)),
    Lobe(0.38, 1.0, _vec(-15.0, 0.1, 0.9)),
)

# Narrow QRS: septal q, early anterior-leftward forces, main R, terminal S; the horizontal
# loop turns counter-clockwise (viewed from above) from right-anterior through left to
# posterior. The anterior lobe makes the R grow from V1 to V4/V5 with the transition (R about
# equal to S) near V3, the posterior main lobe the S in V1-V2. With the default amplitude and
# a QRS axis of +20 to +55 deg this gives (common practice, no source; typical adult values
# from memory): rS in V1 (r 0.2 mV, S 0.9-1.2), rS in V2 (r 0.4, S 1.0), R about equal to S
# in V3 (R 0.45-0.7 mV, over the 0.3 mV of poor R-wave progression), R 0.7-1.4 over a small
# S in V4, R 0.9-1.5 in V5 (the tallest); every precordial QRS 1.4 mV or more peak to peak
# somewhere (low voltage is < 1 mV in all six); Sokolow-Lyon, Cornell and Peguero-Lo Presti
# voltages under their limits. A vertical heart (axis +65 deg and more) turns the main force
# away from x, so V4-V6 get smaller: raise ``r_amp_mv`` there. The septal and terminal lobes
# keep their earlier timing (main lobe to 74 %, terminal from 52 %): with the main lobe
# running to 78 % or a terminal lobe pointing leftward the QRS end of this shape read 3
# samples late, or an early-repolarization slur appeared in V4-V6.
QRS_NARROW: tuple[Lobe, ...] = (
    Lobe(0.0, 0.36, _vec(160.0, -0.7, 0.14)),
    Lobe(0.08, 0.55, _vec(-5.0, -0.4, 0.45)),
    Lobe(0.2, 0.74, _vec(0.0, 0.6, 1.05)),
    Lobe(0.52, 1.0, _vec(-140.0, 0.8, 0.32)),
)

# Wide, notched QRS of left bundle branch block: all forces leftward and posterior, two
# overlapping main lobes give the broad notched R in I, aVL, V5, V6 (no septal q) and a QS in
# V1-V2. The later lobe is the larger, so the R peaks late in V5 and V6 (R-peak time > 60 ms,
# one of the criteria of Surawicz et al., Circulation 2009); deep QS in V1 (about 1.5 mV),
# R 1.2-1.6 mV in V5 (common practice, no source). A short last lobe ends the QRS with a
# clear corner: a large lobe running out to the end leaves a long shallow tail at these
# amplitudes, which the delineator reads up to 11 samples late.
QRS_WIDE: tuple[Lobe, ...] = (
    Lobe(0.0, 0.42, _vec(-15.0, 0.7, 0.45)),
    Lobe(0.22, 0.62, _vec(10.0, 0.85, 0.75)),
    Lobe(0.45, 0.95, _vec(0.0, 0.4, 1.0)),
    Lobe(0.7, 1.0, _vec(-60.0, 0.6, 0.2)),
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
