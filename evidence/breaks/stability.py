"""Stability tests at a known date or without one: Chow F, recursive CUSUM, OLS-CUSUM.

Notes
-----
Chow (known break year ``T1``, the last year of the old regime):
``F = [(SSR_0 - SSR_1 - SSR_2) / q] / [(SSR_1 + SSR_2) / (T - 2q)] ~ F(q, T - 2q)`` under H0 with
normal errors. Recursive CUSUM (Brown, Durbin & Evans 1975): ``W_t`` = cumulated standardised
recursive residuals; the statistic is the smallest ``a`` whose boundary
``a sqrt(T-k) (1 + 2 (t-k)/(T-k))`` contains the path, with
``P(reject) = 2 [1 - Phi(3a) + exp(-4a^2) Phi(a)]`` (a Brownian motion crossing a line). OLS-CUSUM
(Ploberger & Krämer 1992): ``sup_t |sum_{s<=t} u_s| / (sigma sqrt T)`` with the supremum of a
Brownian bridge as its limit; statsmodels' ``breaks_cusumolsresid`` computes it. Recursive
residuals come from statsmodels' ``RecursiveLS``.

References
----------
chow1960 : Chow, G. C. (1960). Tests of equality between sets of coefficients in two linear
    regressions. Econometrica 28(3), 591–605.
browndurbinevans1975 : Brown, R. L., Durbin, J. & Evans, J. M. (1975). Techniques for testing the
    constancy of regression relationships over time. JRSS B 37(2), 149–192.
plobergerkramer1992 : Ploberger, W. & Krämer, W. (1992). The CUSUM test with OLS residuals.
    Econometrica 60(2), 271–285.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy import stats
from statsmodels.regression.recursive_ls import RecursiveLS
from statsmodels.stats.diagnostic import breaks_cusumolsresid

from evidence.breaks._input import check_model, regressor_matrix, series_input
from evidence.breaks.segment import regime_design
from evidence.errors import DataError, SpecError
from evidence.results import TestResult

__all__ = ["chow_test", "cusum_test", "ols_cusum_test"]


def _design(y: Any, model: str, regressors: Any,
            years: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray, str]:
    model = check_model(model)
    values, index, label, _ = series_input(y, years, "a stability test")
    z = regime_design(model, values.size)
    extra, _ = regressor_matrix(regressors, values.size, label, "regressors")
    if extra is not None:
        z = np.column_stack([z, extra])
    if values.size <= 2 * z.shape[1] + 1:
        raise DataError(f"{label}: {values.size} years are too few for a stability test with "
                        f"{z.shape[1]} coefficients.")
    return values, index, z, label


def _ssr(y: np.ndarray, z: np.ndarray) -> float:
    coef, *_ = np.linalg.lstsq(z, y, rcond=None)
    resid = y - z @ coef
    return float(resid @ resid)


def chow_test(y: Any, year: int, *, model: str = "trend", regressors: Any = None,
              years: Any = None) -> TestResult:
    """Chow F test of a break after ``year`` (the last year of the old regime).

    H0: the same coefficients before and after; H1: all ``q`` coefficients change after ``year``.

    Examples
    --------
    >>> import numpy as np
    >>> round(chow_test(np.r_[np.zeros(10), np.ones(10)] + np.tile([0.1, -0.1], 10), 10,
    ...                 model="level").statistic, 1)
    450.0
    """
    values, index, z, label = _design(y, model, regressors, years)
    q = z.shape[1]
    where = np.flatnonzero(index == int(year))
    if where.size == 0 or where[0] < q or where[0] >= values.size - q - 1:
        raise SpecError(f"year={year!r}: {label} needs at least {q + 1} years on each side of the "
                        f"break; choose a year in {index[q]}-{index[-q - 2]}.")
    cut = int(where[0]) + 1
    ssr0 = _ssr(values, z)
    ssr1 = _ssr(values[:cut], z[:cut]) + _ssr(values[cut:], z[cut:])
    dof = values.size - 2 * q
    stat = ((ssr0 - ssr1) / q) / (ssr1 / dof)
    return TestResult(test="Chow", statistic=stat, pvalue=float(stats.f.sf(stat, q, dof)),
                      critical_values={a: float(stats.f.isf(a, q, dof)) for a in (0.01, 0.05, 0.10)},
                      null="no break", alternative=f"break after {year}", nobs=values.size,
                      details={"model": model, "break_year": int(year), "q": q, "df": (q, dof)},
                      reference="chow1960")


def cusum_pvalue(a: float) -> float:
    """P(a Brownian motion leaves the band +-a(1 + 2t) on [0, 1]) ~ 2[1 - Phi(3a) + e^{-4a^2} Phi(a)]."""
    value = 2.0 * (stats.norm.sf(3 * a) + math.exp(-4 * a * a) * stats.norm.cdf(a))
    return float(min(1.0, value))


def cusum_test(y: Any, *, model: str = "trend", regressors: Any = None, years: Any = None) -> TestResult:
    """Recursive-residual CUSUM test (Brown, Durbin & Evans 1975) via statsmodels ``RecursiveLS``.

    H0: constant coefficients; H1: the coefficients change at some unknown time.
    """
    values, index, z, _label = _design(y, model, regressors, years)
    fit = RecursiveLS(values, z).fit()
    k = z.shape[1]
    nobs = values.size
    path = np.asarray(fit.cusum)  # W_t for t = k+1..T, scaled by the residual s.d.
    t = np.arange(k + 1, nobs + 1)
    scale = np.sqrt(nobs - k) * (1 + 2 * (t - k) / (nobs - k))
    stat = float(np.max(np.abs(path) / scale))
    crit = {0.01: 1.143, 0.05: 0.948, 0.10: 0.850}  # Brown, Durbin & Evans (1975), band constants
    return TestResult(test="CUSUM", statistic=stat, pvalue=cusum_pvalue(stat), critical_values=crit,
                      null="constant coefficients", alternative="coefficients change",
                      nobs=nobs, details={"model": model, "first_crossing_year":
                                          int(index[k + int(np.argmax(np.abs(path) > 0.948 * scale))])
                                          if np.any(np.abs(path) > 0.948 * scale) else None},
                      reference="browndurbinevans1975")


def ols_cusum_test(y: Any, *, model: str = "trend", regressors: Any = None, years: Any = None) -> TestResult:
    """OLS-residual CUSUM test (Ploberger & Krämer 1992) via statsmodels ``breaks_cusumolsresid``.

    H0: constant coefficients; H1: the coefficients change at some unknown time.
    """
    values, _index, z, _label = _design(y, model, regressors, years)
    coef, *_ = np.linalg.lstsq(z, values, rcond=None)
    resid = values - z @ coef
    stat, pvalue, crit = breaks_cusumolsresid(resid, ddof=z.shape[1])
    cv = {float(level) / 100: float(value) for level, value in crit}
    return TestResult(test="OLS-CUSUM", statistic=float(stat), pvalue=float(pvalue),
                      critical_values={k: v for k, v in cv.items() if k in (0.01, 0.05, 0.10)},
                      null="constant coefficients", alternative="coefficients change",
                      nobs=values.size, details={"model": model},
                      reference="plobergerkramer1992")
