"""Cointegration tests and long-run estimates for one series: a single interface over arch and statsmodels.

Engle–Granger and Phillips–Ouliaris residual tests and DOLS, FMOLS and CCR come from arch; the
Johansen trace and maximum-eigenvalue tests and the ARDL bounds test from statsmodels. Inputs are
used as given (take logs first). ``y`` is a Series indexed by year or a 1-D array; ``x`` a Series,
DataFrame or array with the same number of observations.

References
----------
englegranger1987 : Engle, R. F. & Granger, C. W. J. (1987). Co-integration and error correction:
    representation, estimation, and testing. Econometrica 55(2), 251–276.
phillipsouliaris1990 : Phillips, P. C. B. & Ouliaris, S. (1990). Asymptotic properties of residual
    based tests for cointegration. Econometrica 58(1), 165–193.
johansen1991 : Johansen, S. (1991). Estimation and hypothesis testing of cointegration vectors in
    Gaussian vector autoregressive models. Econometrica 59(6), 1551–1580.
pesaranshinsmith2001 : Pesaran, M. H., Shin, Y. & Smith, R. J. (2001). Bounds testing approaches to
    the analysis of level relationships. Journal of Applied Econometrics 16(3), 289–326.
stockwatson1993 : Stock, J. H. & Watson, M. W. (1993). A simple estimator of cointegrating vectors
    in higher order integrated systems. Econometrica 61(4), 783–820.
phillipshansen1990 : Phillips, P. C. B. & Hansen, B. E. (1990). Statistical inference in
    instrumental variables regression with I(1) processes. Review of Economic Studies 57(1), 99–125.
park1992 : Park, J. Y. (1992). Canonical cointegrating regressions. Econometrica 60(1), 119–143.
"""

from __future__ import annotations

from typing import Any, Literal, cast

import numpy as np
import pandas as pd
from arch.unitroot.cointegration import (
    CanonicalCointegratingReg,
    CointegrationAnalysisResults,
    DynamicOLS,
    DynamicOLSResults,
    FullyModifiedOLS,
    engle_granger,
    phillips_ouliaris,
)
from statsmodels.tsa.ardl import UECM, ardl_select_order
from statsmodels.tsa.vector_ar.vecm import coint_johansen

from evidence._validation import check_choice, check_int, check_lags, check_max_lags, check_trend
from evidence.cointegration._data import ARCH_TREND, option_int
from evidence.cointegration._result import JohansenResult
from evidence.errors import DataError, SpecError
from evidence.results import Estimate, TestResult

__all__ = [
    "ardl_bounds_test",
    "cointegrating_regression",
    "engle_granger_test",
    "johansen_test",
    "phillips_ouliaris_test",
]

_NULL = "no cointegration"
_ALT = "cointegration"


def _inputs(y: Any, x: Any, *, min_obs: int, purpose: str) -> tuple[pd.Series, pd.DataFrame]:
    """Aligned ``y`` and ``x`` without missing values; raises DataError with the year at fault."""
    ys = y.copy() if isinstance(y, pd.Series) else pd.Series(np.asarray(y, dtype=float))
    ys = ys.astype(float).rename(ys.name if ys.name is not None else "y")
    if isinstance(x, pd.DataFrame):
        xs = x.astype(float).copy()
    elif isinstance(x, pd.Series):
        xs = x.astype(float).to_frame(x.name if x.name is not None else "x")
    else:
        arr = np.asarray(x, dtype=float)
        arr = arr[:, None] if arr.ndim == 1 else arr
        xs = pd.DataFrame(arr, columns=[f"x{i + 1}" for i in range(arr.shape[1])])
    if len(xs) != len(ys):
        raise DataError(f"{purpose}: y has {len(ys)} observations and x {len(xs)}; give them the "
                        f"same years.")
    xs.index = ys.index
    frame = pd.concat([ys, xs], axis=1)
    bad = frame.isna().any(axis=1).to_numpy()
    if bad.any():
        ok = np.flatnonzero(~bad)
        inner = bad[ok[0]:ok[-1] + 1] if ok.size else bad
        if ok.size == 0 or inner.any():
            where = frame.index[ok[0] + int(np.argmax(inner))] if ok.size else frame.index[0]
            raise DataError(f"{purpose}: a value is missing at {where} inside the series; fill it or "
                            f"shorten the sample.")
        frame = frame.iloc[ok[0]:ok[-1] + 1]
    if len(frame) < min_obs:
        raise DataError(f"{purpose} needs at least {min_obs} observations with these options; "
                        f"got {len(frame)}.")
    for col in frame.columns:
        if np.ptp(frame[col].to_numpy()) == 0:
            raise DataError(f"{purpose}: column '{col}' is constant; it cannot enter the regression.")
    return frame.iloc[:, 0], frame.iloc[:, 1:]


def _cv(values: pd.Series) -> dict[float, float]:
    return {float(k) / 100: float(v) for k, v in values.items() if float(k) in (1, 5, 10)}


def engle_granger_test(y: Any, x: Any, *, trend: str = "constant", lags: int | str = "aic",
                       max_lags: int | None = None) -> TestResult:
    """Engle–Granger residual ADF test (arch ``engle_granger``).

    H0: no cointegration (the residual of ``y`` on ``x`` has a unit root). H1: cointegration.

    Notes
    -----
    OLS ``y_t = d_t'δ + β'x_t + e_t``, then the ADF t-ratio of ``e_t``; p-values and critical values
    from MacKinnon's response surfaces as computed by arch. ``lags`` an int fixes the ADF lag order;
    "aic"/"bic" select it up to ``max_lags``, "sequential-t" drops the last lag while its t-ratio
    is insignificant (arch's "t-stat").

    References
    ----------
    englegranger1987 (see the module docstring).
    """
    trend = check_trend(trend)
    lags = check_lags(lags)
    ys, xs = _inputs(y, x, min_obs=xs_min(x) + 8, purpose="engle_granger_test")
    kw: dict[str, Any] = {"max_lags": check_max_lags(max_lags)}
    if isinstance(lags, str):
        kw["method"] = "t-stat" if lags == "sequential-t" else lags
    else:
        kw["lags"] = lags
    res = engle_granger(ys, xs, trend=ARCH_TREND[trend], **kw)
    return TestResult(test="Engle-Granger", statistic=res.stat, pvalue=res.pvalue,
                      critical_values=_cv(res.critical_values), null=_NULL, alternative=_ALT,
                      nobs=len(ys), details={"trend": trend, "lags": int(res.lags),
                                             "lag_selection": lags if isinstance(lags, str) else "fixed",
                                             "cointegrating_vector":
                                                 res.cointegrating_vector.round(6).to_dict()},
                      reference="englegranger1987")


def xs_min(x: Any) -> int:
    """Number of regressor columns of ``x``."""
    arr = np.asarray(x)
    return 1 if arr.ndim == 1 else int(arr.shape[1])


def phillips_ouliaris_test(y: Any, x: Any, *, trend: str = "constant", variant: str = "Zt",
                           hac_lags: int | None = None) -> TestResult:
    """Phillips–Ouliaris residual test (arch ``phillips_ouliaris``), ``variant`` Zt, Za, Pu or Pz.

    H0: no cointegration. H1: cointegration.

    Notes
    -----
    Zt and Za are the Phillips–Perron t and rho statistics of the cointegrating residual, with a
    Bartlett long-run variance (bandwidth ``hac_lags``, chosen by arch unless given); Pu and Pz are the
    variance-ratio and trace statistics.

    References
    ----------
    phillipsouliaris1990 (see the module docstring).
    """
    trend = check_trend(trend)
    variant = check_choice("variant", variant, ("Zt", "Za", "Pu", "Pz"))
    hac_lags = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    ys, xs = _inputs(y, x, min_obs=xs_min(x) + 8, purpose="phillips_ouliaris_test")
    res = phillips_ouliaris(ys, xs, trend=ARCH_TREND[trend],
                            test_type=cast(Literal["Za", "Zt", "Pu", "Pz"], variant), bandwidth=hac_lags)
    return TestResult(test=f"Phillips-Ouliaris {variant}", statistic=res.stat, pvalue=res.pvalue,
                      critical_values=_cv(res.critical_values), null=_NULL, alternative=_ALT,
                      nobs=len(ys), details={"trend": trend, "hac_lags": float(res.bandwidth),
                                             "kernel": str(res.kernel)},
                      reference="phillipsouliaris1990")


_JOHANSEN_DET = {"none": -1, "constant": 0, "trend": 1}
_NO_PVALUE = "p-value not available; compare with the critical values"


def johansen_test(y: Any, x: Any, *, trend: str = "constant", lags: int = 1) -> JohansenResult:
    """Johansen trace and maximum-eigenvalue tests (statsmodels ``coint_johansen``).

    H0 of the row for rank r: at most r cointegrating vectors (trace) / exactly r against r + 1
    (max-eigenvalue). Read the ranks from the top; the first non-rejection gives the rank.

    Notes
    -----
    VECM of ``z_t = (y_t, x_t')'`` with ``lags`` lagged differences; ``trend`` maps to statsmodels
    ``det_order`` ("none" → -1, "constant" → 0, "trend" → 1). Critical values are Osterwald-Lenum's (1992) as
    shipped by statsmodels, which gives no p-values: ``pvalue`` is NaN and the decision is read
    from the critical values.

    References
    ----------
    johansen1991 (see the module docstring).
    """
    trend = check_trend(trend)
    lags = option_int("lags", lags, 0)
    ys, xs = _inputs(y, x, min_obs=(1 + xs_min(x)) * (lags + 2) + 8, purpose="johansen_test")
    data = np.column_stack([ys.to_numpy(), xs.to_numpy()])
    res = coint_johansen(data, _JOHANSEN_DET[trend], lags)
    results = []
    for kind, stat, cvs in (("trace", res.lr1, res.cvt), ("max-eigenvalue", res.lr2, res.cvm)):
        for r in range(data.shape[1]):
            results.append(TestResult(
                test=f"Johansen {kind} r<={r}" if kind == "trace" else f"Johansen {kind} r={r}",
                statistic=stat[r], pvalue=float("nan"),
                critical_values={0.10: cvs[r, 0], 0.05: cvs[r, 1], 0.01: cvs[r, 2]},
                null=(f"at most {r} cointegrating vectors" if kind == "trace"
                      else f"{r} cointegrating vectors"),
                alternative=f"more than {r}" if kind == "trace" else f"{r + 1} cointegrating vectors",
                nobs=len(ys), details={"statistic": f"{kind} {r}", "trend": trend, "lags": lags,
                                       "eigenvalue": float(res.eig[r]),
                                       "reject_5": bool(stat[r] > cvs[r, 1])},
                reference="johansen1991", warnings=(_NO_PVALUE,)))
    return JohansenResult(test="Johansen", results=tuple(results),
                          details={"trend": trend, "lags": lags, "eigenvalues": res.eig.tolist()},
                          reference="johansen1991")


_CASES = {"none": 1, "constant": 3, "trend": 5}


def ardl_bounds_test(y: Any, x: Any, *, trend: str = "constant", lags: int | str = "aic",
                     max_lags: int | None = None, case: int | None = None) -> TestResult:
    """Pesaran–Shin–Smith ARDL bounds F-test (statsmodels ``UECM.bounds_test``).

    H0: no level relationship (the lagged levels of y and x drop out of the error-correction
    form). H1: a level relationship exists.

    Notes
    -----
    ``Δy_t = c + π_y y_t-1 + π_x'x_t-1 + Σ ψ_j Δy_t-j + Σ φ_j'Δx_t-j + e_t``; the statistic is the
    Wald F of ``π_y = π_x = 0``. ``pvalue`` and ``critical_values`` are those of the upper (I(1))
    bound, so a rejection holds whatever the order of integration of x; the lower-bound values are
    in ``details``. ``case`` (1–5, PSS numbering) defaults to 1, 3, 5 for trend "none",
    "constant", "trend".
    ``lags`` is the order of y and of each x; "aic"/"bic" choose them (statsmodels
    ``ardl_select_order``) up to ``max_lags`` (default 4).

    References
    ----------
    pesaranshinsmith2001 (see the module docstring).
    """
    trend = check_trend(trend)
    lags = check_lags(lags, rules=("aic", "bic"))
    if case is None:
        case = _CASES[trend]
    if case not in (1, 2, 3, 4, 5) or isinstance(case, bool):
        raise SpecError(f"case={case!r} must be one of 1, 2, 3, 4, 5 (PSS 2001 numbering).")
    checked = check_max_lags(max_lags)
    max_l = 4 if checked is None else checked
    order_max = max_l if isinstance(lags, str) else lags
    ys, xs = _inputs(y, x, min_obs=(order_max + 1) * (xs_min(x) + 1) + 8, purpose="ardl_bounds_test")
    if lags == 0:
        raise SpecError("lags=0 leaves no lagged level of y; use lags of at least 1.")
    sm_trend = {1: "n", 2: "c", 3: "c", 4: "ct", 5: "ct"}[case]
    ys, xs = ys.reset_index(drop=True), xs.reset_index(drop=True)
    order: int | dict[Any, int]
    if isinstance(lags, str):
        sel = ardl_select_order(ys, max_l, xs, max_l, trend=sm_trend, ic=lags)
        p = max(int(max(sel.model.ardl_order[0], 1)), 1)
        order = {c: max(int(o), 1) for c, o in zip(xs.columns, sel.model.ardl_order[1:], strict=True)}
    else:
        p, order = lags, lags
    res = UECM(ys, p, xs, order, trend=sm_trend).fit()
    bounds = res.bounds_test(case)
    cvs = bounds.critical_values
    upper = {0.10: cvs.loc[90.0, "upper"], 0.05: cvs.loc[95.0, "upper"], 0.01: cvs.loc[99.0, "upper"]}
    lower = {str(k): float(cvs.loc[v, "lower"]) for k, v in ((0.10, 90.0), (0.05, 95.0), (0.01, 99.0))}
    return TestResult(test="ARDL bounds", statistic=bounds.statistic,
                      pvalue=float(bounds.pvalue["upper"]), critical_values=upper,
                      null="no level relationship", alternative="a level relationship",
                      nobs=int(res.nobs),
                      details={"case": case, "lags": int(p),
                               "order": order if isinstance(order, int) else dict(order),
                               "lower_pvalue": float(bounds.pvalue["lower"]),
                               "lower_critical_values": lower,
                               "lag_selection": lags if isinstance(lags, str) else "fixed"},
                      reference="pesaranshinsmith2001")


_ESTIMATORS = ("dols", "fmols", "ccr")


def cointegrating_regression(y: Any, x: Any, *, estimator: str = "dols", trend: str = "constant",
                             lags: int | str = "bic", leads: int | str = "bic",
                             max_lags: int | None = None) -> Estimate:
    """Long-run coefficients of one series by DOLS, FMOLS or CCR (arch), as an :class:`Estimate`.

    Notes
    -----
    DOLS: OLS of ``y_t`` on ``d_t``, ``x_t`` and ``Δx_t-j``, ``j = -leads..lags``, with a Bartlett
    long-run covariance (arch ``DynamicOLS(...).fit(cov_type="kernel")``). FMOLS and CCR correct
    the static regression for endogeneity and serial correlation with Bartlett long-run
    covariances (arch ``FullyModifiedOLS``, ``CanonicalCointegratingReg``). Standard errors are
    asymptotically normal.

    References
    ----------
    stockwatson1993, phillipshansen1990, park1992 (see the module docstring).
    """
    estimator = check_choice("estimator", estimator, _ESTIMATORS)
    trend = check_trend(trend)
    lags = check_lags(lags, rules=("aic", "bic"))
    leads = check_lags(leads, parameter="leads", rules=("aic", "bic"))
    max_lags = check_max_lags(max_lags)
    ys, xs = _inputs(y, x, min_obs=xs_min(x) * 3 + 10, purpose="cointegrating_regression")
    res: DynamicOLSResults | CointegrationAnalysisResults
    details: dict[str, Any]
    if estimator == "dols":
        method = lags if isinstance(lags, str) else (leads if isinstance(leads, str) else "bic")
        model = DynamicOLS(ys, xs, trend=ARCH_TREND[trend],
                           lags=None if isinstance(lags, str) else lags,
                           leads=None if isinstance(leads, str) else leads, max_lag=max_lags,
                           max_lead=max_lags, method=cast(Literal["aic", "bic", "hqic"], method))
        res = model.fit(cov_type="kernel")
        details = {"lags": int(res.lags), "leads": int(res.leads), "hac_lags": float(res.bandwidth)}
        label = "DOLS"
    else:
        cls = FullyModifiedOLS if estimator == "fmols" else CanonicalCointegratingReg
        res = cls(ys, xs, trend=ARCH_TREND[trend]).fit()
        details = {"hac_lags": float(res.bandwidth), "kernel": str(res.kernel)}
        label = estimator.upper()
    details["trend"] = trend
    return Estimate(estimator=label, dependent=str(ys.name), params=res.params,
                    std_errors=res.std_errors, cov=res.cov,
                    cov_type=f"long-run variance, Bartlett kernel, bandwidth {float(res.bandwidth):g} "
                             "(arch)",
                    nobs=len(ys), details=details,
                    reference={"dols": "stockwatson1993", "fmols": "phillipshansen1990",
                               "ccr": "park1992"}[estimator])
