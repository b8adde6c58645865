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

from evidence._resample import bias_corrected, common_shocks, resample_residuals
from evidence._typing import DEFAULT_SEED, Seed
from evidence._validation import check_choice, check_seed
from evidence.cointegration._data import (
    as_columns,
    batch_ols,
    lag_matrix,
    option_int,
    relation_block,
)
from evidence.cointegration._inference import (
    INFERENCES,
    bootstrap_pvalue,
    run_bootstrap,
    seed_record,
    size_options,
    size_warning,
)
from evidence.errors import SpecError
from evidence.panel import Panel
from evidence.parallel import ExecutorLike
from evidence.results import TestResult

__all__ = ["dumitrescu_hurlin_test", "unit_wald"]


def _designs(y: np.ndarray, x: np.ndarray, lags: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Target ``y_t`` and the restricted (constant, own lags) and full (plus lags of x) designs."""
    n_units = y.shape[0]
    own = lag_matrix(y, list(range(1, lags + 1)))[:, lags:]
    cross = lag_matrix(x, list(range(1, lags + 1)))[:, lags:]
    const = np.ones((*own.shape[:2], 1))
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


def _null_model(y: np.ndarray, x: np.ndarray, lags: int) -> dict[str, np.ndarray]:
    """Each unit's VAR(K) of ``(y, x)`` under H0, bias-corrected, with its centred residuals.

    The VAR is fitted without restriction, its lag coefficients corrected for their first-order
    small-sample bias (Pope 1990, as in the cointegration sieve) and the coefficients of lagged
    ``x`` in the equation of ``y`` then set to zero (H0). Returns ``lags`` (N, K, 2, 2),
    ``intercept`` (N, 2), ``resid`` (N, S, 2) and the first K observations ``start`` (N, K, 2).
    """
    n_units, n_years = y.shape
    z = np.stack([y, x], axis=2)
    target = z[:, lags:]
    parts = [np.ones((n_units, n_years - lags, 1))]
    parts += [z[:, lags - j:n_years - j] for j in range(1, lags + 1)]
    design = np.concatenate(parts, axis=2)
    coef = np.linalg.solve(np.swapaxes(design, 1, 2) @ design, np.swapaxes(design, 1, 2) @ target)
    resid = target - design @ coef
    resid = resid - resid.mean(axis=1, keepdims=True)
    blocks = np.moveaxis(coef[:, 1:, :].reshape(n_units, lags, 2, 2), 3, 2)
    sigma = np.swapaxes(resid, 1, 2) @ resid / resid.shape[1]
    blocks = bias_corrected(blocks, sigma, resid.shape[1])
    blocks[:, :, 0, 1] = 0.0                                   # H0: no lagged x in y's equation
    mean = target.mean(axis=1)
    intercept = ((np.eye(2) - blocks.sum(axis=1)) @ mean[..., None])[..., 0]
    return {"lags": blocks, "intercept": intercept, "resid": resid, "start": z[:, :lags],
            "common": common_shocks(resid)}


def _bootstrap_draw(spec: tuple[dict[str, Any], int, int], rng: np.random.Generator,
                    reps: int) -> dict[str, np.ndarray]:
    """Z-bar of ``reps`` panels generated from the null model (see ``dumitrescu_hurlin_test``)."""
    model, lags, block_length = spec
    n_units, n_years = model["start"].shape[0], model["resid"].shape[1] + lags
    shocks = resample_residuals(model["resid"], rng, reps, n_years - lags,
                                block_length=block_length, common=model["common"])
    z = np.empty((reps, n_units, n_years, 2))
    z[:, :, :lags] = model["start"]
    for t in range(lags, n_years):
        value = model["intercept"] + shocks[:, :, t - lags]
        for j in range(1, lags + 1):
            value = value + (model["lags"][:, j - 1] @ z[:, :, t - j, :, None])[..., 0]
        z[:, :, t] = value
    w = unit_wald(z[..., 0].reshape(-1, n_years), z[..., 1].reshape(-1, n_years), lags)
    w_bar = w.reshape(reps, n_units).mean(axis=1)
    return {"z_bar": np.sqrt(n_units / (2 * lags)) * (w_bar - lags)}


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
    inference : {"bootstrap", "asymptotic"}, optional
        ``"bootstrap"`` (the default): the p-value from a bootstrap under H0 that keeps each
        unit's dynamics and the dependence between units. ``"asymptotic"``: Z-bar tilde against
        the normal, which over-rejects with persistent series at any length users have (measured
        at N = 20 with AR(0.7) series, 5 % nominal: 18 % at T = 30, 17 % at T = 50, 11–16 % at
        T = 80); the result's warnings give the measured size.
    reps, block_length, seed, executor
        Bootstrap replications, block length of the resampled periods (default 1), the seed and
        where the replications run (:mod:`evidence.parallel`).

    Returns
    -------
    TestResult
        ``statistic`` is Z-bar tilde when ``T > 5 + 3K`` (else Z-bar); ``details`` holds W-bar,
        Z-bar, Z-bar tilde, their asymptotic p-values and each unit's Wald statistic.

    Notes
    -----
    ``W-bar = N^-1 Σ W_i`` with ``W_i`` the unit Wald statistics (:func:`unit_wald`);
    ``Z-bar = sqrt(N/(2K)) (W-bar - K)``; ``Z-bar tilde = sqrt(N/(2K) (T-3K-5)/(T-2K-3))
    ((T-3K-3)/(T-3K-1) W-bar - K)`` with ``T`` the number of periods (each unit regression
    uses the ``T - K`` after the first K, so ``W_i`` is K times an F(K, T-3K-1) when the regressors
    are fixed); both N(0,1) under H0 (right tail). The bootstrap fits each unit's VAR(K) of
    ``(y, x)``, removes the small-sample bias of its lag coefficients (Pope 1990), imposes H0 (no
    lagged ``x`` in ``y``'s equation), and rebuilds both series from their first K values with
    residuals resampled as in :func:`evidence._resample.resample_residuals` (common shocks by
    whole periods when the residuals show dependence between units, own shocks unit by unit);
    Z-bar and Z-bar tilde are monotone in W-bar, so the
    p-value ``(1 + #{Z* >= Z}) / (B + 1)`` serves both.

    References
    ----------
    dumitrescuhurlin2012 (see the module docstring).

    Examples
    --------
    >>> import evidence as ev
    >>> panel = ev.demo_panel().with_growth("ghg_territorial", name="g_ghg").with_growth(
    ...     "gdp", name="g_gdp")
    >>> res = dumitrescu_hurlin_test(panel, "g_ghg", "g_gdp", lags=1, reps=49)
    >>> res.details["units"], len(res.details["unit_wald"]), res.details["inference"]
    (30, 30, 'bootstrap')
    """
    lags = option_int("lags", lags, 1)
    reps = option_int("reps", reps, 19)
    length = option_int("block_length", block_length, 1, default=1)
    seed = check_seed(seed)
    cols = as_columns(regressors)
    if len(cols) != 1:
        raise SpecError(f"regressors={list(cols)}: the test is for one causing variable; give one "
                        "column.")
    cause = cols[0]
    block = relation_block(panel, dependent, cols, min_years=3 * lags + 3,
                           purpose=f"dumitrescu_hurlin_test with lags={lags}")
    n_units, n_years = block.n_units, block.n_years
    inference = check_choice("inference", inference or "bootstrap", INFERENCES)
    yv, xv = block.y, block.x[:, :, 0]
    nobs = n_years - lags
    w = unit_wald(yv, xv, lags)
    w_bar, z_bar, z_tilde = _z_stats(w, lags, n_years)
    p_bar, p_tilde = float(stats.norm.sf(z_bar)), float(stats.norm.sf(z_tilde))
    warnings = []
    if math.isnan(z_tilde):
        warnings.append(f"T={n_years} is not above 5 + 3K = {5 + 3 * lags}: Z-bar tilde is not "
                        "defined; the statistic is Z-bar.")
    details: dict[str, Any] = {"lags": lags, "inference": inference, "w_bar": w_bar,
                               "z_bar": z_bar, "z_bar_pvalue": p_bar,
                               "z_bar_tilde": z_tilde, "z_bar_tilde_pvalue": p_tilde,
                               "unit_wald": dict(zip(block.units, w.tolist(), strict=True)),
                               "unit_pvalues": dict(zip(block.units, stats.chi2.sf(w, lags).tolist(),
                                                        strict=True)),
                               "units": n_units, "years": block.span, "excluded": block.excluded}
    statistic, pvalue = (z_bar, p_bar) if math.isnan(z_tilde) else (z_tilde, p_tilde)
    crit = {a: float(stats.norm.isf(a)) for a in (0.01, 0.05, 0.10)}
    if inference == "bootstrap":
        model = _null_model(yv, xv, lags)
        draws = run_bootstrap(_bootstrap_draw, (model, lags, length), reps=reps, seed=seed,
                              executor=executor)["z_bar"]
        pvalue, used = bootstrap_pvalue(z_bar, draws, "right")
        quantiles = {a: float(np.quantile(draws[np.isfinite(draws)], 1 - a)) for a in (0.01, 0.05, 0.10)}
        if not math.isnan(z_tilde):  # the same quantiles on the reported (Z-bar tilde) scale
            crit = {a: z_tilde + (q - z_bar) * (z_tilde - _z_stats(w + 1.0, lags, n_years)[2]) /
                    (z_bar - _z_stats(w + 1.0, lags, n_years)[1]) for a, q in quantiles.items()}
        else:
            crit = quantiles
        details.update({"reps": reps, "bootstrap_draws": used, "block_length": length,
                        "bootstrap_pvalue": pvalue, "seed": seed_record(seed),
                        "common_shocks": bool(model["common"])})
    options = size_options(inference)
    note, caution = size_warning("Dumitrescu-Hurlin", n_units, n_years, options)
    if note:
        details["size"] = note
    if caution:
        warnings.append(caution)
    return TestResult(test="Dumitrescu-Hurlin", statistic=statistic, pvalue=pvalue,
                      critical_values=crit,
                      null=f"{cause} does not Granger-cause {dependent} in any unit",
                      alternative=f"{cause} Granger-causes {dependent} in some units",
                      nobs=n_units * nobs, details=details, reference="dumitrescuhurlin2012",
                      warnings=tuple(warnings))
