"""``evidence converge``: beta, sigma, gamma, stochastic and club convergence of one column."""

from __future__ import annotations

import json
from pathlib import Path

import click
import pandas as pd

from evidence._commands._common import data_options, emit, format_options, load
from evidence._validation import check_choice
from evidence.convergence import (
    beta_convergence,
    club_convergence,
    gamma_convergence,
    sigma_convergence,
    stochastic_convergence,
)
from evidence.panel import derived_name
from evidence.tables import beta_table, render_frame, test_table

__all__ = ["command"]

METHODS = ("beta", "sigma", "gamma", "stochastic", "clubs")


def _excluded(frame: pd.DataFrame) -> list[str]:
    return [f"Excluded: {r.unit} ({r.reason})." for r in frame.itertuples()]


@click.command("converge")
@data_options
@click.option("--column", required=True, help="Column to test (e.g. emissions).")
@click.option("--population", default=None, help="Population column: use the per-capita column.")
@click.option("--method", "methods", default="beta,sigma,gamma,stochastic,clubs",
              show_default=True, help="Comma-separated: beta, sigma, gamma, stochastic, clubs.")
@click.option("--window", default=None, help="Years START:END, inclusive.")
@format_options
def command(data: Path, unit_col: str | None, time_col: str | None, layout: str, column: str,
            population: str | None, methods: str, window: str | None, fmt: str,
            output: Path | None) -> None:
    """Convergence of a column across units (per capita with --population)."""
    chosen = [check_choice("--method", m, METHODS) for m in methods.split(",") if m.strip()]
    last = [m for m in METHODS if m in chosen][-1] if chosen else ""  # the caution once, at the end
    panel = load(data, unit_col, time_col, layout)
    if population:
        per_capita = derived_name("per_capita", column)
        panel = panel.with_per_capita(column, population, name=per_capita)
        column = per_capita
    fmt = fmt.lower()
    parts = []
    if "beta" in chosen:
        beta = beta_convergence(panel, column, window=window)
        parts.append(beta_table(beta, fmt, title=f"Beta convergence of {column}",
                                caution=last == "beta"))
    if "sigma" in chosen:
        sigma = sigma_convergence(panel, column, window=window)
        parts.append(render_frame(sigma.path.to_frame(), fmt, title=f"Dispersion of log {column}",
                                  digits=4))
        parts.append(test_table([sigma.trend_test, *sigma.first_last_tests], fmt,
                                title="Sigma convergence tests", notes=_excluded(sigma.excluded),
                                caution=last == "sigma"))
    if "gamma" in chosen:
        gamma = gamma_convergence(panel, column, window=window)
        parts.append(test_table([gamma.test], fmt, title="Gamma convergence (rank concordance)",
                                notes=[f"Kendall index, last vs first year: "
                                       f"{gamma.path.iloc[-1]:.4f}", *_excluded(gamma.excluded)],
                                caution=last == "gamma"))
    if "stochastic" in chosen:
        stoch = stochastic_convergence(panel, column, window=window)
        parts.append(render_frame(stoch.table, fmt, title="Stochastic convergence by unit "
                                  "(log relative to the cross-section mean)", index=False,
                                  caution=last == "stochastic"))
    if "clubs" in chosen:
        clubs = club_convergence(panel, column, window=window)
        members = clubs.membership().reset_index()
        tests = clubs.to_frame()[["club", "units", "log_t", "b"]]
        parts.append(render_frame(tests, fmt, index=False, digits=3,
                                  title=f"Phillips-Sul clubs (overall log t "
                                        f"{clubs.overall.statistic:.3f}; 5 % critical value -1.65)"))
        parts.append(render_frame(members, fmt, index=False, title="Club membership (0: divergent)",
                                  caution=True))
    if fmt == "json":
        emit(json.dumps({"tables": [json.loads(part) for part in parts]}, indent=2) + "\n", output)
    else:
        emit("\n".join(parts), output)
