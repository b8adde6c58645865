"""Residual-based cointegration math on balanced arrays: Pedroni's seven sums and Kao's pooled DF/ADF.

Pure NumPy; every function works on all units at once, and the ``*_statistics`` functions on a
leading batch axis of panels as well (``y`` (..., N, T), ``x`` (..., N, T, k)), which is how the
bootstrap recomputes a statistic on hundreds of panels in one pass. The public tests in
:mod:`evidence.cointegration.panel` standardise the sums.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from evidence._hac import long_run_cov
from evidence.cointegration._data import batch_ols, deterministics, lag_matrix

__all__ = ["PEDRONI_NAMES", "KAO_NAMES", "adf_terms", "kao_raw", "kao_statistics", "pedroni_raw",
           "pedroni_statistics", "select_adf_lags", "static_residuals"]

#: Pedroni's statistics in the published order.
PEDRONI_NAMES = ("panel v", "panel rho", "panel PP", "panel ADF", "group rho", "group PP",
                 "group ADF")
#: Kao's statistics, the starred (endogeneity-robust) ones first.
KAO_NAMES = ("DF* rho", "DF* t", "ADF", "DF rho", "DF t")


def static_residuals(y: np.ndarray, x: np.ndarray, trend: str) -> tuple[np.ndarray, np.ndarray]:
    """Residuals and slopes of each unit's OLS of ``y`` on its deterministics and ``x``."""
    n_units, n_years = y.shape
    d0 = deterministics(trend, n_years)
    d = np.broadcast_to(d0, (n_units, *d0.shape))
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


def _pedroni_units(e: np.ndarray, dy: np.ndarray, dx: np.ndarray, adf_lags: np.ndarray, *,
                   trend: str, hac_lags: int) -> dict[str, np.ndarray]:
    """The unit pieces of Pedroni's sums (every array (M,) for M units)."""
    n_units = e.shape[0]
    # L11^2: long-run variance of the residual of Δy on Δx (and a constant with a trend).
    zd = dx if trend != "trend" else np.concatenate([np.ones((*dx.shape[:2], 1)), dx], axis=2)
    _, eta, _ = batch_ols(dy, zd)
    l11 = long_run_cov(eta[:, :, None], hac_lags)[1][:, 0, 0]
    # Non-parametric (rho, PP) terms from e_t = gamma e_{t-1} + u_t.
    el, de, u = adf_terms(e, 0)
    nobs = de.shape[1]
    lrc = long_run_cov(u[:, :, None], hac_lags)
    s2, sig2 = lrc.short_run[:, 0, 0], lrc.long_run[:, 0, 0]
    lam = 0.5 * (sig2 - s2)
    see = np.sum(el * el, axis=1)                          # sum_t e_{t-1}^2, per unit
    num = np.sum(el * de, axis=1) - nobs * lam             # sum_t (e_{t-1} Δe_t - lambda_i)
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
    return {"l11": l11, "lambda": lam, "sigma2": sig2, "s2": s2, "see": see, "num": num,
            "ee_star": ee_star, "ed_star": ed_star, "s2_star": s2_star,
            "nobs": np.full(n_units, float(nobs))}


def _pedroni_combine(units: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """The seven sums from unit pieces shaped (..., N): sums over the last axis."""
    n_units = units["see"].shape[-1]
    w = 1.0 / units["l11"]
    see, num, sig2 = units["see"], units["num"], units["sigma2"]
    ee_star, ed_star, s2_star = units["ee_star"], units["ed_star"], units["s2_star"]
    a = np.sum(w * see, axis=-1)
    b = np.sum(w * num, axis=-1)
    sigma_tilde = np.mean(w * sig2, axis=-1)
    s2_tilde = np.mean(w * s2_star, axis=-1)  # weighted like sigma_tilde (see pedroni_test Notes)
    t_scale = units["nobs"][..., 0]
    sqrt_n = np.sqrt(n_units)
    return {
        "panel v": t_scale ** 2 * n_units ** 1.5 / a,
        "panel rho": t_scale * sqrt_n * b / a,
        "panel PP": b / np.sqrt(sigma_tilde * a),
        "panel ADF": np.sum(w * ed_star, axis=-1) / np.sqrt(s2_tilde * np.sum(w * ee_star, axis=-1)),
        "group rho": t_scale / sqrt_n * np.sum(num / see, axis=-1),
        "group PP": np.sum(num / np.sqrt(sig2 * see), axis=-1) / sqrt_n,
        "group ADF": np.sum(ed_star / np.sqrt(s2_star * ee_star), axis=-1) / sqrt_n,
    }


def pedroni_raw(e: np.ndarray, dy: np.ndarray, dx: np.ndarray, adf_lags: np.ndarray, *,
                trend: str, hac_lags: int) -> dict[str, np.ndarray | float]:
    """Pedroni's (1999) seven statistics before standardisation (see ``pedroni_test``).

    ``e`` (N, T) static residuals, ``dy`` (N, T-1) and ``dx`` (N, T-1, m) first differences,
    ``adf_lags`` (N,) lag orders of the ADF regressions.
    """
    units = _pedroni_units(e, dy, dx, adf_lags, trend=trend, hac_lags=hac_lags)
    out: dict[str, np.ndarray | float] = {k: float(v) for k, v in _pedroni_combine(units).items()}
    out.update({"l11": units["l11"], "lambda": units["lambda"], "sigma2": units["sigma2"],
                "s2": units["s2"], "nobs": int(units["nobs"][0])})
    return out


def pedroni_statistics(y: np.ndarray, x: np.ndarray, *, trend: str, lags: int | str,
                       max_lags: int, hac_lags: int) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """The seven raw statistics of panels ``y`` (..., N, T), ``x`` (..., N, T, k).

    ``lags`` an int fixes every unit's ADF order; "aic"/"bic" choose it per unit up to
    ``max_lags``. Returns the statistics (each shaped like the leading axes) and the ADF orders
    (..., N).
    """
    lead, (n_units, n_years) = y.shape[:-2], y.shape[-2:]
    k = x.shape[-1]
    yf, xf = y.reshape(-1, n_years), x.reshape(-1, n_years, k)
    e, _ = static_residuals(yf, xf, trend)
    if isinstance(lags, str):
        adf_lags = select_adf_lags(e, max_lags, lags)
    else:
        adf_lags = np.full(yf.shape[0], int(lags))
    units = _pedroni_units(e, np.diff(yf, axis=1), np.diff(xf, axis=1), adf_lags, trend=trend,
                           hac_lags=hac_lags)
    shaped = {key: value.reshape(*lead, n_units) for key, value in units.items()}
    return _pedroni_combine(shaped), adf_lags.reshape(*lead, n_units)


def _pooled_solve(z: np.ndarray, target: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Least squares per panel: ``z`` (R, n, p), ``target`` (R, n) → coef, residuals, inv(Z'Z)."""
    gram = np.swapaxes(z, 1, 2) @ z
    inv = np.linalg.inv(gram)
    coef = (inv @ (np.swapaxes(z, 1, 2) @ target[..., None]))[..., 0]
    return coef, target - np.einsum("rnp,rp->rn", z, coef), inv


def _adf_design(el: np.ndarray, de: np.ndarray, lags: int, first: int) -> tuple[np.ndarray, np.ndarray]:
    """Pooled ADF regression of Δe_t on e_{t-1} and ``lags`` lagged Δe, from period ``first``."""
    reps = el.shape[0]
    cols = [el[:, :, first:, None]]
    if lags:
        cols.append(lag_matrix(de, list(range(1, lags + 1)))[:, :, first:])
    z = np.concatenate(cols, axis=3)
    return z.reshape(reps, -1, lags + 1), de[:, :, first:].reshape(reps, -1)


def kao_statistics(y: np.ndarray, x: np.ndarray, *, lags: int | str, max_lags: int,
                   hac_lags: int) -> dict[str, np.ndarray]:
    """Kao's (1999) pooled quantities for panels ``y`` (..., N, T), ``x`` (..., N, T, k).

    Returns, shaped like the leading axes: ``t_rho`` (= T(ρ̂ − 1)), ``t_df``, ``t_adf``,
    ``sigma_v2``, ``sigma_0v2``, ``rho``, ``adf_lags``, and ``beta`` (..., k). ``lags`` an int
    fixes the pooled ADF order; "aic"/"bic" choose it per panel up to ``max_lags`` on the common
    sample.
    """
    lead, (n_units, n_years, k) = y.shape[:-2], x.shape[-3:]
    yr, xr = y.reshape(-1, n_units, n_years), x.reshape(-1, n_units, n_years, k)
    reps = yr.shape[0]
    yd = yr - yr.mean(axis=2, keepdims=True)
    xd = xr - xr.mean(axis=2, keepdims=True)
    xx = np.einsum("rnti,rntj->rij", xd, xd)
    beta = np.linalg.solve(xx, np.einsum("rnti,rnt->ri", xd, yd)[..., None])[..., 0]
    e = yd - np.einsum("rntk,rk->rnt", xd, beta)
    el, et = e[:, :, :-1], e[:, :, 1:]
    rho = np.sum(el * et, axis=(1, 2)) / np.sum(el * el, axis=(1, 2))
    v = et - rho[:, None, None] * el
    s_e2 = np.mean(v * v, axis=(1, 2))
    t_df = (rho - 1.0) * np.sqrt(np.sum(el * el, axis=(1, 2))) / np.sqrt(s_e2)
    de = np.diff(e, axis=2)
    if isinstance(lags, str):
        scores = np.empty((reps, max_lags + 1))
        for p in range(max_lags + 1):
            z, target = _adf_design(el, de, p, max_lags)
            _, resid, _ = _pooled_solve(z, target)
            nobs = target.shape[1]
            penalty = 2.0 if lags == "aic" else np.log(nobs)
            scores[:, p] = nobs * np.log(np.sum(resid ** 2, axis=1) / nobs) + penalty * (p + 1)
        order = np.argmin(scores, axis=1)
    else:
        order = np.full(reps, int(lags))
    t_adf = np.empty(reps)
    for p in np.unique(order):
        idx = np.flatnonzero(order == p)
        z, target = _adf_design(el[idx], de[idx], int(p), int(p))
        coef, resid, inv = _pooled_solve(z, target)
        s2 = np.sum(resid ** 2, axis=1) / (target.shape[1] - z.shape[2])
        t_adf[idx] = coef[:, 0] / np.sqrt(s2 * inv[:, 0, 0])
    # Variances of u = Δe conditional on Δx, contemporaneous and long run, averaged over units.
    w = np.concatenate([de[..., None], np.diff(xr, axis=2)], axis=3)
    w = w - w.mean(axis=2, keepdims=True)
    sigma, omega, _ = long_run_cov(w, hac_lags)
    sigma, omega = sigma.mean(axis=1), omega.mean(axis=1)

    def conditional(m: np.ndarray) -> np.ndarray:
        solved = np.linalg.solve(m[:, 1:, 1:], m[:, 1:, :1])[..., 0]
        return m[:, 0, 0] - np.einsum("ri,ri->r", m[:, 0, 1:], solved)

    out = {"t_rho": n_years * (rho - 1.0), "t_df": t_df, "t_adf": t_adf,
           "sigma_v2": conditional(sigma), "sigma_0v2": conditional(omega), "rho": rho,
           "adf_lags": order}
    shaped = {key: value.reshape(lead) for key, value in out.items()}
    shaped["beta"] = beta.reshape(*lead, k)
    return shaped


def kao_standardise(raw: dict[str, np.ndarray], n_units: int) -> dict[str, np.ndarray]:
    """Kao's five N(0, 1) statistics from :func:`kao_statistics` (constants: see ``kao_test``)."""
    sn = np.sqrt(n_units)
    sv2, s0v2 = raw["sigma_v2"], raw["sigma_0v2"]
    sv, s0v = np.sqrt(sv2), np.sqrt(s0v2)
    star_scale = np.sqrt(s0v2 / (2 * sv2) + 3 * sv2 / (10 * s0v2))
    return {
        "DF* rho": (sn * raw["t_rho"] + 3 * sn * sv2 / s0v2) / np.sqrt(3 + 36 * sv2 ** 2 / (5 * s0v2 ** 2)),
        "DF* t": (raw["t_df"] + np.sqrt(6 * n_units) * sv / (2 * s0v)) / star_scale,
        "ADF": (raw["t_adf"] + np.sqrt(6 * n_units) * sv / (2 * s0v)) / star_scale,
        "DF rho": (sn * raw["t_rho"] + 3 * sn) / np.sqrt(10.2),
        "DF t": np.sqrt(1.25) * raw["t_df"] + np.sqrt(1.875 * n_units),
    }


def kao_raw(y: np.ndarray, x: np.ndarray, lags: int, *, hac_lags: int) -> dict[str, float]:
    """Kao's (1999) pooled DF and ADF quantities from the within (fixed-effects) regression.

    One panel ``y`` (N, T), ``x`` (N, T, k), a fixed pooled ADF order: see :func:`kao_statistics`.
    """
    raw = kao_statistics(y[None], x[None], lags=int(lags), max_lags=int(lags), hac_lags=hac_lags)
    out: dict[str, Any] = {key: float(value[0]) for key, value in raw.items() if key != "beta"}
    out["beta"] = raw["beta"][0]
    out.update({"n_units": y.shape[0], "n_years": y.shape[1]})
    return out
