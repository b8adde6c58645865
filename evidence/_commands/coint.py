"""``evidence coint``: panel cointegration tests, long-run estimates and panel Granger causality."""

from __future__ import annotations

import json
from dataclasses import replace
from pathlib import Path

import click

from evidence._commands._common import data_options, emit, format_options, load, window_option
from evidence._typing import DEFAULT_SEED, TRENDS
from evidence.cointegration import (
    dumitrescu_hurlin_test,
    kao_test,
    long_run,
    pedroni_test,
    westerlund_test,
)
from evidence.errors import SpecError
from evidence.panel import derived_name
from evidence.results import Estimate, TestGroupResult, TestResult
from evidence.tables import regression_table, test_table

__all__ = ["command"]

_TESTS = ("pedroni", "kao", "westerlund")
_ESTIMATORS = ("dols", "fmols", "mg", "pmg")
_NOTE = ("H0 of the cointegration tests: no cointegration. Pedroni panel v rejects in the right "
         "tail, the others in the left; Dumitrescu-Hurlin uses first differences.")


def _split(text: str | None, allowed: tuple[str, ...], option: str) -> list[str]:
    names = [part.strip().lower() for part in (text or "").split(",") if part.strip()]
    for name in names:
        if name not in allowed:
            raise SpecError(f"{option} {name!r} is not an option; use one of "
                            f"{', '.join(repr(a) for a in sorted(allowed))}.")
    return names


def _lags(text: str) -> int | str:
    text = text.strip().lower()
    return int(text) if text.isdigit() else text


@click.command("coint")
@data_options
@click.option("--dependent", required=True,
              help="Dependent column (used as given: log it first, or add --log).")
@click.option("--regressors", required=True, help="Regressor column(s), comma-separated.")
@click.option("--log", "take_log", is_flag=True,
              help="Use the natural logs of --dependent and --regressors.")
@click.option("--tests", default="pedroni,kao,westerlund", show_default=True,
              help="Comma-separated: pedroni, kao, westerlund (empty for none).")
@click.option("--estimator", default="", help="Comma-separated long-run estimators: dols, fmols, "
              "mg, pmg (pooled DOLS/FMOLS; add --group-mean for Pedroni's group means).")
@click.option("--group-mean", is_flag=True, help="DOLS/FMOLS as group means instead of pooled.")
@click.option("--causality", is_flag=True,
              help="Dumitrescu-Hurlin test of the first regressor -> dependent, on first "
                   "differences.")
@click.option("--trend", type=click.Choice(list(TRENDS), case_sensitive=False), default="constant",
              show_default=True, help="Deterministic terms: none, constant, or constant and trend.")
@click.option("--lags", default="1", show_default=True,
              help="Lag order (integer) of every test and estimator, or 'aic' (tests choose by "
                   "AIC; DOLS and ARDL then use 1).")
@click.option("--leads", type=int, default=1, show_default=True, help="Leads of the DOLS.")
@click.option("--inference", type=click.Choice(["bootstrap", "asymptotic"], case_sensitive=False),
              default="bootstrap", show_default=True,
              help="p-values of the panel tests: a bootstrap under H0 (calibrated at the panel "
                   "sizes of the field) or the asymptotic approximations (fast, not calibrated; "
                   "each result states its measured size).")
@click.option("--reps", type=int, default=499, show_default=True,
              help="Bootstrap replications.")
@window_option
@click.option("--seed", type=int, default=DEFAULT_SEED, show_default=True,
              help="Seed of the bootstraps.")
@format_options
def command(data: Path, unit_col: str | None, time_col: str | None, layout: str, dependent: str,
            regressors: str, take_log: bool, tests: str, estimator: str, group_mean: bool,
            causality: bool, trend: str, lags: str, leads: int, inference: str | None, reps: int,
            window: str | None, seed: int, fmt: str, output: Path | None) -> None:
    """Panel cointegration tests, long-run coefficients and Granger causality in one report."""
    panel = load(data, unit_col, time_col, layout)
    if window:
        panel = panel.window(window)
    xs = [c.strip() for c in regressors.split(",") if c.strip()]
    if not xs:
        raise SpecError("--regressors is empty; give at least one regressor column.")
    trend = trend.lower()
    if take_log:
        for col in [dependent, *xs]:
            panel = panel.with_log(col)
        dependent, xs = derived_name("log", dependent), [derived_name("log", c) for c in xs]
    lag = _lags(lags)
    results: list[TestResult] = []
    for name in _split(tests, _TESTS, "--tests"):
        group: TestGroupResult
        if name == "westerlund":
            group = westerlund_test(panel, dependent, xs, trend=trend, lags=lag,
                                    inference=inference, reps=reps, seed=seed)
        elif name == "kao":
            group = kao_test(panel, dependent, xs, lags=lag, inference=inference, reps=reps,
                             seed=seed)
        else:
            group = pedroni_test(panel, dependent, xs,
                                 trend="trend" if trend == "trend" else "constant", lags=lag,
                                 inference=inference, reps=reps, seed=seed)
        results.extend(group.results)
    estimates: list[Estimate] = []
    order = lag if isinstance(lag, int) else 1
    for name in _split(estimator, _ESTIMATORS, "--estimator"):
        est = long_run(panel, dependent, xs, estimator=name, pooled=not group_mean,
                       trend="constant" if name in ("mg", "pmg") else trend,
                       lags=max(order, 1) if name in ("mg", "pmg") else order, leads=leads)
        estimates.append(est)
        if name == "pmg":
            results.append(TestResult(test="Hausman MG vs PMG", statistic=est.details["hausman_statistic"],
                                      pvalue=est.details["hausman_pvalue"],
                                      null="common long-run coefficients", nobs=est.nobs,
                                      reference="hausman1978"))
    if causality:
        gy, gx = derived_name("diff", dependent), derived_name("diff", xs[0])
        diffed = panel.with_difference(dependent, name=gy).with_difference(xs[0], name=gx)
        dh = dumitrescu_hurlin_test(diffed, gy, gx, lags=max(order, 1), inference=inference,
                                    reps=reps, seed=seed)
        results.append(replace(dh, test=f"Dumitrescu-Hurlin {xs[0]} -> {dependent}"))
    fmt = fmt.lower()
    parts = []
    if results:
        parts.append(test_table(results, fmt, title=f"Cointegration and causality: {dependent} on "
                                f"{', '.join(xs)} (trend '{trend}')",
                                notes=[_NOTE], caution=not estimates))
    if estimates:
        parts.append(regression_table(estimates, fmt, title=f"Long-run coefficients of {dependent}"))
    if not parts:
        raise SpecError("nothing to do: give --tests, --estimator or --causality.")
    if fmt == "json":
        emit(json.dumps({"tables": [json.loads(part) for part in parts]}, indent=2) + "\n", output)
    else:
        emit("\n".join(parts), output)
