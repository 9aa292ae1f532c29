"""Delineation settings and the column layout of the mark arrays (shared by the wave modules)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

# Column order of the mark arrays returned by delineate_block.
P_ON, P_OFF, QRS_ON, QRS_OFF, T_OFF, P_PEAK, R_PEAK, T_PEAK = range(8)
N_MARKS = 8


@dataclass(frozen=True)
class DelineationParams:
    """Delineation settings; durations already converted to samples at ``fs_hz``.

    >>> p = DelineationParams.for_fs(250.0)
    >>> p.t_xr, DelineationParams.for_fs(1000.0).t_xr  # 80 ms in samples
    (20, 80)
    """

    fs_hz: float
    qrs_half_search: int  # samples either side of R searched for the steepest QRS slope
    qrs_on_search: int  # samples before R searched for QRS onset
    qrs_off_search: int  # samples after R searched for the last significant QRS slope
    qrs_off_limit: int  # samples after R searched for QRS end
    qrs_lead_slack: int = 0  # per-lead QRS marks stay within this of the global ones
    qrs_run: int = 1  # samples the slope must stay below threshold at a boundary
    qrs_env: int = 1  # moving-average length of the QRS slope envelope, samples
    qrs_env_frac: float = 0.05  # the envelope below this fraction of its peak bounds the QRS
    qrs_end_corner_w: float = 0.5  # weight of the arc-length corner in the QRS end
    qrs_corner_xr: int = 0  # x_r of that corner, samples after the last significant slope
    qrs_arc_noise: bool = True  # the QRS end corner's curve leaves out the slope's noise level
    qrs_lead_global: bool = True  # per-lead QRS marks = global ones (LUDB: closer to readers)
    qrs_sig: float = 0.25  # "significant slope": this fraction of the complex's steepest slope
    qrs_sig_off: float = 0.25  # the same for the last significant slope
    qrs_on_frac: float = 0.06  # onset where slope falls below this fraction of the first lobe
    qrs_off_frac: float = 0.10  # end where slope falls below this fraction of the last lobe
    noise_mult: float = 1.5  # thresholds never below this x the window's median slope
    t_start: int = 0  # samples after QRS end where the T search starts
    t_peak_limit: int = 0  # samples after R beyond which no T peak is sought
    t_xr: int = 0  # samples from the steepest T down-slope to x_r
    t_smooth: int = 1  # moving-average length applied to the T slope, samples
    t_flank_frac: float = 0.3  # a T flank counts if its slope is this fraction of the steepest
    t_strong_frac: float = 0.3  # leads with T below this fraction of the largest T do not vote
    t_lead_slack: int = 0  # a lead's T end further than this from the global one is replaced
    t_min_mv: float = 0.04  # smaller T waves count as absent in that lead
    p_gap: int = 0  # samples kept free before QRS onset
    p_max: int = 0  # samples before QRS onset searched for P
    p_xr: int = 0  # samples from the steepest P up-slope back to x_r (onset)
    p_xr_off: int = 0  # samples from the steepest P down-slope on to x_r (end)
    p_xm_max: int = 0  # samples either side of the P peak searched for its steepest slopes
    p_strong_frac: float = 0.3  # leads with P below this fraction of the largest P do not vote
    p_lead_slack: int = 0  # a lead's P boundary further than this from the global one is replaced
    p_min_mv: float = 0.03  # smaller P waves count as absent in that lead
    p_on_q: float = 0.4  # global onset: this order statistic of the lead onsets (0 = earliest)
    p_off_q: float = 0.6  # global P end: this order statistic of the lead ends
    t_off_q: float = 0.5  # global T end: this order statistic of the voting leads' ends
    p_min_lead_frac: float = 0.3  # global P needs a P in at least this fraction of usable leads
    spike_before: int = 0  # pacing spikes are sought from this many samples before QRS onset
    spike_after: int = 0  # ... to this many after it
    spike_width: int = 0  # a pacing spike's slope stays above half its peak at most this long
    spike_ratio: float = 2.5  # ... and peaks above this multiple of the QRS's steepest slope
    spike_delay: int = 0  # QRS onset this many samples after a pacing spike
    # Global marks by the standard's definition (``delineate_global`` and
    # ``delineate_core._standard_global``): earliest onset / latest end over the leads. Set on
    # the odd-numbered LUDB records only (tests/dsp/reference_global.py); the even-numbered
    # ones were held out.
    standard_global: bool = True
    glob_min_votes: int = 3  # fewer voting leads: the multi-lead marks stay
    glob_qrs_agree: int = 0  # two leads' QRS marks this close confirm each other
    glob_p_agree: int = 0  # ... P marks
    glob_t_agree: int = 0  # ... T ends
    glob_p_confirm: int = 1  # other leads that must confirm the earliest / latest P mark
    glob_p_corner_leads: int = 4  # agreeing corner leads that explain nearby smooth P marks
    glob_t_confirm: int = 1  # ... the latest T end (the QRS: one)
    glob_qrs_slack: int = 0  # a lead's own QRS boundary is sought this far outside the spatial
    glob_qrs_vote_frac: float = 0.3  # leads whose steepest QRS slope is >= this x the largest
    glob_qrs_on_frac: float = 0.02  # a lead's QRS onset: slope below this x its first lobe
    # A lead's QRS end: slope below this x its last lobe. 4.5 % stopped on slurred, small
    # terminal parts (LUDB odd half: global QRS end -11 ms in atrial fibrillation, -8.5 in
    # left bundle branch block); 2 % with a 14 ms agreement: QRS -5.4 +- 13.7 -> -2.2 +- 12.0
    # ms (tests/dsp/test_global_ludb.py). The onset stays at 2 %: 1.5 % took the synthetic
    # onset 24 ms early in 20 dB noise with baseline wander and mains.
    glob_qrs_off_frac: float = 0.02
    glob_lead_min_mv: float = 0.005  # a lead widens the QRS only if it moves this much there
    glob_lead_noise_mult: float = 3.0  # ... and this many times its noise SD
    glob_lead_size_frac: float = 0.0  # ... and this fraction of its peak-to-peak size
    glob_p_vote_frac: float = 0.15  # leads whose P is >= this x the largest lead's P vote
    glob_t_vote_frac: float = 0.15  # leads whose T is >= this x the largest lead's T vote

    @classmethod
    def for_fs(cls, fs_hz: float, **overrides: float) -> DelineationParams:
        """Parameters at ``fs_hz``; ``overrides`` replace DURATIONS_MS entries or fractions."""
        ms = {**DURATIONS_MS, **{k: v for k, v in overrides.items() if k in DURATIONS_MS}}
        rest = {k: v for k, v in overrides.items() if k not in DURATIONS_MS}
        # Settings by name (an unknown name is refused by the constructor): durations in
        # samples, the rest as given. Any, because the fields differ in type (int samples,
        # float fractions, bool switches).
        settings: dict[str, Any] = {
            **{k: max(1, round(v * fs_hz / 1000.0)) for k, v in ms.items()},
            **rest,
        }
        return cls(fs_hz=float(fs_hz), **settings)


# Search windows and offsets in ms (converted to samples by DelineationParams.for_fs).
# Physiological ranges: QRS <= ~200 ms, PR <= ~300 ms, T end <= ~600 ms after R; the exact
# values were set on LUDB/QTDB training records (tests/dsp check them on the same databases).
DURATIONS_MS: dict[str, float] = {
    "qrs_half_search": 80,
    "qrs_on_search": 200,
    "qrs_off_search": 160,
    "qrs_off_limit": 260,
    "qrs_lead_slack": 20,
    "qrs_env": 20,
    "qrs_run": 8,
    "qrs_corner_xr": 30,
    "t_start": 80,
    "t_peak_limit": 600,
    "t_xr": 80,
    "t_smooth": 30,
    "t_lead_slack": 80,
    "p_gap": 20,
    "p_max": 300,
    "p_xr": 50,
    "p_xr_off": 25,
    "p_xm_max": 60,
    "p_lead_slack": 40,
    "spike_before": 30,
    "spike_after": 40,
    "spike_width": 8,
    "spike_delay": 10,
    "glob_qrs_agree": 14,
    "glob_p_agree": 10,
    "glob_t_agree": 20,
    "glob_qrs_slack": 80,
}


@dataclass(frozen=True)
class BlockBounds:
    """Per-beat limits in window coordinates (all (B,) int arrays, inclusive)."""

    r: np.ndarray  # R fiducial
    lo: np.ndarray  # first valid sample
    hi: np.ndarray  # last valid sample
    p_lo: np.ndarray  # earliest P onset allowed
    t_hi: np.ndarray  # latest T end allowed
    rr: np.ndarray | None = None  # RR to the next beat, samples (<= 0 unknown)
    # p_lo lies after the previous beat's T (found from its T, not guessed): the P found is
    # trusted and the T end may reach the next P (this beat's PR carried one RR on).
    p_after_t: bool = False
