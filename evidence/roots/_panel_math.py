"""Pure NumPy pieces of the panel unit-root tests, vectorised over units.

``y`` is always ``(T, N)``: one column per unit, years in rows, no missing values.
"""

from __future__ import annotations

import numpy as np
from scipy import stats

from evidence.roots import _ips_tables as tables
from evidence.roots._common import ols_tstat_batch, trend_columns

__all__ = ["adf_tstats", "adf_design", "combine_pvalues", "llc_pieces", "llc_statistic",
           "breitung_statistic", "hadri_unit_lm", "hadri_statistic", "bartlett_lrv",
           "interpolate_in_t", "ips_moments", "ips_w"]


def adf_design(y: np.ndarray, trend: str, lags: int) -> tuple[np.ndarray, np.ndarray]:
    """ADF regression for all units: ``dy (N, n)`` and regressors ``(N, n, k)``.

    Columns: ``y_{t-1}``, ``Δy_{t-1}..Δy_{t-p}``, deterministic terms; rows t = p+2..T.
    """
    y = np.asarray(y, dtype=float)
    nobs, n_units = y.shape
    dy = np.diff(y, axis=0)
    n = nobs - lags - 1
    cols = [y[lags:nobs - 1].T[:, :, None]]
    for i in range(1, lags + 1):
        cols.append(dy[lags - i:nobs - 1 - i].T[:, :, None])
    det = trend_columns(n, trend)
    cols.append(np.broadcast_to(det, (n_units, n, det.shape[1])))
    return dy[lags:].T, np.concatenate(cols, axis=2)


def adf_tstats(y: np.ndarray, trend: str, lags: int) -> np.ndarray:
    """ADF t-statistics of every unit with the same fixed lag order (arch's ADF with ``lags``)."""
    dy, x = adf_design(y, trend, lags)
    return ols_tstat_batch(dy, x, 0)[1]


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


def bartlett_lrv(u: np.ndarray, bandwidth: int) -> np.ndarray:
    """Long-run variance of each column of ``u`` (T, N): ``γ_0 + 2 Σ_{l≤L} (1 - l/(L+1)) γ_l``,
    autocovariances divided by T."""
    u = np.asarray(u, dtype=float)
    nobs = u.shape[0]
    lrv = np.einsum("tn,tn->n", u, u) / nobs
    for lag in range(1, min(bandwidth, nobs - 1) + 1):
        lrv += 2.0 * (1.0 - lag / (bandwidth + 1.0)) * np.einsum("tn,tn->n", u[lag:], u[:-lag]) / nobs
    return lrv


def _resid(y: np.ndarray, x: np.ndarray) -> np.ndarray:
    if x.shape[1] == 0:
        return y
    beta, *_ = np.linalg.lstsq(x, y, rcond=None)
    return y - x @ beta


def llc_pieces(y: np.ndarray, trend: str, lags: np.ndarray, bandwidth: int
               ) -> tuple[list[np.ndarray], list[np.ndarray], np.ndarray, np.ndarray]:
    """Per unit: normalised residuals ẽ and ṽ, innovation s.d. σ_εi and long-run s.d. σ_yi.

    ẽ, ṽ: residuals of Δy_t and y_{t-1} on (Δy_{t-1..t-p_i}, d_t), divided by σ_εi, the s.d. of
    the ADF regression (sum of squares over its n_i = T - p_i - 1 observations, no d.f. correction).
    σ²_yi: Bartlett long-run variance of Δy (as it is for "n" and "c", whose null has no drift;
    demeaned for "ct") with autocovariances divided by T - 1.
    """
    nobs, n_units = y.shape
    e_list, v_list = [], []
    sig_e = np.empty(n_units)
    for i in range(n_units):
        p = int(lags[i])
        dy, x = adf_design(y[:, i:i + 1], trend, p)
        dy, x = dy[0], x[0]
        aux = x[:, 1:]
        e = _resid(dy, aux)
        v = _resid(x[:, 0], aux)
        delta = (v @ e) / (v @ v)
        sig_e[i] = np.sqrt(np.mean((e - delta * v) ** 2))
        e_list.append(e / sig_e[i])
        v_list.append(v / sig_e[i])
    dy = np.diff(y, axis=0)
    if trend == "ct":
        dy = dy - dy.mean(axis=0)  # a trend in levels is a drift in differences
    sig_y = np.sqrt(bartlett_lrv(dy, bandwidth))
    return e_list, v_list, sig_e, sig_y


def breitung_statistic(y: np.ndarray, trend: str) -> float:
    """Breitung's pooled statistic on (prewhitened) levels ``y`` (T, N).

    "n": y*_t = y_t; "c": y*_t = y_t - y_1; with Δy_t as the differenced variable.
    "ct": y*_t = y_t - y_1 - (t-1)/(T-1)(y_T - y_1) and forward orthogonal deviations
    Δy*_t = s_t [Δy_t - mean(Δy_{t+1..T})], s_t² = (T-t)/(T-t+1), t = 2..T-1.
    Each unit is scaled by σ̂²_i, the variance of Δy_t (about 0 for "n", "c"; demeaned for "ct").
    λ = Σ_i σ̂_i⁻² Σ_t Δy*_it y*_{i,t-1} / sqrt(Σ_i σ̂_i⁻² Σ_t (y*_{i,t-1})²).
    """
    nobs = y.shape[0]
    dy = np.diff(y, axis=0)                           # Δy_t for t = 2..T (row t-2)
    if trend == "ct":
        sig2 = dy.var(axis=0)
        t = np.arange(1, nobs + 1, dtype=float)[:, None]
        ystar = y - y[0] - (t - 1) / (nobs - 1) * (y[-1] - y[0])
        rev = np.cumsum(dy[::-1], axis=0)[::-1]       # Σ_{s≥t} Δy_s
        count = np.arange(nobs - 1, 0, -1, dtype=float)[:, None]  # T - t + 1 for t = 2..T
        later = (rev[1:] / count[1:])                 # mean of Δy_{t+1..T}, t = 2..T-1
        tt = np.arange(2, nobs, dtype=float)[:, None]
        s = np.sqrt((nobs - tt) / (nobs - tt + 1))
        dstar = s * (dy[:-1] - later)
        lagged = ystar[:nobs - 2]                     # y*_{t-1}, t = 2..T-1
    else:
        sig2 = np.mean(dy ** 2, axis=0)
        ystar = y - y[0] if trend == "c" else y
        dstar = dy
        lagged = ystar[:nobs - 1]
    num = np.sum(np.sum(dstar * lagged, axis=0) / sig2)
    den = np.sqrt(np.sum(np.sum(lagged ** 2, axis=0) / sig2))
    return float(num / den)


def hadri_unit_lm(y: np.ndarray, trend: str, bandwidth: int) -> tuple[np.ndarray, np.ndarray]:
    """Per unit ``Σ_t S_it² / T²`` and the long-run variance of the residuals of y on d_t."""
    nobs = y.shape[0]
    e = _resid(y, trend_columns(nobs, trend))
    s = np.cumsum(e, axis=0)
    return np.sum(s ** 2, axis=0) / nobs ** 2, bartlett_lrv(e, bandwidth)


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
    for i, (p, n) in enumerate(zip(lags, nreg)):
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


def llc_statistic(y: np.ndarray, trend: str, lags: np.ndarray, bandwidth: int) -> dict[str, float]:
    """The LLC adjusted statistic and its pieces (see ``llc_test``)."""
    nobs, n = y.shape
    e, v, sig_e, sig_y = llc_pieces(y, trend, lags, bandwidth)
    ev, vv = np.concatenate(e), np.concatenate(v)
    delta = float(ev @ vv / (vv @ vv))
    t_tilde = nobs - float(np.mean(lags)) - 1.0
    sig2 = float(np.sum((ev - delta * vv) ** 2) / (n * t_tilde))
    std = float(np.sqrt(sig2 / float(vv @ vv)))
    t_delta = delta / std
    s_n = float(np.mean(sig_y / sig_e))
    col = {"n": 1, "c": 3, "ct": 5}[trend]
    table = np.array(tables.LLC, dtype=float)
    mu, out = interpolate_in_t(table[:, 0], table[:, col], t_tilde)
    sd, _ = interpolate_in_t(table[:, 0], table[:, col + 1], t_tilde)
    stat = (t_delta - n * t_tilde * s_n / sig2 * std * mu) / sd
    return {"statistic": float(stat), "delta": delta, "t_delta": t_delta, "t_tilde": t_tilde,
            "s_n": s_n, "mu_star": mu, "sigma_star": sd, "outside": float(out),
            "nobs": float(sum(len(x) for x in e))}


def hadri_statistic(y: np.ndarray, trend: str, robust: bool, lags: int) -> tuple[float, float, np.ndarray]:
    """Hadri's Z, the mean LM and the unit LM statistics (see ``hadri_test``)."""
    s2, lrv = hadri_unit_lm(y, trend, lags)
    unit_lm = s2 / lrv
    lm = float(unit_lm.mean()) if robust else float(s2.mean() / lrv.mean())
    xi, zeta2 = (1 / 6, 1 / 45) if trend == "c" else (1 / 15, 11 / 6300)
    z = float(np.sqrt(y.shape[1]) * (lm - xi) / np.sqrt(zeta2))
    return z, lm, unit_lm
