"""Single-series unit-root and stationarity tests with one interface.

ADF, Phillips–Perron, KPSS, DF-GLS and Zivot–Andrews are computed by ``arch.unitroot`` (thin
wrappers: the options map one to one and the lags, sample and break year are recorded); the
Lee–Strazicich minimum LM test with one or two breaks is ours (the ecosystem lacks it).

Every function takes ``y``, a pandas Series indexed by year or a 1-D array (leading and trailing
missing values are dropped; a gap inside raises), and returns a :class:`~evidence.results.TestResult`.

References
----------
dickeyfuller1979 : Dickey, D. A. & Fuller, W. A. (1979). Distribution of the estimators for
    autoregressive time series with a unit root. JASA 74(366), 427–431.
saiddickey1984 : Said, S. E. & Dickey, D. A. (1984). Testing for unit roots in autoregressive-
    moving average models of unknown order. Biometrika 71(3), 599–607.
phillipsperron1988 : Phillips, P. C. B. & Perron, P. (1988). Testing for a unit root in time
    series regression. Biometrika 75(2), 335–346.
kpss1992 : Kwiatkowski, D., Phillips, P. C. B., Schmidt, P. & Shin, Y. (1992). Testing the null
    hypothesis of stationarity against the alternative of a unit root. J. Econometrics 54, 159–178.
ers1996 : Elliott, G., Rothenberg, T. J. & Stock, J. H. (1996). Efficient tests for an
    autoregressive unit root. Econometrica 64(4), 813–836.
zivotandrews1992 : Zivot, E. & Andrews, D. W. K. (1992). Further evidence on the great crash, the
    oil-price shock, and the unit-root hypothesis. J. Business & Economic Statistics 10(3), 251–270.
leestrazicich2003 : Lee, J. & Strazicich, M. C. (2003). Minimum Lagrange multiplier unit root test
    with two structural breaks. Review of Economics and Statistics 85(4), 1082–1089.
leestrazicich2004 : Lee, J. & Strazicich, M. C. (2004). Minimum LM unit root test with one
    structural break. Working Paper 04-17, Appalachian State University.
mackinnon2010 : MacKinnon, J. G. (2010). Critical values for cointegration tests. Queen's
    Economics Department Working Paper 1227 (p-values and critical values used by arch).
"""

from __future__ import annotations

import math
import warnings
from typing import Any

import numpy as np
from arch.unitroot import ADF, DFGLS, KPSS, PhillipsPerron, ZivotAndrews
from arch.utility.exceptions import InfeasibleTestException

from evidence._typing import Trend
from evidence._validation import check_choice
from evidence.errors import DataError, SpecError
from evidence.results import TestResult
from evidence.roots import _lee_strazicich_tables as ls_tables
from evidence.roots._common import (
    SeriesData,
    as_series,
    check_lags,
    check_max_lags,
    check_trend,
    default_max_lags,
)
from evidence.roots._lm_breaks import break_grid, lm_search

__all__ = ["adf_test", "pp_test", "kpss_test", "dfgls_test", "za_test", "lee_strazicich_test",
           "ZA_MODELS", "LS_MODELS"]

UNIT_ROOT = "the series has a unit root"
STATIONARY = "the series is stationary"
_TREND_WORDS = {"n": "no deterministic terms", "c": "a constant", "ct": "a constant and a trend"}
#: Zivot–Andrews models: what breaks, and arch's name for it.
ZA_MODELS = {"level": "c", "trend": "t", "both": "ct"}
#: Lee–Strazicich models: "level" (crash: level shifts) and "both" (level and trend shifts).
LS_MODELS = ("level", "both")


def _cv(arch_cv: dict[str, float]) -> dict[float, float]:
    return {0.01: float(arch_cv["1%"]), 0.05: float(arch_cv["5%"]), 0.10: float(arch_cv["10%"])}


def _sample(data: SeriesData, first_used: int) -> str:
    """Years of the dependent variable in the regression: from index ``first_used`` to the end."""
    return f"{int(data.years[first_used])}:{int(data.years[-1])}"


def _run(factory: Any, data: SeriesData, what: str) -> Any:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", category=DeprecationWarning)
        warnings.simplefilter("error", category=RuntimeWarning)
        try:
            res = factory()
            _ = res.stat
        except RuntimeWarning:
            raise DataError(f"{data.label} ({data.span}) is fitted exactly by {what} (zero "
                            "residual variance): it looks deterministic, e.g. interpolated or "
                            "smoothed; a unit-root test does not apply.") from None
        except InfeasibleTestException as exc:
            raise DataError(f"{data.label} ({data.span}, {data.values.size} observations) cannot "
                            f"carry {what}: {exc} Use fewer lags or a longer series.") from None
        except np.linalg.LinAlgError:
            raise DataError(f"{data.label}: the {what} regression is singular ({data.span}); the "
                            "series may be constant over long stretches.") from None
    return res


def _lag_options(lags: Any, max_lags: Any) -> tuple[int | None, str, int | None]:
    lags = check_lags(lags)
    max_lags = check_max_lags(max_lags)
    if isinstance(lags, int):
        return lags, "aic", max_lags
    return None, lags, max_lags


def _min_obs(lags: int | None, trend: str, extra: int = 0) -> int:
    return 4 + len(trend.replace("n", "")) + (lags or 0) + extra


def adf_test(y: Any, *, trend: Trend = "c", lags: int | str = "aic",
             max_lags: int | None = None) -> TestResult:
    """Augmented Dickey–Fuller test (through ``arch.unitroot.ADF``).

    Parameters
    ----------
    y : pandas.Series or 1-D array
    trend : {"n", "c", "ct"}
        Deterministic terms of the test regression.
    lags : int or {"aic", "bic", "t-stat"}
        Fixed number of lagged differences, or how to choose it (arch's ``method``).
    max_lags : int, optional
        Largest lag order searched (arch's default ``ceil(12 (T/100)^(1/4))``, capped).

    Notes
    -----
    ``Δy_t = d_t'γ + ρ y_{t-1} + Σ_{i=1..p} φ_i Δy_{t-i} + ε_t``; the statistic is the t-ratio of
    ρ. H0: ρ = 0 (unit root); H1: ρ < 0 (stationary around ``d_t``). With automatic lags every
    candidate is fitted on the sample of the largest order, and the chosen order is then
    re-estimated on the full sample (arch's rule). P-values: MacKinnon (1994/2010) via arch.

    References
    ----------
    dickeyfuller1979; saiddickey1984; mackinnon2010 (see the module docstring).

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> y = pd.Series(np.cumsum(np.random.default_rng(0).normal(size=40)), index=range(1984, 2024))
    >>> res = adf_test(y, trend="c", lags=1)
    >>> res.details["lags"], res.nobs, res.details["sample"]
    (1, 38, '1986:2023')
    """
    trend = check_trend(trend)
    fixed, method, max_lags = _lag_options(lags, max_lags)
    data = as_series(y, min_obs=_min_obs(fixed, trend), purpose="an ADF test")
    res = _run(lambda: ADF(data.values, lags=fixed, trend=trend, max_lags=max_lags,
                           method=method), data, "an ADF regression")
    return TestResult(
        test="ADF", statistic=res.stat, pvalue=res.pvalue, critical_values=_cv(res.critical_values),
        null=UNIT_ROOT, alternative=f"{STATIONARY} around {_TREND_WORDS[trend]}", nobs=res.nobs,
        details={"trend": trend, "lags": int(res.lags),
                 "lag_choice": "fixed" if fixed is not None else method,
                 "max_lags": (max_lags if max_lags is not None else
                              default_max_lags(data.values.size, trend)) if fixed is None else None,
                 "sample": _sample(data, int(res.lags) + 1), "series_span": data.span},
        reference="dickeyfuller1979; saiddickey1984; mackinnon2010")


def pp_test(y: Any, *, trend: Trend = "c", lags: int | None = None) -> TestResult:
    """Phillips–Perron Z-tau test (through ``arch.unitroot.PhillipsPerron``).

    ``lags`` is the Newey–West (Bartlett) bandwidth of the long-run variance; ``None`` uses arch's
    default ``ceil(12 (T/100)^(1/4))``.

    Notes
    -----
    OLS of ``y_t = d_t'γ + ρ y_{t-1} + u_t``; the t-ratio of ``ρ - 1`` is corrected for serial
    correlation with ``λ² = γ_0 + 2 Σ_{j=1..l} (1 - j/(l+1)) γ_j`` of ``u_t``. H0: unit root;
    H1: stationary around ``d_t``. P-values: MacKinnon via arch.

    References
    ----------
    phillipsperron1988 (see the module docstring).
    """
    trend = check_trend(trend)
    if lags is not None:
        lags = check_lags(lags, methods=())  # type: ignore[assignment]
    data = as_series(y, min_obs=_min_obs(None, trend), purpose="a Phillips-Perron test")
    res = _run(lambda: PhillipsPerron(data.values, lags=lags, trend=trend, test_type="tau"),
               data, "a Phillips-Perron regression")
    return TestResult(
        test="Phillips-Perron", statistic=res.stat, pvalue=res.pvalue,
        critical_values=_cv(res.critical_values), null=UNIT_ROOT,
        alternative=f"{STATIONARY} around {_TREND_WORDS[trend]}", nobs=res.nobs,
        details={"trend": trend, "bandwidth": int(res.lags), "kernel": "Bartlett",
                 "statistic_type": "Z-tau", "sample": _sample(data, 1), "series_span": data.span},
        reference="phillipsperron1988; mackinnon2010")


def kpss_test(y: Any, *, trend: Trend = "c", lags: int | None = None) -> TestResult:
    """KPSS stationarity test (through ``arch.unitroot.KPSS``); note the reversed null.

    ``lags`` is the Newey–West bandwidth; ``None`` uses arch's data-dependent choice (Hobijn,
    Franses & Ooms 1998). ``trend`` is "c" (level stationarity) or "ct" (trend stationarity).

    Notes
    -----
    ``e_t`` residuals of ``y_t`` on ``d_t``, ``S_t = Σ_{s≤t} e_s``,
    ``KPSS = Σ_t S_t² / (T² λ²)`` with ``λ²`` the Bartlett long-run variance of ``e_t``.
    H0: stationary around ``d_t``; H1: unit root. Reject for large values.

    References
    ----------
    kpss1992 (see the module docstring).
    """
    trend = check_trend(trend, ("c", "ct"))
    if lags is not None:
        lags = check_lags(lags, methods=())  # type: ignore[assignment]
    data = as_series(y, min_obs=_min_obs(lags, trend), purpose="a KPSS test")
    res = _run(lambda: KPSS(data.values, lags=lags, trend=trend), data, "a KPSS test")
    return TestResult(
        test="KPSS", statistic=res.stat, pvalue=res.pvalue, critical_values=_cv(res.critical_values),
        null=f"{STATIONARY} around {_TREND_WORDS[trend]}", alternative=UNIT_ROOT, nobs=res.nobs,
        details={"trend": trend, "bandwidth": int(res.lags), "kernel": "Bartlett",
                 "bandwidth_choice": "fixed" if lags is not None else "data-dependent",
                 "sample": data.span, "series_span": data.span,
                 "pvalue_note": "arch interpolates p-values in the table; they are clipped to "
                                "[0.01, 0.10] outside it"},
        reference="kpss1992")


def dfgls_test(y: Any, *, trend: Trend = "c", lags: int | str = "aic",
               max_lags: int | None = None) -> TestResult:
    """DF-GLS test of Elliott, Rothenberg & Stock (through ``arch.unitroot.DFGLS``).

    ``trend`` is "c" or "ct"; ``lags`` and ``max_lags`` as in :func:`adf_test`.

    Notes
    -----
    The series is GLS-detrended with ``ᾱ = 1 - c̄/T`` (c̄ = 7 for "c", 13.5 for "ct"), then an ADF
    regression without deterministic terms is run on the detrended series. H0: unit root; H1:
    stationary around ``d_t``.

    References
    ----------
    ers1996 (see the module docstring).
    """
    trend = check_trend(trend, ("c", "ct"))
    fixed, method, max_lags = _lag_options(lags, max_lags)
    data = as_series(y, min_obs=_min_obs(fixed, trend), purpose="a DF-GLS test")
    res = _run(lambda: DFGLS(data.values, lags=fixed, trend=trend, max_lags=max_lags,
                             method=method), data, "a DF-GLS regression")
    return TestResult(
        test="DF-GLS", statistic=res.stat, pvalue=res.pvalue,
        critical_values=_cv(res.critical_values), null=UNIT_ROOT,
        alternative=f"{STATIONARY} around {_TREND_WORDS[trend]}", nobs=res.nobs,
        details={"trend": trend, "lags": int(res.lags),
                 "lag_choice": "fixed" if fixed is not None else method,
                 "max_lags": (max_lags if max_lags is not None else
                              default_max_lags(data.values.size, trend)) if fixed is None else None,
                 "sample": _sample(data, int(res.lags) + 1), "series_span": data.span},
        reference="ers1996")


def za_test(y: Any, *, model: str = "level", lags: int | str = "aic", max_lags: int | None = None,
            trim: float = 0.15) -> TestResult:
    """Zivot–Andrews test with one break (through ``arch.unitroot.ZivotAndrews``).

    Parameters
    ----------
    model : {"level", "trend", "both"}
        What breaks under the alternative: the intercept, the trend slope, or both
        (arch's ``trend`` "c", "t", "ct").
    lags, max_lags
        As in :func:`adf_test`; arch chooses the lag order once, on an ADF regression with a
        constant and trend and no break, and keeps it for every break date.
    trim : float
        Share of the sample excluded at each end of the break search (0 to 1/3).

    Notes
    -----
    For every candidate break the ADF regression is augmented with ``DU_t = 1(t > T_B)``
    (level), ``DT_t = (t - T_B) 1(t > T_B)`` (trend) or both; the statistic is the minimum
    t-ratio of ρ. H0: unit root without break; H1: stationary with one break.

    Break year: ``details["break_year"]`` is the last year of the old regime (the package's
    convention). arch stores the statistic of each candidate at index ``bp``, where for the
    "level" and "both" models the new regime starts at observation ``bp`` (0-based), so the break
    year is ``years[bp - 1]``; for the "trend" model arch's trend dummy is zero up to observation
    ``bp - 2``, so the break year is ``years[bp - 2]``. ``details["arch_index"]`` keeps ``bp``.

    References
    ----------
    zivotandrews1992 (see the module docstring).
    """
    model = check_choice("model", model, tuple(ZA_MODELS))
    if isinstance(trim, bool) or not isinstance(trim, (int, float)) or not 0 < trim <= 1 / 3:
        raise SpecError(f"trim={trim!r} must be a fraction in (0, 1/3], e.g. 0.15.")
    fixed, method, max_lags = _lag_options(lags, max_lags)
    data = as_series(y, min_obs=max(_min_obs(fixed, "ct", 2), int(math.ceil(3 / trim))),
                     purpose="a Zivot-Andrews test")
    res = _run(lambda: ZivotAndrews(data.values, lags=fixed, trend=ZA_MODELS[model],
                                    trim=float(trim), max_lags=max_lags, method=method),
               data, "a Zivot-Andrews search")
    all_stats = np.asarray(res._all_stats, dtype=float)  # arch keeps the statistic by index
    bp = int(np.nanargmin(np.where(np.isfinite(all_stats), all_stats, np.inf)))
    last_old = bp - 2 if model == "trend" else bp - 1
    return TestResult(
        test="Zivot-Andrews", statistic=res.stat, pvalue=res.pvalue,
        critical_values=_cv(res.critical_values), null=f"{UNIT_ROOT} (no break)",
        alternative=f"{STATIONARY} with one break in the {model if model != 'both' else 'level and trend'}",
        nobs=res.nobs,
        details={"model": model, "lags": int(res.lags),
                 "lag_choice": "fixed" if fixed is not None else method, "trim": float(trim),
                 "break_year": int(data.years[last_old]), "arch_index": bp,
                 "break_convention": "break_year is the last year of the old regime",
                 "sample": _sample(data, int(res.lags) + 1), "series_span": data.span},
        reference="zivotandrews1992")


def lee_strazicich_test(y: Any, *, model: str = "level", breaks: int = 1,
                        lags: int | str = "t-stat", max_lags: int = 8,
                        trim: float = 0.1) -> TestResult:
    """Lee–Strazicich minimum LM unit-root test with one or two breaks under both hypotheses.

    Parameters
    ----------
    model : {"level", "both"}
        "level": the crash model (level shifts); "both": level and trend shifts.
    breaks : {1, 2}
    lags : int or "t-stat"
        Augmentation lags; "t-stat" chooses them at every break date by the general-to-specific
        rule (start at ``max_lags``, drop the last lag while |t| < 1.645), as in the papers.
    max_lags : int
    trim : float
        Break dates are searched in ``[trim T, (1 - trim) T]``; two breaks at least 2 apart.

    Notes
    -----
    ``Z_t = (1, t, D_1t, [DT_1t], D_2t, [DT_2t])`` with ``D_jt = 1(t > T_Bj)`` and
    ``DT_jt = (t - T_Bj) 1(t > T_Bj)``. Estimate ``δ`` from ``Δy_t = ΔZ_t'δ + u_t``, set
    ``ψ = y_1 - Z_1'δ`` and ``S_t = y_t - ψ - Z_t'δ``, then run
    ``Δy_t = ΔZ_t'd + φ S_{t-1} + Σ_{i=1..k} γ_i ΔS_{t-i} + e_t``. The LM statistic τ is the
    t-ratio of φ, minimised over the break dates. H0: unit root with breaks (φ = 0); H1:
    stationary with breaks (φ < 0). Breaks enter under both hypotheses, so a rejection means
    stationarity, not "a unit root with a break".

    Critical values: the papers' tables for T = 100 (``_lee_strazicich_tables``, from memory);
    for the "both" model the row of the nearest tabulated break fraction. No p-value is
    available (``pvalue`` is NaN); compare the statistic with ``critical_values``.

    References
    ----------
    leestrazicich2003; leestrazicich2004 (see the module docstring).
    """
    model = check_choice("model", model, LS_MODELS)
    if breaks not in (1, 2) or isinstance(breaks, bool):
        raise SpecError(f"breaks={breaks!r} must be 1 or 2.")
    lags = check_lags(lags, methods=("t-stat",))
    max_lags = check_max_lags(max_lags) or 0
    if isinstance(trim, bool) or not isinstance(trim, (int, float)) or not 0 < trim < 0.5:
        raise SpecError(f"trim={trim!r} must be a fraction in (0, 0.5), e.g. 0.1.")
    k_max = lags if isinstance(lags, int) else max_lags
    n_det = 1 + breaks * (2 if model == "both" else 1)
    data = as_series(y, min_obs=k_max + 2 * n_det + 8,
                     purpose="a Lee-Strazicich test")
    nobs = data.values.size
    dates = break_grid(nobs, breaks, float(trim))
    if dates.shape[0] == 0:
        raise DataError(f"{data.label} ({nobs} observations) leaves no break date to search with "
                        f"trim={trim}; use a longer series.")
    try:
        stat, best, k, _ = lm_search(data.values, dates, model, lags, max_lags)
    except np.linalg.LinAlgError:
        raise DataError(f"{data.label}: a Lee-Strazicich regression is singular ({data.span}); use "
                        "fewer lags or a longer series.") from None
    fractions = tuple(float(d) / nobs for d in best)
    cv, source = ls_tables.lookup(model, fractions)
    warn = []
    if nobs < 50:
        warn.append(f"T={nobs}: the critical values are for T=100; small samples shift them.")
    return TestResult(
        test="Lee-Strazicich", statistic=stat, pvalue=math.nan, critical_values=cv,
        null=f"{UNIT_ROOT} with {breaks} break(s)",
        alternative=f"{STATIONARY} with {breaks} break(s)", nobs=nobs - k - 1,
        details={"model": model, "breaks": breaks, "lags": k,
                 "lag_choice": "fixed" if isinstance(lags, int) else "t-stat (general to specific)",
                 "max_lags": max_lags, "trim": float(trim),
                 "break_years": [int(data.years[d - 1]) for d in best],
                 "break_fractions": [round(f, 4) for f in fractions],
                 "break_convention": "break_years are the last years of the old regimes",
                 "critical_values_source": source, "sample": _sample(data, k + 1),
                 "series_span": data.span},
        reference="leestrazicich2003; leestrazicich2004", warnings=tuple(warn))
