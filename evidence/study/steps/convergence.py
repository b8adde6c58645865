"""Study step ``convergence``: beta, sigma, stochastic and club convergence of per-capita pressure."""

from __future__ import annotations

from evidence.convergence import (beta_convergence, club_convergence, sigma_convergence,
                                  stochastic_convergence)
from evidence.errors import DataError
from evidence.panel import Panel, derived_name
from evidence.study.spec import StudySpec
from evidence.study.steps._base import FigureOut, StepOutput, TableOut
from evidence.tables import beta_table, render_frame, test_table

__all__ = ["run"]


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """The methods listed in ``[analyses] convergence``, on the first pressure per person."""
    if not spec.population:
        raise DataError("convergence needs [roles] population (per-capita pressure).")
    pressure = spec.pressure_columns[0]
    column = derived_name("per_capita", pressure)
    work = panel.with_per_capita(pressure, spec.population, name=column)
    chosen = spec.analyses["convergence"]
    tables, figures, results = [], [], {}
    if "beta" in chosen:
        beta = beta_convergence(work, column, window=spec.window)
        results["beta_convergence"] = beta.to_dict()
        tables.append(TableOut("beta_convergence", lambda f: beta_table(
            beta, f, title=f"Beta convergence of {column}", labels=spec.labels)))
    if "sigma" in chosen:
        sigma = sigma_convergence(work, column, window=spec.window)
        results["sigma_convergence"] = sigma.to_dict()
        tables.append(TableOut("sigma_convergence", lambda f: test_table(
            [sigma.trend_test, *sigma.first_last_tests], f, title="Sigma convergence",
            labels=spec.labels)))
    if "stochastic" in chosen:
        stoch = stochastic_convergence(work, column, window=spec.window)
        results["stochastic_convergence"] = stoch.to_dict()
        tables.append(TableOut("stochastic_convergence", lambda f: render_frame(
            stoch.table, f, index=False, title=f"Stochastic convergence of {column}",
            labels=spec.labels)))
    if "clubs" in chosen:
        clubs = club_convergence(work, column, window=spec.window)
        results["clubs"] = clubs.to_dict()
        tables.append(TableOut("clubs", lambda f: render_frame(
            clubs.membership().reset_index(), f, index=False,
            title=f"Phillips-Sul clubs (overall log t {clubs.overall.statistic:.3f})",
            labels=spec.labels)))
        if spec.figures:
            figures.append(FigureOut("club_transitions", clubs.plot, in_report=True))
    return StepOutput("Convergence", tuple(tables), tuple(figures), results=results)
