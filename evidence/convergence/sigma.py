"""Sigma convergence (dispersion over time) and gamma convergence (rank concordance over time).

References
----------
carreeklomp1997 : Carree, M. & Klomp, L. (1997). Testing the convergence hypothesis: a comment.
    Review of Economics and Statistics 79(4), 683–686.
boylemccarthy1997 : Boyle, G. E. & McCarthy, T. G. (1997). A simple measure of β-convergence.
    Oxford Bulletin of Economic Research 49(3), 257–264.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from scipy import stats

from evidence._json import json_safe
from evidence._typing import Window
from evidence._validation import check_choice, check_window, format_years
from evidence.errors import DataError, SpecError
from evidence.indicators import trend_growth_batch
from evidence.panel import Panel
from evidence.results import ResultProtocol, TestResult, excluded_frame, format_pvalue

__all__ = ["SigmaResult", "GammaResult", "sigma_convergence", "gamma_convergence",
           "dispersion", "carree_klomp_tests", "kendall_concordance"]

MEASURES = ("sd_log", "cv", "weighted_sd_log")


def dispersion(values: np.ndarray, *, measure: str = "sd_log",
               weights: np.ndarray | None = None) -> np.ndarray:
    """Cross-section dispersion of each row of ``values`` (years × units).

    ``sd_log``: standard deviation of the logs (divisor N); ``cv``: standard deviation over the
    mean of the levels (divisor N); ``weighted_sd_log``: ``sqrt(sum_i w_it (ln y_it − m_t)²)`` with
    weights ``w`` normalised to sum to one each year and ``m_t`` the weighted mean of the logs.
    """
    if measure == "sd_log":
        return np.log(values).std(axis=1)
    if measure == "cv":
        return values.std(axis=1) / values.mean(axis=1)
    w = np.asarray(weights, dtype=float)
    w = w / w.sum(axis=1, keepdims=True)
    logs = np.log(values)
    mean = (w * logs).sum(axis=1, keepdims=True)
    return np.sqrt((w * (logs - mean) ** 2).sum(axis=1))


def carree_klomp_tests(first: np.ndarray, last: np.ndarray) -> tuple[TestResult, TestResult]:
    """Carree & Klomp (1997) tests that the variance of logs is the same in two years.

    With ``N`` units, ``v1, vT`` the variances (divisor N) of the logs in the first and last year
    and ``c`` their covariance:

    * ``T2 = (N − 2.5) ln[1 + (v1 − vT)² / (4 (v1 vT − c²))]`` ~ χ²(1) (a likelihood-ratio test for
      equal variances of a bivariate normal with a small-sample factor);
    * ``T3 = √N (v1/vT − 1) / (2 √(1 − β²))`` ~ N(0, 1), ``β`` the OLS slope of the last-year log
      on the first-year log (under H0, the correlation); one-sided, large values mean the
      dispersion fell.

    The two variances come from the same units, so the naive F ratio is mis-sized; these tests
    allow for their dependence. (Formulas from memory; T3's denominator follows from the delta
    method under normality.)
    """
    n = first.size
    x, y = np.log(first), np.log(last)
    v1, vt = x.var(), y.var()
    c = float(np.mean((x - x.mean()) * (y - y.mean())))
    if not (v1 > 0 and vt > 0 and v1 * vt - c * c > 0):
        reason = ("the logs do not vary across units in the first or last year"
                  if not (v1 > 0 and vt > 0) else
                  "the last year's logs are an exact linear function of the first year's")
        return (TestResult.inapplicable("Carree-Klomp T2 (equal dispersion)", reason=reason,
                                        nobs=n, reference="carreeklomp1997"),
                TestResult.inapplicable("Carree-Klomp T3 (dispersion fell)", reason=reason,
                                        nobs=n, reference="carreeklomp1997"))
    t2 = (n - 2.5) * math.log1p((v1 - vt) ** 2 / (4 * (v1 * vt - c * c)))
    beta = c / v1
    t3 = math.sqrt(n) * (v1 / vt - 1.0) / (2.0 * math.sqrt(max(1.0 - beta * beta, 1e-12)))
    common = {"variance_first": v1, "variance_last": vt, "covariance": c, "units": n}
    two = TestResult(test="Carree-Klomp T2 (equal dispersion)", statistic=t2,
                     pvalue=float(stats.chi2.sf(t2, 1)),
                     critical_values={a: float(stats.chi2.isf(a, 1)) for a in (0.01, 0.05, 0.10)},
                     null="equal variance of logs in the two years",
                     alternative="the variances differ", nobs=n, details=common,
                     reference="carreeklomp1997")
    three = TestResult(test="Carree-Klomp T3 (dispersion fell)", statistic=t3,
                       pvalue=float(stats.norm.sf(t3)),
                       critical_values={a: float(stats.norm.isf(a)) for a in (0.01, 0.05, 0.10)},
                       null="equal variance of logs in the two years",
                       alternative="the variance fell (sigma convergence)", nobs=n,
                       details={**common, "beta": beta}, reference="carreeklomp1997")
    return two, three


@dataclass(frozen=True, eq=False, repr=False)
class SigmaResult(ResultProtocol):
    """The dispersion path, its trend test and the first-versus-last-year tests.

    Attributes
    ----------
    path : pandas.Series
        Dispersion each year of the window.
    measure : str
        ``"sd_log"``, ``"cv"`` or ``"weighted_sd_log"``.
    trend_test : TestResult
        One-sided test of a falling dispersion trend.
    first_last_tests : (TestResult, TestResult)
        Carree–Klomp T2 and T3.
    excluded : pandas.DataFrame
        Units left out (unit, column, years, reason): the same units every year.
    window : (int, int)
        First and last year.
    details : mapping
        ``units`` used.
    """

    path: pd.Series
    measure: str
    trend_test: TestResult
    first_last_tests: tuple[TestResult, TestResult]
    excluded: pd.DataFrame
    window: Window
    details: Mapping[str, Any] = field(default_factory=dict)

    def __repr__(self) -> str:
        return (f"SigmaResult(measure={self.measure!r}, window={self.window}, "
                f"first={self.path.iloc[0]:.4f}, last={self.path.iloc[-1]:.4f}, "
                f"trend_pvalue={format_pvalue(self.trend_test.pvalue)})")

    def summary(self) -> str:
        """Dispersion at the ends of the window and the tests."""
        lines = [f"Sigma convergence ({self.measure}), {self.window[0]}-{self.window[1]}: "
                 f"{self.path.iloc[0]:.4f} -> {self.path.iloc[-1]:.4f}",
                 self.trend_test.summary(), *(t.summary() for t in self.first_last_tests)]
        lines += [f"excluded: {r.unit} ({r.reason})" for r in self.excluded.itertuples()]
        return "\n".join(lines)

    def to_frame(self) -> pd.DataFrame:
        """The dispersion path, one row per year."""
        return self.path.to_frame()

    def to_dict(self) -> dict[str, Any]:
        """JSON-safe contents."""
        return json_safe({"path": self.path, "measure": self.measure,
                          "trend_test": self.trend_test.to_dict(),
                          "first_last_tests": [t.to_dict() for t in self.first_last_tests],
                          "excluded": self.excluded.to_dict(orient="records"),
                          "window": list(self.window), "details": dict(self.details)})


def _balanced(panel: Panel, columns: list[str], start: int, end: int) -> tuple[dict, pd.DataFrame]:
    years = list(range(start, end + 1))
    wides = {c: panel.wide(c).reindex(years) for c in columns}
    lacking = np.zeros(len(panel.units), dtype=bool)
    reasons = {}
    for c, wide in wides.items():
        wide = wide.reindex(columns=list(panel.units))
        wides[c] = wide
        miss = wide.isna().to_numpy()
        for j, unit in enumerate(panel.units):
            if miss[:, j].any() and unit not in reasons:
                reasons[unit] = (c, format_years(np.asarray(years)[miss[:, j]]))
        lacking |= miss.any(axis=0)
    keep = [u for u, bad in zip(panel.units, lacking, strict=True) if not bad]
    if len(keep) < 3:
        raise DataError(f"only {len(keep)} units have complete data in {start}:{end}; "
                        "dispersion needs at least 3.")
    excluded = excluded_frame({"unit": u, "column": c, "years": y,
                               "reason": f"no '{c}' in {y}"} for u, (c, y) in reasons.items())
    values = {c: w[keep] for c, w in wides.items()}
    for c in columns:
        if (values[c].to_numpy() <= 0).any():
            row, col = np.argwhere(values[c].to_numpy() <= 0)[0]
            raise DataError(f"column '{c}' is not positive at unit '{keep[col]}', year "
                            f"{years[row]}; dispersion of logs needs positive values.")
    return values, excluded


def sigma_convergence(panel: Panel, column: str, *, measure: str = "sd_log",
                      weights: str | None = None, window: Window | str | None = None,
                      hac_lags: int | None = None) -> SigmaResult:
    """Dispersion of ``column`` across units each year, with a test of a declining trend.

    The trend test regresses the dispersion on the year (OLS, Newey–West standard error as in
    :func:`evidence.indicators.trend_growth_batch`); H0: slope >= 0, H1: slope < 0 (sigma
    convergence), lower-tail Student t with ``T − 2`` degrees of freedom. The Carree–Klomp tests
    compare the first and last year of the window. Units lacking a value in the window are
    excluded (the same units every year) and listed.
    """
    measure = check_choice("measure", measure, MEASURES)
    if (measure == "weighted_sd_log") != (weights is not None):
        raise SpecError("weights= (e.g. a population column) goes with measure='weighted_sd_log'.")
    panel.require(column, *([weights] if weights else []))
    start, end = (check_window(window, panel.years) if window is not None
                  else (panel.years[0], panel.years[-1]))
    values, excluded = _balanced(panel, [column] + ([weights] if weights else []), start, end)
    years = np.arange(start, end + 1)
    level = values[column].to_numpy()
    path = dispersion(level, measure=measure,
                      weights=None if weights is None else values[weights].to_numpy())
    if not np.any(path > 0):
        raise DataError(f"every unit has the same '{column}' in every year of {start}:{end}; "
                        "there is no dispersion to follow.")
    slope, se, lags = trend_growth_batch(path[:, None], years, hac_lags=hac_lags)
    n = years.size
    label = "sigma convergence (dispersion trend < 0)"
    if np.isfinite(se[0]) and se[0] > 0:
        t = float(slope[0] / se[0])
        trend = TestResult(test=label, statistic=t, pvalue=float(stats.t.cdf(t, n - 2)),
                           critical_values={a: float(stats.t.ppf(a, n - 2))
                                            for a in (0.01, 0.05, 0.10)},
                           null="dispersion trend >= 0", alternative="dispersion falls over time",
                           nobs=n, details={"slope": float(slope[0]), "std_error": float(se[0]),
                                            "hac_lags": lags, "measure": measure},
                           reference="neweywest1987")
    else:  # an exactly linear path, or too few years for a standard error
        trend = TestResult.inapplicable(label, nobs=n, reference="neweywest1987",
                                        reason=f"the trend's standard error is {se[0]:g} "
                                               f"({n} years); nothing to test against")
    tests = carree_klomp_tests(level[0], level[-1])
    return SigmaResult(path=pd.Series(path, index=pd.Index(years, name=panel.time_name),
                                      name=measure),
                       measure=measure, trend_test=trend, first_last_tests=tests,
                       excluded=excluded, window=(start, end),
                       details={"units": level.shape[1]})


def kendall_concordance(first: np.ndarray, later: np.ndarray) -> float:
    """Boyle & McCarthy (1997) index ``Var(R_t + R_0) / Var(2 R_0)`` of two rankings (ties averaged)."""
    r0, rt = stats.rankdata(first), stats.rankdata(later)
    return float(np.var(rt + r0) / np.var(2 * r0))


@dataclass(frozen=True, eq=False, repr=False)
class GammaResult(ResultProtocol):
    """Rank concordance of each year with the base year, and the test for the last year.

    Attributes
    ----------
    path : pandas.Series
        Kendall's index of each year against the first (1 in the first year).
    test : TestResult
        The chi-squared test that the first and last rankings are unrelated.
    excluded : pandas.DataFrame
        Units left out (unit, column, years, reason).
    window : (int, int)
        First and last year.
    """

    path: pd.Series
    test: TestResult
    excluded: pd.DataFrame
    window: Window

    def __repr__(self) -> str:
        return (f"GammaResult(window={self.window}, index_last={self.path.iloc[-1]:.4f}, "
                f"pvalue={format_pvalue(self.test.pvalue)})")

    def summary(self) -> str:
        """The index in the last year and the test."""
        lines = [f"Gamma convergence, {self.window[0]}-{self.window[1]}: Kendall index of the last "
                 f"year against the first {self.path.iloc[-1]:.4f}", self.test.summary()]
        lines += [f"excluded: {r.unit} ({r.reason})" for r in self.excluded.itertuples()]
        return "\n".join(lines)

    def to_frame(self) -> pd.DataFrame:
        """The index path, one row per year."""
        return self.path.to_frame()

    def to_dict(self) -> dict[str, Any]:
        """JSON-safe contents."""
        return json_safe({"path": self.path, "test": self.test.to_dict(),
                          "excluded": self.excluded.to_dict(orient="records"),
                          "window": list(self.window)})


def gamma_convergence(panel: Panel, column: str, *,
                      window: Window | str | None = None) -> GammaResult:
    """Gamma convergence: Kendall's index of rank concordance between each year and the first.

    ``γ_t = Var(R_t + R_0) / Var(2 R_0)`` (Boyle & McCarthy 1997), 1 when the ranking is unchanged,
    falling towards 0 as units change places. Test for the last year: with ``m = 2`` rankings,
    ``χ² = m (N − 1) γ`` ~ χ²(N − 1) under H0 that the two rankings are unrelated; a large value
    means ranks persist (no gamma convergence).
    """
    panel.require(column)
    start, end = (check_window(window, panel.years) if window is not None
                  else (panel.years[0], panel.years[-1]))
    values, excluded = _balanced(panel, [column], start, end)
    level = values[column].to_numpy()
    if np.ptp(level[0]) == 0:
        raise DataError(f"every unit has the same '{column}' in {start}; there is no ranking to "
                        "compare later years with.")
    path = np.array([kendall_concordance(level[0], level[t]) for t in range(level.shape[0])])
    n = level.shape[1]
    chi = 2 * (n - 1) * path[-1]
    test = TestResult(test="Kendall concordance, first vs last year", statistic=chi,
                      pvalue=float(stats.chi2.sf(chi, n - 1)),
                      critical_values={a: float(stats.chi2.isf(a, n - 1)) for a in (0.01, 0.05, 0.10)},
                      null="the rankings of the two years are unrelated",
                      alternative="ranks persist", nobs=n,
                      details={"index": float(path[-1]), "units": n}, reference="boylemccarthy1997")
    return GammaResult(path=pd.Series(path, index=pd.Index(range(start, end + 1),
                                                           name=panel.time_name), name="gamma"),
                       test=test, excluded=excluded, window=(start, end))
