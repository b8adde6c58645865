"""``evidence elasticity``: elasticity of pressure with respect to activity, by several estimators."""

from __future__ import annotations

import json
from dataclasses import replace
from pathlib import Path

import click

from evidence._commands._common import basis_option, data_options, emit, format_options, load, with_basis
from evidence.elasticity import decoupling_tests, elasticity
from evidence.elasticity import ekc as fit_ekc
from evidence.elasticity.fixed_effects import COVARIANCES
from evidence.tables import ekc_table, regression_table, test_table

__all__ = ["command"]


def _split(text: str | None) -> list[str]:
    return [part.strip() for part in (text or "").split(",") if part.strip()]


@click.command("elasticity")
@data_options
@click.option("--pressure", required=True, help="Pressure column (logged).")
@click.option("--activity", required=True, help="Activity column (logged).")
@click.option("--controls", default=None, help="Further regressors, comma-separated (as given).")
@click.option("--estimator", default="fe", show_default=True,
              help="Comma-separated: fe, twfe, mg, ccemg, ccep, amg.")
@click.option("--cov", type=click.Choice(list(COVARIANCES), case_sensitive=False),
              default="driscoll-kraay", show_default=True,
              help="Covariance of fe/twfe: errors correlated across units and over time "
                   "(driscoll-kraay), clustered by unit or by unit and year, "
                   "heteroskedasticity-robust, or classical.")
@click.option("--hac-lags", type=int, default=None, help="Driscoll-Kraay lags (default: rule).")
@click.option("--window", default=None, help="Years START:END, inclusive.")
@click.option("--ekc", is_flag=True, help="Also fit the quadratic environmental Kuznets curve.")
@click.option("--population", default=None, help="Population column: EKC in per-capita terms.")
@basis_option
@format_options
def command(data: Path, unit_col: str | None, time_col: str | None, layout: str, pressure: str,
            activity: str, controls: str | None, estimator: str, cov: str, hac_lags: int | None,
            window: str | None, ekc: bool, population: str | None, basis: str | None, fmt: str,
            output: Path | None) -> None:
    """Elasticity of pressure with respect to activity, with one-sided decoupling tests."""
    panel = with_basis(load(data, unit_col, time_col, layout), {pressure: basis} if basis else {})
    estimates, tests = [], []
    for name in _split(estimator) or ["fe"]:
        pooled = name.strip().lower() in ("fe", "twfe")
        est = elasticity(panel, pressure, activity, controls=_split(controls), estimator=name,
                         cov=cov if pooled else None, hac_lags=hac_lags if pooled else None,
                         window=window)
        estimates.append(est)
        tests += [replace(test, test=f"{est.estimator}: {test.test}")
                  for test in decoupling_tests(est)]
    fmt = fmt.lower()
    parts = [regression_table(estimates, fmt, title=f"Elasticity of {pressure} with respect to "
                              f"{activity}", caution=False),
             test_table(tests, fmt, title="One-sided decoupling tests on the elasticity",
                        caution=not ekc)]
    if ekc:
        curve = fit_ekc(panel, pressure, activity, population=population, cov=cov,
                        hac_lags=hac_lags, window=window)
        parts.append(ekc_table(curve, fmt, title="Environmental Kuznets curve"))
    if fmt == "json":
        emit(json.dumps({"tables": [json.loads(part) for part in parts]}, indent=2) + "\n", output)
    else:
        emit("\n".join(parts), output)
