"""Overview strip: the whole record in one line (min/max envelope), with the page as a region
the reader drags to move through hours of signal."""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore

from reviewapp.core.record import Record
from reviewapp.ui.theme import Theme

N_BINS = 3000
CHUNK_SAMPLES = 2_000_000


def envelope(
    record: Record, lead: int, n_bins: int = N_BINS
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(t_s, min_mv, max_mv) per bin over the whole record, read chunk by chunk."""
    n = record.n_samples
    per = max(1, -(-n // n_bins))
    bins = -(-n // per)
    lo = np.full(bins, np.nan, np.float32)
    hi = np.full(bins, np.nan, np.float32)
    step = max(per, (CHUNK_SAMPLES // per) * per)
    for start in range(0, n, step):
        x = record.window(start, min(n, start + step))[:, lead]
        m = -(-x.size // per) * per
        xb = np.concatenate([x, np.full(m - x.size, np.nan, np.float32)]).reshape(-1, per)
        b0 = start // per
        with np.errstate(invalid="ignore"), _quiet():
            lo[b0 : b0 + xb.shape[0]] = np.nanmin(xb, axis=1)
            hi[b0 : b0 + xb.shape[0]] = np.nanmax(xb, axis=1)
    t = (np.arange(bins) * per) / record.fs_hz
    return t, lo, hi


class _quiet:
    def __enter__(self):
        import warnings

        self._w = warnings.catch_warnings()
        self._w.__enter__()
        warnings.simplefilter("ignore", RuntimeWarning)

    def __exit__(self, *exc):
        self._w.__exit__(*exc)


class OverviewStrip(pg.PlotWidget):
    """Emits ``page_requested(start_s)`` when the reader moves the page region."""

    page_requested = QtCore.Signal(float)

    def __init__(self, theme: Theme, parent=None) -> None:
        super().__init__(parent)
        self.setFixedHeight(64)
        self.hideAxis("left")
        self.getAxis("bottom").setHeight(18)
        self.setMenuEnabled(False)
        self.hideButtons()
        self.setMouseEnabled(x=False, y=False)
        self.curve_hi = pg.PlotCurveItem()
        self.curve_lo = pg.PlotCurveItem()
        self.fill = pg.FillBetweenItem(self.curve_lo, self.curve_hi)
        self.addItem(self.fill)
        self.region = pg.LinearRegionItem(movable=True)
        self.region.setZValue(10)
        self.addItem(self.region)
        self.region.sigRegionChangeFinished.connect(self._moved)
        self._page_s = 10.0
        self._duration = 0.0
        self._busy = False
        self.set_theme(theme)

    def set_theme(self, theme: Theme) -> None:
        self.setBackground(theme.window)
        self.fill.setBrush(pg.mkBrush(theme.text_muted))
        self.region.setBrush(pg.mkBrush(theme.highlight + "40"))
        for line in self.region.lines:
            line.setPen(pg.mkPen(theme.highlight, width=2))
        axis = self.getAxis("bottom")
        axis.setPen(theme.text_muted)
        axis.setTextPen(theme.text_muted)

    def set_record(self, record: Record, page_s: float) -> None:
        names = record.lead_names
        lead = names.index("II") if "II" in names else 0
        t, lo, hi = envelope(record, lead)
        self.curve_lo.setData(t, np.nan_to_num(lo))
        self.curve_hi.setData(t, np.nan_to_num(hi))
        self._page_s, self._duration = page_s, record.duration_s
        self.setXRange(0, record.duration_s, padding=0)
        finite = np.isfinite(lo) & np.isfinite(hi)
        if finite.any():
            self.setYRange(
                float(np.percentile(lo[finite], 1)), float(np.percentile(hi[finite], 99))
            )
        self.set_page(0.0)

    def set_page(self, start_s: float) -> None:
        self._busy = True
        try:
            self.region.setRegion((start_s, start_s + self._page_s))
        finally:
            self._busy = False

    def _moved(self) -> None:
        if self._busy:
            return
        a, _b = self.region.getRegion()
        start = float(min(max(0.0, a), max(0.0, self._duration - self._page_s)))
        self.set_page(start)
        self.page_requested.emit(start)
