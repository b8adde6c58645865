"""Study step ``breaks``: Bai–Perron trend breaks screened unit by unit, on a named series.

By default the log intensity ``ln(pressure / activity)`` is screened (``[breaks] series =
["intensity"]``; add ``"pressure"`` for ``ln pressure``, the series the grade's "latest break"
is searched on). Every table and figure names the series it tested and the break-year
convention (the last year of the old regime).
"""

from __future__ import annotations

from typing import Any

import pandas as pd

from evidence.breaks import screen_breaks
from evidence.breaks.result import CONVENTION
from evidence.panel import Panel, derived_name
from evidence.study import figures as figs
from evidence.study.choice import DEFAULT_LIMIT
from evidence.study.spec import StudySpec
from evidence.study.steps._base import FigureOut, StepOutput, TableOut, data_notes, p_words, safe_name
from evidence.tables import render_frame

__all__ = ["run", "series_label", "choose_break_units"]


def series_label(kind: str, pressure: str, activity: str) -> str:
    """How a tested series is named in captions: ``ln(GHG/GDP), the log intensity``."""
    if kind == "intensity":
        return f"ln({pressure}/{activity}), the log intensity"
    return f"ln {pressure}, the log pressure"


def choose_break_units(table: pd.DataFrame, limit: int = DEFAULT_LIMIT) -> list[str]:
    """Units whose breaks a report shows: those with a break, most significant first."""
    hit = table[table["n_breaks"] > 0]
    order = hit.assign(_p=hit["pvalue_adjusted"]).sort_values(["_p"], kind="stable")
    return [str(u) for u in order.index[:limit]]


def _frame(res: Any) -> pd.DataFrame:
    tab = res.table
    return pd.DataFrame({
        "unit": tab.index,
        "span": [f"{a}–{b}" for a, b in zip(tab["first_year"], tab["last_year"], strict=True)],
        "breaks": tab["n_breaks"].to_numpy(),
        "break years (95% interval)": [
            ", ".join(f"{y} ({lo}–{hi})" for y, lo, hi in zip(b, lo_, hi_, strict=True)) or "none"
            for b, lo_, hi_ in zip(tab["break_years"], tab["lower"], tab["upper"], strict=True)],
        "UDmax p": tab["pvalue"].to_numpy(), "adjusted p": tab["pvalue_adjusted"].to_numpy(),
        "residual AR(1)": tab["ar1"].to_numpy(),
        "p calibrated": ["yes" if c else "no" for c in tab["ar1_covered"]]})


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """Screen each named series of each pressure; a table, a year chart and unit break plots."""
    base = panel.window(spec.window) if spec.window else panel
    options = {k: spec.breaks[k] for k in ("max_breaks", "trim") if k in spec.breaks}
    kinds = spec.breaks.get("series") or ["intensity"]
    one, many = spec.unit_words
    tables, figures, results, lead, counts = [], [], {}, [], {}
    years = (int(base.years[0]), int(base.years[-1]))
    for pressure in spec.pressure_columns:
        for kind in kinds:
            work, column = _series(base, kind, pressure, spec.activity)
            res = screen_breaks(work, column, model="trend", seed=spec.seed,
                                executor=spec.executor, **options)
            label = series_label(kind, pressure, spec.activity)
            key = f"{kind}_{pressure}"
            payload = res.to_dict()
            payload["details"].pop("executor", None)  # results.json is the same whichever ran it
            results[key] = {"series": label, **payload}
            tab = res.table
            alpha = res.details["alpha"]
            found = int((tab["n_breaks"] > 0).sum())
            top = res.counts[res.counts > 0].sort_values(ascending=False, kind="stable").head(4)
            lead.append(
                f"Tested on {label}: {found} of {len(tab)} {many} have at least one trend break "
                f"({int((tab['pvalue_adjusted'] < alpha).sum())} with UDmax significant at "
                f"{alpha:g} after {res.details['adjust'].upper()} adjustment)"
                + (("; most common break years " + ", ".join(f"{y} ({n})" for y, n in top.items()))
                   if len(top) else "")
                + f". Break years cluster across {many}: {res.clustering.statistic:.0f} within "
                f"±{res.clustering.details.get('spread', 1)} year, permutation "
                f"{p_words(res.clustering.pvalue)}.")
            counts[label] = res.counts
            notes = [CONVENTION, f"Series tested: {label}, {years[0]}–{years[1]}.",
                     f"Trend model (intercept and slope per regime), trim {res.details['trim']}, "
                     f"up to {res.details['max_breaks']} breaks, number chosen by "
                     f"{res.details['select']} (no break unless UDmax rejects at {alpha:g}). UDmax "
                     f"p: {res.details['pvalue']}; adjusted p: {res.details['adjust']} across "
                     f"{many}. 'p calibrated' is no where the residual AR(1) lies beyond the "
                     "range the simulated p-values cover.",
                     *_size_lines(res), *[f"Warning: {w}" for w in res.warnings],
                     *[f"Left out: {r.unit} ({r.reason})." for r in res.excluded.itertuples()],
                     *data_notes(spec)]
            frame = _frame(res)
            title = f"Structural breaks in {label}"
            tables.append(TableOut(
                f"breaks_{kind}_{safe_name(pressure)}",
                lambda f, c=True, fr=frame, r=res, t=title, n=notes: render_frame(
                    r.to_frame() if f in ("csv", "json") else fr, f, title=t, notes=n,
                    index=False, labels=spec.labels, caution=c), pressure, shown="folded",
                summary=f"Break years of every {one} in {label}"))
            if spec.figures:
                for unit in choose_break_units(tab):
                    figures.append(FigureOut(
                        f"breaks_{kind}_{safe_name(pressure)}_{safe_name(unit)}",
                        lambda r=res, u=unit, lb=label: _unit_plot(r, u, lb), in_report=True,
                        source=unit, label=f"break plot {unit}",
                        caption=(f"{unit}: {label} with the fitted trend regimes; shaded: 95 % "
                                 "interval of each break year; dashed: after the break year "
                                 "(the last year of the old regime).")))
    if spec.figures and counts:
        figures.insert(0, FigureOut("break_years", lambda: figs.break_years_figure(counts, years),
                                    in_report=True,
                                    caption=(f"Break years across {many}, by series tested "
                                             "(a break year is the last year of the old regime).")))
    lead.append("The grade's 'latest break' column is searched on ln pressure, the log of the "
                "pressure itself; where the two series disagree, it is because the intensity "
                "also moves with activity.")
    return StepOutput("Structural breaks", tuple(tables), tuple(figures),
                      results={"breaks": results}, lead=tuple(lead))


def _series(panel: Panel, kind: str, pressure: str, activity: str) -> tuple[Panel, str]:
    if kind == "intensity":
        ratio = derived_name("per", pressure, activity)
        column = derived_name("log", ratio)
        return panel.with_intensity(pressure, activity, name=ratio).with_log(ratio, name=column), column
    column = derived_name("log", pressure)
    return panel.with_log(pressure, name=column), column


def _size_lines(res: Any) -> list[str]:
    size = res.details.get("size") or {}
    if "measured" not in size:
        return [f"Size: {size.get('note', 'not on the size card')}."]
    state = "within" if size.get("controlled") else "OUTSIDE"
    return [f"Size of the screen at T={size['n_years']} (size card, docs/methods/size.md): "
            f"{100 * size['measured']:.1f} % at 5 % nominal, worst of {size['processes']} noise "
            f"processes ({size['process']}), {state} 3 %–7.5 %."]


def _unit_plot(res: Any, unit: str, label: str) -> Any:
    fig = res.unit(unit).plot()
    ax = fig.axes[0]
    ax.set_title(f"{figs.shorten(unit, 30)}: {figs.shorten(label, 60)}", fontsize=9)
    ax.set_ylabel(figs.shorten(label.split(",")[0], 40), fontsize=8)
    return fig

