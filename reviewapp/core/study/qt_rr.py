"""Individual and population QT/RR correction: QT = a * RR^b fitted on drug-free ECGs.

Method: Malik M, Färbom P, Batchvarov V, Hnatkova K, Camm AJ, "Relation between QT and RR
intervals is highly individual among healthy subjects: implications for heart rate correction
of the QT interval", Heart 87:220-228, 2002. The QT/RR relation differs from person to person,
so a drug's effect on QTc is best judged with each subject's own correction, fitted on their
drug-free ECGs. Here the parabolic form QT = a * RR^b is fitted by ordinary least squares on
log QT = log a + b log RR (RR in seconds, QT in ms), one point per ECG
(``scipy.stats.linregress``). The corrected value is QTcI = QT / RR^b (ms), the QT the subject
would have at RR = 1 s. The population correction QTcP is the same fit on every subject's
drug-free ECGs pooled. With b = 1/3 the correction is Fridericia's (Acta Med Scand 1920), with
b = 1/2 Bazett's (Heart 1920).

Example:
    >>> import numpy as np
    >>> rr = np.array([600.0, 800.0, 1000.0, 1200.0])
    >>> fit = fit_qt_rr(rr, 400.0 * (rr / 1000.0) ** 0.4)
    >>> round(fit.b, 6), round(fit.a_ms, 3), round(fit.qtc_ms(400.0 * 0.8 ** 0.4, 800.0), 3)
    (0.4, 400.0, 400.0)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

MALIK_2002 = "Malik et al., Heart 2002"
MIN_FIT_ECGS = 3  # two points always fit a line exactly; a third gives a residual to judge


class FitError(ValueError):
    """The QT/RR relation cannot be fitted (too few ECGs, no RR spread); says why."""


@dataclass(frozen=True)
class QtRrFit:
    """QT = a_ms * RR_s ** b, fitted in log-log space on ``n`` ECGs.

    a_ms: QT at RR = 1 s (ms). b: the exponent; ``b_ci95``: its 95 % confidence interval
    (t distribution, n - 2 degrees of freedom; None with n < 3). r2: coefficient of
    determination of the log-log fit. residual_sd_ms: SD of QT - a * RR^b in ms (n - 2
    degrees of freedom). rr_min_ms / rr_max_ms: the RR range the fit rests on: outside it the
    correction is an extrapolation.
    """

    a_ms: float
    b: float
    b_ci95: tuple[float, float] | None
    n: int
    r2: float
    residual_sd_ms: float
    rr_min_ms: float
    rr_max_ms: float

    def qt_ms(self, rr_ms: float | np.ndarray) -> np.ndarray:
        """The fitted QT at ``rr_ms`` (an array of the same shape)."""
        return np.asarray(self.a_ms * (np.asarray(rr_ms, dtype=float) / 1000.0) ** self.b)

    def qtc_ms(self, qt_ms: float, rr_ms: float) -> float:
        """QT corrected with this fit: QT / RR_s ** b (ms)."""
        if not (rr_ms > 0 and math.isfinite(qt_ms)):
            raise ValueError(f"QTc needs finite QT and a positive RR, got QT={qt_ms}, RR={rr_ms}")
        return float(qt_ms / (rr_ms / 1000.0) ** self.b)


def fit_qt_rr(rr_ms: np.ndarray, qt_ms: np.ndarray) -> QtRrFit:
    """Fit QT = a * RR^b by least squares on logarithms (Malik et al., Heart 2002).

    Args:
        rr_ms: RR interval of each ECG, ms (> 0).
        qt_ms: QT interval of each ECG, ms (> 0), same length.

    Returns:
        QtRrFit with the fit's quality.

    Raises:
        FitError: fewer than ``MIN_FIT_ECGS`` usable ECGs, or every RR the same.
    """
    rr = np.asarray(rr_ms, dtype=float)
    qt = np.asarray(qt_ms, dtype=float)
    if rr.shape != qt.shape:
        raise FitError(f"{rr.size} RR values but {qt.size} QT values")
    ok = np.isfinite(rr) & np.isfinite(qt) & (rr > 0) & (qt > 0)
    rr, qt = rr[ok], qt[ok]
    if rr.size < MIN_FIT_ECGS:
        raise FitError(f"{rr.size} drug-free ECG(s) with QT and RR; at least {MIN_FIT_ECGS} needed")
    x = np.log(rr / 1000.0)
    if np.ptp(x) <= 0:
        raise FitError("every drug-free ECG has the same RR; the exponent cannot be fitted")
    res = stats.linregress(x, np.log(qt))
    a = float(math.exp(res.intercept))
    b = float(res.slope)
    n = int(rr.size)
    dof = n - 2
    resid = qt - a * (rr / 1000.0) ** b
    ci = None
    if dof >= 1:
        half = float(stats.t.ppf(0.975, dof)) * float(res.stderr)
        ci = (b - half, b + half)
    return QtRrFit(
        a_ms=a,
        b=b,
        b_ci95=ci,
        n=n,
        r2=float(res.rvalue) ** 2,
        residual_sd_ms=float(np.sqrt(np.sum(resid**2) / dof)) if dof >= 1 else 0.0,
        rr_min_ms=float(rr.min()),
        rr_max_ms=float(rr.max()),
    )
