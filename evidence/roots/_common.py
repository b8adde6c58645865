"""Input checks and array helpers shared by the unit-root and dependence tests.

Single series arrive as a pandas Series indexed by year or a 1-D array; panels as a
:class:`~evidence.panel.Panel` and a column. Leading and trailing missing values are dropped (a
series may start late); a missing value inside a series, a constant series or one too short for
the regression raises :class:`~evidence.errors.DataError` naming the unit, the year and the fix.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from evidence._validation import check_choice, format_years
from evidence.errors import DataError, SpecError
from evidence.panel import Panel

__all__ = ["SeriesData", "PanelData", "as_series", "panel_data", "check_trend", "check_lags",
           "default_max_lags",
           "check_alpha", "trend_columns", "ols_tstat_batch", "LAG_METHODS"]

#: Lag choices understood by the ADF-type tests (arch's ``method`` names, ours in lower case).
LAG_METHODS = ("aic", "bic", "t-stat")


@dataclass(frozen=True)
class SeriesData:
    """A clean series: values, their years, and a label for messages."""

    values: np.ndarray
    years: np.ndarray
    label: str

    @property
    def span(self) -> str:
        return f"{int(self.years[0])}:{int(self.years[-1])}"


@dataclass(frozen=True)
class PanelData:
    """A panel column as a (T, N) array with NaN outside each unit's span."""

    values: np.ndarray
    years: np.ndarray
    units: tuple[str, ...]
    column: str
    skipped: tuple[tuple[str, str], ...]

    @property
    def balanced(self) -> bool:
        return not np.isnan(self.values).any()

    def unit_series(self, j: int) -> SeriesData:
        col = self.values[:, j]
        keep = ~np.isnan(col)
        return SeriesData(col[keep], self.years[keep], f"unit '{self.units[j]}'")


def _label(name: Any) -> str:
    return f"series '{name}'" if name not in (None, "") else "the series"


def as_series(y: Any, *, min_obs: int, purpose: str, name: str | None = None) -> SeriesData:
    """Validate a single series: trim outer NaN, refuse inner NaN, constants and short spans."""
    if isinstance(y, pd.DataFrame):
        if y.shape[1] != 1:
            raise DataError(f"expected one series, got a table with {y.shape[1]} columns; pass "
                            "one column (df['x']).")
        y = y.iloc[:, 0]
    if isinstance(y, pd.Series):
        label = name or (str(y.name) if y.name is not None else None)
        try:
            years = np.asarray(y.index, dtype=float)
        except (TypeError, ValueError):
            years = np.arange(len(y), dtype=float)
        values = pd.to_numeric(y, errors="coerce").to_numpy(dtype=float)
        if np.isnan(values).sum() > y.isna().sum():
            raise DataError(f"{_label(label)} holds non-numeric values; {purpose} needs numbers.")
    else:
        label = name
        values = np.asarray(y, dtype=float)
        if values.ndim != 1:
            raise DataError(f"{_label(label)} must be one-dimensional; got shape {values.shape}.")
        years = np.arange(values.size, dtype=float)
    return clean_series(values, years, _label(label), min_obs=min_obs, purpose=purpose)


def clean_series(values: np.ndarray, years: np.ndarray, label: str, *, min_obs: int,
                 purpose: str) -> SeriesData:
    """Drop leading/trailing NaN and check what is left (see :func:`as_series`)."""
    values = np.asarray(values, dtype=float)
    finite = np.isfinite(values)
    if np.isinf(values).any():
        where = years[np.isinf(values)][0]
        raise DataError(f"{label} is infinite in year {int(where)}; fix or remove the value.")
    if not finite.any():
        raise DataError(f"{label} has no values; {purpose} needs at least {min_obs}.")
    first, last = np.flatnonzero(finite)[[0, -1]]
    values, years = values[first:last + 1], years[first:last + 1]
    inner = np.isnan(values)
    if inner.any():
        raise DataError(f"{label} is missing in {format_years(years[inner].astype(int))} inside "
                        f"its span {int(years[0])}:{int(years[-1])}; {purpose} needs consecutive "
                        "years. Fill the gap, shorten the window, or drop the unit.")
    if values.size < min_obs:
        raise DataError(f"{label} has {values.size} observations ({int(years[0])}:{int(years[-1])});"
                        f" {purpose} needs at least {min_obs}. Use fewer lags or a longer series.")
    if np.ptp(values) == 0:
        raise DataError(f"{label} is constant ({values[0]:g}) over {int(years[0])}:"
                        f"{int(years[-1])}; {purpose} needs a series that varies.")
    return SeriesData(values, years, label)


def panel_data(panel: Panel, column: str, *, purpose: str) -> PanelData:
    """A column of a panel as a (T, N) array; units without any value are skipped and listed."""
    if not isinstance(panel, Panel):
        raise DataError(f"{purpose} needs a Panel (see evidence.load_panel); got "
                        f"{type(panel).__name__}.")
    panel.require(column)
    wide = panel.wide(column).reindex(columns=list(panel.units))
    years = np.asarray(wide.index, dtype=float)
    full = np.arange(years.min(), years.max() + 1)
    wide = wide.reindex(full)
    values = wide.to_numpy(dtype=float)
    empty = np.isnan(values).all(axis=0)
    if empty.all():
        raise DataError(f"column '{column}' has no values for any unit; {purpose} needs data.")
    skipped = tuple((str(u), f"no value of '{column}'")
                    for u, e in zip(wide.columns, empty) if e)
    values = values[:, ~empty]
    units = tuple(str(u) for u, e in zip(wide.columns, empty) if not e)
    rows = ~np.isnan(values).all(axis=1)
    first, last = np.flatnonzero(rows)[[0, -1]]
    return PanelData(values[first:last + 1], full[first:last + 1], units, column, skipped)


def check_panel_units(data: PanelData, *, min_obs: int, purpose: str) -> None:
    """Every unit: no inner gap, enough observations, not constant (raises naming the unit)."""
    for j in range(len(data.units)):
        col = data.values[:, j]
        clean_series(col, data.years, f"unit '{data.units[j]}' (column '{data.column}')",
                     min_obs=min_obs, purpose=purpose)
    if len(data.units) < 2:
        raise DataError(f"column '{data.column}' has data for {len(data.units)} unit(s); "
                        f"{purpose} needs at least 2.")


def require_balanced(data: PanelData, *, purpose: str) -> None:
    """Raise naming the first unit whose span differs from the panel's."""
    if data.balanced:
        return
    for j, unit in enumerate(data.units):
        missing = np.isnan(data.values[:, j])
        if missing.any():
            raise DataError(f"{purpose} needs a balanced panel, but unit '{unit}' has no value of "
                            f"'{data.column}' in {format_years(data.years[missing].astype(int))}. "
                            "Restrict the panel to common years (panel.window(...)) or drop the "
                            "unit (panel.select(...)).")


def check_trend(trend: Any, allowed: tuple[str, ...] = ("n", "c", "ct")) -> str:
    """Canonical deterministic terms."""
    return check_choice("trend", trend, allowed)


def check_lags(lags: Any, *, methods: tuple[str, ...] = LAG_METHODS) -> int | str:
    """``lags`` is a non-negative int or one of ``methods``."""
    if isinstance(lags, str):
        return check_choice("lags", lags, methods)
    if isinstance(lags, bool) or not isinstance(lags, (int, np.integer)) or lags < 0:
        choices = ", ".join(repr(m) for m in sorted(methods))
        raise SpecError(f"lags={lags!r} must be a non-negative integer"
                        + (f" or one of {choices}." if methods else "."))
    return int(lags)


def default_max_lags(nobs: int, trend: str) -> int:
    """arch's default largest lag order: ``ceil(12 (T/100)^(1/4))``, capped for short series."""
    cap = max((nobs - 1) // 2 - 1, 0) - (len(trend) if trend != "n" else 0)
    return max(min(int(np.ceil(12.0 * (nobs / 100.0) ** 0.25)), cap), 0)


def check_max_lags(max_lags: Any) -> int | None:
    if max_lags is None:
        return None
    if isinstance(max_lags, bool) or not isinstance(max_lags, (int, np.integer)) or max_lags < 0:
        raise SpecError(f"max_lags={max_lags!r} must be a non-negative integer or None.")
    return int(max_lags)


def check_alpha(alpha: Any) -> float:
    if isinstance(alpha, bool) or not isinstance(alpha, (int, float)) or not 0 < alpha < 1:
        raise SpecError(f"alpha={alpha!r} must be a number between 0 and 1, e.g. 0.05.")
    return float(alpha)


def trend_columns(nobs: int, trend: str, *, start: int = 1) -> np.ndarray:
    """Deterministic regressors: none, a constant, or a constant and a linear trend."""
    cols = []
    if trend in ("c", "ct"):
        cols.append(np.ones(nobs))
    if trend == "ct":
        cols.append(np.arange(start, start + nobs, dtype=float))
    return np.column_stack(cols) if cols else np.empty((nobs, 0))


def ols_tstat_batch(y: np.ndarray, x: np.ndarray, which: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """OLS of many regressions at once; the coefficient ``which`` and its t-statistic.

    ``y`` is ``(B, n)`` and ``x`` is ``(B, n, k)``: B independent regressions of n observations.
    The variance uses ``s^2 = e'e / (n - k)``; a regressor that is zero throughout one regression
    (a dummy outside its sample) is left out of that regression; a singular regression gives NaN.
    """
    xtx = np.einsum("bnk,bnl->bkl", x, x)
    xty = np.einsum("bnk,bn->bk", x, y)
    zero = ~np.any(x != 0, axis=1)  # a column that is zero in the sample (a dummy outside it)
    if zero.any():
        b_idx, k_idx = np.nonzero(zero)
        xtx[b_idx, k_idx, k_idx] = 1.0  # its coefficient is 0 and the others are unaffected
    singular = np.zeros(x.shape[0], dtype=bool)
    try:
        beta = np.linalg.solve(xtx, xty[..., None])[..., 0]
    except np.linalg.LinAlgError:
        singular = np.linalg.matrix_rank(xtx) < x.shape[2]
        xtx[singular] = np.eye(x.shape[2])
        beta = np.linalg.solve(xtx, xty[..., None])[..., 0]
    resid = y - np.einsum("bnk,bk->bn", x, beta)
    n, k = x.shape[1], x.shape[2]
    s2 = np.einsum("bn,bn->b", resid, resid) / (n - (k - zero.sum(axis=1)))
    unit = np.zeros((x.shape[0], k, 1))
    unit[:, which, 0] = 1.0
    var = s2 * np.linalg.solve(xtx, unit)[:, which, 0]
    coef, tstat = beta[:, which], beta[:, which] / np.sqrt(var)
    coef[singular] = np.nan
    tstat[singular] = np.nan
    return coef, tstat
