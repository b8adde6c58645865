"""``evidence coint``: panel cointegration tests, long-run estimates and panel Granger causality."""

from __future__ import annotations

import json
from dataclasses import replace
from pathlib import Path

import click
import pandas as pd

from evidence._commands._common import data_options, emit, format_options, load
import evidence as ev
from evidence.errors import SpecError
from evidence.panel import Panel
from evidence.results import TestResult
from evidence.tables import regression_table, test_table

__all__ = ["command"]

_TESTS = {"pedroni": "pedroni_test", "kao": "kao_test", "westerlund": "westerlund_test"}
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


def _with_differences(panel: Panel, names: dict[str, str]) -> Panel:
    """The panel with first differences between consecutive years (NaN after a gap)."""
    frame = panel.frame
    times = pd.Series(frame.index.get_level_values(1), index=frame.index)
    consecutive = (times - times.groupby(level=0).shift(1)) == 1
    for column, name in names.items():
        frame[name] = (frame[column] - frame[column].groupby(level=0).shift(1)).where(consecutive)
    return ev.load_panel(frame.reset_index(), unit=frame.index.names[0], time=frame.index.names[1])


@click.command("coint")
@data_options
@click.option("--y", "y_col", required=True, help="Dependent column (used as given: log it first).")
@click.option("--x", "x_cols", required=True, help="Regressor column(s), comma-separated.")
@click.option("--log", "take_log", is_flag=True, help="Use the natural logs of --y and --x.")
@click.option("--tests", default="pedroni,kao,westerlund", show_default=True,
              help="Comma-separated: pedroni, kao, westerlund (empty for none).")
@click.option("--estimator", default="", help="Comma-separated long-run estimators: dols, fmols, "
              "mg, pmg (pooled DOLS/FMOLS; add --group-mean for Pedroni's group means).")
@click.option("--group-mean", is_flag=True, help="DOLS/FMOLS as group means instead of pooled.")
@click.option("--causality", is_flag=True,
              help="Dumitrescu-Hurlin test of x -> y on first differences (first x only).")
@click.option("--trend", type=click.Choice(["n", "c", "ct"], case_sensitive=False), default="c",
              show_default=True, help="Deterministic terms.")
@click.option("--lags", default="1", show_default=True,
              help="Lag order (integer) of every test and estimator, or 'aic' (tests choose by "
                   "AIC; DOLS and ARDL then use 1).")
@click.option("--leads", type=int, default=1, show_default=True, help="Leads of the DOLS.")
@click.option("--bootstrap", type=int, default=0, show_default=True,
              help="Bootstrap replications for Westerlund and Dumitrescu-Hurlin (0: none).")
@click.option("--seed", type=int, default=None, help="Seed of the bootstraps.")
@format_options
def command(data: Path, unit_col: str | None, time_col: str | None, layout: str, y_col: str,
            x_cols: str, take_log: bool, tests: str, estimator: str, group_mean: bool,
            causality: bool, trend: str, lags: str, leads: int, bootstrap: int, seed: int | None,
            fmt: str, output: Path | None) -> None:
    """Panel cointegration tests, long-run coefficients and Granger causality in one report."""
    panel = load(data, unit_col, time_col, layout)
    xs = [c.strip() for c in x_cols.split(",") if c.strip()]
    if not xs:
        raise SpecError("--x is empty; give at least one regressor column.")
    trend = trend.lower()
    if take_log:
        for col in [y_col, *xs]:
            panel = panel.with_log(col)
        y_col, xs = f"log_{y_col}", [f"log_{c}" for c in xs]
    lag = _lags(lags)
    results = []
    for name in _split(tests, tuple(_TESTS), "--tests"):
        if name == "westerlund":
            group = ev.westerlund_test(panel, y_col, xs, trend=trend, lags=lag, bootstrap=bootstrap,
                                    seed=seed)
        elif name == "kao":
            group = ev.kao_test(panel, y_col, xs, lags=lag)
        else:
            group = ev.pedroni_test(panel, y_col, xs, trend="ct" if trend == "ct" else "c", lags=lag)
        results.extend(group.results)
    estimates = []
    order = lag if isinstance(lag, int) else 1
    for name in _split(estimator, _ESTIMATORS, "--estimator"):
        est = ev.long_run(panel, y_col, xs, estimator=name, pooled=not group_mean,
                       trend="c" if name in ("mg", "pmg") else trend,
                       lags=max(order, 1) if name in ("mg", "pmg") else order, leads=leads)
        estimates.append(est)
        if name == "pmg":
            results.append(TestResult(test="Hausman MG vs PMG", statistic=est.details["hausman_statistic"],
                                      pvalue=est.details["hausman_pvalue"],
                                      null="common long-run coefficients", nobs=est.nobs,
                                      reference="hausman1978"))
    if causality:
        gy, gx = f"d_{y_col}", f"d_{xs[0]}"
        diffed = _with_differences(panel, {y_col: gy, xs[0]: gx})
        dh = ev.dumitrescu_hurlin_test(diffed, gy, gx, lags=max(order, 1), bootstrap=bootstrap,
                                    seed=seed)
        results.append(replace(dh, test=f"Dumitrescu-Hurlin {xs[0]} -> {y_col}"))
    fmt = fmt.lower()
    parts = []
    if results:
        parts.append(test_table(results, fmt, title=f"Cointegration and causality: {y_col} on "
                                f"{', '.join(xs)} (trend '{trend}')",
                                notes=[_NOTE]))
    if estimates:
        parts.append(regression_table(estimates, fmt, title=f"Long-run coefficients of {y_col}"))
    if not parts:
        raise SpecError("nothing to do: give --tests, --estimator or --causality.")
    if fmt == "json":
        emit(json.dumps({"tables": [json.loads(part) for part in parts]}, indent=2) + "\n", output)
    else:
        emit("\n".join(parts), output)
