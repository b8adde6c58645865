"""Residual-based cointegration math on balanced arrays: Pedroni's seven sums and Kao's pooled DF/ADF.

Pure NumPy on ``(N, T)`` residual arrays; every function works on all units at once. The public
tests in :mod:`evidence.cointegration.panel` build the residuals and standardise the sums.
"""

from __future__ import annotations

import numpy as np

from evidence._hac import long_run_cov
from evidence.cointegration._data import batch_ols, deterministics, lag_matrix

__all__ = ["adf_terms", "kao_raw", "pedroni_raw", "select_adf_lags", "static_residuals"]


def static_residuals(y: np.ndarray, x: np.ndarray, trend: str) -> tuple[np.ndarray, np.ndarray]:
    """Residuals and slopes of each unit's OLS of ``y`` on its deterministics and ``x``."""
    n_units, n_years = y.shape
    d0 = deterministics(trend, n_years)
    d = np.broadcast_to(d0, (n_units,) + d0.shape)
    z = np.concatenate([d, x], axis=2)
    coef, resid, _ = batch_ols(y, z)
    return resid, coef[:, d.shape[2]:]


def adf_terms(e: np.ndarray, lags: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``e_{t-1}`` and ``Δe_t`` net of ``lags`` lagged differences, and the ADF residuals.

    Rows are ``t = lags + 2, ..., T`` (1-based). By Frisch–Waugh, ``sum(el * de) / sum(el**2)`` is the
    ADF coefficient on ``e_{t-1}`` (no deterministics: residuals have mean zero).
    """
    de = np.diff(e, axis=1)                      # Δe_t for t = 2..T
    el = e[:, :-1]                               # e_{t-1}
    if lags == 0:
        gamma = np.sum(el * de, axis=1) / np.sum(el * el, axis=1)
        return el, de, de - gamma[:, None] * el
    lagged = lag_matrix(de, list(range(1, lags + 1)))[:, lags:]
    de_s, el_s = de[:, lags:], el[:, lags:]
    _, de_p, _ = batch_ols(de_s, lagged)
    _, el_p, _ = batch_ols(el_s, lagged)
    gamma = np.sum(el_p * de_p, axis=1) / np.sum(el_p * el_p, axis=1)
    return el_p, de_p, de_p - gamma[:, None] * el_p


def select_adf_lags(e: np.ndarray, max_lags: int, method: str) -> np.ndarray:
    """Each unit's ADF lag order in ``0..max_lags`` by AIC or BIC on a common sample."""
    n_units, n_years = e.shape
    de = np.diff(e, axis=1)
    el = e[:, :-1]
    start = max_lags
    nobs = n_years - 1 - start
    scores = np.empty((n_units, max_lags + 1))
    for k in range(max_lags + 1):
        cols = [el[:, start:, None]]
        if k:
            cols.append(lag_matrix(de, list(range(1, k + 1)))[:, start:])
        z = np.concatenate(cols, axis=2)
        _, resid, _ = batch_ols(de[:, start:], z)
        ssr = np.sum(resid ** 2, axis=1)
        penalty = 2.0 if method == "aic" else np.log(nobs)
        scores[:, k] = nobs * np.log(ssr / nobs) + penalty * (k + 1)
    return np.argmin(scores, axis=1)


def pedroni_raw(e: np.ndarray, dy: np.ndarray, dx: np.ndarray, adf_lags: np.ndarray, *,
                trend: str, bandwidth: int) -> dict[str, np.ndarray | float]:
    """Pedroni's (1999) seven statistics before standardisation (see ``pedroni_test``).

    ``e`` (N, T) static residuals, ``dy`` (N, T-1) and ``dx`` (N, T-1, m) first differences,
    ``adf_lags`` (N,) lag orders of the ADF regressions.
    """
    n_units = e.shape[0]
    # L11^2: long-run variance of the residual of Δy on Δx (and a constant with a trend).
    zd = dx if trend != "trend" else np.concatenate([np.ones(dx.shape[:2] + (1,)), dx], axis=2)
    _, eta, _ = batch_ols(dy, zd)
    l11 = long_run_cov(eta[:, :, None], bandwidth)[1][:, 0, 0]
    # Non-parametric (rho, PP) terms from e_t = gamma e_{t-1} + u_t.
    el, de, u = adf_terms(e, 0)
    nobs = de.shape[1]
    s2, sig2, _ = (m[:, 0, 0] for m in long_run_cov(u[:, :, None], bandwidth))
    lam = 0.5 * (sig2 - s2)
    see = np.sum(el * el, axis=1)                          # sum_t e_{t-1}^2, per unit
    num = np.sum(el * de, axis=1) - nobs * lam             # sum_t (e_{t-1} Δe_t - lambda_i)
    w = 1.0 / l11
    a = np.sum(w * see)
    b = np.sum(w * num)
    sigma_tilde = np.mean(w * sig2)
    # Parametric (ADF) terms, unit by unit lag order.
    ee_star = np.empty(n_units)
    ed_star = np.empty(n_units)
    s2_star = np.empty(n_units)
    for k in np.unique(adf_lags):
        idx = np.flatnonzero(adf_lags == k)
        el_k, de_k, u_k = adf_terms(e[idx], int(k))
        ee_star[idx] = np.sum(el_k * el_k, axis=1)
        ed_star[idx] = np.sum(el_k * de_k, axis=1)
        s2_star[idx] = np.mean(u_k * u_k, axis=1)
    s2_tilde = np.mean(w * s2_star)  # weighted like sigma_tilde (see pedroni_test Notes)
    t_scale = float(nobs)
    sqrt_n = np.sqrt(n_units)
    return {
        "panel v": t_scale ** 2 * n_units ** 1.5 / a,
        "panel rho": t_scale * sqrt_n * b / a,
        "panel PP": b / np.sqrt(sigma_tilde * a),
        "panel ADF": np.sum(w * ed_star) / np.sqrt(s2_tilde * np.sum(w * ee_star)),
        "group rho": t_scale / sqrt_n * np.sum(num / see),
        "group PP": np.sum(num / np.sqrt(sig2 * see)) / sqrt_n,
        "group ADF": np.sum(ed_star / np.sqrt(s2_star * ee_star)) / sqrt_n,
        "l11": l11, "lambda": lam, "sigma2": sig2, "s2": s2, "nobs": nobs,
    }


def kao_raw(y: np.ndarray, x: np.ndarray, lags: int, *, bandwidth: int) -> dict[str, float]:
    """Kao's (1999) pooled DF and ADF quantities from the within (fixed-effects) regression.

    Returns ``T(rho - 1)`` pooled, the DF and ADF t-ratios, ``sigma_v^2`` and ``sigma_0v^2`` (the
    contemporaneous and long-run variance of ``u`` conditional on ``Δx``, with ``u = Δe``), the
    pooled slope and the sizes.
    """
    n_units, n_years, _ = x.shape
    yd = y - y.mean(axis=1, keepdims=True)
    xd = x - x.mean(axis=1, keepdims=True)
    xx = np.einsum("nti,ntj->ij", xd, xd)
    beta = np.linalg.solve(xx, np.einsum("nti,nt->i", xd, yd))
    e = yd - np.einsum("ntk,k->nt", xd, beta)
    el, et = e[:, :-1], e[:, 1:]
    rho = np.sum(el * et) / np.sum(el * el)
    v = et - rho * el
    s_e2 = np.sum(v * v) / v.size
    t_df = (rho - 1.0) * np.sqrt(np.sum(el * el)) / np.sqrt(s_e2)
    # ADF: pooled regression of Δe_t on e_{t-1} and common lagged differences.
    de = np.diff(e, axis=1)
    if lags:
        lagged = lag_matrix(de, list(range(1, lags + 1)))[:, lags:]
        z = np.concatenate([el[:, lags:, None], lagged], axis=2).reshape(-1, lags + 1)
    else:
        z = el.reshape(-1, 1)
    target = de[:, lags:].reshape(-1)
    coef, *_ = np.linalg.lstsq(z, target, rcond=None)
    resid = target - z @ coef
    s2 = resid @ resid / (resid.size - z.shape[1])
    cov = s2 * np.linalg.inv(z.T @ z)
    t_adf = coef[0] / np.sqrt(cov[0, 0])
    # Variances of u = Δe conditional on Δx, contemporaneous and long run.
    w = np.concatenate([de[:, :, None], np.diff(x, axis=1)], axis=2)
    w = w - w.mean(axis=1, keepdims=True)
    sigma, omega, _ = long_run_cov(w, bandwidth)
    sigma, omega = sigma.mean(axis=0), omega.mean(axis=0)

    def conditional(m: np.ndarray) -> float:
        return float(m[0, 0] - m[0, 1:] @ np.linalg.solve(m[1:, 1:], m[1:, 0]))

    return {"t_rho": float(n_years * (rho - 1.0)), "t_df": float(t_df), "t_adf": float(t_adf),
            "sigma_v2": conditional(sigma), "sigma_0v2": conditional(omega), "beta": beta,
            "rho": float(rho), "n_units": n_units, "n_years": n_years}


def kao_select_lags(y: np.ndarray, x: np.ndarray, max_lags: int, method: str) -> int:
    """The pooled ADF lag order of Kao's test in ``0..max_lags`` by AIC or BIC on a common sample."""
    yd = y - y.mean(axis=1, keepdims=True)
    xd = x - x.mean(axis=1, keepdims=True)
    beta = np.linalg.solve(np.einsum("nti,ntj->ij", xd, xd), np.einsum("nti,nt->i", xd, yd))
    e = yd - np.einsum("ntk,k->nt", xd, beta)
    de = np.diff(e, axis=1)
    el = e[:, :-1]
    target = de[:, max_lags:].reshape(-1)
    nobs = target.size
    scores = []
    for k in range(max_lags + 1):
        cols = [el[:, max_lags:, None]]
        if k:
            cols.append(lag_matrix(de, list(range(1, k + 1)))[:, max_lags:])
        z = np.concatenate(cols, axis=2).reshape(nobs, -1)
        coef, *_ = np.linalg.lstsq(z, target, rcond=None)
        ssr = float(np.sum((target - z @ coef) ** 2))
        penalty = 2.0 if method == "aic" else np.log(nobs)
        scores.append(nobs * np.log(ssr / nobs) + penalty * (k + 1))
    return int(np.argmin(scores))
