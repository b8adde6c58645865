"""``elasticity``: the central regression of log pressure on log activity, by any estimator.

Also the one-sided decoupling tests on the estimated elasticity and the time-varying elasticity
(sub-periods or rolling windows).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, ClassVar

import pandas as pd
from scipy import stats

from evidence._figures import finish_figure, pyplot
from evidence._typing import Window
from evidence._validation import check_choice, check_int, check_window
from evidence.elasticity._design import build_design
from evidence.elasticity.fixed_effects import COVARIANCES, fit_fixed_effects
from evidence.elasticity.heterogeneous import fit_mean_group
from evidence.errors import SpecError
from evidence.panel import Panel
from evidence.results import Estimate, ResultProtocol, TestResult, excluded_frame

__all__ = ["ESTIMATORS", "elasticity", "decoupling_tests", "time_varying_elasticity",
           "ElasticityPath"]

#: The estimators of ``elasticity`` (``estimator=``).
ESTIMATORS = ("fe", "twfe", "mg", "ccemg", "ccep", "amg")


def elasticity(panel: Panel, pressure: str, activity: str, *, controls: Sequence[str] = (),
               estimator: str = "fe", cov: str | None = None, hac_lags: int | None = None,
               trend: str = "constant", robust_mean: bool = False, log: bool = True,
               window: Window | str | None = None, drop_short: bool = False) -> Estimate:
    """Elasticity of pressure with respect to activity, ``ln P_it = a_i + b ln A_it + c' z_it + e_it``.

    Parameters
    ----------
    panel : Panel
    pressure, activity : str
        Columns; both are logged when ``log=True`` (the default). Controls enter as given (take
        their logs first with ``panel.with_log`` if that is what you mean).
    controls : list of str
        Further regressors.
    estimator : {"fe", "twfe", "mg", "ccemg", "ccep", "amg"}
        Unit fixed effects; unit and year fixed effects; mean group (Pesaran & Smith 1995); common
        correlated effects mean group or pooled (Pesaran 2006); augmented mean group (Eberhardt &
        Teal 2010).
    cov : {"driscoll-kraay", "unit-cluster", "two-way-cluster", "heteroskedastic", "classical"}, optional
        Covariance of the fixed-effects estimators (default ``"driscoll-kraay"``): Driscoll–Kraay
        (errors correlated across units and over time), clustered by unit, clustered by unit and by
        year, heteroskedasticity-robust (White), or classical (homoskedastic, independent errors).
        The mean-group estimators use the mean-group variance and take no ``cov``.
    hac_lags : int, optional
        Driscoll–Kraay lags (default ``floor(4 (T/100)^(2/9))``).
    trend : {"constant", "trend"}
        Unit-level deterministic terms: unit intercepts (the fixed-effects estimators have only
        these), or intercepts and unit trends (mean-group estimators). The augmented mean group's
        unit regressions always carry a trend (Eberhardt & Teal 2010).
    robust_mean : bool
        Mean-group estimators: an outlier-robust (Huber) mean of the unit slopes.
    window : (int, int), optional
        Inclusive years.
    drop_short : bool
        Exclude (and list) units with too few usable years instead of raising.

    Returns
    -------
    Estimate
        Coefficients with the activity elasticity first; ``details`` gives the number of units, T,
        within R² (fixed effects) or the unit slopes (mean group), and the exclusions.

    Notes
    -----
    An elasticity below 1 means pressure grows more slowly than activity (relative decoupling);
    below 0, pressure falls as activity grows (absolute). :func:`decoupling_tests` tests both
    one-sided. With integrated series, the fixed-effects regression is a cointegrating regression
    only if the series cointegrate; test that first.
    """
    estimator = check_choice("estimator", estimator, ESTIMATORS)
    if estimator in ("fe", "twfe"):
        cov = check_choice("cov", cov or "driscoll-kraay", COVARIANCES)
        if trend != "constant" or robust_mean:
            raise SpecError("trend='trend' and robust_mean= apply to the mean-group estimators "
                            "(mg, ccemg, ccep, amg), not to fixed effects.")
    elif cov is not None:
        raise SpecError(f"cov={cov!r} applies to estimator='fe' or 'twfe'; the mean-group "
                        "estimators use the mean-group variance of the unit slopes.")
    trend = check_choice("trend", trend, ("constant", "trend"))
    design = build_design(panel, pressure, activity, controls=controls, log=log, window=window,
                          drop_short=drop_short)
    if estimator in ("fe", "twfe"):
        est = fit_fixed_effects(design, estimator=estimator, cov=cov or "driscoll-kraay", hac_lags=hac_lags)
    else:
        est = fit_mean_group(design, estimator=estimator, trend=trend, robust_mean=robust_mean)
    details = dict(est.details)
    details.setdefault("excluded", design.excluded)
    details["elasticity_of"] = design.regressors[0]
    details["basis"] = panel.basis(pressure) or "not stated"
    return Estimate(estimator=est.estimator, dependent=est.dependent, params=est.params,
                    std_errors=est.std_errors, cov=est.cov, cov_type=est.cov_type, nobs=est.nobs,
                    df_resid=est.df_resid, details=details, reference=est.reference,
                    warnings=est.warnings, resid=est.resid)


def _one_sided(est: Estimate, name: str, value: float, label: str, null: str,
               alternative: str) -> TestResult:
    b, se = float(est.params[name]), float(est.std_errors[name])
    if not (math.isfinite(se) and se > 0):  # e.g. a constant pressure: no variation to test
        return TestResult.inapplicable(label, nobs=est.nobs, reference=est.reference,
                                       reason=f"the elasticity's standard error is {se:g}; "
                                              "the series has no variation to test")
    t = (b - value) / se
    p = stats.norm.cdf(t) if est.df_resid is None else stats.t.cdf(t, est.df_resid)
    dist = "normal" if est.df_resid is None else f"Student t, {est.df_resid:g} df"
    q = {a: (stats.norm.ppf(a) if est.df_resid is None else stats.t.ppf(a, est.df_resid))
         for a in (0.01, 0.05, 0.10)}
    return TestResult(test=label, statistic=t, pvalue=p, critical_values=q, null=null,
                      alternative=alternative, nobs=est.nobs,
                      details={"elasticity": b, "std_error": se, "estimator": est.estimator,
                               "covariance": est.cov_type, "distribution": dist},
                      reference=est.reference, warnings=est.warnings)


def decoupling_tests(estimate: Estimate) -> tuple[TestResult, TestResult]:
    """One-sided tests on the activity elasticity: relative (H0: b >= 1) and absolute (H0: b >= 0).

    ``t = (b - b0) / se(b)`` with the estimate's covariance; the p-value is the lower tail
    (Student t with the estimate's residual degrees of freedom, or normal for mean-group
    estimators). Rejection supports decoupling.
    """
    est = estimate
    name = str(est.details.get("elasticity_of", est.params.index[0]))
    relative = _one_sided(est, name, 1.0, "relative decoupling (elasticity < 1)",
                          "elasticity >= 1 (pressure grows at least as fast as activity)",
                          "elasticity < 1")
    absolute = _one_sided(est, name, 0.0, "absolute decoupling (elasticity < 0)",
                          "elasticity >= 0", "elasticity < 0 (pressure falls as activity grows)")
    return relative, absolute


@dataclass(frozen=True, eq=False, repr=False)
class ElasticityPath(ResultProtocol):
    """Elasticities by sub-period or rolling window, one row each (``table``).

    Attributes
    ----------
    table : pandas.DataFrame
        ``start, end, elasticity, std_error, lower, upper, nobs`` per window.
    estimator, cov_type : str
        The estimator and the covariance used in every window.
    details : mapping
        The windows (``width`` or ``periods``).
    excluded : pandas.DataFrame
        What each window left out (unit, column, years, reason; the reason names the window).
    """

    table: pd.DataFrame
    estimator: str
    cov_type: str
    details: Mapping[str, Any] = field(default_factory=dict)
    excluded: pd.DataFrame = field(default_factory=excluded_frame)

    _repr_fields: ClassVar[tuple[str, ...]] = ("estimator",)

    def __repr__(self) -> str:
        return f"ElasticityPath(estimator={self.estimator!r}, windows={len(self.table)})"

    def summary(self) -> str:
        """The elasticity of each window with its 95 % interval."""
        lines = [f"Elasticity by window ({self.estimator}; {self.cov_type})"]
        for row in self.table.itertuples(index=False):
            lines.append(f"  {row.start}-{row.end}  {row.elasticity:8.4f}  "
                         f"[{row.lower:.4f}, {row.upper:.4f}]  N {row.nobs}")
        if len(self.excluded):
            lines.append(f"  left out: {len(self.excluded)} item(s); see .excluded")
        return "\n".join(lines)

    def to_frame(self) -> pd.DataFrame:
        """The path as a table (a copy)."""
        return self.table.copy()

    def plot(self, path: str | Path | None = None) -> Any:
        """Plot the elasticity with its 95 % interval against the window's end year.

        With ``path`` the figure is written (and closed) and the paths written are returned;
        without, the open figure is returned.
        """
        plt = pyplot()
        fig, ax = plt.subplots(figsize=(6.0, 3.6), dpi=100)
        x = self.table["end"]
        ax.plot(x, self.table["elasticity"], "-o", markersize=3, label="elasticity")
        ax.fill_between(x, self.table["lower"], self.table["upper"], alpha=0.25, label="95 % interval")
        for level in (0.0, 1.0):
            ax.axhline(level, color="0.6", linewidth=0.8, linestyle="--")
        ax.set_xlabel("last year of window")
        ax.set_ylabel("elasticity")
        ax.legend(frameon=False, fontsize=8)
        fig.tight_layout()
        return finish_figure(fig, path)


def time_varying_elasticity(panel: Panel, pressure: str, activity: str, *,
                            width: int | None = None, periods: Sequence[Window] | None = None,
                            controls: Sequence[str] = (), estimator: str = "fe",
                            cov: str | None = None, hac_lags: int | None = None,
                            log: bool = True) -> ElasticityPath:
    """The elasticity over rolling windows of ``width`` years, or over given sub-periods.

    Each window or period is a separate fit of :func:`elasticity` with the same options; the table
    gives ``start, end, elasticity, std_error, lower, upper, nobs``.
    """
    if (width is None) == (periods is None):
        raise SpecError("give exactly one of width= (rolling windows) or periods= (sub-periods).")
    years = panel.years
    if width is not None:
        width = int(check_int("width", width, minimum=5))
        if width > len(years):
            raise SpecError(f"width={width} exceeds the panel's {len(years)} years.")
        windows = [(years[i], years[i + width - 1]) for i in range(len(years) - width + 1)]
    else:
        windows = [check_window(p, years) for p in periods]  # type: ignore[union-attr]
    rows = []
    left_out: list[dict[str, Any]] = []
    cov_type = ""
    for start, end in windows:
        est = elasticity(panel, pressure, activity, controls=controls, estimator=estimator,
                         cov=cov, hac_lags=hac_lags, log=log, window=(start, end),
                         drop_short=True)
        name = str(est.details["elasticity_of"])
        ci = est.conf_int().loc[name]
        rows.append({"start": start, "end": end, "elasticity": float(est.params[name]),
                     "std_error": float(est.std_errors[name]), "lower": float(ci["lower"]),
                     "upper": float(ci["upper"]), "nobs": est.nobs})
        cov_type = est.cov_type
        for item in est.details["excluded"].to_dict("records"):
            left_out.append({**item, "reason": f"window {start}-{end}: {item['reason']}"})
    table = pd.DataFrame(rows)
    return ElasticityPath(table=table, estimator=estimator, cov_type=cov_type,
                          details={"width": width, "periods": None if periods is None
                                   else [list(w) for w in windows]},
                          excluded=excluded_frame(left_out))
