"""Single-series unit-root and stationarity tests with one interface.

ADF, Phillips–Perron, KPSS, DF-GLS and Zivot–Andrews are computed by ``arch.unitroot`` (thin
wrappers: the options map one to one and the lags, sample and break year are recorded); the
Lee–Strazicich minimum LM test with one or two breaks is ours (the ecosystem lacks it).

Every function takes ``y``, a pandas Series indexed by year or a 1-D array (leading and trailing
missing values are dropped; a gap inside raises), and returns a :class:`~evidence.results.TestResult`.

ADF, PP, KPSS and DF-GLS p-values are by default simulated for the series' own length, terms and
lag rule (or bandwidth), conditional on its estimated first-order autocorrelation
(``inference="simulated"``, see ``_calibrate``): arch's asymptotic p-values
(``inference="asymptotic"``) reject 7–22 % of the time at 5 % for T = 30–40
(``docs/methods/size.md``). The statistic is arch's either way.

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
from typing import Any, Literal

import numpy as np
from arch.unitroot import ADF, DFGLS, KPSS, PhillipsPerron, ZivotAndrews
from arch.utility.exceptions import InfeasibleTestException

from evidence._arrays import SeriesData, clean_series, series_values
from evidence._hac import newey_west_lags
from evidence._typing import Trend
from evidence._validation import (
    check_choice,
    check_int,
    check_lags,
    check_max_lags,
    check_number,
    check_trend,
)
from evidence.errors import DataError, SpecError
from evidence.results import TestResult
from evidence.roots import _lee_strazicich_tables as ls_tables
from evidence.roots._calibrate import TAILS, phi_hat_of, unit_null
from evidence.roots._common import (
    ARCH_TREND,
    INFERENCE,
    N_DETERMINISTIC,
    TREND_WORDS,
    lag_bound,
    size_details,
)
from evidence.roots._lm_breaks import break_grid, lm_search

__all__ = ["adf_test", "pp_test", "kpss_test", "dfgls_test", "za_test", "lee_strazicich_test",
           "ZA_MODELS", "LS_MODELS"]

UNIT_ROOT = "the series has a unit root"
STATIONARY = "the series is stationary"
_TREND_WORDS = TREND_WORDS
#: Zivot–Andrews models: what breaks, and arch's name for it.
ZA_MODELS: dict[str, Literal["c", "t", "ct"]] = {"level": "c", "trend": "t", "both": "ct"}
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


#: arch's name of each lag rule.
#: arch's spelling for the tests that take only a constant or a constant and trend (KPSS, DF-GLS).
_CONSTANT_OR_TREND: dict[str, Literal["c", "ct"]] = {"constant": "c", "trend": "ct"}
_ARCH_METHOD: dict[str, Literal["aic", "bic", "t-stat"]] = {"aic": "aic", "bic": "bic",
                                                            "sequential-t": "t-stat"}


def _lag_options(lags: Any, max_lags: Any) -> tuple[int | None, str, int | None]:
    lags = check_lags(lags)
    max_lags = check_max_lags(max_lags)
    if isinstance(lags, int):
        return lags, "aic", max_lags
    return None, lags, max_lags


def _search_bound(max_lags: int | None, nobs: int, trend: str) -> int:
    """``max_lags`` as given, or the package's rule bounded by T (see ``_common.lag_bound``)."""
    return lag_bound(nobs, trend) if max_lags is None else max_lags


def _min_obs(lags: int | None, trend: str, extra: int = 0) -> int:
    return 4 + N_DETERMINISTIC[trend] + (lags or 0) + extra


def _series(y: Any, *, min_obs: int, purpose: str) -> SeriesData:
    return clean_series(y, min_obs=min_obs, purpose=purpose)


def _inference(kind: str, name: str, res: Any, data: SeriesData, trend: str, inference: Any, *,
               lags: int | None = None, max_lags: int = 0, rule: str = "aic",
               hac_lags: int = 0) -> tuple[float, dict[float, float], dict[str, Any], list[str]]:
    """p-value, critical values, details and warnings for ``inference`` (see the module)."""
    inference = check_choice("inference", inference, INFERENCE)
    extra: dict[str, Any] = {"inference": inference}
    if inference == "asymptotic":
        pvalue, cv = float(res.pvalue), _cv(res.critical_values)
        extra["pvalue_source"] = "MacKinnon (1994) via arch" if kind != "kpss" else \
            "Kwiatkowski et al. (1992) table via arch, clipped to [0.01, 0.10]"
    else:
        table = unit_null(kind, data.nobs, trend, lags=lags, max_lags=max_lags, rule=rule,
                          hac_lags=hac_lags)
        phi = float(phi_hat_of(kind, data.values[:, None], trend)[0])
        pvalue = float(table.pvalue(np.array([res.stat]), np.array([phi]), tail=TAILS[kind])[0])
        cv = table.quantiles(phi, (0.01, 0.05, 0.10), tail=TAILS[kind])
        extra.update({"pvalue_source": table.label, "noise_autocorrelation": round(phi, 4)})
    extra["size"], warn = size_details(name, None, data.nobs, inference, trend)
    return pvalue, cv, extra, warn


def _hac_lags(hac_lags: Any, nobs: int) -> int:
    value = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    return newey_west_lags(nobs) if value is None else value


def adf_test(y: Any, *, trend: Trend = "constant", lags: int | str = "aic",
             max_lags: int | None = None, inference: str = "simulated") -> TestResult:
    """Augmented Dickey–Fuller test (through ``arch.unitroot.ADF``).

    Parameters
    ----------
    y : pandas.Series or 1-D array
    trend : {"none", "constant", "trend"}
        Deterministic terms of the test regression (none, a constant, a constant and a trend).
    lags : int or {"aic", "bic", "sequential-t"}
        Fixed number of lagged differences, or how to choose it ("sequential-t": the largest lag
        whose t-ratio is significant at 10 %, general to specific).
    max_lags : int, optional
        Largest lag order searched; default ``floor(4 (T/100)^(1/4))`` (Schwert's short rule,
        ``evidence._hac.default_max_lags``), bounded by what the series can carry.
    inference : {"simulated", "asymptotic"}
        "simulated" (default): the p-value and critical values simulated for this T, terms and
        lag rule (see the module docstring); "asymptotic": MacKinnon (1994) via arch.

    Notes
    -----
    ``Δy_t = d_t'γ + ρ y_{t-1} + Σ_{i=1..p} φ_i Δy_{t-i} + ε_t``; the statistic is the t-ratio of
    ρ. H0: ρ = 0 (unit root); H1: ρ < 0 (stationary around ``d_t``). With automatic lags every
    candidate is fitted on the sample of the largest order, and the chosen order is then
    re-estimated on the full sample (arch's rule).

    References
    ----------
    dickeyfuller1979; saiddickey1984; mackinnon2010 (see the module docstring).

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> y = pd.Series(np.cumsum(np.random.default_rng(0).normal(size=40)), index=range(1984, 2024))
    >>> res = adf_test(y, trend="constant", lags=1)
    >>> res.details["lags"], res.nobs, res.details["sample"]
    (1, 38, '1986:2023')
    """
    trend = check_trend(trend)
    fixed, method, max_lags = _lag_options(lags, max_lags)
    data = _series(y, min_obs=_min_obs(fixed, trend), purpose="an ADF test")
    bound = None if fixed is not None else _search_bound(max_lags, data.nobs, trend)
    res = _run(lambda: ADF(data.values, lags=fixed, trend=ARCH_TREND[trend], max_lags=bound,
                           method=_ARCH_METHOD[method]), data, "an ADF regression")
    pvalue, cv, extra, warn = _inference("adf", "ADF", res, data, trend, inference, lags=fixed,
                                         max_lags=bound or 0, rule=method)
    return TestResult(
        test="ADF", statistic=res.stat, pvalue=pvalue, critical_values=cv,
        null=UNIT_ROOT, alternative=f"{STATIONARY} around {_TREND_WORDS[trend]}", nobs=res.nobs,
        details={"trend": trend, "lags": int(res.lags),
                 "lag_choice": "fixed" if fixed is not None else method, "max_lags": bound,
                 "sample": _sample(data, int(res.lags) + 1), "series_span": data.span, **extra},
        reference="dickeyfuller1979; saiddickey1984; mackinnon2010", warnings=tuple(warn))


def pp_test(y: Any, *, trend: Trend = "constant", hac_lags: int | None = None,
            inference: str = "simulated") -> TestResult:
    """Phillips–Perron Z-tau test (through ``arch.unitroot.PhillipsPerron``).

    ``hac_lags`` is the Newey–West (Bartlett) bandwidth of the long-run variance; ``None`` uses
    the package's rule ``floor(4 (T/100)^(2/9))`` (``evidence._hac.newey_west_lags``).
    ``inference`` as in :func:`adf_test`.

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
    data = _series(y, min_obs=_min_obs(None, trend), purpose="a Phillips-Perron test")
    bandwidth = _hac_lags(hac_lags, data.nobs)
    res = _run(lambda: PhillipsPerron(data.values, lags=bandwidth, trend=ARCH_TREND[trend],
                                      test_type="tau"), data, "a Phillips-Perron regression")
    pvalue, cv, extra, warn = _inference("pp", "Phillips-Perron", res, data, trend, inference,
                                         hac_lags=bandwidth)
    return TestResult(
        test="Phillips-Perron", statistic=res.stat, pvalue=pvalue, critical_values=cv,
        null=UNIT_ROOT, alternative=f"{STATIONARY} around {_TREND_WORDS[trend]}", nobs=res.nobs,
        details={"trend": trend, "hac_lags": int(res.lags), "kernel": "Bartlett",
                 "statistic_type": "Z-tau", "sample": _sample(data, 1), "series_span": data.span,
                 **extra},
        reference="phillipsperron1988; mackinnon2010", warnings=tuple(warn))


def kpss_test(y: Any, *, trend: Trend = "constant", hac_lags: int | None = None,
              inference: str = "simulated") -> TestResult:
    """KPSS stationarity test (through ``arch.unitroot.KPSS``); note the reversed null.

    ``hac_lags`` is the Newey–West bandwidth; ``None`` uses ``floor(4 (T/100)^(2/9))``.
    ``trend`` is "constant" (level stationarity) or "trend" (trend stationarity).
    ``inference="simulated"`` (default) reads the p-value from the statistic simulated under a
    stationary AR(1) for this T and bandwidth, conditional on the residuals' autocorrelation (the
    table p-values reject 8–14 % of the time at 5 % under AR(0.5) noise at T = 30); its price is
    power: at T = 30 a random walk is found non-stationary only 7–25 % of the time.

    Notes
    -----
    ``e_t`` residuals of ``y_t`` on ``d_t``, ``S_t = Σ_{s≤t} e_s``,
    ``KPSS = Σ_t S_t² / (T² λ²)`` with ``λ²`` the Bartlett long-run variance of ``e_t``.
    H0: stationary around ``d_t``; H1: unit root. Reject for large values.

    References
    ----------
    kpss1992 (see the module docstring).
    """
    trend = check_trend(trend, ("constant", "trend"))
    data = _series(y, min_obs=_min_obs(None, trend), purpose="a KPSS test")
    bandwidth = _hac_lags(hac_lags, data.nobs)
    res = _run(lambda: KPSS(data.values, lags=bandwidth, trend=_CONSTANT_OR_TREND[trend]), data,
               "a KPSS test")
    pvalue, cv, extra, warn = _inference("kpss", "KPSS", res, data, trend, inference,
                                         hac_lags=bandwidth)
    return TestResult(
        test="KPSS", statistic=res.stat, pvalue=pvalue, critical_values=cv,
        null=f"{STATIONARY} around {_TREND_WORDS[trend]}", alternative=UNIT_ROOT, nobs=res.nobs,
        details={"trend": trend, "hac_lags": int(res.lags), "kernel": "Bartlett",
                 "sample": data.span, "series_span": data.span, **extra},
        reference="kpss1992", warnings=tuple(warn))


def dfgls_test(y: Any, *, trend: Trend = "constant", lags: int | str = "aic",
               max_lags: int | None = None, inference: str = "simulated") -> TestResult:
    """DF-GLS test of Elliott, Rothenberg & Stock (through ``arch.unitroot.DFGLS``).

    ``trend`` is "constant" or "trend"; ``lags``, ``max_lags`` and ``inference`` as in
    :func:`adf_test` (arch's asymptotic p-values reject 15–22 % of the time at 5 % at T = 30).

    Notes
    -----
    The series is GLS-detrended with ``ᾱ = 1 - c̄/T`` (c̄ = 7 for a constant, 13.5 for a trend),
    then an ADF regression without deterministic terms is run on the detrended series. H0: unit
    root; H1: stationary around ``d_t``.

    References
    ----------
    ers1996 (see the module docstring).
    """
    trend = check_trend(trend, ("constant", "trend"))
    fixed, method, max_lags = _lag_options(lags, max_lags)
    data = _series(y, min_obs=_min_obs(fixed, trend), purpose="a DF-GLS test")
    bound = None if fixed is not None else _search_bound(max_lags, data.nobs, trend)
    res = _run(lambda: DFGLS(data.values, lags=fixed, trend=_CONSTANT_OR_TREND[trend], max_lags=bound,
                             method=_ARCH_METHOD[method]), data, "a DF-GLS regression")
    pvalue, cv, extra, warn = _inference("dfgls", "DF-GLS", res, data, trend, inference,
                                         lags=fixed, max_lags=bound or 0, rule=method)
    return TestResult(
        test="DF-GLS", statistic=res.stat, pvalue=pvalue, critical_values=cv,
        null=UNIT_ROOT, alternative=f"{STATIONARY} around {_TREND_WORDS[trend]}", nobs=res.nobs,
        details={"trend": trend, "lags": int(res.lags),
                 "lag_choice": "fixed" if fixed is not None else method, "max_lags": bound,
                 "sample": _sample(data, int(res.lags) + 1), "series_span": data.span, **extra},
        reference="ers1996", warnings=tuple(warn))


def za_test(y: Any, *, model: str = "level", lags: int | str = "aic", max_lags: int | None = None,
            trim: float = 0.15, inference: str = "simulated") -> TestResult:
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
    inference : {"simulated", "asymptotic"}
        "simulated" (default): the p-value and critical values of the statistic simulated without
        a break for the series' own T, model, trim and lag rule, conditional on the series'
        first-order autocorrelation of Δy (``_calibrate``). "asymptotic": arch's quantiles
        (Zivot & Andrews 1992, simulated for T = 100), which reject 10–14 % of the time at 5 %
        for T = 30–40 (``docs/methods/size.md``); the result then says so.

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
    inference = check_choice("inference", inference, INFERENCE)
    trim = check_number("trim", trim, low=0.0, high=1 / 3, hint=", a fraction such as 0.15")
    if trim == 0:
        raise SpecError("trim=0 leaves no room at the ends; use a fraction such as 0.15.")
    fixed, method, max_lags = _lag_options(lags, max_lags)
    data = _series(y, min_obs=max(_min_obs(fixed, "trend", 2), math.ceil(3 / trim)),
                   purpose="a Zivot-Andrews test")
    bound = None if fixed is not None else _search_bound(max_lags, data.nobs, "trend")
    res = _run(lambda: ZivotAndrews(data.values, lags=fixed, trend=ZA_MODELS[model],
                                    trim=float(trim), max_lags=bound, method=_ARCH_METHOD[method]),
               data, "a Zivot-Andrews search")
    all_stats = np.asarray(res._all_stats, dtype=float)  # arch keeps the statistic by index
    bp = int(np.nanargmin(np.where(np.isfinite(all_stats), all_stats, np.inf)))
    last_old = bp - 2 if model == "trend" else bp - 1
    extra: dict[str, Any]
    if inference == "asymptotic":
        pvalue, cv = float(res.pvalue), _cv(res.critical_values)
        extra = {"pvalue_source": "Zivot & Andrews (1992) quantiles (T = 100) via arch"}
    else:
        table = unit_null("za", data.nobs, model, lags=fixed, max_lags=bound or 0, rule=method,
                          trim=float(trim))
        phi = float(phi_hat_of("za", data.values[:, None], model)[0])
        pvalue = float(table.pvalue(np.array([res.stat]), np.array([phi]), tail="lower")[0])
        cv = table.quantiles(phi, (0.01, 0.05, 0.10), tail="lower")
        extra = {"pvalue_source": table.label, "noise_autocorrelation": round(phi, 4)}
    size, warn = size_details("Zivot-Andrews", None, data.nobs, inference,
                              options=f"inference={inference}; model={model}")
    return TestResult(
        test="Zivot-Andrews", statistic=res.stat, pvalue=pvalue,
        critical_values=cv, null=f"{UNIT_ROOT} (no break)",
        alternative=f"{STATIONARY} with one break in the {model if model != 'both' else 'level and trend'}",
        nobs=res.nobs,
        details={"model": model, "lags": int(res.lags),
                 "lag_choice": "fixed" if fixed is not None else method, "max_lags": bound,
                 "trim": float(trim),
                 "break_year": int(data.years[last_old]), "arch_index": bp,
                 "break_convention": "break_year is the last year of the old regime",
                 "sample": _sample(data, int(res.lags) + 1), "series_span": data.span,
                 "inference": inference, **extra, "size": size},
        reference="zivotandrews1992", warnings=tuple(warn))


def lee_strazicich_test(y: Any, *, model: str = "level", n_breaks: int = 1,
                        lags: int | str = "sequential-t", max_lags: int | None = None,
                        trim: float = 0.1, inference: str = "simulated") -> TestResult:
    """Lee–Strazicich minimum LM unit-root test with one or two breaks under both hypotheses.

    Parameters
    ----------
    model : {"level", "both"}
        "level": the crash model (level shifts); "both": level and trend shifts.
    n_breaks : {1, 2}
    lags : int or "sequential-t"
        Augmentation lags; "sequential-t" chooses them at every break date by the
        general-to-specific rule (start at ``max_lags``, drop the last lag while :math:`|t| < 1.645`), as
        in the papers.
    max_lags : int, optional
        Largest lag order; default ``floor(4 (T/100)^(1/4))`` bounded by T (the papers use 8 at
        T = 100; pass ``max_lags=8`` to reproduce them).
    trim : float
        Break dates are searched in ``[trim T, (1 - trim) T]``; two breaks at least 2 apart.
    inference : {"simulated", "asymptotic"}
        "simulated" (default): p-value and critical values of the statistic simulated under the
        null (a unit root; the statistic is invariant to the breaks' sizes under the null only
        asymptotically, so the table is simulated without breaks) for the series' own T, model,
        trim, lag rule and number of breaks, conditional on the first-order autocorrelation of
        Δy (``_calibrate``; two breaks: 400 draws per grid point, several minutes the first time
        for each T, then cached). "asymptotic": the papers' tables for T = 100 and no p-value;
        they reject 13–19 % of the time at 5 % for T = 30–40 (``docs/methods/size.md``).

    Notes
    -----
    ``Z_t = (1, t, D_1t, [DT_1t], D_2t, [DT_2t])`` with ``D_jt = 1(t > T_Bj)`` and
    ``DT_jt = (t - T_Bj) 1(t > T_Bj)``. Estimate ``δ`` from ``Δy_t = ΔZ_t'δ + u_t``, set
    ``ψ = y_1 - Z_1'δ`` and ``S_t = y_t - ψ - Z_t'δ``, then run
    ``Δy_t = ΔZ_t'd + φ S_{t-1} + Σ_{i=1..k} γ_i ΔS_{t-i} + e_t``. The LM statistic τ is the
    t-ratio of φ, minimised over the break dates. H0: unit root with breaks (φ = 0); H1:
    stationary with breaks (φ < 0). Breaks enter under both hypotheses, so a rejection means
    stationarity, not "a unit root with a break".

    Critical values with ``inference="asymptotic"``: the papers' tables for T = 100
    (``_lee_strazicich_tables``, from memory); for the "both" model the row of the nearest
    tabulated break fraction. No p-value is then available (``pvalue`` is NaN); compare the
    statistic with ``critical_values``.

    References
    ----------
    leestrazicich2003; leestrazicich2004 (see the module docstring).
    """
    model = check_choice("model", model, LS_MODELS)
    inference = check_choice("inference", inference, INFERENCE)
    breaks = check_int("n_breaks", n_breaks, minimum=1, maximum=2)
    lags = check_lags(lags, rules=("sequential-t",))
    max_lags = check_max_lags(max_lags)
    trim = check_number("trim", trim, low=0.0, high=0.5, inclusive=False,
                        hint=", a fraction such as 0.1")
    n_det = 1 + breaks * (2 if model == "both" else 1)
    if max_lags is None:
        nobs_raw = series_values(y, purpose="a Lee-Strazicich test")[0].size
        max_lags = lag_bound(nobs_raw, "trend")
    k_max = lags if isinstance(lags, int) else max_lags
    data = _series(y, min_obs=k_max + 2 * n_det + 8, purpose="a Lee-Strazicich test")
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
    warn = []
    pvalue = math.nan
    extra: dict[str, Any] = {"inference": inference}
    if inference == "asymptotic":
        cv, source = ls_tables.lookup(model, fractions)
        if nobs < 50:
            warn.append(f"T={nobs}: the critical values are for T=100; small samples shift them.")
    else:
        table = unit_null("ls", nobs, model, lags=lags if isinstance(lags, int) else None,
                          max_lags=max_lags, rule="sequential-t", trim=float(trim),
                          n_breaks=breaks)
        phi = float(phi_hat_of("ls", data.values[:, None], model)[0])
        pvalue = float(table.pvalue(np.array([stat]), np.array([phi]), tail="lower")[0])
        cv = table.quantiles(phi, (0.01, 0.05, 0.10), tail="lower")
        source = table.label
        extra.update({"pvalue_source": table.label, "noise_autocorrelation": round(phi, 4)})
    size, size_warn = size_details("Lee-Strazicich", None, nobs, inference,
                                   options=f"inference={inference}; model={model}; "
                                           f"n_breaks={breaks}")
    warn += size_warn
    return TestResult(
        test="Lee-Strazicich", statistic=stat, pvalue=pvalue, critical_values=cv,
        null=f"{UNIT_ROOT} with {breaks} break(s)",
        alternative=f"{STATIONARY} with {breaks} break(s)", nobs=nobs - k - 1,
        details={"model": model, "n_breaks": breaks, "lags": k,
                 "lag_choice": "fixed" if isinstance(lags, int) else "sequential-t (general to specific)",
                 "max_lags": max_lags, "trim": float(trim),
                 "break_years": [int(data.years[d - 1]) for d in best],
                 "break_fractions": [round(f, 4) for f in fractions],
                 "break_convention": "break_years are the last years of the old regimes",
                 "critical_values_source": source, "sample": _sample(data, k + 1),
                 "series_span": data.span, **extra, "size": size},
        reference="leestrazicich2003; leestrazicich2004", warnings=tuple(warn))
