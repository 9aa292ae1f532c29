"""Repolarisation measures for a wide, paced or pre-excited QRS: JT, JTc and a QRS-adjusted QT.

With a QRS of 120 ms or longer (bundle branch block, ventricular pacing, pre-excitation) the
QT holds a prolonged depolarisation, so a QTc compared with the usual QTc limits overstates
repolarisation: the AHA/ACCF/HRS statement on the QT interval advises measuring the JT
interval (QT - QRS) or adjusting the QT for the QRS then (Rautaharju PM et al., Part IV,
Circulation 119:e241-e250, 2009; from memory). ``compute_measurements`` reports these beside
the QTc, and the QTc is then marked not comparable with its limits (``findings``).

All functions take milliseconds and return milliseconds.
"""

from __future__ import annotations

import math

# Bogossian et al. 2014: fraction of the QRS duration taken off the QT (from memory).
BOGOSSIAN_QRS_FRACTION = 0.485


def jt_ms(qt_ms: float, qrs_ms: float) -> float:
    """JT interval: QT - QRS duration, i.e. QRS end (J point) to T end, ms.

    Definition: Rautaharju et al., AHA/ACCF/HRS 2009 Part IV (from memory).

    >>> jt_ms(440.0, 140.0)
    300.0
    """
    return qt_ms - qrs_ms


def jtc_bazett(qt_ms: float, qrs_ms: float, rr_ms: float) -> float:
    """Rate-corrected JT: the JT interval divided by sqrt(RR_s), Bazett's correction applied to
    the JT (Bazett HC, Heart 7:353-370, 1920; for the JT as in Rautaharju et al., AHA/ACCF/HRS
    2009 Part IV, from memory).

    Args:
        qt_ms: QT interval, ms. qrs_ms: QRS duration, ms. rr_ms: RR interval, ms (> 0).

    >>> round(jtc_bazett(440.0, 140.0, 640.0), 1)  # 300 / sqrt(0.64)
    375.0
    """
    if rr_ms <= 0 or not math.isfinite(rr_ms):
        raise ValueError(f"JTc needs a positive RR, got {rr_ms}")
    return jt_ms(qt_ms, qrs_ms) / math.sqrt(rr_ms / 1000.0)


def qt_bogossian(qt_ms: float, qrs_ms: float) -> float:
    """QRS-adjusted ("modified") QT for left bundle branch block: QTm = QT - 0.485 x QRS, ms.

    Bogossian H, Frommeyer G, Ninios I, et al., "New formula for evaluation of the QT interval
    in patients with left bundle branch block", Heart Rhythm 11:2273-2277, 2014 (from memory:
    the authors derived it from patients before and after pacing-induced LBBB; 48.5 % of the
    QRS duration is subtracted). The result is compared with the usual QT limits after rate
    correction.

    Args:
        qt_ms: QT interval measured with the wide QRS, ms.
        qrs_ms: that QRS duration, ms.

    >>> qt_bogossian(480.0, 160.0)
    402.4
    """
    return round(qt_ms - BOGOSSIAN_QRS_FRACTION * qrs_ms, 6)
