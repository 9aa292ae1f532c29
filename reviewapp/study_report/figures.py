"""The study report's figures, each drawn into a box (mm) of a page or an image.

- ``draw_qt_rr``: one subject's QT against RR, beat to beat (dominant beats), drug-free and on
  drug, each ECG's final values, the subject's fit QT = a * RR^b (Malik et al., Heart 2002)
  over the RR range it rests on (dashed beyond it) and the population fit.
- ``draw_mean_change``: mean change from baseline per timepoint with its 90 % CI, every
  subject's change beside it, the zero line and (for QTc) 10 ms, the upper bound ICH E14
  (2005) compares with.
- ``draw_individual_changes``: each subject's change from baseline over time.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import Qt
from PySide6.QtGui import QColor

from reviewapp.core.study.analysis import FORMULAS, StudyAnalysis, SubjectCloud
from reviewapp.core.study.qt_rr import QtRrFit
from reviewapp.report.layout import Rect
from reviewapp.study_report.chart import (
    BLUE,
    GREY,
    INK,
    SERIES_COLOURS,
    SHAPES,
    VERMILLION,
    Axes,
    LegendItem,
    MmCanvas,
    curve,
    draw_axes,
    error_bar,
    hline,
    legend,
    legend_width,
    line_key,
    marker,
    marker_key,
    markers,
    nice_range,
)

WHITE = QColor(255, 255, 255)
ICH_E14_UPPER_BOUND_MS = 10.0  # ICH E14 (2005): upper bound of the one-sided 95 % CI
QUANTITY_LABELS = {
    **{q: f"\u0394{name}" for q, name in FORMULAS.items()},
    "hr_bpm": "\u0394HR",
}


def fit_lines(fit: QtRrFit) -> tuple[str, str]:
    """The fit in two lines: the curve with its exponent's CI, then the fit's quality."""
    ci = "" if fit.b_ci95 is None else f" (95 % CI {fit.b_ci95[0]:.3f} to {fit.b_ci95[1]:.3f})"
    return (
        f"QT = {fit.a_ms:.0f} \u00d7 RR^{fit.b:.3f}{ci}, RR in s",
        f"n = {fit.n} drug-free ECGs, r\u00b2 = {fit.r2:.3f}, residual SD "
        f"{fit.residual_sd_ms:.1f} ms, RR {fit.rr_min_ms:.0f} to {fit.rr_max_ms:.0f} ms",
    )


def _span(*arrays: np.ndarray) -> tuple[float, float]:
    parts = [np.asarray(a, float).ravel() for a in arrays if np.size(a)]
    vals = np.concatenate(parts) if parts else np.empty(0)
    vals = vals[np.isfinite(vals)]
    if not vals.size:
        return 0.0, 1.0
    return float(vals.min()), float(vals.max())


# What the QT/RR picture draws as markers: (SubjectCloud field, legend, shape, size mm,
# colour, edge). Beats small and light, each ECG's final values large, on top.
CLOUD_STYLES: tuple[tuple[str, str, str, float, QColor, QColor | None], ...] = (
    ("drug_free_beats", "drug-free beats", "circle_open", 1.1, BLUE, None),
    ("on_drug_beats", "on-drug beats", "triangle", 1.1, VERMILLION, None),
    ("drug_free_ecgs", "drug-free ECG (final values)", "circle", 2.2, BLUE, WHITE),
    ("on_drug_ecgs", "on-drug ECG (final values)", "diamond", 2.4, VERMILLION, WHITE),
)


def qt_rr_legend(cloud_has_fit: bool = True, population: bool = True) -> list[LegendItem]:
    items: list[LegendItem] = [
        (label, marker_key(shape, max(size, 1.3), colour, edge))
        for _attr, label, shape, size, colour, edge in CLOUD_STYLES
    ]
    if cloud_has_fit:
        items.append(("individual fit", line_key(BLUE, 0.55)))
        items.append(("same, beyond its RR range", line_key(BLUE, 0.3, Qt.PenStyle.DotLine)))
    if population:
        items.append(("population fit", line_key(GREY, 0.35, Qt.PenStyle.DashLine)))
    return items


def draw_qt_rr(
    c: MmCanvas,
    box: Rect,
    cloud: SubjectCloud,
    population: QtRrFit | None,
    *,
    size_pt: float = 7.0,
    legend_right: bool = False,
) -> None:
    """One subject's QT/RR picture in ``box``: title, fit, plot; with ``legend_right`` its
    legend to the right of the plot (otherwise the page draws one legend for all)."""
    c.text(
        box.x,
        box.y + 3.5,
        f"{cloud.subject}: QT against RR, beat to beat",
        size_pt + 1.5,
        bold=True,
        max_w=box.w,
    )
    if cloud.fit is not None:
        first, second = fit_lines(cloud.fit)
        c.text(box.x, box.y + 7.2, first, size_pt - 0.8, colour=BLUE, max_w=box.w)
        c.text(box.x, box.y + 10.4, second, size_pt - 0.8, colour=BLUE, max_w=box.w)
    else:
        c.text(
            box.x,
            box.y + 7.2,
            f"no individual fit: {cloud.fit_error}",
            size_pt - 0.8,
            colour=GREY,
            max_w=box.w,
        )
    items = qt_rr_legend(cloud.fit is not None, population is not None)
    legend_w = legend_width(c, items, size_pt - 1.0) + 4.0 if legend_right else 0.0
    plot = Rect(box.x + 14.0, box.y + 13.5, box.w - 16.0 - legend_w, box.h - 25.0)
    rr_lo, rr_hi = _span(
        cloud.drug_free_beats[:, 0],
        cloud.on_drug_beats[:, 0],
        cloud.drug_free_ecgs[:, 0],
        cloud.on_drug_ecgs[:, 0],
    )
    qt_lo, qt_hi = _span(
        cloud.drug_free_beats[:, 1],
        cloud.on_drug_beats[:, 1],
        cloud.drug_free_ecgs[:, 1],
        cloud.on_drug_ecgs[:, 1],
    )
    pad_x, pad_y = 0.05 * (rr_hi - rr_lo) + 20.0, 0.06 * (qt_hi - qt_lo) + 6.0
    x0, x1, xs = nice_range(rr_lo - pad_x, rr_hi + pad_x, 6)
    y0, y1, ys = nice_range(qt_lo - pad_y, qt_hi + pad_y, 5)
    ax = Axes(plot, x0, x1, y0, y1)
    draw_axes(
        c,
        ax,
        xlabel="RR interval before the beat (ms)",
        ylabel="QT (ms)",
        xstep=xs,
        ystep=ys,
        size_pt=size_pt - 0.5,
    )
    grid = np.linspace(x0, x1, 120)
    if population is not None:
        curve(c, ax, grid, population.qt_ms(grid), GREY, 0.35, Qt.PenStyle.DashLine)
    if cloud.fit is not None:
        fit = cloud.fit
        curve(c, ax, grid, fit.qt_ms(grid), BLUE, 0.3, Qt.PenStyle.DotLine)
        inside = np.linspace(fit.rr_min_ms, fit.rr_max_ms, 60)
        curve(c, ax, inside, fit.qt_ms(inside), BLUE, 0.55)
    for attr, _label, shape, size, colour, edge in CLOUD_STYLES:
        points = getattr(cloud, attr)
        markers(c, ax, points[:, 0], points[:, 1], shape, size, colour, edge=edge)
    if legend_right:
        legend(c, plot.right + 3.0, plot.y, items, size_pt - 1.0, 3.6)


def timepoint_axes(
    c: MmCanvas,
    plot: Rect,
    tps: list[str],
    values: list[float],
    ylabel: str,
    size_pt: float,
    x_margin: float,
    top_pad: float,
) -> Axes:
    """Axes with one category per timepoint and a y range over ``values`` and zero (``top_pad``
    times the padding above, room for a legend); draws them and the zero line."""
    lo, hi = min([*values, 0.0]), max([*values, 0.0])
    pad = 0.08 * (hi - lo) + 2.0
    y0, y1, ys = nice_range(lo - pad, hi + top_pad * pad, 6)
    ax = Axes(plot, -x_margin, len(tps) - 1 + x_margin, y0, y1)
    draw_axes(
        c, ax, xlabel="timepoint", ylabel=ylabel, ystep=ys, xcategories=tps, size_pt=size_pt - 0.5
    )
    hline(c, ax, 0.0, INK, 0.3)
    return ax


def draw_mean_change(
    c: MmCanvas,
    box: Rect,
    analysis: StudyAnalysis,
    quantity: str,
    *,
    size_pt: float = 7.0,
) -> None:
    """Mean change from baseline with 90 % CI per on-drug timepoint, subjects beside it."""
    label = QUANTITY_LABELS.get(quantity, quantity)
    unit = "bpm" if quantity == "hr_bpm" else "ms"
    tps = list(analysis.plan.on_drug_labels)
    c.text(
        box.x,
        box.y + 3.5,
        f"{label}: change from baseline, mean and two-sided 90 % CI per timepoint",
        size_pt + 1.5,
        bold=True,
        max_w=box.w,
    )
    plot = Rect(box.x + 14.0, box.y + 7.0, box.w - 16.0, box.h - 18.0)
    sums = {s.timepoint: s for s in analysis.summaries if s.quantity == quantity}
    indiv = [ch for ch in analysis.changes if ch.quantity == quantity]
    values = [ch.change for ch in indiv] + [0.0]
    for s in sums.values():
        values += [v for v in (s.mean, s.ci_low, s.ci_high) if v is not None]
    ref = ICH_E14_UPPER_BOUND_MS if quantity in FORMULAS else None
    if ref is not None:
        values.append(ref)
    ax = timepoint_axes(c, plot, tps, values, f"{label} ({unit})", size_pt, 0.5, 2.5)
    items: list[LegendItem] = [
        ("each subject (replicates averaged)", marker_key("circle_open", 1.4, GREY)),
        ("mean change and two-sided 90 % CI (t distribution)", marker_key("square", 2.0, INK)),
    ]
    if ref is not None:
        hline(c, ax, ref, VERMILLION, 0.3, Qt.PenStyle.DashLine)
        items.append(
            (
                f"{ref:g} ms: threshold for the upper bound (ICH E14, 2005)",
                line_key(VERMILLION, 0.3, Qt.PenStyle.DashLine),
            )
        )
    for i, tp in enumerate(tps):
        pts = sorted(ch.change for ch in indiv if ch.timepoint == tp)
        for k, v in enumerate(pts):
            jitter = (k - (len(pts) - 1) / 2) * 0.035
            marker(c, ax.x(i - 0.22 + jitter), ax.y(v), "circle_open", 1.4, GREY)
        here = sums.get(tp)
        if here is None:
            continue
        if here.ci_low is not None and here.ci_high is not None:
            error_bar(c, ax, i + 0.08, here.ci_low, here.ci_high, INK, 2.2)
        marker(c, ax.x(i + 0.08), ax.y(here.mean), "square", 2.0, INK)
        c.text(
            ax.x(i + 0.08) + 2.0,
            ax.y(here.mean) + 1.0,
            f"{here.mean:+.1f} (n={here.n})",
            size_pt - 1.5,
            backdrop=True,
        )
    legend(c, plot.x + 1.5, plot.y + 1.5, items, size_pt - 1.5, 3.0)


def draw_individual_changes(
    c: MmCanvas,
    box: Rect,
    analysis: StudyAnalysis,
    quantity: str,
    *,
    size_pt: float = 7.0,
) -> None:
    """Each subject's change from baseline at every timepoint (baseline = 0)."""
    label = QUANTITY_LABELS.get(quantity, quantity)
    tps = ["baseline", *analysis.plan.on_drug_labels]
    c.text(
        box.x,
        box.y + 3.5,
        f"{label}: each subject's change from baseline",
        size_pt + 1.5,
        bold=True,
        max_w=box.w,
    )
    many = len(analysis.subjects) > len(SERIES_COLOURS)
    series = {
        s: [0.0]
        + [
            next(
                (
                    ch.change
                    for ch in analysis.changes
                    if ch.subject == s and ch.quantity == quantity and ch.timepoint == tp
                ),
                np.nan,
            )
            for tp in tps[1:]
        ]
        for s in analysis.subjects
        if (s, quantity) in analysis.baselines
    }
    items: list[LegendItem] = []
    styles = []
    for k, subject in enumerate(series):
        colour = GREY if many else SERIES_COLOURS[k % len(SERIES_COLOURS)]
        shape = "circle" if many else SHAPES[k % len(SHAPES)]
        styles.append((colour, shape))
        if not many:
            items.append((subject, marker_key(shape, 1.8, colour)))
    limits = ((30.0, Qt.PenStyle.DashLine), (60.0, Qt.PenStyle.DotLine))
    if quantity in FORMULAS:
        items += [(f"increase > {v:g} ms", line_key(VERMILLION, 0.3, st)) for v, st in limits]
    legend_w = 0.0 if many else legend_width(c, items, size_pt - 1.0) + 3.0
    plot = Rect(box.x + 14.0, box.y + 7.0, box.w - 16.0 - legend_w, box.h - 18.0)
    vals = [v for ys in series.values() for v in ys if np.isfinite(v)]
    ax = timepoint_axes(c, plot, tps, vals, f"{label} (ms)", size_pt, 0.3, 1.0)
    xs = np.arange(len(tps), dtype=float)
    for (colour, shape), ys_ in zip(styles, series.values(), strict=True):
        curve(c, ax, xs, np.asarray(ys_), colour, 0.35)
        markers(c, ax, xs, np.asarray(ys_), shape, 1.8, colour)
    if quantity in FORMULAS:
        for v, st in limits:
            hline(c, ax, v, VERMILLION, 0.3, st)
    if not many:
        legend(c, plot.right + 3.0, plot.y, items, size_pt - 1.0, 3.4)
    elif items:
        legend(c, plot.x + 1.5, plot.y + 1.5, items, size_pt - 1.0, 3.4)


def draw_exponents(
    c: MmCanvas, box: Rect, analysis: StudyAnalysis, *, size_pt: float = 7.0
) -> None:
    """Each subject's QT/RR exponent b with its 95 % CI, the population's, and the exponents
    of Fridericia (1/3) and Bazett (1/2) for comparison."""
    c.text(
        box.x,
        box.y + 3.5,
        "QT/RR exponent b per subject (95 % CI)",
        size_pt + 1.5,
        bold=True,
        max_w=box.w,
    )
    rows = [(s, analysis.fits.get(s)) for s in analysis.subjects]
    rows.append(("population", analysis.population_fit))
    names = [r[0] for r in rows][::-1]
    fits = [r[1] for r in rows][::-1]
    vals = [1.0 / 3.0, 0.5]
    for f in fits:
        if f is not None:
            vals += [f.b, *(f.b_ci95 or ())]
    x0, x1, xs = nice_range(min(vals) - 0.03, max(vals) + 0.03, 6)
    plot = Rect(box.x + 22.0, box.y + 7.0, box.w - 24.0, box.h - 18.0)
    ax = Axes(plot, x0, x1, -0.7, len(names) - 0.3)
    draw_axes(
        c,
        ax,
        xlabel="b in QT = a \u00d7 RR^b",
        ylabel="",
        xstep=xs,
        ycategories=names,
        size_pt=size_pt - 0.5,
    )
    for value, style, text in (
        (1.0 / 3.0, Qt.PenStyle.DashLine, "Fridericia 1/3"),
        (0.5, Qt.PenStyle.DotLine, "Bazett 1/2"),
    ):
        c.pen(GREY, 0.3, style)
        c.line(ax.x(value), plot.y, ax.x(value), plot.bottom)
        c.text(ax.x(value) + 0.8, plot.y + 3.0, text, size_pt - 1.5, colour=GREY, backdrop=True)
    for i, f in enumerate(fits):
        if f is None:
            c.text(plot.x + 2.0, ax.y(i) + 1.0, "not fitted", size_pt - 1.0, colour=GREY)
            continue
        colour = INK if names[i] == "population" else BLUE
        if f.b_ci95 is not None:
            c.pen(colour, 0.45)
            c.line(ax.x(f.b_ci95[0]), ax.y(i), ax.x(f.b_ci95[1]), ax.y(i))
        marker(
            c, ax.x(f.b), ax.y(i), "diamond" if names[i] == "population" else "circle", 2.2, colour
        )
