"""Wave shapes of one lead of the representative beat, for the interpretation statements.

Each function takes a baseline-corrected slice of one lead (mV from the isoelectric level,
``amplitudes.isoelectric_level``) and returns durations in ms and amplitudes in mV. The QRS is
split into lobes with ``amplitudes.qrs_lobes`` (a lobe: a run of samples beyond the 20 uV
minimum wave), so R, S and R' here are the same waves ``amplitudes.qrs_waves`` reports.

- R-peak time (``r_peak_time_ms``): from QRS onset to the peak of the last R wave (R' when
  present). Surawicz B et al., AHA/ACCF/HRS recommendations Part III, Circulation
  119:e235-e240, 2009 (the bundle-branch and fascicular-block criteria use it in V1, V5,
  V6 and aVL; from memory).
- R and S durations (``r_ms``, ``s_ms``): the width of the R and S lobes (first sample to
  last sample beyond 20 uV), for "S wave of greater duration than R or > 40 ms in I and V6"
  (complete right bundle branch block, Part III).
- Notched R (``r_notched``): two peaks inside the R lobe separated by a dip of at least
  ``NOTCH_MIN_MV`` (common practice, no source).
- P terminal force (``p_terminal``): depth (mV) and duration (ms) of the negative terminal
  part of a biphasic P wave, the V1 measure of left atrial abnormality (Morris JJ et al.,
  Circulation 29:242-252, 1964; from memory).
- U wave (``u_wave_mv``): the peak of a positive deflection after the T end.
- Terminal QRS notch or slur (``end_qrs_notch_slur``): the early repolarization pattern's J
  peak (Macfarlane PW et al., J Am Coll Cardiol 66:470-477, 2015; from memory).
- Initial QRS slur (``initial_slur``): the delta wave of ventricular pre-excitation
  (``preexcitation``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from reviewapp.core.measure.amplitudes import MIN_WAVE_MV, Lobe, _is_junction_offset, qrs_lobes

# A dip of at least 50 uV between two peaks of one R lobe is a notch (common practice, no
# source: about half a millimetre at 10 mm/mV, the smallest notch a reader sees on paper).
NOTCH_MIN_MV = 0.05


def _ms(n_samples: float, fs_hz: float) -> float:
    return float(n_samples) * 1000.0 / fs_hz


@dataclass(frozen=True)
class QRSShape:
    """R-peak time (None: no R wave), R and S lobe durations (0.0: no such wave), notched R."""

    r_peak_time_ms: float | None
    r_ms: float
    s_ms: float
    r_notched: bool


def _waves(y: np.ndarray, last_start: int | None = None) -> list[Lobe]:
    lobes = qrs_lobes(y)
    if last_start is not None:
        # a lobe that starts after the lead's own QRS end is its ST-T, not R' or S
        lobes = [lb for lb in lobes if lb.first <= last_start] or lobes[:1]
    if len(lobes) > 1 and _is_junction_offset(y, lobes[-1]):
        lobes = lobes[:-1]
    return lobes


def _peak_index(y: np.ndarray, lobe: Lobe) -> int:
    seg = y[lobe.first : lobe.last + 1] * lobe.sign
    return lobe.first + int(np.argmax(seg))


def _notched(y: np.ndarray, lobe: Lobe) -> bool:
    """Two local maxima inside the lobe with a dip of ``NOTCH_MIN_MV`` between them: at
    some sample, the highest values before and after it both stand that much above it.

    >>> lb = Lobe(1, 1.0, 0, 6)
    >>> _notched(np.array([0.2, 1.0, 0.8, 0.6, 0.9, 0.5, 0.1]), lb)
    True
    >>> _notched(np.array([0.2, 1.0, 0.98, 0.96, 0.9, 0.5, 0.1]), lb)
    False
    """
    seg = y[lobe.first : lobe.last + 1] * lobe.sign
    if seg.size < 5:
        return False
    before = np.maximum.accumulate(seg)
    after = np.maximum.accumulate(seg[::-1])[::-1]
    dip = np.minimum(before, after) - seg
    return float(dip[1:-1].max()) >= NOTCH_MIN_MV


def qrs_shape(y: np.ndarray, fs_hz: float, last_start: int | None = None) -> QRSShape:
    """R-peak time, R and S durations and notching of a baseline-corrected QRS slice ``y``
    (QRS onset to QRS end of one lead). ``last_start``: the index in ``y`` of the lead's own
    QRS end, when ``y`` runs to a later (global) end: a wave starting after it is left out.

    >>> y = np.r_[0.0, 0.1, 0.4, 0.8, 0.4, 0.0, -0.3, -0.5, -0.3, 0.0, 0.3, 0.6, 0.3, 0.0]
    >>> s = qrs_shape(y, 500.0)  # rsR' at 2 ms a sample
    >>> s.r_peak_time_ms, s.r_ms, s.s_ms, s.r_notched
    (22.0, 8.0, 6.0, False)
    """
    lobes = _waves(np.asarray(y, dtype=np.float64), last_start)
    pos = [lb for lb in lobes if lb.sign > 0]
    if not pos:
        return QRSShape(None, 0.0, 0.0, False)
    r = pos[0]
    rpt = _ms(_peak_index(y, pos[-1]), fs_hz)
    r_ms = _ms(r.last - r.first + 1, fs_hz)
    after = [lb for lb in lobes if lb.first > r.last]
    s_ms = _ms(after[0].last - after[0].first + 1, fs_hz) if after and after[0].sign < 0 else 0.0
    return QRSShape(rpt, r_ms, s_ms, _notched(y, r))


@dataclass(frozen=True)
class PTerminal:
    """Negative terminal part of the P wave: depth (mV, <= 0) and duration (ms); both 0.0
    when the P ends positive."""

    mv: float
    ms: float

    @property
    def force_mm_s(self) -> float:
        """Depth (mm at 10 mm/mV) times duration (s): the P terminal force."""
        return -self.mv * 10.0 * self.ms / 1000.0


def p_terminal(y: np.ndarray, fs_hz: float) -> PTerminal:
    """The negative terminal part of a baseline-corrected P slice (P onset to P end).

    It starts after the last sample at or above the baseline; its depth is the lowest value
    after that. A P without a negative end gives zeros.

    >>> y = np.r_[0.0, 0.05, 0.08, 0.04, 0.0, -0.04, -0.1, -0.12, -0.08, -0.03]
    >>> t = p_terminal(y, 500.0)
    >>> round(t.mv, 2), t.ms, round(t.force_mm_s, 4)
    (-0.12, 10.0, 0.012)
    """
    y = np.asarray(y, dtype=np.float64)
    if y.size < 2 or y[-2:].max() >= 0.0 or y.min() > -MIN_WAVE_MV / 2:
        return PTerminal(0.0, 0.0)
    above = np.flatnonzero(y >= 0.0)
    start = int(above[-1]) + 1 if above.size else 0
    tail = y[start:]
    return PTerminal(float(tail.min()), _ms(tail.size, fs_hz))


# U wave search after the T end (common practice, no source): the U wave starts at or just
# after the T end and peaks about 60-100 ms later; its search ends 240 ms after the T end,
# and 20 ms before the next P wave (or QRS) where that comes earlier.
U_SEARCH_FROM_MS = 20.0
U_SEARCH_TO_MS = 240.0
U_BEFORE_NEXT_MS = 20.0
# A bump counts as a wave only if it rises this much above the lowest point on each side.
U_PROMINENCE_MV = 0.02


def u_wave_mv(y: np.ndarray, t_off: int, stop: int, fs_hz: float) -> float | None:
    """Height (mV above the isoelectric level) of a positive U wave after ``t_off``, 0.0
    when there is none, None when the window after the T end is too short to tell.

    ``y``: the lead's baseline-corrected representative beat; ``t_off``: T end (index);
    ``stop``: the first index that belongs to the next beat (its P or QRS onset).

    A U wave is a local maximum inside the search window (not on its edges) standing at
    least ``U_PROMINENCE_MV`` above the lowest point on each side of it.

    >>> t = np.arange(400)
    >>> y = 0.08 * np.exp(-0.5 * ((t - 150) / 15.0) ** 2)  # a 0.08 mV bump 100 ms after T end
    >>> round(u_wave_mv(y, 100, 400, 500.0), 3)
    0.08
    >>> u_wave_mv(np.zeros(400), 100, 400, 500.0)
    0.0
    """
    y = np.asarray(y, dtype=np.float64)
    a = t_off + round(U_SEARCH_FROM_MS * fs_hz / 1000.0)
    b = min(
        t_off + round(U_SEARCH_TO_MS * fs_hz / 1000.0),
        stop - round(U_BEFORE_NEXT_MS * fs_hz / 1000.0),
        y.shape[0] - 1,
    )
    if b - a < round(60.0 * fs_hz / 1000.0):
        return None
    seg = y[a : b + 1]
    k = int(np.argmax(seg))
    if k == 0 or k == seg.size - 1:
        return 0.0
    peak = float(seg[k])
    if (
        peak - float(seg[:k].min()) < U_PROMINENCE_MV
        or peak - float(seg[k:].min()) < U_PROMINENCE_MV
    ):
        return 0.0
    return max(peak, 0.0)


@dataclass(frozen=True)
class EndQRS:
    """A notch or slur on the terminal QRS downslope: ``kind`` "notch", "slur" or "" (none),
    ``jp_mv`` its J peak (the notch's peak or the slur's onset), mV above the isoelectric
    level (0.0 when none)."""

    kind: str
    jp_mv: float


# Terminal QRS notch or slur (Macfarlane et al. 2015, from memory): it lies on the last half
# of the R-wave downslope, entirely above the baseline. A notch is a positive bump of at
# least NOTCH_MIN_MV; a slur is a shoulder: the downslope flattens to below SLUR_FLAT of its
# steepest value and then falls again at least twice as fast. Looked for up to 20 ms after
# the marked QRS end, which may sit on either side of the notch.
SLUR_FLAT = 0.25
END_QRS_AFTER_MS = 20.0


def end_qrs_notch_slur(y: np.ndarray, qrs_on: int, qrs_off: int, fs_hz: float) -> EndQRS:
    """Notch or slur on the terminal QRS downslope of one baseline-corrected lead.

    ``y``: the lead's representative beat; ``qrs_on``/``qrs_off``: its QRS onset and end.

    >>> t = np.arange(200.0)
    >>> r = 1.5 * np.exp(-0.5 * ((t - 60) / 5.0) ** 2)      # R wave
    >>> notch = 0.25 * np.exp(-0.5 * ((t - 80) / 3.0) ** 2)  # a bump on its downslope
    >>> e = end_qrs_notch_slur(r + notch, 45, 86, 500.0)
    >>> e.kind, round(e.jp_mv, 2)
    ('notch', 0.25)
    >>> end_qrs_notch_slur(r, 45, 86, 500.0).kind
    ''
    """
    y = np.asarray(y, dtype=np.float64)
    stop = min(y.shape[0] - 1, qrs_off + round(END_QRS_AFTER_MS * fs_hz / 1000.0))
    if qrs_off <= qrs_on or stop <= qrs_on + 2:
        return EndQRS("", 0.0)
    k_r = qrs_on + int(np.argmax(y[qrs_on : qrs_off + 1]))
    r = float(y[k_r])
    if r < 0.1:
        return EndQRS("", 0.0)
    seg = y[k_r : stop + 1]
    # the last half of the downslope: from where it falls below half the R peak
    below = np.flatnonzero(seg < r / 2)
    if below.size == 0:
        return EndQRS("", 0.0)
    h = int(below[0])
    tail = seg[h:]
    if tail.size < 3:
        return EndQRS("", 0.0)
    # notch: a local maximum after a local minimum, both above the baseline
    for k in range(1, tail.size - 1):
        if tail[k] >= tail[k - 1] and tail[k] > tail[k + 1]:
            dip = float(tail[:k].min())
            if dip > 0.0 and float(tail[k]) - dip >= NOTCH_MIN_MV:
                return EndQRS("notch", float(tail[k]))
    d = np.gradient(seg)
    steep = float(-d[: h + 1].min()) if h > 0 else float(-d[0])
    if steep <= 0:
        return EndQRS("", 0.0)
    dt = -np.gradient(tail)
    for k in range(1, tail.size - 1):
        if tail[k] <= 0.0:
            break
        if dt[k] < SLUR_FLAT * steep and dt[k - 1] >= SLUR_FLAT * steep:
            later = dt[k + 1 :]
            level = tail[k + 1 :]
            falls = (later >= 2.0 * max(dt[k], 1e-9)) & (level > 0.0)
            if falls.any() and float(later[falls].max()) >= SLUR_FLAT * steep:
                return EndQRS("slur", float(tail[k]))
    return EndQRS("", 0.0)


@dataclass(frozen=True)
class InitialSlur:
    """The slurred start of a QRS: ``ms`` the time it rises slowly while already deflected,
    ``mv`` the deflection reached when the steep part begins (signed), ``same_way`` whether
    the complex goes on in that direction without turning back (a delta wave is the slurred
    start of the main deflection, not a separate small wave such as a septal q or r)."""

    ms: float
    mv: float
    same_way: bool


# Initial slur (delta wave): the samples before the QRS first reaches half its steepest slope
# at which the signal is already deflected by SLUR_LEVEL_MV in the main direction and rising
# at less than SLUR_SLOW of the steepest slope (common practice, no source: a delta wave is a
# slow ramp of tens of ms; the flank of a normal R wave spends a few ms there).
SLUR_LEVEL_MV = 0.05
SLUR_SLOW = 0.3


def initial_slur(y: np.ndarray, fs_hz: float) -> InitialSlur:
    """Initial QRS slur of a baseline-corrected QRS slice (QRS onset to QRS end).

    >>> t = np.arange(60.0)
    >>> ramp = np.clip(t, 0, 20) * 0.02               # 0.4 mV over 40 ms at 500 Hz
    >>> up = np.clip(t - 20, 0, 10) * 0.15            # then a steep upstroke
    >>> s = initial_slur(ramp + up, 500.0)
    >>> round(s.ms), round(s.mv, 2), s.same_way
    (34, 0.4, True)
    """
    y = np.asarray(y, dtype=np.float64)
    if y.size < 4:
        return InitialSlur(0.0, 0.0, False)
    d = np.gradient(y)
    peak = float(np.abs(d).max())
    if peak <= 0.0:
        return InitialSlur(0.0, 0.0, False)
    fast = int(np.flatnonzero(np.abs(d) >= 0.5 * peak)[0])
    way = float(np.sign(d[fast]))
    run = y[: fast + 1] * way
    slope = d[: fast + 1] * way
    slow = (run >= SLUR_LEVEL_MV) & (slope > 0.0) & (slope < SLUR_SLOW * peak)
    drawdown = float((np.maximum.accumulate(run) - run).max())
    same = drawdown < MIN_WAVE_MV and float(run.min()) > -MIN_WAVE_MV and way != 0.0
    return InitialSlur(_ms(int(slow.sum()), fs_hz), float(y[fast]), same)


def qrs_part(
    y: np.ndarray,
    glob_qrs: tuple[int | None, int | None],
    qrs: tuple[int | None, int | None],
    fs_hz: float,
) -> dict[str, float | bool | str | None]:
    """The QRS fields of ``lead_shapes``: R-peak time, R and S durations, notched R and the
    initial slur over the global QRS; the terminal notch or slur over the lead's own."""
    n = y.shape[0]
    out: dict[str, float | bool | str | None] = {}
    on, off = qrs
    g_on, g_off = glob_qrs
    if g_on is not None and g_off is not None and 0 <= g_on < g_off < n:
        # The wave durations and the R-peak time over the global QRS: a lead's own QRS end
        # may leave out a slurred terminal S (right bundle branch block) that the criteria
        # count, and the R-peak time runs from the (earliest) QRS onset.
        own_end = None if off is None else max(0, off - g_on)
        s = qrs_shape(y[g_on : g_off + 1], fs_hz, own_end)
        out.update(r_peak_time_ms=s.r_peak_time_ms, r_ms=s.r_ms, s_ms=s.s_ms, r_notched=s.r_notched)
        d = initial_slur(y[g_on : g_off + 1], fs_hz)
        out.update(delta_ms=d.ms, delta_mv=d.mv, delta_same_way=d.same_way)
    if on is not None and off is not None and 0 <= on < off < n:
        e = end_qrs_notch_slur(y, on, off, fs_hz)
        out.update(jp_mv=e.jp_mv, end_qrs=e.kind)
    return out


def p_part(
    y: np.ndarray, p: tuple[int | None, int | None], fs_hz: float
) -> dict[str, float | bool | str | None]:
    """The P terminal force fields of ``lead_shapes``."""
    p_on, p_off = p
    if p_on is None or p_off is None or not 0 <= p_on < p_off < y.shape[0]:
        return {}
    pt = p_terminal(y[p_on : p_off + 1], fs_hz)
    return {"p_terminal_mv": pt.mv, "p_terminal_ms": pt.ms}


def t_part(
    y: np.ndarray, off: int | None, t_off: int | None, stop: int | None, fs_hz: float
) -> dict[str, float | bool | str | None]:
    """The T and U fields of ``lead_shapes``: lowest ST-T level from J+80 ms, U wave."""
    out: dict[str, float | bool | str | None] = {}
    # A QRS end before the window's first sample (a lead mark dragged far left) has no ST-T
    # segment here: a negative index would wrap to the window's end.
    if off is None or t_off is None or not 0 <= off < t_off < y.shape[0]:
        return out
    j80 = off + round(80.0 * fs_hz / 1000.0)
    if j80 < t_off:
        out["t_min_mv"] = float(y[j80 : t_off + 1].min())
    if stop is not None:
        out["u_mv"] = u_wave_mv(y, t_off, stop, fs_hz)
    return out


def lead_shapes(
    y: np.ndarray,
    glob_qrs: tuple[int | None, int | None],
    qrs: tuple[int | None, int | None],
    p: tuple[int | None, int | None],
    t_off: int | None,
    stop: int | None,
    fs_hz: float,
) -> dict[str, float | bool | str | None]:
    """Every wave-shape field of ``LeadMeasurements`` for one lead of the representative beat.

    ``y``: the lead's baseline-corrected waveform (window samples); ``glob_qrs``: the global
    QRS onset and end (wave durations, R-peak time and the delta wave are measured from
    them); ``qrs``/``p``: the lead's own QRS and P onset and end; ``t_off``: its T end;
    ``stop``: the first sample of the next beat (its P, else its QRS), None when unknown.
    Fields that cannot be measured are None.
    """
    return {
        **qrs_part(y, glob_qrs, qrs, fs_hz),
        **p_part(y, p, fs_hz),
        **t_part(y, qrs[1], t_off, stop, fs_hz),
    }
