"""Decoupling indicators per unit and window: trend growth, Tapio class, OECD factor, required rates.

The descriptive layer every decoupling study starts from. Trend growth rates are log-linear OLS
slopes with Newey–West standard errors; the Tapio (2005) elasticity and the OECD (2002) decoupling
factor compare the window's end points. ``required_rate`` and ``budget_rate`` are arithmetic
identities that turn a pressure target or a cumulative budget into the intensity decline needed.

References
----------
tapio2005 : Tapio, P. (2005). Towards a theory of decoupling: degrees of decoupling in the EU and
    the case of road traffic in Finland between 1970 and 2001. Transport Policy 12(2), 137–151.
oecd2002 : OECD (2002). Indicators to measure decoupling of environmental pressure from economic
    growth. SG/SD(2002)1/FINAL. Paris: OECD.
neweywest1987 : Newey, W. K. & West, K. D. (1987). A simple, positive semi-definite,
    heteroskedasticity and autocorrelation consistent covariance matrix. Econometrica 55(3), 703–708.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from scipy import stats

from evidence._hac import long_run_cov, newey_west_lags
from evidence._typing import Window
from evidence._validation import check_int, check_window, format_years
from evidence.errors import DataError, SpecError
from evidence.panel import Panel
from evidence.results import ResultProtocol, excluded_frame

__all__ = ["TAPIO_CLASSES", "tapio_class", "decoupling_factor", "trend_growth",
           "trend_growth_batch", "common_window",
           "rates", "RatesResult", "required_rate", "budget_rate", "BudgetResult"]

#: The eight Tapio (2005) classes: (activity grows?, elasticity band) -> label.
TAPIO_CLASSES: tuple[str, ...] = (
    "strong decoupling", "weak decoupling", "expansive coupling", "expansive negative decoupling",
    "strong negative decoupling", "weak negative decoupling", "recessive coupling",
    "recessive decoupling",
)
TAPIO_LOW, TAPIO_HIGH = 0.8, 1.2


def tapio_class(activity_change: Any, pressure_change: Any) -> np.ndarray:
    """Tapio (2005) class from relative changes of activity and pressure over a period.

    The elasticity is ``e = pressure_change / activity_change`` (relative changes, e.g. 0.03 for
    +3 %). With activity growing: e < 0 strong decoupling, 0 <= e < 0.8 weak decoupling,
    0.8 <= e <= 1.2 expansive coupling, e > 1.2 expansive negative decoupling. With activity
    falling: e < 0 strong negative decoupling, 0 <= e < 0.8 weak negative decoupling,
    0.8 <= e <= 1.2 recessive coupling, e > 1.2 recessive decoupling. Unchanged activity (or a
    missing value) gives ``"undefined"``. Band edges 0.8 and 1.2 belong to the coupling band; the
    elasticity is rounded to 10 decimals before banding so that floating-point noise cannot move
    a value that is exactly on an edge.

    Examples
    --------
    >>> tapio_class(0.03, -0.02).tolist()
    ['strong decoupling']
    """
    act = np.atleast_1d(np.asarray(activity_change, dtype=float))
    pres = np.atleast_1d(np.asarray(pressure_change, dtype=float))
    act, pres = np.broadcast_arrays(act, pres)
    with np.errstate(divide="ignore", invalid="ignore"):
        e = np.round(pres / act, 10)  # so that 0.08 / 0.10 counts as 0.8, not 0.7999...
    band = np.select([e < 0, e < TAPIO_LOW, e <= TAPIO_HIGH], [0, 1, 2], default=3)
    offset = np.where(act > 0, 0, 4)
    labels = np.asarray(TAPIO_CLASSES, dtype=object)[band + offset]
    undefined = (act == 0) | ~np.isfinite(e)
    return np.where(undefined, "undefined", labels).astype(object)


def decoupling_factor(pressure_start: Any, pressure_end: Any, activity_start: Any,
                      activity_end: Any) -> np.ndarray:
    """OECD (2002) decoupling factor ``1 - (P_end / A_end) / (P_start / A_start)``.

    Positive when pressure per unit of activity fell over the period (decoupling); at most 1.

    Examples
    --------
    >>> round(float(decoupling_factor(100, 95, 100, 110)), 6)
    0.136364
    """
    ratio = (np.asarray(pressure_end, dtype=float) / np.asarray(activity_end, dtype=float)) / (
        np.asarray(pressure_start, dtype=float) / np.asarray(activity_start, dtype=float))
    return 1.0 - ratio


def trend_growth_batch(log_values: np.ndarray, years: np.ndarray, *,
                       hac_lags: int | None = None) -> tuple[np.ndarray, np.ndarray, int]:
    """Trend slopes and Newey–West standard errors of many series observed in the same years.

    ``log_values`` is ``(T, N)``: one column per series. For each column, OLS of the values on a
    constant and the year; the slope's variance is the ``[1, 1]`` element of
    ``n/(n-2) (X'X)^-1 S (X'X)^-1`` with ``S = T Ω`` and ``Ω`` the Bartlett long-run covariance of
    ``u_t = x_t e_t`` with ``hac_lags`` lags (:func:`evidence._hac.long_run_cov`; ``n/(n-2)`` is
    the small-sample correction). With the year centred, ``X'X`` is diagonal and the slope's
    variance reduces to ``n/(n-2) S_11 / (sum_t (t - tbar)^2)^2``. This equals statsmodels
    ``OLS(...).fit(cov_type="HAC", cov_kwds={"maxlags": L, "use_correction": True})``.
    Returns ``(slopes, std_errors, lags)``.
    """
    y = np.asarray(log_values, dtype=float)
    if y.ndim == 1:
        y = y[:, None]
    t = np.asarray(years, dtype=float)
    n = t.size
    lags = newey_west_lags(n) if hac_lags is None else int(hac_lags)
    x = t - t.mean()
    sxx = float(x @ x)
    slopes = (x @ y) / sxx
    resid = y - y.mean(axis=0) - np.outer(x, slopes)
    v = (x[:, None] * resid).T[:, :, None]  # (N, T, 1): one batch per series
    s11 = n * long_run_cov(v, lags).long_run[:, 0, 0]
    # two points leave no residual degrees of freedom: the error is undefined, not infinite
    var = s11 / sxx**2 * n / (n - 2) if n > 2 else np.full_like(s11, np.nan)
    return slopes, np.sqrt(var), lags


def trend_growth(log_values: np.ndarray, years: np.ndarray, *,
                 hac_lags: int | None = None) -> tuple[float, float, int]:
    """Slope of one series on the year with its Newey–West standard error; see
    :func:`trend_growth_batch`. Returns ``(slope, std_error, lags)``."""
    slopes, ses, lags = trend_growth_batch(np.asarray(log_values, dtype=float)[:, None], years,
                                           hac_lags=hac_lags)
    return float(slopes[0]), float(ses[0]), lags


@dataclass(frozen=True, eq=False, repr=False)
class RatesResult(ResultProtocol):
    """Per-unit decoupling indicators over one window.

    ``table`` has one row per unit (columns documented in ``docs/methods/indicators.md``);
    ``excluded`` lists units left out and why (unit, column, years, reason); ``window`` is
    inclusive.
    """

    table: pd.DataFrame
    pressure: str
    activity: str
    window: Window
    hac_lags: int | None
    excluded: pd.DataFrame
    audit: pd.DataFrame
    warnings: tuple[str, ...] = ()
    reference: str = "tapio2005; oecd2002; neweywest1987"
    details: Mapping[str, Any] = field(default_factory=dict)

    _repr_fields = ("pressure", "activity", "window")

    def to_frame(self) -> pd.DataFrame:
        """The per-unit table (a copy)."""
        return self.table.copy()

    def summary(self) -> str:
        """Counts by Tapio class and the window, pressure and activity used."""
        counts = self.table["tapio_class"].value_counts().sort_index()
        lines = [f"Decoupling rates: {self.pressure} against {self.activity}, "
                 f"window {self.window[0]}:{self.window[1]}, {len(self.table)} units"]
        lines += [f"  {label}: {n}" for label, n in counts.items()]
        lines += [f"  excluded: {row.unit} ({row.reason})" for row in self.excluded.itertuples()]
        lines += [f"  warning: {w}" for w in self.warnings]
        return "\n".join(lines)


def common_window(panel: Panel, columns: tuple[str, ...] | list[str]) -> Window:
    """The longest span of years in which every unit that has the columns together has them.

    The first year is the latest first year, the end the earliest last year, over the units with
    at least one year in which all ``columns`` are present (years inside a unit's span that lack a
    value do not shorten the span; the methods that use the window list those units as excluded).
    Raises :class:`DataError` when the columns never meet or the span is empty.
    """
    cols = list(columns)
    frame = panel.frame[cols].dropna()
    if frame.empty:
        raise DataError(f"columns {', '.join(repr(c) for c in cols)} never have data in the same "
                        "year.")
    years = pd.Series(frame.index.get_level_values(1), index=frame.index.get_level_values(0))
    start, end = int(years.groupby(level=0).min().max()), int(years.groupby(level=0).max().min())
    if start >= end:
        raise DataError(f"the units share no common span of years with all of "
                        f"{', '.join(repr(c) for c in cols)}; pass window=(start, end) explicitly.")
    return start, end


def rates(panel: Panel, pressure: str, activity: str, *, window: Window | str | None = None,
          hac_lags: int | None = None) -> RatesResult:
    """Growth rates, elasticity, Tapio class and OECD decoupling factor for every unit.

    Parameters
    ----------
    panel : Panel
    pressure, activity : str
        Columns of the environmental pressure (e.g. emissions) and activity (e.g. real GDP).
    window : (int, int) or "START:END", optional
        Inclusive years. Default: the longest span in which every unit has both columns.
    hac_lags : int, optional
        Newey–West lags for the trend standard errors (default ``floor(4 (T/100)^(2/9))``).

    Returns
    -------
    RatesResult
        Units lacking a value in the window are excluded and listed in ``excluded`` (never
        dropped silently).

    Notes
    -----
    For each unit and series ``x`` over years ``t = start..end``: the trend growth ``g`` is the OLS
    slope of ``ln x_t`` on ``t`` (log points a year) with a Newey–West standard error; the compound
    rate is ``(x_end / x_start)^(1/(end-start)) - 1``. The Tapio elasticity is
    ``(ΔP/P_start) / (ΔA/A_start)`` over the window's end points, classified by
    :func:`tapio_class`; the OECD factor is :func:`decoupling_factor`. Intensity is ``P / A``.
    The trend elasticity is ``g_P / g_A``.
    """
    panel.require(pressure, activity)
    hac_lags = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    start, end = (check_window(window, panel.years) if window is not None
                  else common_window(panel, (pressure, activity)))
    if end - start + 1 < 3:
        raise SpecError(f"window=({start}, {end}) has {end - start + 1} years; trend growth with a "
                        "standard error needs at least 3.")
    expected = np.arange(start, end + 1)
    wide_p = panel.wide(pressure).reindex(expected)
    wide_a = panel.wide(activity).reindex(expected)
    wide_p, wide_a = wide_p.reindex(columns=list(panel.units)), wide_a.reindex(columns=list(panel.units))
    lacking = (wide_p.isna() | wide_a.isna()).to_numpy()
    excluded = [{"unit": unit, "column": f"{pressure}, {activity}",
                 "years": format_years(expected[lacking[:, j]]),
                 "reason": f"unit excluded: no value in {format_years(expected[lacking[:, j]])}"}
                for j, unit in enumerate(panel.units) if lacking[:, j].any()]
    keep = [unit for j, unit in enumerate(panel.units) if not lacking[:, j].any()]
    for column, wide in ((pressure, wide_p), (activity, wide_a)):
        values = wide[keep].to_numpy()
        if (values <= 0).any():
            row, col = np.argwhere(values <= 0)[0]
            raise DataError(f"column '{column}' is not positive at unit '{keep[col]}', year "
                            f"{expected[row]}; growth rates need positive values.")
    if not keep:
        raise DataError(f"no unit has complete '{pressure}' and '{activity}' data in "
                        f"{start}:{end}; choose another window.")
    rows = _rates_table(keep, wide_p[keep].to_numpy(), wide_a[keep].to_numpy(), expected, hac_lags)
    table = rows.set_index("unit")
    table.index.name = panel.unit_name
    warnings = []
    if end - start + 1 < 30:
        warnings.append(f"short window: T={end - start + 1} years (< 30); trend standard errors "
                        "and any test built on them have low power and may be mis-sized.")
    if len(excluded):
        warnings.append(f"{len(excluded)} unit(s) excluded for missing values; see 'excluded'.")
    return RatesResult(table=table, pressure=pressure, activity=activity, window=(start, end),
                       hac_lags=hac_lags, excluded=excluded_frame(excluded), audit=panel.audit,
                       warnings=tuple(warnings),
                       details={"years": end - start + 1,
                                "basis": panel.basis(pressure) or "not stated"})


def _rates_table(units: list[str], p: np.ndarray, a: np.ndarray, years: np.ndarray,
                 hac_lags: int | None) -> pd.DataFrame:
    """Indicators for all units at once; ``p`` and ``a`` are ``(T, N)`` and strictly positive."""
    span = float(years[-1] - years[0])
    n = years.size
    out: dict[str, Any] = {"unit": units, "start": int(years[0]), "end": int(years[-1]), "years": n}
    lags = 0
    for name, values in (("activity", a), ("pressure", p), ("intensity", p / a)):
        slopes, ses, lags = trend_growth_batch(np.log(values), years, hac_lags=hac_lags)
        with np.errstate(divide="ignore", invalid="ignore"):
            tstat = np.where(ses > 0, np.abs(slopes) / ses, np.nan)
        out[f"{name}_trend"] = slopes
        out[f"{name}_trend_se"] = ses
        out[f"{name}_trend_pvalue"] = 2 * stats.t.sf(tstat, n - 2)
        out[f"{name}_cagr"] = (values[-1] / values[0]) ** (1.0 / span) - 1.0
    out["hac_lags"] = lags
    d_act, d_pres = a[-1] / a[0] - 1.0, p[-1] / p[0] - 1.0
    out["activity_change"], out["pressure_change"] = d_act, d_pres
    with np.errstate(divide="ignore", invalid="ignore"):
        out["tapio_elasticity"] = np.where(d_act != 0, d_pres / d_act, np.nan)
        out["tapio_class"] = tapio_class(d_act, d_pres)
        out["decoupling_factor"] = decoupling_factor(p[0], p[-1], a[0], a[-1])
        act_trend = out["activity_trend"]
        out["trend_elasticity"] = np.where(act_trend != 0, out["pressure_trend"] / act_trend, np.nan)
    return pd.DataFrame(out)


def required_rate(activity_growth: Any, pressure_change: Any) -> Any:
    """Annual intensity decline ``d`` that turns activity growth ``g`` into pressure change ``r``.

    Solves the identity ``(1 + g)(1 - d) = 1 + r`` (pressure = activity × intensity):
    ``d = 1 - (1 + r) / (1 + g)``. Rates are fractions a year (0.03 for 3 %); a pressure decline
    is a negative ``r``.

    Examples
    --------
    >>> round(required_rate(activity_growth=0.03, pressure_change=-0.045), 4)
    0.0728
    """
    g = np.asarray(activity_growth, dtype=float)
    r = np.asarray(pressure_change, dtype=float)
    if np.any(g <= -1) or np.any(r <= -1):
        raise SpecError("activity_growth and pressure_change must be above -1 (i.e. -100 %).")
    d = 1.0 - (1.0 + r) / (1.0 + g)
    return float(d) if d.ndim == 0 else d


@dataclass(frozen=True, repr=False)
class BudgetResult(ResultProtocol):
    """What a cumulative budget implies for the annual rate of decline; see :func:`budget_rate`."""

    current: float
    budget: float
    required_rate: float
    years_to_zero_linear: float
    observed_rate: float | None
    overshoot_year: int | None
    years_to_overshoot: int | None
    required_to_observed: float | None
    base_year: int | None

    _repr_fields = ("current", "budget", "required_rate")

    def summary(self) -> str:
        """The budget arithmetic in words."""
        lines = [f"Budget {self.budget:g} with current annual pressure {self.current:g}",
                 f"  constant decline that respects the budget: {self.required_rate:.2%} a year",
                 f"  linear path to zero within the budget: {self.years_to_zero_linear:.1f} years"]
        if self.observed_rate is not None:
            lines.append(f"  observed change: {self.observed_rate:.2%} a year")
            when = ("never, at the observed rate" if self.years_to_overshoot is None
                    else f"after {self.years_to_overshoot} years"
                    + (f" (in {self.overshoot_year})" if self.overshoot_year is not None else ""))
            lines.append(f"  budget exhausted: {when}")
        lines.append("  budgets and fair-share rules are normative choices; state them.")
        return "\n".join(lines)


def budget_rate(current: float, budget: float, *, observed_rate: float | None = None,
                base_year: int | None = None) -> BudgetResult:
    """Constant annual decline that keeps cumulative pressure within a budget, and when it runs out.

    Parameters
    ----------
    current : float
        Pressure in the base year (e.g. emissions of the last observed year), > 0.
    budget : float
        Remaining cumulative budget counted from the year after the base year, in the same units.
    observed_rate : float, optional
        Observed annual relative change (e.g. -0.02); gives the year the budget is exhausted if it
        continues.
    base_year : int, optional
        Calendar year of ``current``; turns the years to overshoot into a calendar year.

    Notes
    -----
    Pressure in the k-th year after the base year is ``E0 (1 - r)^k``; the total over all future
    years is ``E0 (1 - r) / r``, which equals the budget ``B`` when ``r = E0 / (B + E0)``.
    A straight line to zero uses the budget in ``2 B / E0`` years. With the observed change ``c``
    the cumulative total after ``n`` years is ``E0 sum_{k=1..n} (1 + c)^k``; the overshoot year is
    the first ``n`` at which it exceeds ``B`` (never when ``c < 0`` and ``E0 (1 + c) / -c <= B``).
    """
    if not (current > 0 and math.isfinite(current)):
        raise SpecError(f"current={current!r} must be a positive number.")
    if not (budget > 0 and math.isfinite(budget)):
        raise SpecError(f"budget={budget!r} must be a positive number (same units as current).")
    required = current / (budget + current)
    overshoot = None
    ratio = None
    if observed_rate is not None:
        c = float(observed_rate)
        if c <= -1:
            raise SpecError(f"observed_rate={observed_rate!r} must be above -1.")
        overshoot = _years_to_overshoot(current, budget, c)
        ratio = required / -c if c < 0 else math.inf
    calendar = base_year + overshoot if (overshoot is not None and base_year is not None) else None
    return BudgetResult(current=float(current), budget=float(budget), required_rate=required,
                        years_to_zero_linear=2.0 * budget / current,
                        observed_rate=None if observed_rate is None else float(observed_rate),
                        overshoot_year=calendar, years_to_overshoot=overshoot,
                        required_to_observed=ratio, base_year=base_year)


def _years_to_overshoot(current: float, budget: float, c: float) -> int | None:
    growth = 1.0 + c
    if c == 0:
        n = math.floor(budget / current) + 1
    elif c < 0 and current * growth / -c <= budget:
        return None
    else:
        # E0 * growth * (growth^n - 1) / c > B  <=>  growth^n > 1 + B c / (E0 growth)
        target = 1.0 + budget * c / (current * growth)
        n = max(math.floor(math.log(target) / math.log(growth)), 0)
    cumulative = lambda k: current * sum(growth ** j for j in range(1, k + 1))  # noqa: E731
    while cumulative(n) > budget and n > 0:
        n -= 1
    while cumulative(n) <= budget:
        n += 1
    return n
