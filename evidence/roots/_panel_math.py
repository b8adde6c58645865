"""Pure NumPy pieces of the first-generation panel unit-root tests, vectorised over units and
over replications (so that the bootstrap and the simulations use the statistic of the data).

Panels are ``(T, N)`` (one column per unit, years in rows, no missing values) or batches
``(R, T, N)``. ``trend`` uses the package's words ("none", "constant", "trend").
"""

from __future__ import annotations

import numpy as np
from scipy import stats

from evidence._hac import long_run_variance
from evidence.roots import _ips_tables as tables
from evidence.roots._unit_batch import adf_design, adf_tstats

__all__ = ["adf_tstats", "adf_design", "combine_pvalues", "llc_batch", "llc_statistic",
           "breitung_batch", "breitung_statistic", "prewhiten_differences", "hadri_unit_lm",
           "hadri_statistic", "interpolate_in_t", "ips_moments", "ips_w", "HADRI_MOMENTS"]

#: Asymptotic mean and variance of a unit's KPSS statistic (Hadri 2000): ξ and ζ².
HADRI_MOMENTS = {"constant": (1 / 6, 1 / 45), "trend": (1 / 15, 11 / 6300)}
_LLC_COLUMN = {"none": 1, "constant": 3, "trend": 5}


def combine_pvalues(p: np.ndarray) -> dict[str, tuple[float, float]]:
    """Fisher-type combinations of unit p-values: ``{name: (statistic, p-value)}``.

    P = -2 Σ ln p_i ~ χ²(2N) (upper tail); Z = N^{-1/2} Σ Φ⁻¹(p_i) ~ N(0,1) (lower tail);
    Pm = (2√N)⁻¹ Σ (-2 ln p_i - 2) ~ N(0,1) (upper tail); L* = √k Σ ln(p_i/(1-p_i)),
    k = 3(5N+4)/(π² N (5N+2)) ~ t(5N+4) (lower tail).

    Examples
    --------
    >>> out = combine_pvalues([0.01, 0.20, 0.50])
    >>> round(out["p"][0], 4)                     # -2 (ln 0.01 + ln 0.2 + ln 0.5)
    13.8155
    """
    p = np.asarray(p, dtype=float)
    n = p.size
    chi = float(-2.0 * np.log(p).sum())
    z = float(stats.norm.ppf(p).sum() / np.sqrt(n))
    pm = float((chi - 2.0 * n) / (2.0 * np.sqrt(n)))
    k = 3.0 * (5 * n + 4) / (np.pi ** 2 * n * (5 * n + 2))
    logit = float(np.sqrt(k) * np.log(p / (1.0 - p)).sum())
    return {"p": (chi, float(stats.chi2.sf(chi, 2 * n))),
            "z": (z, float(stats.norm.cdf(z))),
            "pm": (pm, float(stats.norm.sf(pm))),
            "l": (logit, float(stats.t.cdf(logit, 5 * n + 4)))}


def _batch(y: np.ndarray) -> tuple[np.ndarray, bool]:
    y = np.asarray(y, dtype=float)
    return (y[None], True) if y.ndim == 2 else (y, False)


def _units_as_columns(y: np.ndarray) -> np.ndarray:
    """``(R, T, N)`` to ``(T, R*N)`` (replication-major columns)."""
    reps, nobs, n_units = y.shape
    return np.moveaxis(y, 2, 1).reshape(reps * n_units, nobs).T


def llc_batch(y: np.ndarray, trend: str, lags: np.ndarray, hac_lags: int) -> dict[str, np.ndarray]:
    """The LLC adjusted statistic and its pieces for each panel of ``y`` (``(R, T, N)``).

    ``lags`` is ``(R, N)`` (each unit's ADF order). Per unit: ẽ, ṽ are the residuals of Δy_t and
    y_{t-1} on (Δy_{t-1..t-p_i}, d_t), divided by σ_εi, the s.d. of the ADF regression (sum of
    squares over its n_i = T - p_i - 1 observations, no degrees-of-freedom correction).
    σ²_yi: Bartlett long-run variance of Δy (demeaned only for "trend", whose null has a drift)
    with autocovariances divided by T - 1. Pooled OLS of ẽ on ṽ gives δ̂ and t_δ,
    σ̂²_ε = SSR/(N T̃), T̃ = T - p̄ - 1, and ``t* = (t_δ - N T̃ S_N σ̂_ε⁻² STD(δ̂) μ*)/σ*`` with
    μ*, σ* from LLC (2002) Table 2 interpolated in T̃.
    """
    y, _ = _batch(y)
    reps, nobs, n_units = y.shape
    flat = _units_as_columns(y)
    lag = np.asarray(lags, dtype=int).reshape(reps * n_units)
    width = nobs - 1
    e_all = np.zeros((reps * n_units, width))
    v_all = np.zeros((reps * n_units, width))
    sig_e = np.empty(reps * n_units)
    for p in np.unique(lag):
        cols = np.flatnonzero(lag == p)
        dy, x = adf_design(flat[:, cols], trend, int(p))
        level, aux = x[:, :, 0], x[:, :, 1:]
        if aux.shape[2]:
            gram = np.einsum("bnk,bnl->bkl", aux, aux)
            coef = np.linalg.solve(gram, np.einsum("bnk,bnj->bkj", aux,
                                                     np.stack([dy, level], axis=2)))
            e = dy - np.einsum("bnk,bk->bn", aux, coef[:, :, 0])
            v = level - np.einsum("bnk,bk->bn", aux, coef[:, :, 1])
        else:
            e, v = dy, level
        delta = np.einsum("bn,bn->b", v, e) / np.einsum("bn,bn->b", v, v)
        s = np.sqrt(np.mean((e - delta[:, None] * v) ** 2, axis=1))
        n = e.shape[1]
        e_all[cols, width - n:] = e / s[:, None]
        v_all[cols, width - n:] = v / s[:, None]
        sig_e[cols] = s
    e_all = e_all.reshape(reps, n_units * width)
    v_all = v_all.reshape(reps, n_units * width)
    vv = np.einsum("rk,rk->r", v_all, v_all)
    delta = np.einsum("rk,rk->r", e_all, v_all) / vv
    t_tilde = nobs - np.asarray(lags, dtype=float).reshape(reps, n_units).mean(axis=1) - 1.0
    resid = e_all - delta[:, None] * v_all
    sig2 = np.einsum("rk,rk->r", resid, resid) / (n_units * t_tilde)
    std = np.sqrt(sig2 / vv)
    t_delta = delta / std
    dy = np.diff(y, axis=1)
    if trend == "trend":
        dy = dy - dy.mean(axis=1, keepdims=True)   # a trend in levels is a drift in differences
    sig_y = np.sqrt(long_run_variance(_units_as_columns(dy), hac_lags))
    s_n = np.mean((sig_y / sig_e).reshape(reps, n_units), axis=1)
    table = np.array(tables.LLC, dtype=float)
    col = _LLC_COLUMN[trend]
    mu = np.interp(t_tilde, table[:, 0], table[:, col])
    sd = np.interp(t_tilde, table[:, 0], table[:, col + 1])
    stat = (t_delta - n_units * t_tilde * s_n / sig2 * std * mu) / sd
    outside = (t_tilde < table[0, 0]) | (t_tilde > table[-1, 0])
    return {"statistic": stat, "delta": delta, "t_delta": t_delta, "t_tilde": t_tilde,
            "s_n": s_n, "mu_star": mu, "sigma_star": sd, "outside": outside}


def llc_statistic(y: np.ndarray, trend: str, lags: np.ndarray, hac_lags: int) -> dict[str, float]:
    """The LLC adjusted statistic and its pieces for one panel ``(T, N)`` (see :func:`llc_batch`)."""
    out = llc_batch(np.asarray(y, dtype=float)[None], trend, np.asarray(lags)[None], hac_lags)
    res = {k: float(v[0]) for k, v in out.items()}
    res["nobs"] = float(np.sum(y.shape[0] - np.asarray(lags) - 1))
    return res


def prewhiten_differences(y: np.ndarray, trend: str, lags: np.ndarray, max_lags: int) -> np.ndarray:
    """Breitung's prewhitened levels of each panel (``(R, T, N)``; returns ``(R, T - max_lags, N)``).

    Each unit's Δy_t is regressed on Δy_{t-1..t-p_i} (and a constant for "trend") over the
    common sample t = max_lags+2..T, and the levels are rebuilt as the cumulated residuals
    starting from zero.
    """
    y, _ = _batch(y)
    reps, nobs, n_units = y.shape
    lags = np.asarray(lags, dtype=int).reshape(reps, n_units)
    dy = np.diff(y, axis=1)
    lhs = dy[:, max_lags:, :]
    white = lhs.copy()
    for p in np.unique(lags):
        cols = [dy[:, max_lags - j:nobs - 1 - j, :] for j in range(1, p + 1)]
        if trend == "trend":
            cols = [np.ones_like(lhs), *cols]
        if not cols:
            continue
        x = np.moveaxis(np.stack(cols, axis=3), 2, 1)          # (R, N, rows, k)
        gram = np.einsum("rnsk,rnsl->rnkl", x, x)
        coef = np.linalg.solve(gram, np.einsum("rnsk,rsn->rnk", x, lhs)[..., None])[..., 0]
        resid = lhs - np.einsum("rnsk,rnk->rsn", x, coef)
        white = np.where((lags == p)[:, None, :], resid, white)
    return np.concatenate([np.zeros((reps, 1, n_units)), np.cumsum(white, axis=1)], axis=1)


def breitung_batch(y: np.ndarray, trend: str) -> np.ndarray:
    """Breitung's pooled statistic of each (prewhitened) panel of levels ``(R, T, N)``.

    "none": y*_t = y_t; "constant": y*_t = y_t - y_1; with Δy_t as the differenced variable.
    "trend": y*_t = y_t - y_1 - (t-1)/(T-1)(y_T - y_1) and forward orthogonal deviations
    Δy*_t = s_t [Δy_t - mean(Δy_{t+1..T})], s_t² = (T-t)/(T-t+1), t = 2..T-1.
    Each unit is scaled by σ̂²_i, the variance of Δy_t (about 0 for "none", "constant"; demeaned
    for "trend"). λ = Σ_i σ̂_i⁻² Σ_t Δy*_it y*_{i,t-1} / sqrt(Σ_i σ̂_i⁻² Σ_t (y*_{i,t-1})²).
    """
    y, _ = _batch(y)
    nobs = y.shape[1]
    dy = np.diff(y, axis=1)
    if trend == "trend":
        sig2 = dy.var(axis=1)
        t = np.arange(1, nobs + 1, dtype=float)[None, :, None]
        ystar = y - y[:, :1] - (t - 1) / (nobs - 1) * (y[:, -1:] - y[:, :1])
        rev = np.cumsum(dy[:, ::-1], axis=1)[:, ::-1]            # Σ_{s≥t} Δy_s
        count = np.arange(nobs - 1, 0, -1, dtype=float)[None, :, None]
        later = rev[:, 1:] / count[:, 1:]                        # mean of Δy_{t+1..T}
        tt = np.arange(2, nobs, dtype=float)[None, :, None]
        dstar = np.sqrt((nobs - tt) / (nobs - tt + 1)) * (dy[:, :-1] - later)
        lagged = ystar[:, :nobs - 2]
    else:
        sig2 = np.mean(dy ** 2, axis=1)
        ystar = y - y[:, :1] if trend == "constant" else y
        dstar = dy
        lagged = ystar[:, :nobs - 1]
    num = np.sum(np.sum(dstar * lagged, axis=1) / sig2, axis=1)
    den = np.sqrt(np.sum(np.sum(lagged ** 2, axis=1) / sig2, axis=1))
    return num / den


def breitung_statistic(y: np.ndarray, trend: str) -> float:
    """Breitung's statistic of one panel of levels ``(T, N)`` (see :func:`breitung_batch`)."""
    return float(breitung_batch(np.asarray(y, dtype=float)[None], trend)[0])


def hadri_unit_lm(y: np.ndarray, trend: str, hac_lags: int) -> tuple[np.ndarray, np.ndarray]:
    """Per unit ``Σ_t S_it² / T²`` and the long-run variance of the residuals of y on d_t."""
    from evidence.roots._unit_batch import residuals_on, trend_columns

    nobs = y.shape[0]
    e = residuals_on(y, trend_columns(nobs, trend))
    s = np.cumsum(e, axis=0)
    return np.sum(s ** 2, axis=0) / nobs ** 2, long_run_variance(e, hac_lags)


def hadri_statistic(y: np.ndarray, trend: str, robust: bool, hac_lags: int
                    ) -> tuple[float, float, np.ndarray]:
    """Hadri's Z with the asymptotic moments, the mean LM and the unit LM statistics."""
    s2, lrv = hadri_unit_lm(y, trend, hac_lags)
    unit_lm = s2 / lrv
    lm = float(unit_lm.mean()) if robust else float(s2.mean() / lrv.mean())
    xi, zeta2 = HADRI_MOMENTS[trend]
    z = float(np.sqrt(y.shape[1]) * (lm - xi) / np.sqrt(zeta2))
    return z, lm, unit_lm


def interpolate_in_t(grid: np.ndarray, values: np.ndarray, t: float) -> tuple[float, bool]:
    """Linear interpolation in T within the table; outside it the nearest end (flagged)."""
    grid = np.asarray(grid, dtype=float)
    values = np.asarray(values, dtype=float)
    outside = bool(t < grid[0] or t > grid[-1])
    return float(np.interp(t, grid, values)), outside


def ips_moments(lags: np.ndarray, nreg: np.ndarray, trend: str) -> tuple[np.ndarray, np.ndarray, bool]:
    """E[t_iT(p_i)] and Var[t_iT(p_i)] of IPS (2003) Table 3 for each unit (NaN if untabulated),
    linearly interpolated in the regression length; the flag says whether any lay outside."""
    grid = np.array(tables.IPS_T, dtype=float)
    means = np.full(lags.size, np.nan)
    variances = np.full(lags.size, np.nan)
    outside = False
    for i, (p, n) in enumerate(zip(lags, nreg, strict=True)):
        if p > 8:
            continue
        means[i], out = interpolate_in_t(grid, np.array(tables.IPS_MEAN[trend][p], dtype=float), n)
        variances[i], _ = interpolate_in_t(grid, np.array(tables.IPS_VAR[trend][p], dtype=float), n)
        outside |= out
    return means, variances, outside


def ips_w(t: np.ndarray, means: np.ndarray, variances: np.ndarray) -> np.ndarray:
    """``W = √N (t̄ - mean E) / sqrt(mean Var)`` over the last axis of ``t``."""
    n = t.shape[-1]
    return np.sqrt(n) * (t.mean(axis=-1) - means.mean()) / np.sqrt(variances.mean())
