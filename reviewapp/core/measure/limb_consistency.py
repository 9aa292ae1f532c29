"""Limb-lead consistency: do the six recorded limb leads obey Einthoven's and Goldberger's
relations?

The six limb leads are differences of three electrode potentials (right arm R, left arm L,
left leg F; Goldberger's central terminal for the augmented leads), so on any recording

    III = II - I                 (Einthoven W, Fahr G, de Waart A, Pflugers Arch Ges Physiol
                                  1913;150:275-315)
    aVR = -(I + II) / 2,  aVL = (I - III) / 2,  aVF = (II + III) / 2
                                 (Goldberger E, Am Heart J 1942;23:483-492)

hold sample by sample, whatever the heart does and whatever noise the electrodes pick up
(citations from memory). A recording that breaks them has a limb lead scaled on its own (a
channel's calibration, a record put together from channels with different gains), two limb
channels exchanged in the file, or a channel that is not the lead its label says. The frontal
axes are computed from these leads (``axes``), so every axis, and every statement resting on
one, is then unreliable.

Method (this program's own): on the band-limited signal the engine measures on (the
conditioning is the same linear, zero-phase filter in every lead, so it keeps the relations;
the median beat would not: a median per sample is not linear), over the whole record, each
relation's residual (left side minus right side) is compared with the size of the limb-lead
signal:

    relative residual = std(lhs - rhs) / sqrt(mean over the six limb leads of their variance)

A common scale rather than the lead's own size, so a lead near isoelectric (small std) does
not make noise look like a fault. A residual above ``MAX_RELATIVE_RESIDUAL`` in any relation
makes the leads inconsistent.

Threshold, measured (tests/measure/test_limb_consistency.py, tests/interpret/
test_ludb_statements.py; figures in the README): consistent records give at most 0.0016 (PTB
s0010_re, a real recording) and 0.0038 (the demo worklist, synthetic, noise included); the
LUDB copy in ../shared (limb leads scaled lead by lead) gives a largest residual of 0.157 to
1.127 on the odd-numbered records. A recorder that digitises every limb lead on its own adds
amplifier noise that is not shared between the leads: at 5 uV rms per channel (about the
30 uV peak-to-peak limit of IEC 60601-2-25, from memory) a small ECG (limb-lead rms 0.21 mV)
gives 0.036, at 10 uV rms 0.072 (the tests' electrode model). ``MAX_RELATIVE_RESIDUAL`` = 0.08
lies about midway (geometric mean) between that noise at the standard's limit and the
smallest LUDB record. A gain error e in one limb lead gives a residual of about e times that
lead's std over the limb-lead scale: 25 % or more is found in every lead, 10 % in the larger
leads (in the tests' model I, II, aVR and aVF, not III and aVL). The axes are computed from I
and aVF (``axes``), so a 10 % error in either of them is found.

Example:
    >>> import numpy as np
    >>> t = np.linspace(0.0, 1.0, 500)
    >>> i, ii = np.sin(2 * np.pi * 3 * t), np.cos(2 * np.pi * 5 * t)
    >>> six = np.stack([i, ii, ii - i, -(i + ii) / 2, i - ii / 2, ii - i / 2], axis=1)
    >>> relative_residuals(six)["III"] < 1e-12
    True
    >>> six[:, 2] *= 1.25  # lead III's gain 25 % too high
    >>> round(relative_residuals(six)["III"], 2) > MAX_RELATIVE_RESIDUAL
    True
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from reviewapp.core.fiducials import MarkedECG

LIMB_ORDER: tuple[str, ...] = ("I", "II", "III", "aVR", "aVL", "aVF")

# Each relation: left-hand lead, the right-hand side as coefficients of the other limb leads,
# and the right-hand side in words for the reader.
RELATIONS: tuple[tuple[str, Mapping[str, float], str], ...] = (
    ("III", {"II": 1.0, "I": -1.0}, "II - I"),
    ("aVR", {"I": -0.5, "II": -0.5}, "-(I + II)/2"),
    ("aVL", {"I": 0.5, "III": -0.5}, "(I - III)/2"),
    ("aVF", {"II": 0.5, "III": 0.5}, "(II + III)/2"),
)

MAX_RELATIVE_RESIDUAL = 0.08

EINTHOVEN_1913 = "Einthoven W, Fahr G, de Waart A, Pflugers Arch Ges Physiol 1913;150:275-315"
GOLDBERGER_1942 = "Goldberger E, Am Heart J 1942;23:483-492"

# The caution each frontal axis carries when the limb leads are inconsistent ("<what>:
# <cause>, ... (<source>)", the convention of ``ValueReason.text``).
AXIS_CAUTION = (
    "frontal axis unreliable: limb leads inconsistent, {lead} differs from {rhs} by "
    "{pct:.0f} % of the limb-lead signal, so a limb lead's calibration or electrode is "
    "suspect (Einthoven et al., Pflugers Arch 1913; Goldberger, Am Heart J 1942)"
)
# The frontal axes, computed from the limb leads (the QRS-T angle, their difference, is not a
# value of its own on screen or page: its statement is withheld with its reason instead).
FRONTAL_QUANTITIES: tuple[str, ...] = ("p_axis_deg", "qrs_axis_deg", "t_axis_deg")


@dataclass(frozen=True)
class LimbConsistency:
    """The relative residual of each relation (``RELATIONS`` order, lead -> fraction of the
    limb-lead signal) and whether all are within ``MAX_RELATIVE_RESIDUAL``."""

    residual_by_lead: tuple[tuple[str, float], ...]
    threshold: float = MAX_RELATIVE_RESIDUAL

    @property
    def worst(self) -> tuple[str, str, float]:
        """(lead, right-hand side in words, residual) of the relation that fails most."""
        lead, value = max(self.residual_by_lead, key=lambda kv: kv[1])
        rhs = next(words for lhs, _, words in RELATIONS if lhs == lead)
        return lead, rhs, value

    @property
    def consistent(self) -> bool:
        return all(v <= self.threshold for _, v in self.residual_by_lead)

    def axis_caution(self) -> str:
        lead, rhs, value = self.worst
        return AXIS_CAUTION.format(lead=lead, rhs=rhs, pct=100.0 * value)


def relative_residuals(six: np.ndarray) -> dict[str, float]:
    """Relative residual of each relation for limb leads ``six`` (n_samples, 6) in
    ``LIMB_ORDER`` (any unit): std(lhs - rhs) over the limb leads' quadratic-mean std."""
    x = np.asarray(six, dtype=np.float64)
    x = x[np.all(np.isfinite(x), axis=1)]
    col = {name: k for k, name in enumerate(LIMB_ORDER)}
    scale = float(np.sqrt(np.mean(np.var(x, axis=0)))) if x.shape[0] > 1 else 0.0
    out: dict[str, float] = {}
    for lhs, rhs, _ in RELATIONS:
        predicted = sum(c * x[:, col[name]] for name, c in rhs.items())
        residual = float(np.std(x[:, col[lhs]] - predicted)) if x.shape[0] > 1 else 0.0
        out[lhs] = residual / scale if scale > 0.0 else 0.0
    return out


# One result per conditioned signal: the check reads the whole record, and the measurements
# are recomputed on every mark drag with the same signal array (kept here, so a reused id
# never matches).
_LAST: dict[tuple[int, ...], tuple[np.ndarray, LimbConsistency]] = {}


def limb_consistency(marked: MarkedECG) -> LimbConsistency | None:
    """The check on ``marked``'s conditioned signal; None where it does not apply: a limb lead
    absent, unusable (flat, missing) or derived by this program rather than recorded."""
    names = list(marked.lead_names)
    if any(n not in names for n in LIMB_ORDER):
        return None
    cols = [names.index(n) for n in LIMB_ORDER]
    for c in cols:
        if c >= len(marked.usable) or not marked.usable[c]:
            return None
        if c < len(marked.derived) and marked.derived[c]:
            return None
    signal = marked.conditioned_mv
    key = (id(signal), *cols)
    hit = _LAST.get(key)
    if hit is not None and hit[0] is signal:
        return hit[1]
    residuals = relative_residuals(np.asarray(signal)[:, cols])
    found = LimbConsistency(tuple((lhs, residuals[lhs]) for lhs, _, _ in RELATIONS))
    if len(_LAST) > 64:
        _LAST.clear()
    _LAST[key] = (signal, found)
    return found
