"""Single-series unit-root statistics for many series at once (pure NumPy).

Each function takes ``y`` of shape ``(T, B)``: B series of the same length in columns, no missing
values, and computes what ``arch.unitroot`` computes for each column, so that simulated null
distributions use exactly the statistic of the data (the tests check equality with arch):

* :func:`adf_select` — ADF t-ratio with the lag order fixed or chosen by AIC, BIC or the
  sequential t rule (arch's ``method="t-stat"``): every order up to ``max_lags`` fitted on the
  common sample of the largest order, the chosen order re-estimated on the full sample;
* :func:`pp_tau` — the Phillips–Perron Z-tau with a Bartlett long-run variance;
* :func:`kpss_eta` — the KPSS statistic with a Bartlett long-run variance;
* :func:`dfgls_select` — the DF-GLS t-ratio (GLS detrending with c̄ = 7 or 13.5).

``trend`` uses the package's words: ``"none"``, ``"constant"``, ``"trend"``.
"""

from __future__ import annotations

import numpy as np

from evidence._hac import long_run_variance

__all__ = ["trend_columns", "ols_tstat_batch", "adf_design", "adf_tstats", "adf_select",
           "pp_tau", "kpss_eta", "dfgls_select", "residuals_on", "SEQUENTIAL_T_CUTOFF"]

#: Two-sided 10 % normal quantile: the sequential t rule keeps the largest lag with |t| above it.
SEQUENTIAL_T_CUTOFF = 1.6448536269514722
_DFGLS_C = {"constant": -7.0, "trend": -13.5}


def trend_columns(nobs: int, trend: str, *, start: int = 1) -> np.ndarray:
    """Deterministic regressors ``(nobs, k)``: none, a constant, or a constant and a linear trend."""
    cols = []
    if trend in ("constant", "trend"):
        cols.append(np.ones(nobs))
    if trend == "trend":
        cols.append(np.arange(start, start + nobs, dtype=float))
    return np.column_stack(cols) if cols else np.empty((nobs, 0))


def ols_tstat_batch(y: np.ndarray, x: np.ndarray, which: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """OLS of many regressions at once; the coefficient ``which`` and its t-statistic.

    ``y`` is ``(B, n)`` and ``x`` is ``(B, n, k)``: B independent regressions of n observations.
    The variance uses ``s^2 = e'e / (n - k)``; a regressor that is zero throughout one regression
    (a dummy outside its sample) is left out of that regression; a singular regression gives NaN.
    """
    xtx = np.einsum("bnk,bnl->bkl", x, x)
    xty = np.einsum("bnk,bn->bk", x, y)
    zero = ~np.any(x != 0, axis=1)  # a column that is zero in the sample (a dummy outside it)
    if zero.any():
        b_idx, k_idx = np.nonzero(zero)
        xtx[b_idx, k_idx, k_idx] = 1.0  # its coefficient is 0 and the others are unaffected
    singular = np.zeros(x.shape[0], dtype=bool)
    try:
        beta = np.linalg.solve(xtx, xty[..., None])[..., 0]
    except np.linalg.LinAlgError:
        singular = np.linalg.matrix_rank(xtx) < x.shape[2]
        xtx[singular] = np.eye(x.shape[2])
        beta = np.linalg.solve(xtx, xty[..., None])[..., 0]
    resid = y - np.einsum("bnk,bk->bn", x, beta)
    n, k = x.shape[1], x.shape[2]
    s2 = np.einsum("bn,bn->b", resid, resid) / (n - (k - zero.sum(axis=1)))
    unit = np.zeros((x.shape[0], k, 1))
    unit[:, which, 0] = 1.0
    var = s2 * np.linalg.solve(xtx, unit)[:, which, 0]
    with np.errstate(divide="ignore", invalid="ignore"):   # a near-singular regression: NaN
        tstat = beta[:, which] / np.sqrt(np.where(var > 0, var, np.nan))
    coef = beta[:, which]
    coef[singular] = np.nan
    tstat[singular] = np.nan
    return coef, tstat


def adf_design(y: np.ndarray, trend: str, lags: int, *, sample_lags: int | None = None
               ) -> tuple[np.ndarray, np.ndarray]:
    """ADF regression of every column: ``dy (B, n)`` and regressors ``(B, n, k)``.

    Columns: ``y_{t-1}``, ``Δy_{t-1}..Δy_{t-p}``, deterministic terms. Rows t = q+2..T with
    ``q = sample_lags`` (default ``lags``): the common sample of a lag search up to q.
    """
    y = np.asarray(y, dtype=float)
    nobs, n_series = y.shape
    q = lags if sample_lags is None else sample_lags
    dy = np.diff(y, axis=0)
    n = nobs - q - 1
    cols = [y[q:nobs - 1].T[:, :, None]]
    for i in range(1, lags + 1):
        cols.append(dy[q - i:nobs - 1 - i].T[:, :, None])
    det = trend_columns(n, trend)
    cols.append(np.broadcast_to(det, (n_series, n, det.shape[1])))
    return dy[q:].T, np.concatenate(cols, axis=2)


def adf_tstats(y: np.ndarray, trend: str, lags: int) -> np.ndarray:
    """ADF t-statistics of every column with the same fixed lag order (arch's ADF with ``lags``)."""
    dy, x = adf_design(y, trend, lags)
    return ols_tstat_batch(dy, x, 0)[1]


def _ssr_and_last_t(dy: np.ndarray, x: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Sum of squared residuals, coefficients and ``X'X`` (for the t-ratio of the last lag column)."""
    xtx = np.einsum("bnk,bnl->bkl", x, x)
    xty = np.einsum("bnk,bn->bk", x, dy)
    beta = np.linalg.solve(xtx, xty[..., None])[..., 0]
    resid = dy - np.einsum("bnk,bk->bn", x, beta)
    ssr = np.einsum("bn,bn->b", resid, resid)
    return ssr, beta, xtx


def adf_select(y: np.ndarray, trend: str, max_lags: int, method: str
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """ADF t-ratio, lag order and regression observations of every column (arch's automatic lags).

    ``method`` is ``"aic"``, ``"bic"`` or ``"sequential-t"`` (the largest lag whose t-ratio,
    with the maximum-likelihood variance, is at least 1.645 in absolute value; 0 when none is).
    Ties go to the smaller order, as in arch.
    """
    y = np.asarray(y, dtype=float)
    nobs, n_series = y.shape
    n_sel = nobs - 1 - max_lags
    crit = np.empty((max_lags + 1, n_series))
    keep_t = np.full((max_lags + 1, n_series), np.inf)
    for p in range(max_lags + 1):
        dy, x = adf_design(y, trend, p, sample_lags=max_lags)
        ssr, beta, xtx = _ssr_and_last_t(dy, x)
        sigma2 = ssr / n_sel
        if method == "aic":
            crit[p] = n_sel * np.log(sigma2) + 2.0 * p
        elif method == "bic":
            crit[p] = n_sel * np.log(sigma2) + np.log(n_sel) * p
        elif p > 0:
            unit = np.zeros((n_series, x.shape[2], 1))
            unit[:, p, 0] = 1.0  # the last lag is column p (after y_{t-1})
            var = sigma2 * np.linalg.solve(xtx, unit)[:, p, 0]
            keep_t[p] = beta[:, p] / np.sqrt(var)
    if method in ("aic", "bic"):
        lags = np.argmin(crit, axis=0)
    else:
        significant = np.abs(keep_t) >= SEQUENTIAL_T_CUTOFF
        lags = max_lags - np.argmax(significant[::-1], axis=0)
    tstat = np.empty(n_series)
    for p in np.unique(lags):
        cols = lags == p
        tstat[cols] = adf_tstats(y[:, cols], trend, int(p))
    return tstat, lags.astype(int), nobs - 1 - lags.astype(int)


def residuals_on(y: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Residuals of every column of ``y`` (``(T, B)``) on the common regressors ``x`` (``(T, k)``)."""
    if x.shape[1] == 0:
        return y
    beta, *_ = np.linalg.lstsq(x, y, rcond=None)
    return y - x @ beta


def pp_tau(y: np.ndarray, trend: str, hac_lags: int) -> np.ndarray:
    """Phillips–Perron Z-tau of every column (arch's ``PhillipsPerron(test_type="tau")``).

    OLS of ``y_t`` on ``(y_{t-1}, d_t)``; ``Z_tau = sqrt(γ0/λ²) t_ρ - ½ (λ² - γ0)/λ · n σ_ρ / s``
    with γ0 = e'e/n, s² = e'e/(n - k), λ² the Bartlett long-run variance of e (over n).
    """
    y = np.asarray(y, dtype=float)
    nobs, n_series = y.shape
    n = nobs - 1
    det = trend_columns(n, trend)
    x = np.concatenate([y[:-1].T[:, :, None], np.broadcast_to(det, (n_series, n, det.shape[1]))],
                       axis=2)
    lhs = y[1:].T
    xtx = np.einsum("bnk,bnl->bkl", x, x)
    beta = np.linalg.solve(xtx, np.einsum("bnk,bn->bk", x, lhs)[..., None])[..., 0]
    resid = lhs - np.einsum("bnk,bk->bn", x, beta)
    k = x.shape[2]
    ssr = np.einsum("bn,bn->b", resid, resid)
    s2 = ssr / (n - k)
    gamma0 = ssr / n
    unit = np.zeros((n_series, k, 1))
    unit[:, 0, 0] = 1.0
    sigma = np.sqrt(s2 * np.linalg.solve(xtx, unit)[:, 0, 0])
    lam2 = long_run_variance(resid.T, hac_lags)
    lam = np.sqrt(lam2)
    return (np.sqrt(gamma0 / lam2) * ((beta[:, 0] - 1.0) / sigma)
            - 0.5 * ((lam2 - gamma0) / lam) * (n * sigma / np.sqrt(s2)))


def kpss_eta(y: np.ndarray, trend: str, hac_lags: int) -> np.ndarray:
    """KPSS statistic of every column: ``T⁻² Σ_t S_t² / λ²`` with λ² the Bartlett long-run
    variance (over T) of the residuals of ``y`` on the deterministic terms."""
    y = np.asarray(y, dtype=float)
    nobs = y.shape[0]
    e = residuals_on(y, trend_columns(nobs, trend))
    s = np.cumsum(e, axis=0)
    return np.sum(s ** 2, axis=0) / nobs ** 2 / long_run_variance(e, hac_lags)


def dfgls_select(y: np.ndarray, trend: str, lags: int | None, max_lags: int, method: str
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """DF-GLS t-ratio, lag order and observations of every column (arch's ``DFGLS``).

    GLS detrending with ``ᾱ = 1 + c̄/T`` (c̄ = -7 constant, -13.5 trend); the lag order, when not
    fixed, is chosen on the OLS-detrended series by an ADF search without deterministic terms.
    """
    y = np.asarray(y, dtype=float)
    nobs = y.shape[0]
    z = trend_columns(nobs, trend)
    ct = _DFGLS_C[trend] / nobs
    dz = z.copy()
    dz[1:] = dz[1:] - (1 + ct) * dz[:-1]
    qy = y.copy()
    qy[1:] = qy[1:] - (1 + ct) * qy[:-1]
    coef = np.linalg.pinv(dz) @ qy
    detrended = y - z @ coef
    if lags is None:
        _, chosen, _ = adf_select(residuals_on(y, z), "none", max_lags, method)
    else:
        chosen = np.full(y.shape[1], int(lags))
    tstat = np.empty(y.shape[1])
    for p in np.unique(chosen):
        cols = chosen == p
        tstat[cols] = adf_tstats(detrended[:, cols], "none", int(p))
    return tstat, chosen.astype(int), nobs - 1 - chosen.astype(int)
