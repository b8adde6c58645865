"""Dumitrescu–Hurlin panel Granger non-causality test, with a bootstrap for cross-sectional dependence.

References
----------
dumitrescuhurlin2012 : Dumitrescu, E.-I. & Hurlin, C. (2012). Testing for Granger non-causality in
    heterogeneous panels. Economic Modelling 29(4), 1450–1460.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
from scipy import stats

from evidence._typing import DEFAULT_SEED, Seed
from evidence._validation import check_choice, check_seed
from evidence.cointegration._data import (
    as_columns,
    batch_ols,
    lag_matrix,
    option_int,
    relation_block,
)
from evidence.errors import SpecError
from evidence.panel import Panel
from evidence.parallel import ExecutorLike, task_seeds, using_executor
from evidence.results import TestResult

__all__ = ["dumitrescu_hurlin_test", "unit_wald"]


def _designs(y: np.ndarray, x: np.ndarray, lags: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Target ``y_t`` and the restricted (constant, own lags) and full (plus lags of x) designs."""
    n_units = y.shape[0]
    own = lag_matrix(y, list(range(1, lags + 1)))[:, lags:]
    cross = lag_matrix(x, list(range(1, lags + 1)))[:, lags:]
    const = np.ones(own.shape[:2] + (1,))
    restricted = np.concatenate([const, own], axis=2)
    del n_units
    return y[:, lags:], restricted, np.concatenate([restricted, cross], axis=2)


def unit_wald(y: np.ndarray, x: np.ndarray, lags: int) -> np.ndarray:
    """Each unit's Wald statistic of ``β_i = 0`` in ``y_t = a + Σ γ_k y_t-k + Σ β_k x_t-k + e_t``.

    ``W_i = (SSR_r - SSR_u) / (SSR_u / (T - 2K - 1))`` with ``T`` the regression sample, which is
    the quadratic form ``β' [s² (Z'Z)^-1]_ββ^-1 β`` with the degrees-of-freedom variance ``s²``.
    """
    target, restricted, full = _designs(y, x, lags)
    _, r_res, _ = batch_ols(target, restricted)
    _, u_res, _ = batch_ols(target, full)
    ssr_r, ssr_u = np.sum(r_res ** 2, axis=1), np.sum(u_res ** 2, axis=1)
    dof = target.shape[1] - 2 * lags - 1
    return (ssr_r - ssr_u) / (ssr_u / dof)


def _z_stats(w: np.ndarray, lags: int, n_years: int) -> tuple[float, float, float]:
    n_units = w.size
    w_bar = float(np.mean(w))
    z_bar = math.sqrt(n_units / (2 * lags)) * (w_bar - lags)
    if n_years > 5 + 3 * lags:
        t, k = n_years, lags
        z_tilde = (math.sqrt(n_units / (2 * k) * (t - 3 * k - 5) / (t - 2 * k - 3))
                   * ((t - 3 * k - 3) / (t - 3 * k - 1) * w_bar - k))
    else:
        z_tilde = math.nan
    return w_bar, z_bar, z_tilde


def _bootstrap_task(task: dict[str, Any]) -> float:
    """One replication: AR(K) null model per unit, residuals resampled by blocks of whole periods."""
    rng = np.random.default_rng(task["seed"])
    coef, resid, y0, x, lags, block = (task[k] for k in ("coef", "resid", "y0", "x", "lags", "block"))
    n_units, n_res = resid.shape
    n_years = x.shape[1]
    n_new = n_years - lags
    # circular blocks: every period equally likely, so the draws keep the pool's zero mean
    starts = rng.integers(0, n_res, size=n_new // block + 1)
    draw = ((starts[:, None] + np.arange(block)[None, :]) % n_res).ravel()[:n_new]
    e = resid[:, draw]
    y = np.empty((n_units, n_years))
    y[:, :lags] = y0
    for t in range(lags, n_years):
        y[:, t] = coef[:, 0] + np.einsum("nk,nk->n", coef[:, 1:], y[:, t - lags:t][:, ::-1]) + e[:, t - lags]
    w = unit_wald(y, x, lags)
    return _z_stats(w, lags, n_years)[1]


def dumitrescu_hurlin_test(panel: Panel, dependent: str, regressors: str | Sequence[str], *,
                           lags: int = 1, inference: str | None = None, reps: int = 499,
                           block_length: int | None = None, seed: Seed = DEFAULT_SEED,
                           executor: ExecutorLike = "serial") -> TestResult:
    """Dumitrescu–Hurlin test of Granger non-causality from a regressor to ``dependent``.

    H0: the regressor does not Granger-cause ``dependent`` in any unit. H1: it does in some units.

    Parameters
    ----------
    panel, dependent, regressors
        The panel, the caused column and the causing column (one name; use stationary series,
        e.g. growth rates made with ``panel.with_growth``).
    lags : int
        Lag order K of both variables (the same in every unit).
    inference : {"asymptotic", "bootstrap"}, optional
        p-value of Z-bar tilde from the normal (the default), or of Z-bar from a bootstrap that keeps
        cross-sectional dependence (``reps`` replications); the asymptotic p-values stay in
        ``details``.
    reps, block_length, seed, executor
        Bootstrap replications, block length of the resampled periods (default 1: periods drawn
        one by one), the seed and the executor (:mod:`evidence.parallel`).

    Returns
    -------
    TestResult
        ``statistic`` is Z-bar tilde when ``T > 5 + 3K`` (else Z-bar); ``details`` holds W-bar,
        Z-bar, Z-bar tilde, their p-values and each unit's Wald statistic.

    Notes
    -----
    ``W-bar = N^-1 Σ W_i`` with ``W_i`` the unit Wald statistics (:func:`unit_wald`);
    ``Z-bar = sqrt(N/(2K)) (W-bar - K)``; ``Z-bar tilde = sqrt(N/(2K) (T-3K-5)/(T-2K-3))
    ((T-3K-3)/(T-3K-1) W-bar - K)`` with ``T`` the number of periods (each unit regression
    uses the ``T - K`` after the first K, so ``W_i`` is K times an F(K, T-3K-1)); both N(0,1) under H0
    (right tail). The bootstrap fits the AR(K) null model to each unit, resamples blocks of whole
    periods of the residual vectors (all units together), rebuilds ``y`` from its first K values
    with ``x`` held fixed and recomputes Z-bar; p-value ``(1 + #{Z* >= Z}) / (B + 1)``.

    References
    ----------
    dumitrescuhurlin2012 (see the module docstring).

    Examples
    --------
    >>> import evidence as ev
    >>> panel = ev.demo_panel().with_growth("ghg_territorial", name="g_ghg").with_growth(
    ...     "gdp", name="g_gdp")
    >>> res = dumitrescu_hurlin_test(panel, "g_ghg", "g_gdp", lags=1)
    >>> res.details["units"], len(res.details["unit_wald"])
    (30, 30)
    """
    lags = option_int("lags", lags, 1)
    inference = check_choice("inference", inference or "asymptotic", ("asymptotic", "bootstrap"))
    reps = option_int("reps", reps, 1)
    length = option_int("block_length", block_length, 1, default=1)
    seed = check_seed(seed)
    cols = as_columns(regressors)
    if len(cols) != 1:
        raise SpecError(f"regressors={list(cols)}: the test is for one causing variable; give one "
                        "column.")
    cause = cols[0]
    block = relation_block(panel, dependent, cols, min_years=3 * lags + 3,
                           purpose=f"dumitrescu_hurlin_test with lags={lags}")
    yv, xv = block.y, block.x[:, :, 0]
    nobs = block.n_years - lags
    w = unit_wald(yv, xv, lags)
    w_bar, z_bar, z_tilde = _z_stats(w, lags, block.n_years)
    p_bar, p_tilde = float(stats.norm.sf(z_bar)), float(stats.norm.sf(z_tilde))
    warnings = []
    if math.isnan(z_tilde):
        warnings.append(f"T={block.n_years} is not above 5 + 3K = {5 + 3 * lags}: Z-bar tilde is not defined; "
                        f"the statistic is Z-bar.")
    details: dict[str, Any] = {"lags": lags, "inference": inference, "w_bar": w_bar,
                               "z_bar": z_bar, "z_bar_pvalue": p_bar,
                               "z_bar_tilde": z_tilde, "z_bar_tilde_pvalue": p_tilde,
                               "unit_wald": dict(zip(block.units, w.tolist())),
                               "unit_pvalues": dict(zip(block.units, stats.chi2.sf(w, lags).tolist())),
                               "units": block.n_units, "years": block.span,
                               "excluded": block.excluded}
    statistic, pvalue = (z_bar, p_bar) if math.isnan(z_tilde) else (z_tilde, p_tilde)
    if inference == "bootstrap":
        target, restricted, _ = _designs(yv, xv, lags)
        coef, resid, _ = batch_ols(target, restricted)
        resid = resid - resid.mean(axis=1, keepdims=True)
        tasks = [{"seed": s, "coef": coef, "resid": resid, "y0": yv[:, :lags], "x": xv,
                  "lags": lags, "block": length} for s in task_seeds(seed, reps)]
        with using_executor(executor) as runner:
            draws = np.asarray(runner.map(_bootstrap_task, tasks))
        boot_p = float((1 + np.sum(draws >= z_bar)) / (reps + 1))
        details.update({"reps": reps, "block_length": length, "bootstrap_pvalue": boot_p,
                        "seed": seed if isinstance(seed, int) else "generator",
                        "bootstrap_critical_values": {str(a): float(np.quantile(draws, 1 - a))
                                                      for a in (0.01, 0.05, 0.10)}})
        statistic, pvalue = z_bar, boot_p
    crit = {a: float(stats.norm.isf(a)) for a in (0.01, 0.05, 0.10)}
    return TestResult(test="Dumitrescu-Hurlin", statistic=statistic, pvalue=pvalue,
                      critical_values=crit,
                      null=f"{cause} does not Granger-cause {dependent} in any unit",
                      alternative=f"{cause} Granger-causes {dependent} in some units",
                      nobs=block.n_units * nobs, details=details, reference="dumitrescuhurlin2012",
                      warnings=tuple(warnings))
