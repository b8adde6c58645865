"""Westerlund's (2007) error-correction statistics and their period-resampling bootstrap (NumPy).

For each unit the conditional error-correction regression

    Δy_t = d_t'δ + α y_{t-1} + λ'x_{t-1} + Σ_{j=1..p} α_j Δy_{t-j} + Σ_{j=-q..p} γ_j'Δx_{t-j} + e_t

is fitted by OLS with the unit's lag order ``p`` and lead order ``q``. Units with the same ``(p, q)``
are fitted together; :func:`westerlund_statistics` does the same for a batch of panels (the
bootstrap), the unit regressions of all panels at once.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from evidence._hac import long_run_cov, newey_west_lags
from evidence.cointegration._data import batch_ols, deterministics, lag_matrix

__all__ = ["ec_design", "select_orders", "westerlund_raw", "westerlund_statistics", "NAMES"]

#: The four statistics in the published order.
NAMES = ("Gt", "Ga", "Pt", "Pa")


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
    parts = [np.broadcast_to(d0, (n_units, *d0.shape)),
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
    if lags != "aic" and leads != "aic":
        return np.full(n_units, int(lags)), np.full(n_units, int(leads))
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


def _units(y: np.ndarray, x: np.ndarray, p_i: np.ndarray, q_i: np.ndarray,
           trend: str) -> dict[str, np.ndarray]:
    """Each unit's pieces of the four statistics (every array (M,) for M units)."""
    n_units = y.shape[0]
    keys = ("alpha", "se", "alpha1", "sigma", "nobs", "yy", "ydy")
    out = {key: np.empty(n_units) for key in keys}
    for p, q in sorted(set(zip(p_i.tolist(), q_i.tolist(), strict=True))):
        idx = np.flatnonzero((p_i == p) & (q_i == q))
        des = ec_design(y[idx], x[idx], p, q, trend)
        z, dy, iy = des["z"], des["dy"], int(des["iy"])
        coef, resid, xtx_inv = batch_ols(dy, z)
        t_len, n_par = z.shape[1], z.shape[2]
        s2 = np.sum(resid ** 2, axis=1) / (t_len - n_par)
        out["alpha"][idx] = coef[:, iy]
        out["se"][idx] = np.sqrt(s2 * xtx_inv[:, iy, iy])
        out["sigma"][idx] = np.sqrt(s2)
        out["nobs"][idx] = t_len
        # alpha_i(1) = omega_u / omega_y: long-run standard deviations of u = e + γ(L)'Δx and of Δy.
        u = resid + np.einsum("ntk,nk->nt", z[:, :, des["dx_cols"]], coef[:, des["dx_cols"]])
        pair = np.stack([u, dy], axis=2)
        if trend != "none":
            pair = pair - pair.mean(axis=1, keepdims=True)
        omega = long_run_cov(pair, newey_west_lags(t_len))[1]
        alpha1 = np.sqrt(omega[:, 0, 0] / omega[:, 1, 1])
        out["alpha1"][idx] = alpha1
        # Pooled pieces: with ỹ_{t-1} and Δỹ net of the other regressors, Σ ỹ² is the inverse of
        # the y_{t-1} element of (Z'Z)⁻¹ and Σ ỹ Δỹ = α_i Σ ỹ² (Frisch–Waugh–Lovell).
        yy = 1.0 / xtx_inv[:, iy, iy]
        out["yy"][idx] = yy
        out["ydy"][idx] = coef[:, iy] * yy / alpha1
    return out


def _combine(units: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Gt, Ga, Pt, Pa from unit pieces shaped (..., N)."""
    alpha_pool = np.sum(units["ydy"], axis=-1) / np.sum(units["yy"], axis=-1)
    s_n = np.mean(units["sigma"] / units["alpha1"], axis=-1)
    se_pool = s_n / np.sqrt(np.sum(units["yy"], axis=-1))
    t_mean = np.mean(units["nobs"], axis=-1)
    return {"Gt": np.mean(units["alpha"] / units["se"], axis=-1),
            "Ga": np.mean(units["nobs"] * units["alpha"] / units["alpha1"], axis=-1),
            "Pt": alpha_pool / se_pool, "Pa": t_mean * alpha_pool}


def westerlund_raw(y: np.ndarray, x: np.ndarray, p_i: np.ndarray, q_i: np.ndarray,
                   trend: str) -> dict[str, Any]:
    """Gt, Ga, Pt, Pa before standardisation, and the unit pieces (see ``westerlund_test``)."""
    units = _units(y, x, p_i, q_i, trend)
    out: dict[str, Any] = {k: float(v) for k, v in _combine(units).items()}
    out.update({"alpha": units["alpha"], "se": units["se"], "alpha1": units["alpha1"],
                "nobs": units["nobs"]})
    return out


def westerlund_statistics(y: np.ndarray, x: np.ndarray, lags: int | str, leads: int | str, *,
                          max_lags: int, max_leads: int,
                          trend: str) -> tuple[dict[str, np.ndarray], np.ndarray, np.ndarray]:
    """The four raw statistics of panels ``y`` (..., N, T), ``x`` (..., N, T, k).

    Orders are fixed or chosen by AIC for each unit of each panel (as for the data). Returns the
    statistics shaped like the leading axes and the orders (..., N).
    """
    lead, (n_units, n_years, k) = y.shape[:-2], x.shape[-3:]
    yf, xf = y.reshape(-1, n_years), x.reshape(-1, n_years, k)
    p_i, q_i = select_orders(yf, xf, lags, leads, max_lags=max_lags, max_leads=max_leads,
                             trend=trend)
    units = _units(yf, xf, p_i, q_i, trend)
    shaped = {key: value.reshape(*lead, n_units) for key, value in units.items()}
    return _combine(shaped), p_i.reshape(*lead, n_units), q_i.reshape(*lead, n_units)
