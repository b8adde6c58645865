"""Study step ``grade``: the four axes and the rung per unit and pressure, with unit figures."""

from __future__ import annotations

from typing import Any

from evidence.breaks import find_breaks
from evidence.grading import Criteria, GradeResult, grade
from evidence.panel import Panel, derived_name
from evidence.study import figures as figs
from evidence.study.spec import StudySpec
from evidence.study.steps._base import FigureOut, StepOutput, TableOut, data_notes, safe_name
from evidence.tables import grade_table

__all__ = ["run", "criteria"]

#: Unit figures shown in the report (the rest are in figures/).
SHOWN = 6


def criteria(spec: StudySpec) -> Criteria:
    """The grade's criteria from ``[criteria]`` (``reps`` included), the study seed and
    ``[breaks]``."""
    return Criteria(**{**spec.criteria, "seed": spec.seed,
                       **{k: v for k, v in spec.breaks.items() if k in ("max_breaks", "trim")}})


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """Grade every unit on every pressure; figures per unit when the spec asks for them."""
    pressures = spec.pressure_columns
    res = grade(panel, list(pressures), spec.activity, window=spec.window,
                criteria=criteria(spec), consumption=spec.consumption)
    notes = data_notes(spec)
    figures = _unit_figures(panel, spec, res) if spec.figures else ()
    return StepOutput(
        "Grade", (TableOut("grade", lambda f: grade_table(res, f, notes=notes,
                                                                  labels=spec.labels)),), figures,
        note="Each axis is reported separately; the grade summarises them and never replaces "
             "them. Figures for every unit are in figures/.",
        results={"grade": res.to_dict()}, value=res)


def _unit_figures(panel: Panel, spec: StudySpec, res: GradeResult) -> tuple[FigureOut, ...]:
    pressures = spec.pressure_columns
    records = res.records
    window = tuple(res.details["windows"][pressures[0]])
    shown = [*pressures, *spec.consumption.values()]
    out: list[FigureOut] = []
    for number, unit in enumerate(panel.units):
        breaks = {p: records[(unit, p)].get("break_years") or []
                  for p in pressures if (unit, p) in records}
        out.append(FigureOut(
            f"indexed_{safe_name(unit)}", lambda u=unit, b=breaks: figs.indexed_figure(
                panel, u, spec.activity, shown, window, b), in_report=number < SHOWN, source=unit))
        out.append(FigureOut(f"intensity_{safe_name(unit)}",
                             lambda u=unit: _intensity_figure(panel, u, pressures[0], spec, window),
                             label=f"intensity {unit}", source=unit))
        rec = records.get((unit, pressures[0]))
        if rec is not None:
            out.append(FigureOut(f"subwindows_{safe_name(unit)}", lambda u=unit, r=rec: figs.heatmap_figure(
                r["subwindow_matrix"], _span_years(r["span"]),
                f"{u}: sub-windows where the {r['claim_tested']} claim holds"), source=unit))
    return tuple(out)


def _span_years(span: str) -> list[int]:
    start, end = (int(v) for v in span.split("-"))
    return list(range(start, end + 1))


def _intensity_figure(panel: Panel, unit: str, pressure: str, spec: StudySpec,
                      window: tuple[int, int]) -> Any:
    """Log intensity of one unit with its fitted trend regimes and break-date intervals."""
    intensity = derived_name("per", pressure, spec.activity)
    logged = derived_name("log", intensity)
    work = (panel.with_intensity(pressure, spec.activity, name=intensity)
            .with_log(intensity, name=logged))
    series = work.series(unit, logged).loc[window[0]:window[1]].dropna()
    options = {k: v for k, v in spec.breaks.items() if k in ("max_breaks", "trim")}
    return find_breaks(series, model="trend", **options).plot()
