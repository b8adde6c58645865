"""Westerlund's (2007) error-correction statistics and their period-resampling bootstrap (NumPy).

For each unit the conditional error-correction regression

    Δy_t = d_t'δ + α y_{t-1} + λ'x_{t-1} + Σ_{j=1..p} α_j Δy_{t-j} + Σ_{j=-q..p} γ_j'Δx_{t-j} + e_t

is fitted by OLS with the unit's lag order ``p`` and lead order ``q``. Units with the same ``(p, q)``
are fitted together.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from evidence._hac import long_run_cov, newey_west_lags
from evidence.cointegration._data import batch_ols, deterministics, lag_matrix

__all__ = ["bootstrap_task", "ec_design", "select_orders", "westerlund_raw"]


def ec_design(y: np.ndarray, x: np.ndarray, p: int, q: int, trend: str, *,
              start: int | None = None, stop: int | None = None) -> dict[str, np.ndarray]:
    """Regressand and regressors of the error-correction regression for units ``y`` (n, T).

    Rows are periods ``start..stop-1`` (0-based, default: all usable ones, ``p+1 .. T-q-1``).
    Column order: deterministics, ``y_{t-1}``, ``x_{t-1}``, lagged ``Δy``, ``Δx_{t-j}`` for
    ``j = -q..p``. Also returns the index of ``y_{t-1}`` and of the ``Δx`` block.
    """
    n_units, n_years, k = x.shape
    start = p + 1 if start is None else start
    stop = n_years - q if stop is None else stop
    dy = np.concatenate([np.full((n_units, 1), np.nan), np.diff(y, axis=1)], axis=1)
    dx = np.concatenate([np.full((n_units, 1, k), np.nan), np.diff(x, axis=1)], axis=1)
    rows = slice(start, stop)
    d0 = deterministics(trend, n_years)[rows]
    parts = [np.broadcast_to(d0, (n_units,) + d0.shape),
             lag_matrix(y, [1])[:, rows], lag_matrix(np.moveaxis(x, 2, 1), [1])[:, :, rows, 0]
             .transpose(0, 2, 1)]
    if p:
        parts.append(lag_matrix(dy, list(range(1, p + 1)))[:, rows])
    dx_lags = [lag_matrix(dx[:, :, m], list(range(-q, p + 1)))[:, rows] for m in range(k)]
    parts.extend(dx_lags)
    z = np.concatenate(parts, axis=2)
    n_det = d0.shape[1]
    first_dx = n_det + 1 + k + p
    return {"dy": dy[:, rows], "z": z, "iy": np.array(n_det), "dx_cols": np.arange(first_dx, z.shape[2])}


def select_orders(y: np.ndarray, x: np.ndarray, lags: int | str, leads: int | str, *,
                  max_lags: int, max_leads: int, trend: str) -> tuple[np.ndarray, np.ndarray]:
    """Each unit's ``(p, q)``: fixed, or the AIC minimum on the sample common to all candidates."""
    n_units, n_years, _ = x.shape
    p_grid = range(max_lags + 1) if lags == "aic" else [int(lags)]
    q_grid = range(max_leads + 1) if leads == "aic" else [int(leads)]
    start, stop = max(p_grid) + 1, n_years - max(q_grid)
    best = np.full(n_units, np.inf)
    p_out = np.zeros(n_units, dtype=int)
    q_out = np.zeros(n_units, dtype=int)
    for p in p_grid:
        for q in q_grid:
            des = ec_design(y, x, p, q, trend, start=start, stop=stop)
            _, resid, _ = batch_ols(des["dy"], des["z"])
            nobs = resid.shape[1]
            aic = np.log(np.sum(resid ** 2, axis=1) / nobs) + 2.0 * des["z"].shape[2] / nobs
            better = aic < best - 1e-12
            best = np.where(better, aic, best)
            p_out = np.where(better, p, p_out)
            q_out = np.where(better, q, q_out)
    return p_out, q_out


def westerlund_raw(y: np.ndarray, x: np.ndarray, p_i: np.ndarray, q_i: np.ndarray,
                   trend: str) -> dict[str, Any]:
    """Gt, Ga, Pt, Pa before standardisation, and the unit pieces (see ``westerlund_test``)."""
    n_units = y.shape[0]
    alpha = np.empty(n_units)
    se = np.empty(n_units)
    alpha1 = np.empty(n_units)
    sigma = np.empty(n_units)
    nobs = np.empty(n_units)
    yy = np.empty(n_units)
    ydy = np.empty(n_units)
    for p, q in sorted(set(zip(p_i.tolist(), q_i.tolist()))):
        idx = np.flatnonzero((p_i == p) & (q_i == q))
        des = ec_design(y[idx], x[idx], p, q, trend)
        z, dy, iy = des["z"], des["dy"], int(des["iy"])
        coef, resid, xtx_inv = batch_ols(dy, z)
        t_len, n_par = z.shape[1], z.shape[2]
        s2 = np.sum(resid ** 2, axis=1) / (t_len - n_par)
        alpha[idx] = coef[:, iy]
        se[idx] = np.sqrt(s2 * xtx_inv[:, iy, iy])
        sigma[idx] = np.sqrt(s2)
        nobs[idx] = t_len
        # alpha_i(1) = omega_u / omega_y: long-run standard deviations of u = e + γ(L)'Δx and of Δy.
        u = resid + np.einsum("ntk,nk->nt", z[:, :, des["dx_cols"]], coef[:, des["dx_cols"]])
        pair = np.stack([u, dy], axis=2)
        if trend != "none":
            pair = pair - pair.mean(axis=1, keepdims=True)
        omega = long_run_cov(pair, newey_west_lags(t_len))[1]
        alpha1[idx] = np.sqrt(omega[:, 0, 0] / omega[:, 1, 1])
        # Pooled pieces: y_{t-1} and Δy net of the other regressors.
        others = np.delete(z, iy, axis=2)
        _, y_tilde, _ = batch_ols(z[:, :, iy], others)
        _, dy_tilde, _ = batch_ols(dy, others)
        yy[idx] = np.sum(y_tilde ** 2, axis=1)
        ydy[idx] = np.sum(y_tilde * dy_tilde, axis=1) / alpha1[idx]
    alpha_pool = np.sum(ydy) / np.sum(yy)
    s_n = np.mean(sigma / alpha1)
    se_pool = s_n / np.sqrt(np.sum(yy))
    t_mean = float(np.mean(nobs))
    return {"Gt": float(np.mean(alpha / se)), "Ga": float(np.mean(nobs * alpha / alpha1)),
            "Pt": float(alpha_pool / se_pool), "Pa": float(t_mean * alpha_pool),
            "alpha": alpha, "se": se, "alpha1": alpha1, "nobs": nobs}


def _null_model(y: np.ndarray, x: np.ndarray, p_i: np.ndarray, q_i: np.ndarray,
                trend: str) -> dict[str, Any]:
    """The regression without the error-correction terms (H0), unit by unit: coefficients, residuals."""
    n_units, n_years, k = x.shape
    resid = np.full((n_units, n_years), np.nan)
    ar = np.zeros((n_units, max(int(p_i.max()), 1)))
    gam = np.zeros((n_units, k, int(q_i.max()) + int(p_i.max()) + 1))
    for p, q in sorted(set(zip(p_i.tolist(), q_i.tolist()))):
        idx = np.flatnonzero((p_i == p) & (q_i == q))
        des = ec_design(y[idx], x[idx], p, q, trend)
        n_det = int(des["iy"])
        keep = [c for c in range(des["z"].shape[2]) if not n_det <= c < n_det + 1 + k]
        coef, res, _ = batch_ols(des["dy"], des["z"][:, :, keep])
        resid[idx, p + 1:n_years - q] = res
        ar[idx, :p] = coef[:, n_det:n_det + p]
        g = coef[:, n_det + p:].reshape(len(idx), k, p + q + 1)
        qmax = int(q_i.max())
        gam[idx, :, qmax - q:qmax + p + 1] = g
    return {"resid": resid, "ar": ar, "gamma": gam, "qmax": int(q_i.max())}


def _rebuild(dx_star: np.ndarray, e_star: np.ndarray, null: dict[str, Any]) -> np.ndarray:
    """Δy* from the null model's dynamics, the resampled Δx* (n, T, k) and residuals e* (n, T)."""
    n_units, n_years = e_star.shape
    ar, gam, qmax = null["ar"], null["gamma"], null["qmax"]
    width = gam.shape[2]
    dy = np.zeros((n_units, n_years))
    for t in range(n_years):
        value = e_star[:, t].copy()
        for j in range(1, ar.shape[1] + 1):
            if t - j >= 0:
                value += ar[:, j - 1] * dy[:, t - j]
        for c in range(width):
            lag = c - qmax                       # column c holds Δx_{t-lag}
            s = t - lag
            if 0 <= s < n_years:
                value += np.einsum("nk,nk->n", gam[:, :, c], dx_star[:, s])
        dy[:, t] = value
    return dy


def bootstrap_task(task: dict[str, Any]) -> tuple[float, float, float, float]:
    """One bootstrap replication: resample whole periods of residuals, rebuild y under H0, recompute.

    The regressors stay as observed; the residual vectors of all units are drawn together (blocks
    of ``task["block"]`` consecutive periods, circular), so the dependence between units is kept,
    and ``Δy*`` follows the fitted short-run dynamics of the model without error correction.
    """
    rng = np.random.default_rng(task["seed"])
    y, x, p_i, q_i, trend = task["y"], task["x"], task["p"], task["q"], task["trend"]
    null = task["null"]
    periods = np.flatnonzero(~np.isnan(null["resid"]).any(axis=0))
    n_years = y.shape[1]
    block = task["block"]
    # circular blocks: every period equally likely, so the draws keep the pool's zero mean
    starts = rng.integers(0, len(periods), size=n_years // block + 1)
    draw = periods[((starts[:, None] + np.arange(block)[None, :]) % len(periods)).ravel()[:n_years]]
    dx = np.diff(x, axis=1)
    dx = np.concatenate([dx[:, :1] * 0.0, dx], axis=1)
    e_star = null["resid"][:, draw]  # the pool has mean zero (constant in the null model)
    y_star = np.cumsum(_rebuild(dx, e_star, null), axis=1)
    raw = westerlund_raw(y_star, x, p_i, q_i, trend)
    return raw["Gt"], raw["Ga"], raw["Pt"], raw["Pa"]


def null_model(y: np.ndarray, x: np.ndarray, p_i: np.ndarray, q_i: np.ndarray,
               trend: str) -> dict[str, Any]:
    """Public alias of the H0 fit used to set up the bootstrap."""
    return _null_model(y, x, p_i, q_i, trend)
