"""Heart-rate correction of the QT interval (QTc): four published formulas.

All take the QT interval in milliseconds and the RR interval in milliseconds and return QTc in
milliseconds. Each is the identity at RR = 1000 ms (heart rate 60 bpm). None of them is
defined for a non-positive RR; they raise ``ValueError`` then (callers pass None upstream).
"""

from __future__ import annotations

import math


def _check(qt_ms: float, rr_ms: float) -> float:
    if not (math.isfinite(qt_ms) and math.isfinite(rr_ms)) or rr_ms <= 0:
        raise ValueError(f"QTc needs finite QT and a positive RR, got QT={qt_ms}, RR={rr_ms}")
    return rr_ms / 1000.0


def qtc_bazett(qt_ms: float, rr_ms: float) -> float:
    """Bazett's square-root correction: QTc = QT / sqrt(RR_s).

    Bazett HC, "An analysis of the time-relations of electrocardiograms", Heart 7:353-370, 1920.

    Args:
        qt_ms: QT interval, ms.
        rr_ms: RR interval, ms (RR_s = rr_ms / 1000).

    Returns:
        QTc in ms.

    >>> round(qtc_bazett(400.0, 1000.0), 1)
    400.0
    >>> round(qtc_bazett(360.0, 640.0), 1)  # 360 / sqrt(0.64) = 360 / 0.8
    450.0
    """
    rr_s = _check(qt_ms, rr_ms)
    return qt_ms / math.sqrt(rr_s)


def qtc_fridericia(qt_ms: float, rr_ms: float) -> float:
    """Fridericia's cube-root correction: QTc = QT / RR_s^(1/3).

    Fridericia LS, "Die Systolendauer im Elektrokardiogramm bei normalen Menschen und bei
    Herzkranken", Acta Med Scand 53:469-486, 1920.

    Args:
        qt_ms: QT interval, ms.
        rr_ms: RR interval, ms.

    Returns:
        QTc in ms.

    >>> round(qtc_fridericia(400.0, 1000.0), 1)
    400.0
    >>> round(qtc_fridericia(360.0, 512.0), 1)  # 360 / 0.512^(1/3) = 360 / 0.8
    450.0
    """
    rr_s = _check(qt_ms, rr_ms)
    return qt_ms / rr_s ** (1.0 / 3.0)


def qtc_framingham(qt_ms: float, rr_ms: float) -> float:
    """Framingham linear correction: QTc = QT + 154 ms x (1 - RR_s).

    Sagie A, Larson MG, Goldberg RJ, Bengtson JR, Levy D, "An improved method for adjusting the
    QT interval for heart rate (the Framingham Heart Study)", Am J Cardiol 70:797-801, 1992.

    Args:
        qt_ms: QT interval, ms.
        rr_ms: RR interval, ms.

    Returns:
        QTc in ms.

    >>> round(qtc_framingham(400.0, 1000.0), 1)
    400.0
    >>> round(qtc_framingham(360.0, 500.0), 1)  # 360 + 154 * 0.5
    437.0
    """
    rr_s = _check(qt_ms, rr_ms)
    return qt_ms + 154.0 * (1.0 - rr_s)


def qtc_hodges(qt_ms: float, rr_ms: float) -> float:
    """Hodges linear heart-rate correction: QTc = QT + 1.75 ms/bpm x (HR - 60 bpm).

    Hodges M, Salerno D, Erlien D, "Bazett's QT correction reviewed: evidence that a linear QT
    correction for heart rate is better", J Am Coll Cardiol 1:694, 1983 (abstract).
    HR = 60000 / RR_ms.

    Args:
        qt_ms: QT interval, ms.
        rr_ms: RR interval, ms.

    Returns:
        QTc in ms.

    >>> round(qtc_hodges(400.0, 1000.0), 1)
    400.0
    >>> round(qtc_hodges(360.0, 600.0), 1)  # HR 100 bpm: 360 + 1.75 * 40
    430.0
    """
    _check(qt_ms, rr_ms)
    hr_bpm = 60000.0 / rr_ms
    return qt_ms + 1.75 * (hr_bpm - 60.0)


QTC_FORMULAS = {
    "bazett": qtc_bazett,
    "fridericia": qtc_fridericia,
    "framingham": qtc_framingham,
    "hodges": qtc_hodges,
}
