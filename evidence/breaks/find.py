"""Multiple structural breaks in one series: global partitions, tests, selection, intervals.

Model ``y_t = x_t' beta + z_t' delta_j + u_t`` for ``t`` in regime ``j = 1..m+1``: ``z`` holds the
regressors whose coefficients change (a constant for ``model="level"``, a constant and a trend for
``"trend"``, plus any ``regressors``), ``x`` those held fixed across regimes (``fixed``; partial
structural change). Break dates minimise the total SSR over all partitions with regimes of at
least ``h = floor(trim T)`` observations (dynamic programming, Bai & Perron 2003); with fixed
regressors the partition and ``beta`` are updated in turn until the SSR stops falling.

References
----------
baiperron1998 : Bai, J. & Perron, P. (1998). Estimating and testing linear models with multiple
    structural changes. Econometrica 66(1), 47–78.
baiperron2003 : Bai, J. & Perron, P. (2003). Computation and analysis of multiple structural change
    models. Journal of Applied Econometrics 18(1), 1–22.
bai1997 : Bai, J. (1997). Estimation of a change point in multiple regression models. Review of
    Economics and Statistics 79(4), 551–563.
liuwuzidek1997 : Liu, J., Wu, S. & Zidek, J. V. (1997). On segmented multivariate regression.
    Statistica Sinica 7(2), 497–525.
lehmannromano2005 : Lehmann, E. L. & Romano, J. P. (2005). Testing Statistical Hypotheses, 3rd ed.
    Springer, chapter 4 (similar tests, Neyman structure).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evidence._hac import newey_west_lags
from evidence._size_card import size_note
from evidence._validation import check_alpha, check_choice, check_int
from evidence.breaks import _general
from evidence.breaks import tests as bt
from evidence.breaks._calibrate import COVERED, TABLE_REPS, TABLE_SEED, null_table
from evidence.breaks._core import INFERENCES, SELECTIONS, Spec, describe
from evidence.breaks._input import check_breaks, check_model, check_trim, regressor_matrix, series_input
from evidence.breaks._simulate import NULL_GRID, NULL_REPS, NULL_SEED, null_draws
from evidence.breaks.result import CONVENTION, BreakResult
from evidence.breaks.segment import regime_design
from evidence.errors import SpecError
from evidence.parallel import ExecutorLike
from evidence.results import TestResult

__all__ = ["find_breaks", "information_criteria", "regime_fit", "SHORT_TREND_WARNING",
           "ASYMPTOTIC_WARNING",
           "ROBUST_SIZE", "make_spec", "size_test_name"]

regime_fit = _general.regime_fit

#: Finite-sample caution for the asymptotic p-values of the trend model (our Monte Carlo).
SHORT_TREND_WARNING = (
    "T={nobs} is short for the asymptotic p-values of the trend model: with i.i.d. normal errors "
    "and trim 0.15 they reject a true no-break null about 6 % of the time for k=1 and up to about "
    "11 % for k=3-5 at T=34, and with AR(1) errors rho=0.5 UDmax rejects in about 67 % (nominal "
    "5 %); inference='simulated' holds its size.")

#: Caution for the limiting-distribution p-values under serial correlation (our Monte Carlo).
ASYMPTOTIC_WARNING = (
    "asymptotic p-values assume serially uncorrelated errors: with AR(1) noise rho=0.5 the "
    "trend model's UDmax rejected a true no-break null in 67-74 % of series at T=34-60 (5 % "
    "nominal, docs/methods/size.md); inference='simulated' holds its size.")

#: Rejection rates of a true no-break null at 5 % nominal by the HAC (``robust``) and
#: regime-variance tests, UDmax with max_breaks=3: (smallest, largest) over i.i.d. and AR(1)
#: rho=0.5 errors, pooled and regime variances; 200 replications each (our Monte Carlo, seed 11).
ROBUST_SIZE = {"level": {34: (0.56, 0.87), 60: (0.38, 0.56), 100: (0.28, 0.37),
                         200: (0.11, 0.19), 400: (0.07, 0.11)},
               "trend": {34: (0.98, 1.0), 60: (0.87, 0.98), 100: (0.81, 0.94), 200: (0.52, 0.57)}}
#: Smallest T at which the robust variants are allowed (below, they are refused).
ROBUST_MIN_T = {"level": 200, "trend": 10**9}


def information_criteria(ssr: np.ndarray, nobs: int, q: int, p: int) -> tuple[np.ndarray, np.ndarray]:
    """BIC (Yao 1988) and LWZ (Liu, Wu & Zidek 1997) for ``m = 0..M`` (last axis of ``ssr``).

    ``BIC(m) = ln(SSR_m / T) + p* ln(T) / T`` and
    ``LWZ(m) = ln(SSR_m / (T - p*)) + (p* / T) 0.299 (ln T)^2.1`` with ``p* = (m+1) q + m + p``.
    """
    m = np.arange(np.shape(ssr)[-1])
    k = (m + 1) * q + m + p
    with np.errstate(divide="ignore", invalid="ignore"):
        bic = np.log(ssr / nobs) + k * np.log(nobs) / nobs
        lwz = np.log(ssr / (nobs - k)) + (k / nobs) * 0.299 * np.log(nobs) ** 2.1
    return bic, lwz


def size_test_name(inference: str) -> str:
    """The size card's name of the UDmax test with this inference."""
    return f"Bai-Perron UDmax ({inference})"


def _size_options(model: str, trim: float, max_breaks: int) -> str:
    return f"model={model}, trim={trim:g}, max_breaks={max_breaks}"


def size_details(inference: str, model: str, trim: float, max_breaks: int, nobs: int) -> dict[str, Any]:
    """The size card's note for this configuration (or why there is none)."""
    note = size_note(size_test_name(inference), None, nobs,
                     options=_size_options(model, trim, max_breaks))
    return note or {"note": f"no size-card entry for {_size_options(model, trim, max_breaks)} "
                            f"with inference={inference}; see docs/methods/size.md"}


def make_spec(model: str, nobs: int, h: int, max_breaks: int, trim: float, select: str,
              alpha: float, inference: str, executor: ExecutorLike) -> Spec:
    """The shared settings of :func:`evidence.breaks._core.describe` for series of length ``nobs``."""
    q = 1 if model == "level" else 2
    design = "trend" if model == "trend" else "level"
    draws = null_draws(q, trim, design=design, executor=executor)
    kk = min(max_breaks, draws.shape[1])
    weights = bt.wdmax_weights(q, trim, draws, kk, use_table=design == "level")
    weights = np.concatenate([weights, np.full(max_breaks - kk, weights[-1])])
    table = (null_table(model, nobs, h, max_breaks, weights, executor=executor)
             if inference == "simulated" else None)
    return Spec(model=model, nobs=nobs, h=h, max_breaks=max_breaks, select=select, alpha=alpha,
                inference=inference, weights=weights, draws=draws, table=table)


def _check_robust(model: str, nobs: int) -> list[str]:
    """Refuse the robust variants where they do not hold their size; otherwise warn with the figure."""
    measured = ROBUST_SIZE[model]
    figures = "; ".join(f"T={t}: {lo:.0%}-{hi:.0%}" for t, (lo, hi) in measured.items())
    if nobs < ROBUST_MIN_T[model]:
        raise SpecError(f"robust=True / regime_variances=True are refused for model='{model}' at "
                        f"T={nobs}: their HAC and regime variances collapse in short regimes and "
                        f"they reject a true no-break null far too often (our Monte Carlo at 5 % "
                        f"nominal, i.i.d. and AR(1) errors: {figures}). Use the default "
                        "inference='simulated', which holds its size under AR(1) errors.")
    near = min(measured, key=lambda t: abs(np.log(t / nobs)))
    lo, hi = measured[near]
    return [f"the HAC / regime-variance tests are liberal: at T={near} they rejected a true "
            f"no-break null in {lo:.0%}-{hi:.0%} of series at 5 % nominal (our Monte Carlo)."]


def find_breaks(y: Any, *, model: str = "trend", max_breaks: int = 3, trim: float = 0.20,
                select: str = "udmax-lwz", alpha: float = 0.05, inference: str = "simulated",
                regressors: Any = None, fixed: Any = None, robust: bool = False,
                regime_variances: bool = False, hac_lags: int | None = None, years: Any = None,
                executor: ExecutorLike = "serial") -> BreakResult:
    """Find multiple structural breaks in one series (Bai–Perron global least squares).

    Parameters
    ----------
    y : pandas.Series indexed by year, or 1-D array
        The series (e.g. log emission intensity). Leading and trailing missing values are dropped
        (recorded in ``details``); a missing value inside the series raises ``DataError``.
    model : {"trend", "level"}
        Intercept and slope per regime, or a mean per regime.
    max_breaks : int
        Largest number of breaks searched (at most ``T // floor(trim T) - 1``).
    trim : float
        Minimum regime length as a fraction of T.
    select : {"udmax-lwz", "sequential", "bic", "lwz"}
        How the number of breaks is chosen. ``"udmax-lwz"``: no break unless UDmax rejects at
        ``alpha``, then LWZ on the AR(1) innovation variance; ``"sequential"``: UDmax, then
        supF(l+1|l) at ``alpha``; ``"bic"``, ``"lwz"``: the criteria on the SSR.
    alpha : float
        Level of the tests used by the selection and of the break-date intervals (``1 - alpha``).
    inference : {"simulated", "asymptotic"}
        ``"simulated"``: p-values from the finite-sample null at this T with AR(1) noise,
        conditional on the residual autocorrelation (holds its size for AR(1) coefficients up
        to 0.8); intervals and standard errors use the long-run variance of that
        autocorrelation. ``"asymptotic"``: the limiting distributions and i.i.d. errors (the
        classical procedure; the result states its measured size). User ``regressors``,
        ``fixed`` regressors and the robust variants always use ``"asymptotic"``.
    regressors, fixed : DataFrame or 2-D array, optional
        Extra regressors whose coefficients change across regimes (``model="level"`` only; they
        should be stationary for the published critical values to apply), and regressors whose
        coefficients stay fixed (partial structural change), aligned with ``y``.
    robust, regime_variances : bool
        HAC (Newey–West, ``hac_lags`` lags, default ``floor(4 (T/100)^(2/9))``) and regime-wise
        variances in the tests. Refused where our Monte Carlo shows they do not hold their size
        (``ROBUST_SIZE``: the level model below T = 200, the trend model at every T measured).
    years : sequence of int, optional
        Years of an array ``y`` (default 1..T).
    executor : str, executor or dask Client
        Runs the one-off simulation of the null distributions (``"serial"``, ``"processes"``,
        ``"dask"``, a scheduler address or a running Client, which is never closed; see
        :func:`evidence.parallel.using_executor`). The result does not depend on it.

    Returns
    -------
    BreakResult

    Notes
    -----
    H0: no break; H1: k breaks (supF(k)), 1..max_breaks breaks (UDmax, WDmax), l+1 vs l breaks
    (sequential). See ``evidence.breaks.tests`` for the statistics, ``evidence.breaks._calibrate``
    for the simulated p-values, ``evidence.breaks.dates`` for the intervals. A break year is the
    last year of the old regime.

    Examples
    --------
    >>> import numpy as np
    >>> y = np.r_[np.zeros(20), np.ones(20)] + 0.1 * np.sin(np.arange(40))
    >>> find_breaks(y, model="level", max_breaks=2, years=range(1981, 2021)).break_years
    (2000,)
    """
    model = check_model(model)
    select = check_choice("select", select, SELECTIONS)
    inference = check_choice("inference", inference, INFERENCES)
    trim = check_trim(trim)
    alpha = check_alpha(alpha)
    if alpha >= 0.5:
        raise SpecError(f"alpha={alpha!r} must be below 0.5, e.g. 0.05.")
    hac_lags = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    values, index, _, label = series_input(y, years, "find_breaks")
    nobs = values.size
    if model == "trend" and regressors is not None:
        raise SpecError("model='trend' with changing regressors is not supported yet: its null "
                        "distribution (a trend with stationary regressors) is not available. Use "
                        "model='trend' without regressors (they may be held fixed with fixed=), or "
                        "model='level' with stationary regressors.")
    extra, extra_names = regressor_matrix(regressors, nobs, label, "regressors")
    x, x_names = regressor_matrix(fixed, nobs, label, "fixed")
    z = regime_design(model, nobs)
    z_names = ["const"] if model == "level" else ["const", "trend"]
    if extra is not None:
        z = np.column_stack([z, extra])
        z_names += extra_names
    q, p = z.shape[1], 0 if x is None else x.shape[1]
    h = check_breaks(label, nobs, q, p, trim, max_breaks, int(index[0]), int(index[-1]))
    warnings: list[str] = []
    if robust or regime_variances:
        warnings += _check_robust(model, nobs)
    lags = newey_west_lags(nobs) if hac_lags is None else hac_lags
    builtin = extra is None and x is None and not robust and not regime_variances
    if not builtin and inference == "simulated":
        inference = "asymptotic"
        warnings.append("p-values are from the limiting distributions (i.i.d. errors): the "
                        "finite-sample tables cover the built-in models without extra, fixed or "
                        "robust terms; they are not calibrated for serial correlation.")
    base = {"model": model, "trim": trim, "q": q, "p": p, "robust": robust,
            "regime_variances": regime_variances, "hac_lags": lags if robust else None,
            "inference": inference}
    spec = make_spec(model, nobs, h, max_breaks, trim, select, alpha, inference, executor)
    if builtin:
        parts = _builtin(values, index, z, z_names, spec, base)
    else:
        parts = _classical(values, index, z, z_names, x, x_names, spec, base, trim, robust,
                           regime_variances, lags)
    if inference == "asymptotic" and model == "trend" and nobs < 60:
        warnings.append(SHORT_TREND_WARNING.format(nobs=nobs))
    elif inference == "asymptotic" and builtin:
        warnings.append(ASYMPTOTIC_WARNING)
    warnings += parts.pop("warnings")
    details = {**base, "h": h, "select": select, "alpha": alpha, "convention": CONVENTION,
               "years": f"{index[0]}-{index[-1]}", **parts.pop("sources"),
               "size": size_details(inference, model, trim, max_breaks, nobs)}
    details.update(parts.pop("details"))
    return BreakResult(
        series=label, model=model + (" + regressors" if extra is not None else ""),
        data=pd.Series(values, index=pd.Index(index, name="year"), name=label),
        nobs=nobs, trim=trim, max_breaks=max_breaks, select=select, alpha=alpha, details=details,
        warnings=tuple(warnings), **parts)


def _sources(spec: Spec) -> dict[str, str]:
    if spec.inference == "simulated":
        return {"critical_values_source": "simulated finite-sample null at this T, conditional "
                                          "on the residual autocorrelation",
                "pvalue_source": f"simulated finite-sample null at T={spec.nobs} with AR(1) noise, "
                                 f"rho in [0, {COVERED}], conditional on the no-break residual "
                                 f"autocorrelation ({TABLE_REPS} replications per rho, seed "
                                 f"{TABLE_SEED})"}
    tabled = spec.model == "level"
    return {"critical_values_source": ("Bai & Perron (1998, 2003) tables where published "
                                       "(q<=3, trim 0.05/0.10/0.15), else simulated") if tabled
            else "simulated limiting distribution of the trend model (the published tables "
                 "assume regressors with stable moments and do not apply to a trend)",
            "pvalue_source": f"simulated limiting distribution, {spec.model} design ({NULL_REPS} "
                             f"replications, grid {NULL_GRID} with two-grid extrapolation, "
                             f"seed {NULL_SEED})"}


def _builtin(values: np.ndarray, index: np.ndarray, z: np.ndarray, z_names: list[str], spec: Spec,
             base: dict[str, Any]) -> dict[str, Any]:
    """The built-in models through the shared vectorised procedure."""
    core = describe(values[None], spec, sequential=True)
    K = spec.max_breaks
    r = core["r"][0]
    tests = _tests(core, spec, base)
    chosen = int(core["n_breaks"][0])
    cut = [int(b) for b in core["breaks"][0, chosen, :chosen]]
    long_run = float(core["long_run"][0])
    fit = regime_fit(values, z, None, cut, robust=False, regime_variances=False, hac_lags=0)
    fit["cov"] = fit["cov"] * long_run
    _, regimes = _general.describe_partition(values, z, None, cut, fit, index, z_names, False, 0,
                                             spec.alpha)
    intervals = pd.DataFrame({"break_year": index[core["index"]].astype(int),
                              "lower": index[core["lower"]].astype(int),
                              "upper": index[core["upper"]].astype(int)},
                             columns=["break_year", "lower", "upper"])
    warnings = []
    ar1 = float(core["ar1"][0])
    covered = bool(core["covered"][0])
    if spec.inference == "simulated" and not covered:
        warnings.append(f"the residual AR(1) coefficient of the selected fit is about {ar1:.2f} "
                        f"(bias-adjusted), above {COVERED}, the largest value for which the "
                        "p-values are calibrated: the tests may over-reject (about 12 % at 5 % "
                        "nominal for rho = 0.9, T = 34, our Monte Carlo).")
    ssr = core["ssr"][0]
    bic, lwz = core["bic"][0], core["lwz"][0]
    m_index = pd.RangeIndex(K + 1, name="m")
    return {"n_breaks": chosen, "break_years": tuple(int(index[b]) for b in cut),
            "intervals": intervals, "regimes": regimes,
            "fixed_params": pd.DataFrame({"estimate": [], "std_error": []},
                                         index=pd.Index([], name="term")),
            "ssr": pd.Series(ssr, index=m_index, name="ssr"),
            "partitions": {m: tuple(int(index[b]) for b in core["breaks"][0, m, :m])
                           for m in range(K + 1)},
            "criteria": pd.DataFrame({"bic": bic, "lwz": lwz, "lwz_ar": core["lwz_ar"][0],
                                      "resid_ar1": r}, index=m_index),
            "tests": tests,
            "fitted": pd.Series(fit["fitted"], index=pd.Index(index, name="year"), name="fitted"),
            "warnings": warnings, "sources": _sources(spec),
            "details": {"resid_ar1": ar1, "ar1_covered": covered, "long_run_factor": long_run,
                        "table_seed": TABLE_SEED if spec.inference == "simulated" else None}}


def _tests(core: dict[str, Any], spec: Spec, base: dict[str, Any]) -> dict[str, TestResult]:
    K, nobs = spec.max_breaks, spec.nobs
    r = core["r"][0]
    tabled = spec.model == "level"
    trim = base["trim"]

    def cvs(name: str, r_cond: float, fallback: dict[float, float] | None) -> dict[float, float]:
        table = spec.table if spec.inference == "simulated" else None
        if table is not None and name in table.stats:
            return table.critical_values(name, r_cond)
        return fallback or {}

    extra = ({"conditioning_ar1": float(r[0])} if spec.inference == "simulated" else {})
    tests: dict[str, TestResult] = {}
    for k in range(1, K + 1):
        fallback = (bt.table_critical_values("supf", spec.q, trim, k) if tabled else None) or (
            bt.simulated_critical_values(spec.draws[:, k - 1]) if k <= spec.draws.shape[1] else None)
        tests[f"supF({k})"] = _general.make_test(
            f"supF({k})", float(core["supf"][0, k - 1]), float(core["p_supf"][0, k - 1]),
            cvs(f"supF({k})", r[0], fallback), nobs, {**base, "breaks": k, **extra},
            null="no break", alternative=f"{k} breaks")
    kk = min(K, spec.draws.shape[1])
    for name, key in (("UDmax", "udmax"), ("WDmax", "wdmax")):
        dist = spec.draws[:, :kk].max(axis=1) if key == "udmax" else (
            spec.draws[:, :kk] * spec.weights[:kk]).max(axis=1)
        fallback = (bt.table_critical_values(key, spec.q, trim, kk) if kk == 5 and tabled else None
                    ) or bt.simulated_critical_values(dist)
        tests[name] = _general.make_test(
            name, float(core[key][0]), float(core[f"p_{key}"][0]), cvs(name, r[0], fallback), nobs,
            {**base, "max_breaks": K, **extra}, null="no break", alternative=f"1 to {K} breaks")
    one = spec.draws[:, 0]
    for ell in range(K):
        name = f"supF({ell + 1}|{ell})"
        stat = float(core["sequential"][0, ell])
        fallback = (bt.table_critical_values("sequential", spec.q, trim, ell + 1) if tabled else None
                    ) or {lv: float(np.quantile(one, (1 - lv) ** (1 / (ell + 1)))) for lv in bt.LEVELS}
        detail = {**base, "breaks_under_null": ell}
        if spec.inference == "simulated":
            detail["conditioning_ar1"] = float(r[ell])
        tests[name] = _general.make_test(
            name, stat, float(core["p_sequential"][0, ell]) if np.isfinite(stat) else float("nan"),
            cvs(name, r[ell], fallback), nobs, detail, null=f"{ell} breaks",
            alternative=f"{ell + 1} breaks")
    return tests


def _classical(values: np.ndarray, index: np.ndarray, z: np.ndarray, z_names: list[str],
               x: np.ndarray | None, x_names: list[str], spec: Spec, base: dict[str, Any],
               trim: float, robust: bool, regime_variances: bool, lags: int) -> dict[str, Any]:
    """User regressors, fixed regressors and the robust variants (limiting distributions)."""
    nobs, K, h = spec.nobs, spec.max_breaks, spec.h
    q = z.shape[1]
    p = 0 if x is None else x.shape[1]
    builtin_design = z.shape[1] == (1 if spec.model == "level" else 2)
    ssr, breaks, table = _general.partitions(values, z, x, spec.model, builtin_design, h, K)
    opts: dict[str, Any] = {"robust": robust, "regime_variances": regime_variances, "hac_lags": lags}
    design = "trend" if spec.model == "trend" else "level"
    draws = null_draws(q, trim, design=design)
    tests, seq_p, warnings = _general.classical_tests(
        values, z, x, ssr, breaks, table, h=h, trim=trim, tabled=design == "level", draws=draws,
        opts=opts, base=base)
    bic, lwz = information_criteria(ssr, nobs, q, p)
    innovation = _general.innovation_by_m(values, z, x, breaks)
    from evidence.breaks._batch import lwz_ar

    lwz_innov = lwz_ar(innovation, nobs, q, p)
    if spec.select == "bic":
        chosen = int(np.nanargmin(bic))
    elif spec.select == "lwz":
        chosen = int(np.nanargmin(lwz))
    elif spec.select == "udmax-lwz":
        chosen = 1 + int(np.nanargmin(lwz_innov[1:])) if tests["UDmax"].pvalue < spec.alpha else 0
    else:
        chosen = 0
        while chosen < K and seq_p[chosen] < spec.alpha:
            chosen += 1
    cut = [int(b) for b in breaks[chosen, :chosen]]
    fit = regime_fit(values, z, x, cut, **opts)
    intervals, regimes = _general.describe_partition(values, z, x, cut, fit, index, z_names,
                                                     robust, lags, spec.alpha)
    fixed_frame = pd.DataFrame({"estimate": fit["coef"][:p],
                                "std_error": np.sqrt(np.diag(fit["cov"]))[:p]},
                               index=pd.Index(x_names, name="term"))
    m_index = pd.RangeIndex(K + 1, name="m")
    return {"n_breaks": chosen, "break_years": tuple(int(index[b]) for b in cut),
            "intervals": intervals, "regimes": regimes, "fixed_params": fixed_frame,
            "ssr": pd.Series(ssr, index=m_index, name="ssr"),
            "partitions": {m: tuple(int(index[b]) for b in breaks[m, :m]) for m in range(K + 1)},
            "criteria": pd.DataFrame({"bic": bic, "lwz": lwz, "lwz_ar": lwz_innov}, index=m_index),
            "tests": tests,
            "fitted": pd.Series(fit["fitted"], index=pd.Index(index, name="year"), name="fitted"),
            "warnings": warnings, "sources": _sources(spec), "details": {}}
