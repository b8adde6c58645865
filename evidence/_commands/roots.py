"""``evidence roots``: the unit-root battery table, or the cross-sectional dependence table."""

from __future__ import annotations

from pathlib import Path
from typing import cast

import click
import pandas as pd

from evidence._cautions import CAUTION
from evidence._commands._common import data_options, emit, format_options, load, window_option
from evidence._typing import Trend
from evidence._validation import check_lags
from evidence.errors import SpecError
from evidence.roots import (
    bias_corrected_lm_test,
    lm_test,
    pesaran_cd_test,
    root_battery,
    scaled_lm_test,
)
from evidence.roots.battery import CELLS, DECISION_RULE, PANEL_TESTS, SERIES_TESTS
from evidence.tables import render_frame

__all__ = ["command"]


def _parse_tests(text: str | None) -> tuple[str, ...] | None:
    if text is None:
        return None
    names = tuple(t.strip().lower() for t in text.split(",") if t.strip())
    if not names:
        raise SpecError("--tests is empty; give names such as adf,kpss,ips,cips.")
    return names


def _parse_lags(text: str) -> int | str:
    text = text.strip().lower()
    if text.isdigit():
        return int(text)
    return check_lags(text, parameter="--lags")


def _dependence_frame(panel, column: str, trend: str, min_overlap: int) -> pd.DataFrame:
    rows = []
    for func in (pesaran_cd_test, lm_test, scaled_lm_test, bias_corrected_lm_test):
        res = func(panel, column, trend=trend, min_overlap=min_overlap)
        rows.append({"test": res.test, "statistic": res.statistic, "pvalue": res.pvalue,
                     "pairs": res.details.get("pairs", ""),
                     "mean_abs_correlation": res.details.get("mean_abs_correlation", float("nan")),
                     "note": "; ".join(res.warnings)})
    return pd.DataFrame(rows)


@click.command("roots")
@data_options
@click.option("--column", required=True, help="The column to test.")
@click.option("--tests", default=None,
              help="Comma-separated tests: " + ",".join(SERIES_TESTS + PANEL_TESTS)
              + " (default adf,kpss,ips,cips).")
@click.option("--trend", type=click.Choice(["none", "constant", "trend"], case_sensitive=False),
              default="trend", show_default=True,
              help="Deterministic terms in levels: none, a constant, or a constant and a trend "
                   "(the default, for trending series; differences get a constant).")
@click.option("--lags", default="aic", show_default=True,
              help="Lags: an integer, aic, bic or sequential-t.")
@click.option("--max-lags", type=int, default=None, help="Largest lag order searched.")
@click.option("--alpha", type=float, default=0.05, show_default=True, help="Level of the decisions.")
@click.option("--differences/--no-differences", default=True, show_default=True,
              help="Also test first differences.")
@click.option("--log", "take_log", is_flag=True, help="Test the natural log of the column.")
@click.option("--dependence", is_flag=True,
              help="Print the cross-sectional dependence table (CD, LM, scaled LM, bias-corrected LM).")
@click.option("--min-overlap", type=int, default=8, show_default=True,
              help="With --dependence: fewest shared years for a pair of units.")
@window_option
@format_options
def command(data: Path, unit_col: str | None, time_col: str | None, layout: str, column: str,
            tests: str | None, trend: str, lags: str, max_lags: int | None, alpha: float,
            differences: bool, take_log: bool, dependence: bool, min_overlap: int, window: str | None,
            fmt: str,
            output: Path | None) -> None:
    """Unit-root battery (levels, differences, decision) or cross-sectional dependence table."""
    panel = load(data, unit_col, time_col, layout)
    if window:
        panel = panel.window(window)
    fmt = fmt.lower()
    if take_log:
        panel = panel.with_log(column)
        column = f"log_{column}"
    if dependence:
        frame = _dependence_frame(panel, column, "trend" if trend.lower() == "trend" else "constant",
                                  min_overlap)
        notes = ["H0 of every test: no cross-sectional correlation. Correlations of the residuals "
                 "of each unit's own autoregression (prewhitened); p-values simulated for this N "
                 "and T when the panel is balanced. mean_abs_correlation: average |rho_ij| over "
                 "the pairs used.", CAUTION]
        emit(render_frame(frame, fmt, title=f"Cross-sectional dependence: {column}", notes=notes,
                          index=False), output)
        return
    result = root_battery(panel, column, tests=_parse_tests(tests), trend=cast(Trend, trend.lower()),
                          lags=_parse_lags(lags), max_lags=max_lags, alpha=alpha,
                          differences=differences)
    notes = [DECISION_RULE, CELLS] + [f"not run: {r.unit} {r.column} {r.years}: {r.reason}"
                                       for r in result.excluded.itertuples()] + [CAUTION]
    frame = result.to_frame() if fmt in ("csv", "json") else result.decision_table()
    emit(render_frame(frame, fmt, title=f"Unit-root battery: {column} (levels with "
                      f"{'a constant and a trend' if result.trend == 'trend' else result.trend}, "
                      f"alpha {result.alpha:g})", notes=notes, index=False), output)
