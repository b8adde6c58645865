"""Per-unit arithmetic of the break procedures, vectorised over units.

Everything here works on arrays ``y`` of shape ``(N, T)`` (one series per row, no missing values)
and on break positions ``breaks`` of shape ``(N, m)`` (0-based last observation of each old
regime, the output of :func:`evidence.breaks.segment.optimal_partitions`). The same functions
serve one series (``N = 1``, :func:`evidence.breaks.find_breaks`), the panel screen and the
simulation of the null tables, so the three cannot drift apart.

Notes
-----
Regime coefficients come from segment sums (prefix sums of ``y`` and ``t y``): for the ``trend``
model ``b = C_ty / C_tt`` and ``a = ybar - b tbar`` in each regime, with ``t = 1..T`` as in
:func:`evidence.breaks.segment.regime_design`; for ``level`` the regime mean. The first-order
autocorrelation of residuals ``u`` is ``rho = sum_{t>=2} u_t u_{t-1} / sum_{t>=2} u_{t-1}^2`` over
the whole sample (pooled across regimes) and the innovation variance is
``sum_{t>=2} (u_t - rho u_{t-1})^2 / (T - 1)``.

Its least-squares bias in a regression with ``R`` regimes of intercept and trend is close to
``-R (2 + 4 rho) / T`` (with means only, ``-R (1 + 3 rho) / T``) — the first-order bias of the
AR(1) coefficient after removing a constant and trend (Kendall 1954 for the mean; the trend case
and the per-regime sum from memory, checked by our Monte Carlo in ``tests/test_breaks_size.py``);
:func:`ar1_adjusted` removes it.
"""

from __future__ import annotations

import numpy as np

__all__ = ["regime_index", "piecewise_fit", "ar1_of", "ar1_adjusted", "innovation_variance",
           "long_run_factor", "lwz_ar"]


def regime_index(breaks: np.ndarray, nobs: int) -> np.ndarray:
    """Regime number (0-based) of every observation: ``(N, T)`` integers."""
    breaks = np.asarray(breaks, dtype=np.int64)
    if breaks.ndim == 1:
        breaks = breaks[:, None]
    if breaks.shape[1] == 0:
        return np.zeros((breaks.shape[0], nobs), dtype=np.int64)
    t = np.arange(nobs)
    return (t[None, :, None] > breaks[:, None, :]).sum(axis=2)


def piecewise_fit(y: np.ndarray, breaks: np.ndarray, model: str) -> dict[str, np.ndarray]:
    """Regime-wise OLS of ``y`` on ``(1)`` or ``(1, t)`` at the given breaks, for every unit.

    Returns ``intercept`` and ``slope`` ``(N, m + 1)`` (slope zero for ``level``), regime
    ``nobs``, ``ssr`` and ``variance`` (``SSR_j / n_j``) ``(N, m + 1)``, and ``resid`` ``(N, T)``.
    """
    y = np.atleast_2d(np.asarray(y, dtype=float))
    n_units, nobs = y.shape
    breaks = np.asarray(breaks, dtype=np.int64).reshape(n_units, -1)
    regimes = breaks.shape[1] + 1
    starts = np.concatenate([np.zeros((n_units, 1), np.int64), breaks + 1], axis=1)
    ends = np.concatenate([breaks, np.full((n_units, 1), nobs - 1)], axis=1) + 1  # exclusive
    t = np.arange(1, nobs + 1, dtype=float)
    zero = np.zeros((n_units, 1))
    cy = np.concatenate([zero, np.cumsum(y, axis=1)], axis=1)
    n = (ends - starts).astype(float)
    sy = np.take_along_axis(cy, ends, 1) - np.take_along_axis(cy, starts, 1)
    if model == "level":
        slope = np.zeros((n_units, regimes))
        intercept = sy / n
    else:
        ct = np.concatenate([[0.0], np.cumsum(t)])
        ctt = np.concatenate([[0.0], np.cumsum(t * t)])
        cty = np.concatenate([zero, np.cumsum(y * t[None, :], axis=1)], axis=1)
        st = ct[ends] - ct[starts]
        stt = ctt[ends] - ctt[starts]
        sty = np.take_along_axis(cty, ends, 1) - np.take_along_axis(cty, starts, 1)
        c_tt = stt - st * st / n
        c_ty = sty - st * sy / n
        slope = np.divide(c_ty, c_tt, out=np.zeros_like(c_ty), where=c_tt > 1e-12)
        intercept = (sy - slope * st) / n
    reg = regime_index(breaks, nobs)
    fitted = np.take_along_axis(intercept, reg, 1) + np.take_along_axis(slope, reg, 1) * t[None, :]
    resid = y - fitted
    cr = np.concatenate([zero, np.cumsum(resid * resid, axis=1)], axis=1)
    ssr = np.take_along_axis(cr, ends, 1) - np.take_along_axis(cr, starts, 1)
    return {"intercept": intercept, "slope": slope, "nobs": n, "ssr": ssr, "variance": ssr / n,
            "resid": resid, "fitted": fitted}


def ar1_of(resid: np.ndarray) -> np.ndarray:
    """First-order autocorrelation coefficient of each row (pooled over regimes)."""
    u = np.atleast_2d(resid)
    num = np.einsum("nt,nt->n", u[:, 1:], u[:, :-1])
    den = np.einsum("nt,nt->n", u[:, :-1], u[:, :-1])
    return np.divide(num, den, out=np.zeros_like(num), where=den > 0)


def innovation_variance(resid: np.ndarray, rho: np.ndarray) -> np.ndarray:
    """``sum_{t>=2} (u_t - rho u_{t-1})^2 / (T - 1)`` for each row."""
    u = np.atleast_2d(resid)
    e = u[:, 1:] - np.asarray(rho)[:, None] * u[:, :-1]
    return np.einsum("nt,nt->n", e, e) / e.shape[1]


def ar1_adjusted(rho: np.ndarray, nobs: int, regimes: np.ndarray | int, model: str) -> np.ndarray:
    """The AR(1) coefficient with its first-order least-squares bias removed (see the module notes).

    ``rho + R (2 + 4 rho) / T`` solved for the unbiased value: ``(T rho + 2R) / (T - 4R)`` for the
    trend model and ``(T rho + R) / (T - 3R)`` for the level model (``R`` regimes).
    """
    rho = np.asarray(rho, dtype=float)
    regimes = np.asarray(regimes, dtype=float)
    a, b = (2.0, 4.0) if model == "trend" else (1.0, 3.0)
    denom = np.maximum(nobs - b * regimes, 1.0)
    return (nobs * rho + a * regimes) / denom


def long_run_factor(rho: np.ndarray) -> np.ndarray:
    """``(1 + rho) / (1 - rho)``: long-run over short-run variance of AR(1) noise, ``rho`` in [0, 0.95]."""
    r = np.clip(np.asarray(rho, dtype=float), 0.0, 0.95)
    return (1.0 + r) / (1.0 - r)


def lwz_ar(innovation: np.ndarray, nobs: int, q: int, p: int = 0) -> np.ndarray:
    """LWZ on the AR(1) innovation variance of the ``m``-break fits (last axis ``m = 0..M``).

    ``LWZ(m) = ln(s2_m T / (T - p*)) + (p*/T) 0.299 (ln T)^2.1``, ``p* = (m+1) q + m + p`` (Liu, Wu
    & Zidek 1997, as in Bai & Perron 2003) with ``s2_m`` the innovation variance of an AR(1)
    fitted to the residuals of the best ``m``-break partition instead of the residual variance.
    """
    m = np.arange(np.shape(innovation)[-1])
    k = (m + 1) * q + m + p
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log(innovation * nobs / (nobs - k)) + (k / nobs) * 0.299 * np.log(nobs) ** 2.1
