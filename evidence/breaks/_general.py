"""The classical Bai–Perron path for what the finite-sample tables do not cover.

User regressors whose coefficients change (``regressors``), regressors held fixed (``fixed``,
partial structural change), and the HAC / regime-variance statistics (``robust``,
``regime_variances``) use the statistics of Bai & Perron (1998, 2003) evaluated one partition at a
time and p-values from the simulated *limiting* distributions (``evidence.breaks._simulate``):
they assume serially uncorrelated errors (or, with ``robust``, large T), and the result says so.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pandas as pd

from evidence._hac import long_run_cov
from evidence.breaks import _batch
from evidence.breaks import tests as bt
from evidence.breaks.dates import break_interval
from evidence.breaks.segment import optimal_partitions, segment_bounds, ssr_table_general, ssr_tables
from evidence.results import TestResult

__all__ = ["regime_fit", "partitions", "classical_tests", "describe_partition", "make_test"]


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


def partitions(y: np.ndarray, z: np.ndarray, x: np.ndarray | None, model: str, builtin: bool,
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


def make_test(name: str, statistic: float, pvalue: float, cv: dict[float, float] | None,
              nobs: int, details: dict[str, Any], *, null: str, alternative: str) -> TestResult:
    """A Bai–Perron :class:`TestResult`."""
    return TestResult(test=name, statistic=statistic, pvalue=pvalue, critical_values=cv or {},
                      null=null, alternative=alternative, nobs=nobs, details=details,
                      reference="baiperron1998; baiperron2003")


def classical_tests(values: np.ndarray, z: np.ndarray, x: np.ndarray | None, ssr: np.ndarray,
                    breaks: np.ndarray, table: np.ndarray, *, h: int, trim: float, tabled: bool,
                    draws: np.ndarray, opts: dict[str, Any], base: dict[str, Any],
                    ) -> tuple[dict[str, TestResult], list[float], list[str]]:
    """supF(k), UDmax, WDmax and supF(l+1|l) with limiting-distribution p-values."""
    nobs, q = z.shape
    p = 0 if x is None else x.shape[1]
    max_breaks = ssr.size - 1
    robust, regime_variances = opts["robust"], opts["regime_variances"]
    homoskedastic = bt.supf_homoskedastic(ssr, nobs, q, p)

    def stat(cut: list[int], pairs: list[int] | None, k: int) -> float:
        if not robust and not regime_variances and pairs is None:
            return float(homoskedastic[k - 1])
        wald, _, _ = bt.wald_equal_regimes(values, z, x, cut, pairs=pairs, **opts)
        regimes = len(cut) + 1
        return wald * (nobs - regimes * q - p) / (nobs * (1 if pairs is not None else k))

    k_avail = draws.shape[1]
    tests: dict[str, TestResult] = {}
    warnings: list[str] = []
    supf = np.full(max_breaks, np.nan)
    source = {"critical_values_source": "simulated limiting distribution"}
    for k in range(1, max_breaks + 1):
        supf[k - 1] = stat([int(b) for b in breaks[k, :k]], None, k)
        cv = bt.table_critical_values("supf", q, trim, k) if tabled else None
        kd = draws[:, k - 1] if k <= k_avail else None
        if kd is None:
            warnings.append(f"supF({k}): no simulated distribution for {k} breaks at trim={trim}.")
        tests[f"supF({k})"] = make_test(
            f"supF({k})", supf[k - 1], bt.tail_pvalue(supf[k - 1], kd) if kd is not None else math.nan,
            cv if cv is not None or kd is None else bt.simulated_critical_values(kd), nobs,
            {**base, "breaks": k, **({} if cv is not None else source)},
            null="no break", alternative=f"{k} breaks")
    kk = min(max_breaks, k_avail)
    weights = bt.wdmax_weights(q, trim, draws, kk, use_table=tabled)
    for name, value, dist in (("UDmax", float(np.nanmax(supf[:kk])), draws[:, :kk].max(axis=1)),
                              ("WDmax", float(np.nanmax(supf[:kk] * weights)),
                               (draws[:, :kk] * weights).max(axis=1))):
        cv = bt.table_critical_values(name.lower(), q, trim, kk) if kk == 5 and tabled else None
        tests[name] = make_test(name, value, bt.tail_pvalue(value, dist),
                                cv or bt.simulated_critical_values(dist), nobs,
                                {**base, "max_breaks": kk}, null="no break",
                                alternative=f"1 to {kk} breaks")
    one = draws[:, 0]
    seq_p = []
    for ell in range(max_breaks):
        cut = [int(b) for b in breaks[ell, :ell]]
        best = 0.0
        for r, (tau, _, _) in enumerate(bt.split_segments(table, cut, nobs, h)):
            if tau >= 0:
                best = max(best, stat(sorted([*cut, tau]), [r], ell + 1))
        cv = bt.table_critical_values("sequential", q, trim, ell + 1) if tabled else None
        pval = 1.0 - float(np.mean(one < best)) ** (ell + 1)
        if cv is None:
            cv = {lv: float(np.quantile(one, (1 - lv) ** (1 / (ell + 1)))) for lv in bt.LEVELS}
        seq_p.append(pval)
        tests[f"supF({ell + 1}|{ell})"] = make_test(
            f"supF({ell + 1}|{ell})", best, pval, cv, nobs, {**base, "breaks_under_null": ell},
            null=f"{ell} breaks", alternative=f"{ell + 1} breaks")
    return tests, seq_p, warnings


def innovation_by_m(values: np.ndarray, z: np.ndarray, x: np.ndarray | None,
                    breaks: np.ndarray) -> np.ndarray:
    """AR(1) innovation variance of the residuals of each optimal m-break fit."""
    out = []
    for m in range(breaks.shape[0]):
        fit = regime_fit(values, z, x, [int(b) for b in breaks[m, :m]], robust=False,
                         regime_variances=False, hac_lags=0)
        rho = _batch.ar1_of(fit["resid"][None])
        out.append(float(_batch.innovation_variance(fit["resid"][None], np.clip(rho, 0.0, 0.8))[0]))
    return np.asarray(out)


def describe_partition(values: np.ndarray, z: np.ndarray, x: np.ndarray | None, cut: list[int],
                       fit: dict[str, Any], index: np.ndarray, z_names: list[str], robust: bool,
                       lags: int, alpha: float, long_run: float = 1.0
                       ) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Intervals of the break years and the table of regime coefficients.

    ``long_run`` multiplies the regime variances in the intervals (the long-run factor of the
    residual autocorrelation; 1 for serially uncorrelated errors).
    """
    nobs, q = z.shape
    p = fit["p"]
    coef, se = fit["coef"], np.sqrt(np.diag(fit["cov"]))
    rows, moments = [], []
    for r, (start, end) in enumerate(fit["bounds"]):
        zb, ub = z[start:end + 1], fit["resid"][start:end + 1]
        n = end - start + 1
        scores = zb * ub[:, None]
        omega = (long_run_cov(scores, min(lags, n - 1), prewhiten=True).long_run if robust
                 else long_run * (ub @ ub / n) * (zb.T @ zb) / n)
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
    return pd.DataFrame(out, columns=["break_year", "lower", "upper"]), regimes
