"""One long-run covariance for the whole package: Bartlett kernel, batched, with one bandwidth rule.

Every HAC standard error, long-run variance and one-sided long-run covariance in the package comes
from :func:`long_run_cov`. Series are arrays whose second-to-last axis is time and last axis the
variables, ``u[..., t, j]``; any leading axes are batches (units, replications) computed at once.
Autocovariances are averages over the ``T`` observations (divide by ``T``, not ``T - l``), which
is the Newey–West (1987) estimator and equals ``arch.covariance.kernel.Bartlett(x,
bandwidth=L, force_int=True, center=False)``. A caller that needs the sum ``sum_t`` multiplies by
``T``.

Two lag rules, each with its reference, are the only ones used:

* :func:`newey_west_lags` — the HAC bandwidth ``floor(4 (T/100)^(2/9))`` (Newey & West 1994),
  used wherever a kernel bandwidth (``hac_lags``) is not given;
* :func:`default_max_lags` — the largest lag searched by an information criterion,
  ``floor(4 (T/100)^(1/4))`` (Schwert 1989, the short rule), used wherever ``max_lags`` is not given.

References
----------
neweywest1987 : Newey, W. K. & West, K. D. (1987). A simple, positive semi-definite,
    heteroskedasticity and autocorrelation consistent covariance matrix. Econometrica 55(3), 703–708.
neweywest1994 : Newey, W. K. & West, K. D. (1994). Automatic lag selection in covariance matrix
    estimation. Review of Economic Studies 61(4), 631–653.
andrewsmonahan1992 : Andrews, D. W. K. & Monahan, J. C. (1992). An improved heteroskedasticity and
    autocorrelation consistent covariance matrix estimator. Econometrica 60(4), 953–966.
schwert1989 : Schwert, G. W. (1989). Tests for unit roots: a Monte Carlo investigation. Journal of
    Business & Economic Statistics 7(2), 147–159.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

__all__ = ["LongRunCov", "long_run_cov", "long_run_variance", "bartlett_weights",
           "newey_west_lags", "default_max_lags"]

#: Largest modulus allowed for the prewhitening VAR(1) (Andrews & Monahan 1992 shrink at 0.97).
PREWHITEN_MAX_ROOT = 0.97


def newey_west_lags(nobs: int) -> int:
    """HAC bandwidth ``floor(4 (T/100)^(2/9))`` (Newey & West 1994), at least 1 when ``T > 2``.

    Examples
    --------
    >>> newey_west_lags(30), newey_west_lags(100)
    (3, 4)
    """
    return max(math.floor(4.0 * (nobs / 100.0) ** (2.0 / 9.0)), 1 if nobs > 2 else 0)


def default_max_lags(nobs: int) -> int:
    """Largest lag searched by AIC/BIC: ``floor(4 (T/100)^(1/4))`` (Schwert 1989, the short rule).

    Examples
    --------
    >>> default_max_lags(30), default_max_lags(100)
    (2, 4)
    """
    return max(math.floor(4.0 * (max(nobs, 0) / 100.0) ** 0.25), 0)


def bartlett_weights(hac_lags: int) -> np.ndarray:
    """Weights ``1 - l / (L + 1)`` for ``l = 1..L``."""
    lags = np.arange(1, int(hac_lags) + 1, dtype=float)
    return 1.0 - lags / (hac_lags + 1.0)


class LongRunCov(NamedTuple):
    """Short-run, long-run and one-sided covariances, each ``(..., m, m)``.

    ``short_run = G_0``, ``long_run = G_0 + sum_l w_l (G_l + G_l')`` and
    ``one_sided = G_0 + sum_l w_l G_l'`` with ``G_l = (1/T) sum_t u_t u_{t-l}'`` (so
    ``one_sided[i, j]`` weights ``E u_{i,t-l} u_{j,t}``, Phillips & Hansen 1990's ``Delta``;
    arch's ``one_sided`` is its transpose).
    """

    short_run: np.ndarray
    long_run: np.ndarray
    one_sided: np.ndarray


def _prewhiten(u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """VAR(1) residuals of each batch of ``u`` and the recolouring matrix ``(I - A)^{-1}``.

    ``u_t = A u_{t-1} + v_t`` by least squares per batch; a VAR whose largest root exceeds
    :data:`PREWHITEN_MAX_ROOT` in modulus is shrunk to it (Andrews & Monahan 1992).
    """
    lagged, current = u[..., :-1, :], u[..., 1:, :]
    gram = np.swapaxes(lagged, -1, -2) @ lagged
    cross = np.swapaxes(lagged, -1, -2) @ current
    coef = np.linalg.lstsq(gram, cross, rcond=None)[0] if gram.ndim == 2 else (
        np.linalg.pinv(gram) @ cross)  # u_t' = u_{t-1}' coef, i.e. A = coef'
    roots = np.abs(np.linalg.eigvals(coef)).max(axis=-1, initial=0.0)
    shrink = np.where(roots > PREWHITEN_MAX_ROOT, PREWHITEN_MAX_ROOT / np.maximum(roots, 1e-300), 1.0)
    coef = coef * np.asarray(shrink)[..., None, None]
    resid = current - lagged @ coef
    eye = np.eye(u.shape[-1])
    recolour = np.linalg.inv(eye - np.swapaxes(coef, -1, -2))
    return resid, recolour


def long_run_cov(u: np.ndarray, hac_lags: int, *, demean: bool = False,
                 prewhiten: bool = False) -> LongRunCov:
    """Bartlett-kernel covariances of ``u`` (``(..., T, m)``, time on the second-to-last axis).

    Parameters
    ----------
    u : array
        ``(T, m)``, or batches ``(..., T, m)`` computed at once. A 1-D array is one series.
    hac_lags : int
        Bandwidth ``L`` (lags with positive weight); truncated at ``T - 1``.
    demean : bool
        Subtract each series' mean first (arch's ``center=True``).
    prewhiten : bool
        Filter by a VAR(1) first and recolour (Andrews & Monahan 1992); ``one_sided`` is then
        not defined and is returned as NaN. Skipped when ``T < 3 m + 2`` (too few observations
        for the VAR).

    Returns
    -------
    LongRunCov
        ``short_run``, ``long_run`` and ``one_sided``, averages over ``T`` (see the class).
    """
    x = np.asarray(u, dtype=float)
    if x.ndim == 1:
        x = x[:, None]
    if demean:
        x = x - x.mean(axis=-2, keepdims=True)
    nobs = x.shape[-2]
    if prewhiten and nobs >= 3 * x.shape[-1] + 2:
        resid, recolour = _prewhiten(x)
        inner = long_run_cov(resid, hac_lags)  # an average over the T - 1 filtered observations
        long_run = recolour @ inner.long_run @ np.swapaxes(recolour, -1, -2)
        short_run = np.swapaxes(x, -1, -2) @ x / nobs
        return LongRunCov(short_run, long_run, np.full_like(long_run, np.nan))
    short_run = np.swapaxes(x, -1, -2) @ x / nobs
    one_sided_tail = np.zeros_like(short_run)
    for lag, weight in enumerate(bartlett_weights(min(int(hac_lags), max(nobs - 1, 0))), start=1):
        gamma = np.swapaxes(x[..., :-lag, :], -1, -2) @ x[..., lag:, :] / nobs  # E u_{t-l} u_t'
        one_sided_tail += weight * gamma
    long_run = short_run + one_sided_tail + np.swapaxes(one_sided_tail, -1, -2)
    return LongRunCov(short_run, long_run, short_run + one_sided_tail)


def long_run_variance(u: np.ndarray, hac_lags: int, *, demean: bool = False,
                      prewhiten: bool = False) -> np.ndarray:
    """Long-run variance of each column of ``u`` (``(T, N)``): ``(N,)``, an average over ``T``.

    The columns are separate series (no cross-covariances are formed). A 1-D ``u`` gives a 0-d
    array.

    Examples
    --------
    >>> import numpy as np
    >>> float(long_run_variance(np.array([1.0, -1.0, 1.0, -1.0]), 1))
    0.25
    """
    x = np.asarray(u, dtype=float)
    single = x.ndim == 1
    cols = x[:, None] if single else x
    batched = np.moveaxis(cols, 1, 0)[..., None]  # (N, T, 1)
    out = long_run_cov(batched, hac_lags, demean=demean, prewhiten=prewhiten).long_run[:, 0, 0]
    return out[0] if single else out
