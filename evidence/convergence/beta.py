"""Beta convergence: growth over a window regressed on the initial log level.

References
----------
barro1992 : Barro, R. J. & Sala-i-Martin, X. (1992). Convergence. Journal of Political Economy
    100(2), 223–251.
islam1995 : Islam, N. (1995). Growth empirics: a panel data approach. Quarterly Journal of
    Economics 110(4), 1127–1170.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from scipy import stats

from evidence._json import json_safe
from evidence._typing import Window
from evidence._validation import check_choice, check_int, check_window
from evidence.errors import DataError, SpecError
from evidence.panel import Panel, derived_name
from evidence.results import Estimate, ResultProtocol, TestResult, excluded_frame

__all__ = ["BetaResult", "beta_convergence", "speed_of_convergence"]


def speed_of_convergence(slope: float, slope_se: float, span: float) -> tuple[float, float, float, float]:
    """Speed ``β = −ln(1 + b τ)/τ`` and half-life ``ln 2 / β`` from the annualised-growth slope ``b``.

    ``τ`` is the length of the growth period in years. Delta-method standard errors:
    ``se(β) = se(b) / (1 + b τ)`` and ``se(h) = ln 2 · se(β) / β²``. Returns
    ``(speed, speed_se, half_life, half_life_se)``; NaN where undefined (``1 + bτ <= 0``, or
    ``β <= 0`` for the half-life).

    Examples
    --------
    >>> [round(v, 6) for v in speed_of_convergence(-0.015, 0.005, 25)[::2]]
    [0.0188, 36.869246]
    """
    base = 1.0 + slope * span
    if base <= 0:
        return math.nan, math.nan, math.nan, math.nan
    speed = -math.log(base) / span
    speed_se = abs(slope_se / base)
    if speed <= 0:
        return speed, speed_se, math.nan, math.nan
    half = math.log(2.0) / speed
    return speed, speed_se, half, math.log(2.0) * speed_se / speed**2


@dataclass(frozen=True, eq=False, repr=False)
class BetaResult(ResultProtocol):
    """The beta-convergence regression, the implied speed and half-life, and the one-sided test.

    Attributes
    ----------
    estimate : Estimate
        The growth regression (slope on the initial log level, constant, controls).
    speed, speed_se, half_life, half_life_se : float
        Speed of convergence a year and half-life in years, with delta-method standard errors
        (NaN where undefined).
    test : TestResult
        One-sided test of H0 slope >= 0 against convergence.
    form : str
        ``"cross_section"`` or ``"panel"``.
    window : (int, int)
        First and last year.
    excluded : pandas.DataFrame
        Units left out (unit, column, years, reason).
    details : mapping
        ``growth_span_years``.
    """

    estimate: Estimate
    speed: float
    speed_se: float
    half_life: float
    half_life_se: float
    test: TestResult
    form: str
    window: Window
    excluded: pd.DataFrame = field(default_factory=excluded_frame)
    details: Mapping[str, Any] = field(default_factory=dict)

    _repr_fields = ("speed", "half_life", "form", "window")

    def summary(self) -> str:
        """The regression, the speed and half-life, and the test."""
        lines = [
            self.estimate.summary(),
            f"  speed of convergence {self.speed:.4f} a year (s.e. {self.speed_se:.4f}); "
            f"half-life {self.half_life:.1f} years (s.e. {self.half_life_se:.1f})",
            self.test.summary()]
        lines += [f"  excluded: {r.unit} ({r.reason})" for r in self.excluded.itertuples()]
        return "\n".join(lines)

    def to_frame(self) -> pd.DataFrame:
        """One row: the slope, its test, the speed and the half-life."""
        return pd.DataFrame([{
            "form": self.form, "start": self.window[0], "end": self.window[1],
            "slope": self.test.details.get("slope", math.nan),
            "std_error": self.test.details.get("std_error", math.nan),
            "statistic": self.test.statistic, "pvalue": self.test.pvalue,
            "speed": self.speed, "speed_se": self.speed_se, "half_life": self.half_life,
            "half_life_se": self.half_life_se, "nobs": self.test.nobs}])

    def to_dict(self) -> dict[str, Any]:
        """JSON-safe contents."""
        return json_safe({"estimate": self.estimate.to_dict(), "speed": self.speed,
                          "speed_se": self.speed_se, "half_life": self.half_life,
                          "half_life_se": self.half_life_se, "test": self.test.to_dict(),
                          "form": self.form, "window": list(self.window),
                          "excluded": self.excluded.to_dict(orient="records"),
                          "details": dict(self.details)})


def _levels(panel: Panel, column: str, years: Sequence[int]) -> pd.DataFrame:
    wide = panel.wide(column).reindex(list(years))
    bad = (wide <= 0).to_numpy()
    if bad.any():
        row, col = np.argwhere(bad)[0]
        raise DataError(f"column '{column}' is not positive at unit '{wide.columns[col]}', year "
                        f"{wide.index[row]}; beta convergence uses logs.")
    return np.log(wide)


def _cross_section(panel: Panel, column: str, controls: Sequence[str], start: int, end: int,
                   cov: str) -> tuple[Estimate, pd.DataFrame]:
    import statsmodels.api as sm

    logs = _levels(panel, column, (start, end)).T
    frame = pd.DataFrame({"growth": (logs[end] - logs[start]) / (end - start),
                          f"{derived_name('log', column)}_{start}": logs[start]})
    for name in controls:
        frame[name] = panel.wide(name).reindex([start]).T[start]
    lacking = frame.isna()
    excluded = excluded_frame(
        {"unit": unit, "column": ", ".join(dict.fromkeys(
            name if name in controls else column for name in row.index[row])),
         "years": f"{start}, {end}", "reason": f"missing value in {start} or {end}"}
        for unit, row in lacking.iterrows() if row.any())
    frame = frame.dropna()
    if len(frame) < len(controls) + 3:
        raise DataError(f"only {len(frame)} units have '{column}' in both {start} and {end}; "
                        "beta convergence needs more units than regressors + 2.")
    if np.ptp(frame.iloc[:, 1].to_numpy()) == 0:
        raise DataError(f"every unit has the same '{column}' in {start}; beta convergence needs "
                        "units that start at different levels.")
    x = sm.add_constant(frame.drop(columns="growth"))
    fit = sm.OLS(frame["growth"], x).fit(cov_type="HC1" if cov == "robust" else "nonrobust",
                                         use_t=True)
    est = Estimate(estimator="OLS, cross-section", dependent=f"average annual growth of log {column}",
                   params=fit.params, std_errors=fit.bse.to_numpy(), cov=fit.cov_params().to_numpy(),
                   cov_type="heteroskedasticity-robust (HC1)" if cov == "robust" else "unadjusted",
                   nobs=int(fit.nobs), df_resid=float(fit.df_resid),
                   details={"units": int(fit.nobs),
                            # R² is undefined when every unit grew at the same rate
                            "r2": float(fit.rsquared) if fit.centered_tss > 0 else math.nan},
                   reference="barro1992", resid=None)
    return est, excluded


def _panel_form(panel: Panel, column: str, start: int, end: int, period: int,
                cov: str) -> tuple[Estimate, pd.DataFrame]:
    from linearmodels.panel import PanelOLS

    starts = list(range(start, end - period + 1, period))
    if len(starts) < 2:
        raise SpecError(f"span={period} gives fewer than two sub-periods in {start}:{end}.")
    logs = _levels(panel, column, sorted({s for s in starts} | {s + period for s in starts}))
    if np.nanmax(np.ptp(logs.to_numpy(), axis=1)) == 0:
        raise DataError(f"every unit has the same '{column}' in every year used; beta "
                        "convergence needs units at different levels.")
    rows = []
    for s in starts:
        growth = (logs.loc[s + period] - logs.loc[s]) / period
        rows.append(pd.DataFrame({"growth": growth, "initial": logs.loc[s], "period": s}))
    frame = pd.concat(rows).rename_axis("unit").reset_index().dropna()
    frame = frame.set_index(["unit", "period"])
    config = {"cov_type": "clustered", "cluster_entity": True, "group_debias": True} \
        if cov == "robust" else {"cov_type": "unadjusted"}
    fit = PanelOLS(frame["growth"], frame[["initial"]].rename(
        columns={"initial": f"{derived_name('log', column)}_initial"}),
        entity_effects=True).fit(debiased=True, **config)
    est = Estimate(estimator=f"fixed effects, {len(starts)} sub-periods of {period} years",
                   dependent=f"average annual growth of log {column}", params=fit.params,
                   std_errors=fit.std_errors.to_numpy(), cov=fit.cov.to_numpy(),
                   cov_type="clustered by unit" if cov == "robust" else "unadjusted",
                   nobs=int(fit.nobs), df_resid=float(fit.df_resid),
                   details={"units": int(frame.index.get_level_values(0).nunique()),
                            "periods": len(starts)}, reference="islam1995")
    return est, excluded_frame()


def beta_convergence(panel: Panel, column: str, *, window: Window | str | None = None,
                     controls: Sequence[str] = (), form: str = "cross_section",
                     span: int = 5, cov: str = "robust") -> BetaResult:
    """Beta convergence of ``column`` (e.g. per-capita emissions) across units.

    Cross-section (``form="cross_section"``): ``g_i = (ln y_iT − ln y_i0)/τ = a + b ln y_i0 + c'z_i
    + u_i`` over the window (``τ = end − start``; controls measured in the start year), OLS with
    HC1 (``cov="robust"``) or unadjusted errors. Panel (``form="panel"``): the same over
    non-overlapping sub-periods of ``span`` years with unit fixed effects (Islam 1995), errors
    clustered by unit.

    H0: ``b >= 0`` (no convergence). H1: ``b < 0``: units starting lower grow faster.
    The speed ``β = −ln(1 + bτ)/τ`` and half-life ``ln 2/β`` (Barro & Sala-i-Martin 1992) carry
    delta-method standard errors (:func:`speed_of_convergence`).
    """
    form = check_choice("form", form, ("cross_section", "panel"))
    cov = check_choice("cov", cov, ("robust", "unadjusted"))
    panel.require(column, *controls)
    start, end = (check_window(window, panel.years) if window is not None
                  else (panel.years[0], panel.years[-1]))
    if form == "cross_section":
        est, excluded = _cross_section(panel, column, controls, start, end, cov)
    else:
        if controls:
            raise SpecError("controls= are supported in the cross-section form only.")
        check_int("span", span, minimum=1)
        est, excluded = _panel_form(panel, column, start, end, span, cov)
    growth_span = float(end - start) if form == "cross_section" else float(span)
    name = est.params.index[1] if form == "cross_section" else est.params.index[0]
    b, se = float(est.params[name]), float(est.std_errors[name])
    speed, speed_se, half, half_se = speed_of_convergence(b, se, growth_span)
    label = "beta convergence (slope on initial level < 0)"
    if math.isfinite(se) and se > 0:
        t = b / se
        test = TestResult(test=label, statistic=t, pvalue=float(stats.t.cdf(t, est.df_resid)),
                          critical_values={a: float(stats.t.ppf(a, est.df_resid))
                                           for a in (0.01, 0.05, 0.10)},
                          null="slope >= 0 (no convergence)",
                          alternative="slope < 0 (convergence)", nobs=est.nobs,
                          details={"slope": b, "std_error": se, "form": form},
                          reference=est.reference)
    else:  # a perfect fit: the slope has no sampling error to test against
        test = TestResult.inapplicable(label, nobs=est.nobs, reference=est.reference,
                                       reason=f"the slope's standard error is {se:g} (a perfect "
                                              "fit); there is no sampling variation to test")
    return BetaResult(estimate=est, speed=speed, speed_se=speed_se, half_life=half,
                      half_life_se=half_se, test=test, form=form, window=(start, end),
                      excluded=excluded, details={"growth_span_years": growth_span})
