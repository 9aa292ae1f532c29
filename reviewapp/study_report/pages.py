"""The pages of the study report (A4 portrait, mm), each with the caution and its sources.

1. Summary: records, reading status and flags, timepoints, the final-reading rule, methods.
2. Change from baseline: mean change of QTcF and heart rate with 90 % CI, and the table of
   mean changes of every formula.
3. Each subject's change of QTcF over time, and the ICH E14 categorical outliers.
4. QT/RR fits: each subject's and the population's, with their quality.
5. QT/RR pictures, six to a page.
6. Records needing attention (not signed, readers differ, no adjudication).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from datetime import datetime

from reviewapp import CLINICAL_CAUTION, __version__
from reviewapp.core.marks.final import TOLERANCE_SOURCE
from reviewapp.core.marks.final_output import PRECEDENCE
from reviewapp.core.study.analysis import ANY_ON_DRUG, BASELINE, FORMULAS, StudyAnalysis
from reviewapp.core.study.ich_e14 import CATEGORY_LABELS, ICH_E14
from reviewapp.core.study.qt_rr import MALIK_2002
from reviewapp.report.layout import Rect
from reviewapp.study_report.chart import GREY, INK, VERMILLION, MmCanvas, legend_row
from reviewapp.study_report.figures import (
    draw_exponents,
    draw_individual_changes,
    draw_mean_change,
    draw_qt_rr,
    qt_rr_legend,
)

PAGE_W_MM, PAGE_H_MM = 210.0, 297.0
MARGIN_MM = 14.0
BODY = Rect(MARGIN_MM, 22.0, PAGE_W_MM - 2 * MARGIN_MM, PAGE_H_MM - 22.0 - 30.0)
BAZETT = "Bazett, Heart 1920"
FRIDERICIA = "Fridericia, Acta Med Scand 1920"
SALVI = "Salvi et al., Ann Noninvasive Electrocardiol 2014"
OKABE_ITO = "Okabe & Ito, Color Universal Design 2008"
CLOUDS_PER_PAGE = 6
ATTENTION_ROWS_PER_PAGE = 42


@dataclass(frozen=True)
class Page:
    """One page: what it draws, and the sources it cites in its footer."""

    title: str
    draw: Callable[[MmCanvas], None]
    sources: tuple[str, ...]


def wrap(c: MmCanvas, text: str, w: float, size_pt: float, bold: bool = False) -> list[str]:
    """Greedy word wrap measured in the font the text is drawn in."""
    lines: list[str] = []
    cur = ""
    for word in text.split():
        trial = f"{cur} {word}" if cur else word
        if cur and c.text_width_mm(trial, size_pt, bold) > w:
            lines.append(cur)
            cur = word
        else:
            cur = trial
    if cur:
        lines.append(cur)
    return lines


def paragraph(
    c: MmCanvas,
    x: float,
    y: float,
    w: float,
    text: str,
    size_pt: float = 7.5,
    line_h: float = 3.6,
    max_lines: int = 12,
    *,
    bold: bool = False,
    **kw: object,
) -> float:
    """Word-wrapped text from baseline ``y`` (the last line elided past ``max_lines``);
    returns the baseline after it."""
    lines = wrap(c, text, w, size_pt, bold)
    if len(lines) > max_lines:
        lines = [*lines[: max_lines - 1], " ".join(lines[max_lines - 1 :])]
    for line in lines:
        c.text(x, y, line, size_pt, bold=bold, max_w=w, **kw)  # type: ignore[arg-type]
        y += line_h
    return y


def table(
    c: MmCanvas,
    x: float,
    y: float,
    columns: Sequence[tuple[str, float, str]],
    rows: Sequence[Sequence[str]],
    size_pt: float = 7.0,
    line_h: float = 3.7,
) -> float:
    """A ruled table: columns are (header, width mm, "left" | "right"); returns y after it."""
    width = sum(w for _, w, _ in columns)
    c.pen(INK, 0.25)
    c.line(x, y - 2.9, x + width, y - 2.9)

    def row_out(cells: Sequence[str], bold: bool, y: float) -> None:
        cx = x
        for (_, w, align), cell in zip(columns, cells, strict=True):
            tx = cx + w - 1.0 if align == "right" else cx + 0.5
            c.text(tx, y, cell, size_pt, bold=bold, align=align, max_w=w - 1.5)
            cx += w

    row_out([h for h, _, _ in columns], True, y)
    y += 1.3
    c.pen(INK, 0.2)
    c.line(x, y, x + width, y)
    y += line_h
    for cells in rows:
        row_out(cells, False, y)
        y += line_h
    c.pen(INK, 0.25)
    c.line(x, y - line_h + 1.3, x + width, y - line_h + 1.3)
    return y + 1.0


def heading(c: MmCanvas, y: float, text: str) -> float:
    c.text(BODY.x, y, text, 9.5, bold=True, max_w=BODY.w)
    return y + 5.0


def _fmt(v: float | None, nd: int = 1, sign: bool = False) -> str:
    if v is None:
        return "-"
    return f"{v:+.{nd}f}" if sign else f"{v:.{nd}f}"


def _mean_ci(mean: float, lo: float | None, hi: float | None) -> str:
    return f"{mean:+.1f} ({_fmt(lo, sign=True)}, {_fmt(hi, sign=True)})"


def draw_frame(
    c: MmCanvas, page: Page, number: int, total: int, study_title: str, generated_at: datetime
) -> None:
    """Header (study, page title, page number) and footer (caution, sources, provenance)."""
    c.text(MARGIN_MM, 11.0, study_title, 8.0, colour=GREY, max_w=120.0)
    c.text(
        PAGE_W_MM - MARGIN_MM, 11.0, f"page {number} of {total}", 8.0, colour=GREY, align="right"
    )
    c.text(MARGIN_MM, 17.5, page.title, 13.0, bold=True, max_w=BODY.w)
    c.pen(INK, 0.3)
    c.line(MARGIN_MM, 19.3, PAGE_W_MM - MARGIN_MM, 19.3)
    y = PAGE_H_MM - 26.0
    c.pen(INK, 0.2)
    c.line(MARGIN_MM, y - 3.5, PAGE_W_MM - MARGIN_MM, y - 3.5)
    y = paragraph(
        c,
        MARGIN_MM,
        y,
        BODY.w,
        "Clinical caution: " + CLINICAL_CAUTION,
        7.0,
        3.2,
        3,
        bold=True,
        colour=VERMILLION,
    )
    y = paragraph(
        c, MARGIN_MM, y + 0.6, BODY.w, "Sources: " + "; ".join(page.sources) + ".", 6.5, 3.0, 4
    )
    c.text(
        MARGIN_MM,
        PAGE_H_MM - 7.0,
        f"reviewapp {__version__}, generated {generated_at:%Y-%m-%d %H:%M} UTC. Values are "
        "recomputed from each record's signal and marks; see records.csv and analysis.csv.",
        6.0,
        colour=GREY,
        max_w=BODY.w,
    )


# --- page 1 ----------------------------------------------------------------------------------


def _summary_page(a: StudyAnalysis, tolerance_text: str) -> Page:
    def draw(c: MmCanvas) -> None:
        x, w = BODY.x, BODY.w
        y = heading(c, BODY.y + 4.0, "Study table")
        statuses = ", ".join(
            f"{n} {s.replace('_', ' ')}" for s, n in sorted(a.status_counts.items())
        )
        flags = {
            "not signed": sum(r.flag("not_signed") for r in a.flagged),
            "readers differ beyond tolerance": sum(r.flag("readers_differ") for r in a.flagged),
            "no adjudication": sum(r.flag("no_adjudication") for r in a.flagged),
        }
        y = paragraph(
            c,
            x,
            y,
            w,
            f"{a.n_records} records: {statuses}. {len(a.used)} ECGs of {len(a.subjects)} "
            f"subjects analysed, {len(a.excluded)} left out (reasons in analysis.csv). Flags: "
            + ", ".join(f"{n} {k}" for k, n in flags.items())
            + "."
            + (" Only signed or adjudicated readings are analysed." if a.signed_only else ""),
        )
        y += 2.0
        rows = []
        for t in a.plan.timepoints:
            n_ecg = sum(1 for e in a.ecgs if e.timepoint == t.label)
            n_sub = len({e.subject for e in a.ecgs if e.timepoint == t.label})
            role = "baseline" if t.baseline else "drug-free" if t.drug_free else "on drug"
            rows.append([t.label, role, str(n_ecg), str(n_sub)])
        y = table(
            c,
            x,
            y + 3.0,
            [
                ("timepoint", 70.0, "left"),
                ("role", 30.0, "left"),
                ("ECGs", 20.0, "right"),
                ("subjects", 20.0, "right"),
            ],
            rows,
        )
        y = table(c, x, y + 3.0, _SUBJECT_COLUMNS, _subject_rows(a), 6.8)
        y = heading(c, y + 4.0, "Final reading of each record")
        y = paragraph(
            c,
            x,
            y,
            w,
            "Each value is recomputed from the record's signal and the final marks: "
            + PRECEDENCE
            + ". A signed adjudication is laid over the chosen reader's reading (marks it did "
            "not touch stay as read). Between two signed readers the first reader's reading is "
            "final, since a final value must be one a named reader signed. Every value in "
            "records.csv carries its source (automatic with the engine version, a reader's "
            "correction with reader, role and signature, or adjudicated) "
            "and the automatic value beside it.",
        )
        y = paragraph(c, x, y + 1.0, w, "Readers differ: " + tolerance_text + ".")
        y = heading(c, y + 4.0, "Methods")
        methods = [
            "Replicate ECGs of a subject at a timepoint are averaged value by value (each ECG's "
            "QTc first). Baseline: the mean of the subject's baseline (pre-dose) ECGs.",
            "Change from baseline per subject and timepoint; per timepoint the mean change "
            "with its two-sided 90 % confidence interval from the t distribution (n - 1 "
            "degrees of freedom), whose upper bound is the one-sided 95 % bound compared with "
            f"10 ms ({ICH_E14}). Without a placebo arm this is the change from baseline, not "
            "the placebo-adjusted change.",
            f"QTcF = QT / RR^(1/3) ({FRIDERICIA}); QTcB = QT / RR^(1/2) ({BAZETT}); RR in s.",
            f"QTcI = QT / RR^b with each subject's b from QT = a \u00d7 RR^b fitted by least "
            f"squares on logarithms of their drug-free ECGs, one point per ECG ({MALIK_2002}); "
            "QTcP: the same fit on all subjects' drug-free ECGs pooled.",
            f"Categorical outliers ({ICH_E14}): QTc > 450, > 480, > 500 ms and increases from "
            "baseline > 30 and > 60 ms, on replicate means, counted in subjects, per formula.",
            "QT/RR pictures: beat-to-beat QT and preceding RR of dominant beats that follow a "
            "dominant beat, under each record's final marks.",
        ]
        for m in methods:
            c.text(x, y, "\u2022", 7.5)
            y = paragraph(c, x + 3.0, y, w - 3.0, m)
            y += 0.8
        if a.notes:
            y = heading(c, y + 3.0, "Notes")
            for n in a.notes:
                y = paragraph(c, x, y, w, n, colour=VERMILLION)

    return Page(
        "Summary and methods",
        draw,
        (
            ICH_E14,
            FRIDERICIA,
            BAZETT,
            MALIK_2002,
            SALVI,
            "Student t distribution via SciPy (Virtanen et al., Nat Methods 2020)",
        ),
    )


_SUBJECT_COLUMNS = [
    ("subject", 16.0, "left"),
    ("ECGs", 10.0, "right"),
    ("b (QTcI)", 14.0, "right"),
    ("baseline QTcF", 21.0, "right"),
    ("highest QTcF on drug", 40.0, "right"),
    ("largest \u0394QTcF", 38.0, "right"),
    ("ICH E14, QTcF", 43.0, "left"),
]


def _subject_rows(a: StudyAnalysis) -> list[list[str]]:
    """Per subject: fit exponent, baseline, the extremes on drug and the categories met."""
    q = "qtc_fridericia_ms"
    rows = []
    for s in a.subjects:
        fit = a.fits.get(s)
        base = a.baselines.get((s, q))
        on = [
            m
            for m in a.means
            if m.subject == s and m.quantity == q and m.timepoint in a.plan.on_drug_labels
        ]
        top = max(on, key=lambda m: m.mean, default=None)
        deltas = [ch for ch in a.changes if ch.subject == s and ch.quantity == q]
        big = max(deltas, key=lambda ch: ch.change, default=None)
        met = [
            cc.category.replace("QTc > ", ">").replace("increase > ", "\u0394>").replace(" ms", "")
            for cc in a.categories
            if cc.formula == q and cc.timepoint == ANY_ON_DRUG and s in cc.subjects
        ]
        rows.append(
            [
                s,
                str(sum(1 for e in a.ecgs if e.subject == s)),
                "-" if fit is None else f"{fit.b:.3f}",
                "-" if base is None else f"{base.mean:.1f} ms",
                "-" if top is None else f"{top.mean:.1f} ms ({top.timepoint})",
                "-" if big is None else f"{big.change:+.1f} ms ({big.timepoint})",
                " ".join(met) or "none",
            ]
        )
    return rows


# --- page 2 ----------------------------------------------------------------------------------


def _change_page(a: StudyAnalysis) -> Page:
    def draw(c: MmCanvas) -> None:
        fig_h = 78.0
        draw_mean_change(c, Rect(BODY.x, BODY.y + 1.0, BODY.w, fig_h), a, "qtc_fridericia_ms")
        draw_mean_change(c, Rect(BODY.x, BODY.y + fig_h + 5.0, BODY.w, fig_h), a, "hr_bpm")
        y = BODY.y + 2 * fig_h + 14.0
        cols = [("timepoint", 38.0, "left")]
        quantities = [*FORMULAS, "hr_bpm"]
        for q in quantities:
            name = "\u0394HR (bpm)" if q == "hr_bpm" else f"\u0394{FORMULAS[q]} (ms)"
            cols.append((name, 28.0, "right"))
        rows = []
        for tp in a.plan.on_drug_labels:
            row = [tp]
            for q in quantities:
                s = a.summary(tp, q)
                row.append("-" if s is None else _mean_ci(s.mean, s.ci_low, s.ci_high))
            rows.append(row)
        c.text(
            BODY.x,
            y,
            "Mean change from baseline (two-sided 90 % CI), subjects with a "
            "baseline and a value at the timepoint:",
            7.5,
            bold=True,
            max_w=BODY.w,
        )
        y = table(c, BODY.x, y + 5.5, cols, rows, 6.8)
        highest = max(
            (s for s in a.summaries if s.quantity == "qtc_fridericia_ms" and s.ci_high is not None),
            key=lambda s: s.ci_high or 0.0,
            default=None,
        )
        if highest is not None:
            paragraph(
                c,
                BODY.x,
                y + 3.0,
                BODY.w,
                f"Largest upper bound of the 90 % CI of \u0394QTcF: {highest.ci_high:+.1f} ms at "
                f"{highest.timepoint} (mean {highest.mean:+.1f} ms, n = {highest.n}). {ICH_E14} "
                "sets the threshold of regulatory concern at an upper bound of 10 ms for the "
                "placebo-adjusted, time-matched effect; a change from baseline without a "
                "placebo arm describes the data and does not test that threshold.",
                7.0,
            )

    return Page("Change from baseline", draw, (ICH_E14, FRIDERICIA, BAZETT, MALIK_2002, OKABE_ITO))


# --- page 3 ----------------------------------------------------------------------------------


def _count(a: StudyAnalysis, formula: str, category: str, timepoint: str) -> str:
    cc = a.category(formula, category, timepoint)
    if cc is None or not cc.n_subjects:
        return "-"
    return f"{cc.n_meeting}/{cc.n_subjects} ({100.0 * cc.n_meeting / cc.n_subjects:.0f} %)"


def _category_matrix(a: StudyAnalysis) -> list[list[str]]:
    """Rows: each category at baseline (absolute ones) and on drug; columns: formulas."""
    rows = []
    for cat in CATEGORY_LABELS:
        if cat.startswith("QTc"):
            rows.append([cat, "baseline", *(_count(a, f, cat, BASELINE) for f in FORMULAS), ""])
        cc = a.category("qtc_fridericia_ms", cat, ANY_ON_DRUG)
        who = " ".join(cc.subjects) if cc is not None else ""
        rows.append(
            [cat, "any on-drug time", *(_count(a, f, cat, ANY_ON_DRUG) for f in FORMULAS), who]
        )
    return rows


def _category_by_time(a: StudyAnalysis, formula: str) -> list[list[str]]:
    return [
        [cat, *(_count(a, formula, cat, tp) for tp in a.plan.on_drug_labels)]
        for cat in CATEGORY_LABELS
    ]


def _outlier_page(a: StudyAnalysis) -> Page:
    def draw(c: MmCanvas) -> None:
        draw_individual_changes(c, Rect(BODY.x, BODY.y + 1.0, BODY.w, 80.0), a, "qtc_fridericia_ms")
        y = BODY.y + 94.0
        c.text(
            BODY.x,
            y,
            f"Categorical outliers ({ICH_E14}): subjects meeting each category "
            "(replicate means, values as computed, limits strict)",
            7.5,
            bold=True,
            max_w=BODY.w,
        )
        cols = [
            ("category", 28.0, "left"),
            ("when", 24.0, "left"),
            *((f"{name}", 21.0, "right") for name in FORMULAS.values()),
            ("subjects (QTcF, on drug)", 50.0, "left"),
        ]
        y = table(c, BODY.x, y + 5.5, cols, _category_matrix(a), 6.8, 3.5)
        y = paragraph(
            c,
            BODY.x,
            y + 1.0,
            BODY.w,
            "Subjects meeting the category / subjects with a value there (%). Increases "
            "are counted against each subject's own baseline; 'any on-drug time': at "
            "one on-drug timepoint or more.",
            7.0,
        )
        c.text(
            BODY.x,
            y + 4.0,
            "QTcF categories at each on-drug timepoint",
            7.5,
            bold=True,
            max_w=BODY.w,
        )
        tcols = [("category", 28.0, "left"), *((tp, 28.0, "right") for tp in a.plan.on_drug_labels)]
        table(c, BODY.x, y + 9.5, tcols, _category_by_time(a, "qtc_fridericia_ms"), 6.8, 3.5)

    return Page(
        "Individual changes and categorical outliers",
        draw,
        (ICH_E14, FRIDERICIA, BAZETT, MALIK_2002, OKABE_ITO),
    )


# --- page 4 ----------------------------------------------------------------------------------


def _fit_page(a: StudyAnalysis) -> Page:
    def draw(c: MmCanvas) -> None:
        y = paragraph(
            c,
            BODY.x,
            BODY.y + 4.0,
            BODY.w,
            f"QT = a \u00d7 RR^b (RR in s) fitted by least squares on log QT = log a + b log RR "
            f"over each subject's drug-free ECGs ({MALIK_2002}); QTcI = QT / RR^b. The "
            "exponent's 95 % CI uses the t distribution (n - 2 df). Outside the RR range a fit "
            "rests on, its correction is an extrapolation; a narrow range leaves b uncertain "
            "(wide CI). b = 0.333 is Fridericia's correction, 0.5 Bazett's.",
        )
        cols = [
            ("subject", 22.0, "left"),
            ("ECGs", 12.0, "right"),
            ("a (ms)", 16.0, "right"),
            ("b", 16.0, "right"),
            ("b 95 % CI", 30.0, "right"),
            ("r\u00b2", 14.0, "right"),
            ("resid. SD (ms)", 22.0, "right"),
            ("RR range (ms)", 30.0, "right"),
        ]
        rows = []
        fits = [(s, a.fits.get(s), a.fit_errors.get(s, "")) for s in a.subjects]
        fits.append(("population", a.population_fit, a.population_error))
        for s, fit, err in fits:
            if fit is None:
                rows.append([s, "", "", "", f"not fitted: {err}", "", "", ""])
                continue
            ci = "-" if fit.b_ci95 is None else f"{fit.b_ci95[0]:.3f} to {fit.b_ci95[1]:.3f}"
            rows.append(
                [
                    s,
                    str(fit.n),
                    f"{fit.a_ms:.1f}",
                    f"{fit.b:.3f}",
                    ci,
                    f"{fit.r2:.3f}",
                    f"{fit.residual_sd_ms:.1f}",
                    f"{fit.rr_min_ms:.0f} to {fit.rr_max_ms:.0f}",
                ]
            )
        y = table(c, BODY.x, y + 4.0, cols, rows, 7.0)
        h = min(110.0, 30.0 + 7.0 * len(rows))
        draw_exponents(c, Rect(BODY.x, y + 4.0, BODY.w * 0.75, h), a)

    return Page(
        "QT/RR fits: individual (QTcI) and population (QTcP)",
        draw,
        (MALIK_2002, FRIDERICIA, BAZETT),
    )


# --- QT/RR pictures ----------------------------------------------------------------------------


def _cloud_pages(a: StudyAnalysis) -> list[Page]:
    pages = []
    clouds = list(a.clouds)
    for start in range(0, len(clouds), CLOUDS_PER_PAGE):
        chunk = clouds[start : start + CLOUDS_PER_PAGE]

        def draw(c: MmCanvas, chunk: list = chunk) -> None:
            items = qt_rr_legend(bool(a.fits), a.population_fit is not None)
            top = legend_row(c, BODY.x + 1.0, BODY.y + 2.5, items, 6.5, BODY.w)
            cell_w, cell_h = BODY.w / 2, (BODY.bottom - top) / 3
            for i, cloud in enumerate(chunk):
                col, row = i % 2, i // 2
                box = Rect(BODY.x + col * cell_w, top + row * cell_h, cell_w - 3.0, cell_h - 2.0)
                draw_qt_rr(c, box, cloud, a.population_fit, size_pt=6.5)

        pages.append(
            Page("QT/RR per subject (drug-free and on drug)", draw, (MALIK_2002, OKABE_ITO))
        )
    return pages


# --- records needing attention ------------------------------------------------------------------


def _attention_pages(a: StudyAnalysis) -> list[Page]:
    flagged = list(a.flagged)
    if not flagged:
        return []
    pages = []
    for start in range(0, len(flagged), ATTENTION_ROWS_PER_PAGE):
        chunk = flagged[start : start + ATTENTION_ROWS_PER_PAGE]

        def draw(c: MmCanvas, chunk: list = chunk, start: int = start) -> None:
            y = paragraph(
                c,
                BODY.x,
                BODY.y + 4.0,
                BODY.w,
                f"{len(flagged)} records whose final reading is not signed, or whose two signed "
                f"readers differ beyond tolerance (with or without adjudication); rows "
                f"{start + 1} to {start + len(chunk)}. Readers differ: tolerances as on page 1.",
            )
            cols = [
                ("record", 26.0, "left"),
                ("subject", 16.0, "left"),
                ("timepoint", 26.0, "left"),
                ("status", 20.0, "left"),
                ("flags and differences", 94.0, "left"),
            ]
            rows = []
            for r in chunk:
                flags = [
                    t
                    for f, t in (
                        ("not_signed", "not signed"),
                        ("no_adjudication", "no adjudication"),
                    )
                    if r.flag(f)
                ]
                diff = str(r.provenance.get("differences", ""))
                rows.append(
                    [
                        r.record,
                        r.subject or "",
                        r.timepoint or "",
                        r.status.replace("_", " "),
                        "; ".join([*flags, diff] if diff else flags),
                    ]
                )
            table(c, BODY.x, y + 4.0, cols, rows, 6.5, 3.6)

        pages.append(Page("Records needing attention", draw, (SALVI,)))
    return pages


def paint_page(
    c: MmCanvas, pages: Sequence[Page], index: int, study_title: str, generated_at: datetime
) -> None:
    """Frame and body of ``pages[index]``."""
    draw_frame(c, pages[index], index + 1, len(pages), study_title, generated_at)
    pages[index].draw(c)


def study_pages(a: StudyAnalysis, tolerance_text: str) -> list[Page]:
    """Every page of the report, in order."""
    pages = [_summary_page(a, tolerance_text)]
    if a.summaries:
        pages += [_change_page(a), _outlier_page(a)]
    pages.append(_fit_page(a))
    pages += _cloud_pages(a)
    pages += _attention_pages(a)
    return pages


__all__ = [
    "BODY",
    "PAGE_H_MM",
    "PAGE_W_MM",
    "TOLERANCE_SOURCE",
    "Page",
    "draw_frame",
    "paint_page",
    "paragraph",
    "study_pages",
]
