"""Confidence intervals for break dates (Bai 1997; Bai & Perron 1998, 2003).

Notes
-----
For the break between regimes i and i+1 with coefficient change ``D = delta_{i+1} - delta_i`` of
the changing regressors z, regressor moments ``Q_j = Z_j'Z_j / n_j`` and long-run variances
``Omega_j`` of ``z_t u_t`` in each regime (``sigma_j^2 Q_j`` without the robust option),

    (D'Q_1 D)^2 / (D'Omega_1 D) * (T_hat - T_0)  =>  argmax_s V(s),

    V(s) = W_1(-s) - |s|/2                          for s <= 0,
    V(s) = sqrt(phi) W_2(s) - xi |s|/2              for s > 0,

with ``xi = D'Q_2 D / D'Q_1 D`` and ``phi = D'Omega_2 D / D'Omega_1 D``. The distribution function of
argmax V has the closed form of Bai (1997, Appendix B), evaluated here. Since the limit describes
``T_hat - T_0``, the interval for the true date inverts it: ``[T_hat + floor(-b / L),
T_hat + ceil(-a / L)]`` with a, b the ``alpha/2`` and ``1 - alpha/2`` quantiles of argmax V and
``L = (D'Q_1 D)^2 / (D'Omega_1 D)``; the interval is asymmetric when the regimes differ. With
equal moments and variances (``xi = phi = 1``) the 97.5 % quantile is 11.03.

References
----------
bai1997 : Bai, J. (1997). Estimation of a change point in multiple regression models. Review of
    Economics and Statistics 79(4), 551–563.
baiperron1998 : Bai, J. & Perron, P. (1998). Econometrica 66(1), 47–78.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import optimize, stats

__all__ = ["argmax_cdf", "argmax_quantile", "break_interval", "argmax_quantile_array", "break_intervals"]


def argmax_cdf(x: float, xi: float = 1.0, phi: float = 1.0) -> float:
    """Distribution function of argmax V(s) at ``x`` (Bai 1997, Appendix B)."""
    if x < 0:
        a = abs(x)
        frac = xi / phi
        return float(
            -math.exp(math.log(a) / 2 - a / 8 - math.log(2 * math.pi) / 2)
            - (phi / xi * (phi + 2 * xi) / (phi + xi))
            * math.exp(frac * (1 + frac) * a / 2 + stats.norm.logcdf(-(0.5 + frac) * math.sqrt(a)))
            + math.exp(math.log(a / 2 - 2 + (phi + 2 * xi) ** 2 / ((phi + xi) * xi))
                       + stats.norm.logcdf(-math.sqrt(a) / 2)))
    if x == 0:
        x = 1e-300
    frac = xi ** 2 / phi
    return float(
        1 + math.sqrt(frac) * math.exp(math.log(x) / 2 - frac * x / 8 - math.log(2 * math.pi) / 2)
        + (xi / phi * (2 * phi + xi) / (phi + xi))
        * math.exp((phi + xi) * x / 2 + stats.norm.logcdf(-(phi + xi / 2) / math.sqrt(phi) * math.sqrt(x)))
        - math.exp(math.log((2 * phi + xi) ** 2 / ((phi + xi) * phi) - 2 + frac * x / 2)
                   + stats.norm.logcdf(-math.sqrt(frac) * math.sqrt(x) / 2)))


def argmax_quantile(prob: float, xi: float = 1.0, phi: float = 1.0) -> float:
    """Quantile of argmax V(s): root of ``argmax_cdf(x) = prob`` (negative for prob below F(0))."""
    at_zero = argmax_cdf(-1e-12, xi, phi)
    if prob < at_zero:
        lo = -1.0
        while argmax_cdf(lo, xi, phi) > prob:
            lo *= 2.0
        return float(optimize.brentq(lambda v: argmax_cdf(v, xi, phi) - prob, lo, -1e-12, xtol=1e-10))
    hi = 1.0
    while argmax_cdf(hi, xi, phi) < prob:
        hi *= 2.0
    return float(optimize.brentq(lambda v: argmax_cdf(v, xi, phi) - prob, 1e-12, hi, xtol=1e-10))


def break_interval(index: int, delta: np.ndarray, q1: np.ndarray, q2: np.ndarray,
                   omega1: np.ndarray, omega2: np.ndarray, *, alpha: float, nobs: int) -> tuple[int, int]:
    """``(lower, upper)`` 0-based bounds of the ``1 - alpha`` interval of a break at ``index``.

    ``q1``, ``q2`` are the regressor moment matrices and ``omega1``, ``omega2`` the long-run
    variances of ``z_t u_t`` before and after the break. Bounds are clipped to the sample.
    """
    d1 = float(delta @ q1 @ delta)
    d2 = float(delta @ q2 @ delta)
    o1 = float(delta @ omega1 @ delta)
    o2 = float(delta @ omega2 @ delta)
    if min(d1, d2, o1, o2) <= 0:
        return 0, nobs - 1
    scale = d1 * d1 / o1
    xi = d2 / d1
    phi = o2 / o1
    try:
        low_q = argmax_quantile(alpha / 2, xi, phi) / scale
        high_q = argmax_quantile(1 - alpha / 2, xi, phi) / scale
    except (OverflowError, ValueError):  # extreme ratios (an outlier year): no finite bounds
        return 0, nobs - 1
    lo = int(index + math.floor(-high_q))  # T_0 = T_hat - (T_hat - T_0)
    hi = int(index + math.ceil(-low_q))
    return max(lo, 0), min(hi, nobs - 1)


def _argmax_cdf_array(x: np.ndarray, xi: np.ndarray, phi: np.ndarray) -> np.ndarray:
    """:func:`argmax_cdf` for arrays (same formulas, elementwise)."""
    from scipy.special import log_ndtr

    x, xi, phi = np.broadcast_arrays(np.asarray(x, float), np.asarray(xi, float),
                                     np.asarray(phi, float))
    out = np.empty_like(x)
    neg = x < 0
    half_log_2pi = 0.5 * math.log(2 * math.pi)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        a = np.abs(x[neg])
        xn, pn = xi[neg], phi[neg]
        frac = xn / pn
        out[neg] = (-np.exp(np.log(a) / 2 - a / 8 - half_log_2pi)
                    - (pn / xn * (pn + 2 * xn) / (pn + xn))
                    * np.exp(frac * (1 + frac) * a / 2 + log_ndtr(-(0.5 + frac) * np.sqrt(a)))
                    + np.exp(np.log(a / 2 - 2 + (pn + 2 * xn) ** 2 / ((pn + xn) * xn))
                             + log_ndtr(-np.sqrt(a) / 2)))
        pos = ~neg
        v = np.maximum(x[pos], 1e-300)
        xp, pp = xi[pos], phi[pos]
        frac = xp ** 2 / pp
        out[pos] = (1 + np.sqrt(frac) * np.exp(np.log(v) / 2 - frac * v / 8 - half_log_2pi)
                    + (xp / pp * (2 * pp + xp) / (pp + xp))
                    * np.exp((pp + xp) * v / 2 + log_ndtr(-(pp + xp / 2) / np.sqrt(pp) * np.sqrt(v)))
                    - np.exp(np.log((2 * pp + xp) ** 2 / ((pp + xp) * pp) - 2 + frac * v / 2)
                             + log_ndtr(-np.sqrt(frac) * np.sqrt(v) / 2)))
    return out


def argmax_quantile_array(prob: float, xi: np.ndarray, phi: np.ndarray) -> np.ndarray:
    """:func:`argmax_quantile` for arrays of ``xi`` and ``phi`` (bisection, elementwise)."""
    xi = np.atleast_1d(np.asarray(xi, dtype=float))
    phi = np.atleast_1d(np.asarray(phi, dtype=float))
    at_zero = _argmax_cdf_array(np.full(xi.shape, -1e-12), xi, phi)
    negative = prob < at_zero
    edge = np.where(negative, -1.0, 1.0)  # the far end of the bracket, doubled until it holds
    for _ in range(200):
        f_edge = _argmax_cdf_array(edge, xi, phi)
        grow = np.where(negative, f_edge > prob, f_edge < prob)
        if not grow.any():
            break
        edge = np.where(grow, edge * 2.0, edge)
    lo = np.where(negative, edge, 1e-12)
    hi = np.where(negative, -1e-12, edge)
    for _ in range(48):  # the bracket (at most a few hundred wide) shrinks by 2^-48
        mid = 0.5 * (lo + hi)
        below = _argmax_cdf_array(mid, xi, phi) < prob
        lo = np.where(below, mid, lo)
        hi = np.where(below, hi, mid)
    return 0.5 * (lo + hi)


def break_intervals(index: np.ndarray, d1: np.ndarray, d2: np.ndarray, o1: np.ndarray,
                    o2: np.ndarray, *, alpha: float, nobs: int) -> tuple[np.ndarray, np.ndarray]:
    """:func:`break_interval` for many breaks at once, from the scalars it uses.

    ``d1 = D'Q_1 D``, ``d2 = D'Q_2 D``, ``o1 = D'Omega_1 D`` and ``o2 = D'Omega_2 D`` per break;
    returns 0-based ``(lower, upper)`` arrays clipped to the sample (the whole sample where a
    quantity is not positive).
    """
    index = np.asarray(index, dtype=np.int64)
    ok = (np.minimum.reduce([d1, d2, o1, o2]) > 0) & np.isfinite(d1 + d2 + o1 + o2)
    lower = np.zeros(index.shape, dtype=np.int64)
    upper = np.full(index.shape, nobs - 1, dtype=np.int64)
    if ok.any():
        scale = d1[ok] ** 2 / o1[ok]
        xi, phi = d2[ok] / d1[ok], o2[ok] / o1[ok]
        low_q = argmax_quantile_array(alpha / 2, xi, phi) / scale
        high_q = argmax_quantile_array(1 - alpha / 2, xi, phi) / scale
        lower[ok] = np.maximum(index[ok] + np.floor(-high_q).astype(np.int64), 0)
        upper[ok] = np.minimum(index[ok] + np.ceil(-low_q).astype(np.int64), nobs - 1)
    return lower, upper
