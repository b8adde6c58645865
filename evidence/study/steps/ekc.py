"""Study step ``ekc``: the Kuznets curve of each pressure in activity, with its turning point."""

from __future__ import annotations

import numpy as np

from evidence.elasticity import ekc
from evidence.panel import Panel, derived_name
from evidence.study import figures as figs
from evidence.study.spec import StudySpec
from evidence.study.steps._base import (
    FigureOut,
    StepOutput,
    TableOut,
    data_notes,
    p_words,
    safe_name,
    size_notes,
)
from evidence.tables import ekc_table
from evidence.tables._names import header_name

__all__ = ["run"]

RULE = ("Decision rule: an inverted U is supported when the quadratic term is negative, the "
        "turning point lies inside the data and the Lind–Mehlum test (H0: monotone or U-shaped on "
        "the data range) rejects at 5 %.")


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """A quadratic fixed-effects curve per pressure (per capita when the spec has population)."""
    tables, figures, results, lead = [], [], {}, [RULE]
    notes = data_notes(spec)
    for pressure in spec.pressure_columns:
        res = ekc(panel, pressure, spec.activity, population=spec.population, window=spec.window)
        results[pressure] = res.to_dict()
        test = res.u_test
        points = res.turning_points
        where = ", ".join(
            f"{row.point:.2f} (level {row.level:,.1f}, {'inside' if row.inside_range else 'outside'}"
            " the data)" for row in points.itertuples()) or "none"
        lead.insert(len(lead) - 1, (
            f"{pressure}{' per person' if spec.population else ''} on "
            f"{spec.activity}{' per person' if spec.population else ''} (logs, unit fixed "
            f"effects): turning point at ln activity {where}; Lind–Mehlum test "
            f"{p_words(test.pvalue)}." if test.applicable else
            f"{pressure}: turning point {where}; the U test could not be computed."))
        tables.append(TableOut(
            f"ekc_{safe_name(pressure)}", lambda f, c=True, r=res, p=pressure: ekc_table(
                r, f, title=f"Kuznets curve of {p}", notes=[*notes, *size_notes([r.u_test])],
                labels=spec.labels, caution=c), pressure))
        if spec.figures:
            figures.append(FigureOut(
                f"ekc_{safe_name(pressure)}", lambda r=res, p=pressure: _figure(panel, spec, r, p),
                in_report=True,
                caption=(f"Kuznets curve of {pressure}: every observation and the fitted "
                         "polynomial at the average unit effect; dashed: the turning point. "
                         "The curve describes this sample and specification.")))
    lead.append(f"Caution: {res.warnings[0]}" if res.warnings else "")
    return StepOutput("Kuznets curve", tuple(tables), tuple(figures), results={"ekc": results},
                      lead=tuple(x for x in lead if x))


def _figure(panel: Panel, spec: StudySpec, res, pressure: str):
    work, p_col, a_col = panel, pressure, spec.activity
    if spec.window:
        work = work.window(spec.window)
    if spec.population:
        p_col, a_col = (derived_name("per_capita", pressure),
                        derived_name("per_capita", spec.activity))
        work = (work.with_per_capita(pressure, spec.population, name=p_col)
                .with_per_capita(spec.activity, spec.population, name=a_col))
    x = np.log(work.frame[a_col].to_numpy(dtype=float))
    y = np.log(work.frame[p_col].to_numpy(dtype=float))
    ok = np.isfinite(x) & np.isfinite(y)
    coefficients = list(res.estimate.params.iloc[:res.degree])
    return figs.ekc_figure(x[ok], y[ok], coefficients, list(res.turning_points["point"]),
                           header_name(derived_name("log", a_col), spec.labels),
                           header_name(derived_name("log", p_col), spec.labels))
