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
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pandas as pd

from evidence._hac import long_run_cov, newey_west_lags
from evidence._validation import check_alpha, check_choice, check_int
from evidence.breaks import tests as bt
from evidence.breaks._input import (SELECTIONS, check_breaks, check_model, check_trim,
                                     regressor_matrix, series_input)
from evidence.breaks._simulate import NULL_GRID, NULL_REPS, NULL_SEED, null_draws
from evidence.breaks.dates import break_interval
from evidence.breaks.result import CONVENTION, BreakResult
from evidence.breaks.segment import (optimal_partitions, regime_design, segment_bounds,
                                     ssr_table_general, ssr_tables)
from evidence.errors import SpecError
from evidence.parallel import ExecutorLike
from evidence.results import TestResult

__all__ = ["find_breaks", "information_criteria", "regime_fit", "SHORT_TREND_WARNING"]

#: Finite-sample caution for the trend model (our Monte Carlo, i.i.d. normal errors, trim 0.15).
SHORT_TREND_WARNING = (
    "T={nobs} is short for the trend model: with i.i.d. normal errors and trim 0.15 the asymptotic "
    "supF p-values reject a true no-break null about 6 % of the time for k=1 and up to about 11 % "
    "for k=3-5 at T=34 (nominal 5 %); treat p-values near 0.05 with care.")


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


def regime_fit(y: np.ndarray, z: np.ndarray, x: np.ndarray | None, breaks: list[int], *,
               robust: bool, regime_variances: bool, hac_lags: int) -> dict[str, Any]:
    """OLS at a partition: coefficients, covariance (T / (T - K) corrected), residuals, fitted."""
    _, coef, cov = bt.wald_equal_regimes(y, z, x, breaks, robust=robust,
                                         regime_variances=regime_variances, hac_lags=hac_lags, pairs=[])
    nobs, q = z.shape
    p = 0 if x is None else x.shape[1]
    bounds = segment_bounds(np.asarray(breaks), nobs)
    fitted = np.zeros(nobs) if x is None else x @ coef[:p]
    for r, (start, end) in enumerate(bounds):
        fitted[start:end + 1] += z[start:end + 1] @ coef[p + r * q:p + (r + 1) * q]
    dof = nobs - coef.size
    return {"coef": coef, "cov": cov * nobs / dof, "fitted": fitted, "resid": y - fitted,
            "bounds": bounds, "p": p}


def _partitions(y: np.ndarray, z: np.ndarray, x: np.ndarray | None, model: str, builtin: bool,
                h: int, max_breaks: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Best SSR and breaks for m = 0..M, and the SSR table (of ``y - x beta`` with fixed regressors)."""
    if x is None:
        table = ssr_tables(y[None], model, h)[0] if builtin else ssr_table_general(y, z, h)
        ssr, breaks = optimal_partitions(table[None], max_breaks, h)
        return ssr[0], breaks[0], table
    full = np.column_stack([x, z])
    coef0, *_ = np.linalg.lstsq(full, y, rcond=None)
    ssr = np.full(max_breaks + 1, np.inf)
    ssr[0] = float(np.sum((y - full @ coef0) ** 2))
    breaks = np.full((max_breaks + 1, max_breaks), -1, dtype=np.int64)
    beta0 = coef0[:x.shape[1]]
    table = ssr_table_general(y - x @ beta0, z, h)
    for m in range(1, max_breaks + 1):
        beta, best, cut = beta0, np.inf, None
        for _ in range(100):
            tab = ssr_table_general(y - x @ beta, z, h)
            _, br = optimal_partitions(tab[None], m, h)
            trial = [int(b) for b in br[0, m, :m]]
            fit = regime_fit(y, z, x, trial, robust=False, regime_variances=False, hac_lags=0)
            value = float(fit["resid"] @ fit["resid"])
            if np.isfinite(best) and value >= best - 1e-12 * max(best, 1.0):
                break  # the SSR stopped falling
            best, cut, beta = value, trial, fit["coef"][:x.shape[1]]
        ssr[m] = best
        breaks[m, :m] = cut
    return ssr, breaks, table


def _test(name: str, statistic: float, draws: np.ndarray | None, cv: dict[float, float] | None,
          nobs: int, details: dict[str, Any], *, null: str, alternative: str, pvalue: float | None = None) -> TestResult:
    if cv is None and draws is not None:
        cv = bt.simulated_critical_values(draws)
        details = {**details, "critical_values_source": "simulated limiting distribution"}
    if pvalue is None:
        pvalue = bt.tail_pvalue(statistic, draws) if draws is not None else math.nan
    return TestResult(test=name, statistic=statistic, pvalue=pvalue, critical_values=cv or {},
                      null=null, alternative=alternative, nobs=nobs, details=details,
                      reference="baiperron1998; baiperron2003")


def find_breaks(y: Any, *, model: str = "trend", max_breaks: int = 5, trim: float = 0.15,
                select: str = "bic", alpha: float = 0.05, regressors: Any = None, fixed: Any = None,
                robust: bool = False, regime_variances: bool = False, hac_lags: int | None = None,
                years: Any = None, executor: ExecutorLike = "serial") -> BreakResult:
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
    select : {"bic", "lwz", "sequential"}
        How the number of breaks is chosen (sequential: supF(l+1|l) at level ``alpha``).
    alpha : float
        Level of the sequential procedure and of the break-date intervals (``1 - alpha``).
    regressors, fixed : DataFrame or 2-D array, optional
        Extra regressors whose coefficients change across regimes (``model="level"`` only; they
        should be stationary for the published critical values to apply), and regressors whose
        coefficients stay fixed (partial structural change), aligned with ``y``.
    robust : bool
        Tests and intervals with a Newey–West (Bartlett) long-run variance (``hac_lags`` lags,
        default ``floor(4 (T/100)^(2/9))``).
    regime_variances : bool
        Tests allow a different error variance (or long-run variance) in each regime.
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
    (sequential). See ``evidence.breaks.tests`` for the statistics, ``evidence.breaks.dates`` for
    the intervals. Critical values come from the Bai & Perron tables where published (q <= 3,
    trim 0.05/0.10/0.15), otherwise from the simulated limiting distribution; p-values always
    from the simulated limiting distribution. A break year is the last year of the old regime.

    Examples
    --------
    >>> import numpy as np
    >>> y = np.r_[np.zeros(20), np.ones(20)] + 0.1 * np.sin(np.arange(40))
    >>> find_breaks(y, model="level", max_breaks=2, years=range(1981, 2021)).break_years
    (2000,)
    """
    model = check_model(model)
    select = check_choice("select", select, SELECTIONS)
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
    lags = newey_west_lags(nobs) if hac_lags is None else hac_lags
    ssr, breaks, table = _partitions(values, z, x, model, extra is None, h, max_breaks)
    opts = {"robust": robust, "regime_variances": regime_variances, "hac_lags": lags}

    homoskedastic = bt.supf_homoskedastic(ssr, nobs, q, p)

    def stat(cut: list[int], pairs: list[int] | None, k: int) -> float:
        if not robust and not regime_variances and pairs is None:
            return float(homoskedastic[k - 1])
        wald, _, _ = bt.wald_equal_regimes(values, z, x, cut, pairs=pairs, **opts)
        regimes = len(cut) + 1
        return wald * (nobs - regimes * q - p) / (nobs * (1 if pairs is not None else k))

    design = "trend" if model == "trend" else "level"
    tabled = design == "level"  # the published tables assume regressors with stable moments
    draws = null_draws(q, trim, design=design, executor=executor)
    k_avail = draws.shape[1]
    base = {"model": model, "trim": trim, "q": q, "p": p, "robust": robust,
            "regime_variances": regime_variances, "hac_lags": lags if robust else None}
    tests: dict[str, TestResult] = {}
    supf = np.full(max_breaks, np.nan)
    warnings: list[str] = []
    if design == "trend" and nobs < 60:
        warnings.append(SHORT_TREND_WARNING.format(nobs=nobs))
    if robust and nobs < 200:
        warnings.append(f"T={nobs}: the HAC-robust tests are liberal in samples of this size (our Monte "
                        "Carlo, level model, AR(1) errors rho=0.3: about 15 % rejections at 5 % "
                        "nominal for T=100, 8-9 % for T=200-400).")
    for k in range(1, max_breaks + 1):
        supf[k - 1] = stat([int(b) for b in breaks[k, :k]], None, k)
        cv = bt.table_critical_values("supf", q, trim, k) if tabled else None
        kd = draws[:, k - 1] if k <= k_avail else None
        if kd is None:
            warnings.append(f"supF({k}): no simulated distribution for {k} breaks at trim={trim}.")
        tests[f"supF({k})"] = _test(f"supF({k})", supf[k - 1], kd, cv, nobs,
                                    {**base, "breaks": k}, null="no break",
                                    alternative=f"{k} breaks")
    kk = min(max_breaks, k_avail)
    weights = bt.wdmax_weights(q, trim, draws, kk, use_table=tabled)
    ud_draws, wd_draws = draws[:, :kk].max(axis=1), (draws[:, :kk] * weights).max(axis=1)
    tests["UDmax"] = _test("UDmax", float(np.nanmax(supf[:kk])), ud_draws,
                           bt.table_critical_values("udmax", q, trim, kk) if kk == 5 and tabled else None,
                           nobs, {**base, "max_breaks": kk}, null="no break",
                           alternative=f"1 to {kk} breaks")
    tests["WDmax"] = _test("WDmax", float(np.nanmax(supf[:kk] * weights)), wd_draws,
                           bt.table_critical_values("wdmax", q, trim, kk) if kk == 5 and tabled else None,
                           nobs, {**base, "max_breaks": kk, "weights": "5% critical values"},
                           null="no break", alternative=f"1 to {kk} breaks")
    one = draws[:, 0]
    seq_p = []
    for ell in range(max_breaks):
        cut = [int(b) for b in breaks[ell, :ell]]
        splits = bt.split_segments(table, cut, nobs, h)
        best = 0.0
        for r, (tau, _, _) in enumerate(splits):
            if tau < 0:
                continue
            best = max(best, stat(sorted(cut + [tau]), [r], ell + 1))
        cv = bt.table_critical_values("sequential", q, trim, ell + 1) if tabled else None
        pval = 1.0 - float(np.mean(one < best)) ** (ell + 1)
        if cv is None:
            cv = {lv: float(np.quantile(one, (1 - lv) ** (1 / (ell + 1)))) for lv in bt.LEVELS}
        seq_p.append(pval)
        tests[f"supF({ell + 1}|{ell})"] = _test(f"supF({ell + 1}|{ell})", best, None, cv, nobs,
                                               {**base, "breaks_under_null": ell},
                                               null=f"{ell} breaks", alternative=f"{ell + 1} breaks",
                                               pvalue=pval)
    bic, lwz = information_criteria(ssr, nobs, q, p)
    if select == "bic":
        chosen = int(np.nanargmin(bic))
    elif select == "lwz":
        chosen = int(np.nanargmin(lwz))
    else:
        chosen = 0
        while chosen < max_breaks and seq_p[chosen] < alpha:
            chosen += 1
    cut = [int(b) for b in breaks[chosen, :chosen]]
    fit = regime_fit(values, z, x, cut, **opts)
    intervals, regimes = _describe(values, z, x, cut, fit, index, z_names, robust, lags, alpha)
    fixed_frame = pd.DataFrame({"estimate": fit["coef"][:p], "std_error": np.sqrt(np.diag(fit["cov"]))[:p]},
                               index=pd.Index(x_names, name="term"))
    details = {**base, "h": h, "select": select, "alpha": alpha, "convention": CONVENTION,
               "years": f"{index[0]}-{index[-1]}",
               "critical_values_source": ("Bai & Perron (1998, 2003) tables where published "
                                          "(q<=3, trim 0.05/0.10/0.15), else simulated") if tabled
               else "simulated limiting distribution of the trend model (the published tables "
                    "assume regressors with stable moments and do not apply to a trend)",
               "pvalue_source": f"simulated limiting distribution, {design} design ({NULL_REPS} "
                                f"replications, grid {NULL_GRID} with two-grid extrapolation, "
                                f"seed {NULL_SEED})"}
    return BreakResult(
        series=label, model=model + (" + regressors" if extra is not None else ""), n_breaks=chosen,
        break_years=tuple(int(index[b]) for b in cut), intervals=intervals, regimes=regimes,
        fixed_params=fixed_frame, ssr=pd.Series(ssr, index=pd.RangeIndex(max_breaks + 1, name="m"), name="ssr"),
        partitions={m: tuple(int(index[b]) for b in breaks[m, :m]) for m in range(max_breaks + 1)},
        criteria=pd.DataFrame({"bic": bic, "lwz": lwz}, index=pd.RangeIndex(max_breaks + 1, name="m")),
        tests=tests, data=pd.Series(values, index=pd.Index(index, name="year"), name=label),
        fitted=pd.Series(fit["fitted"], index=pd.Index(index, name="year"), name="fitted"),
        nobs=nobs, trim=trim, max_breaks=max_breaks, select=select, alpha=alpha, details=details,
        warnings=tuple(warnings))


def _describe(values, z, x, cut, fit, index, z_names, robust, lags, alpha):  # noqa: ANN001, ANN202
    """Intervals of the break years and the table of regime coefficients."""
    nobs, q = z.shape
    p = fit["p"]
    coef, se = fit["coef"], np.sqrt(np.diag(fit["cov"]))
    rows, moments = [], []
    for r, (start, end) in enumerate(fit["bounds"]):
        zb, ub = z[start:end + 1], fit["resid"][start:end + 1]
        n = end - start + 1
        scores = zb * ub[:, None]
        omega = (long_run_cov(scores, min(lags, n - 1), prewhiten=True).long_run if robust
                 else (ub @ ub / n) * (zb.T @ zb) / n)
        moments.append((zb.T @ zb / n, omega))
        for c, name in enumerate(z_names):
            rows.append({"regime": r + 1, "term": name, "first_year": int(index[start]),
                         "last_year": int(index[end]), "nobs": n,
                         "estimate": coef[p + r * q + c], "std_error": se[p + r * q + c]})
    regimes = pd.DataFrame(rows).set_index(["regime", "term"])
    out = []
    for i, b in enumerate(cut):
        delta = coef[p + (i + 1) * q:p + (i + 2) * q] - coef[p + i * q:p + (i + 1) * q]
        lo, hi = break_interval(b, delta, moments[i][0], moments[i + 1][0], moments[i][1],
                                moments[i + 1][1], alpha=alpha, nobs=nobs)
        out.append({"break_year": int(index[b]), "lower": int(index[lo]), "upper": int(index[hi])})
    intervals = pd.DataFrame(out, columns=["break_year", "lower", "upper"])
    return intervals, regimes
