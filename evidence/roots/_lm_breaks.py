"""The LM unit-root statistic with level or level-and-trend breaks, vectorised over break dates.

Pure NumPy. Times are 1-based inside this module: a break at ``tb`` means observations
``1..tb`` belong to the old regime (``tb`` is the last year of the old regime).
"""

from __future__ import annotations

from itertools import combinations

import numpy as np

from evidence.roots._unit_batch import ols_tstat_batch

__all__ = ["break_grid", "deterministics", "lm_statistics", "lm_search"]

#: |t| of the last lag needed to keep it in the general-to-specific search (10 %, two-sided).
GTS_CRITICAL = 1.645


def break_grid(nobs: int, breaks: int, trim: float, *, min_gap: int = 2) -> np.ndarray:
    """Candidate break dates ``(B, breaks)``: each in ``[ceil(trim T), floor((1 - trim) T)]``,
    two breaks at least ``min_gap`` apart."""
    lo = max(int(np.ceil(trim * nobs)), 2)
    hi = min(int(np.floor((1.0 - trim) * nobs)), nobs - 2)
    dates = range(lo, hi + 1)
    if breaks == 1:
        return np.array([[d] for d in dates], dtype=int).reshape(-1, 1)
    pairs = [(a, b) for a, b in combinations(dates, 2) if b - a >= min_gap]
    return np.array(pairs, dtype=int).reshape(-1, 2)


def deterministics(nobs: int, dates: np.ndarray, model: str) -> np.ndarray:
    """``Z_t`` for every candidate: ``(B, T, m)`` with columns 1, t, D_jt (and DT_jt for "both").

    ``D_jt = 1(t > tb_j)``; ``DT_jt = (t - tb_j) 1(t > tb_j)``.
    """
    t = np.arange(1, nobs + 1, dtype=float)
    b = dates.shape[0]
    cols = [np.ones((b, nobs)), np.broadcast_to(t, (b, nobs))]
    for j in range(dates.shape[1]):
        after = t[None, :] > dates[:, j:j + 1]
        cols.append(after.astype(float))
        if model == "both":
            cols.append(np.where(after, t[None, :] - dates[:, j:j + 1], 0.0))
    return np.stack(cols, axis=2)


def _detrended(y: np.ndarray, z: np.ndarray) -> np.ndarray:
    """``S_t = y_t - psi - Z_t delta`` with delta from ``dy`` on ``dZ`` (constant column dropped)."""
    dy = np.diff(y)
    dz = np.diff(z, axis=1)[:, :, 1:]
    xtx = np.einsum("bnk,bnl->bkl", dz, dz)
    xty = np.einsum("bnk,n->bk", dz, dy)
    delta = np.linalg.solve(xtx, xty[..., None])[..., 0]
    fitted = np.einsum("btk,bk->bt", z[:, :, 1:], delta)
    psi = y[0] - fitted[:, 0]
    return y[None, :] - psi[:, None] - fitted


def lm_statistics(y: np.ndarray, dates: np.ndarray, model: str, lags: int) -> tuple[np.ndarray, np.ndarray]:
    """LM t-statistics at each candidate break date with ``lags`` augmentation terms.

    Regression, for t = lags+2..T: ``dy_t = dZ_t' d + phi S_{t-1} + sum_i g_i dS_{t-i} + u_t``;
    returns (t of phi, t of the last lag coefficient or NaN when lags = 0).
    """
    y = np.asarray(y, dtype=float)
    nobs = y.size
    z = deterministics(nobs, dates, model)
    s = _detrended(y, z)
    dy = np.diff(y)                       # index k <-> time k+2
    dz = np.diff(z, axis=1)[:, :, 1:]     # (B, T-1, m-1)
    ds = np.diff(s, axis=1)
    rows = slice(lags, nobs - 1)          # times lags+2..T
    parts = [dz[:, rows, :], s[:, lags:nobs - 1, None]]
    for i in range(1, lags + 1):
        parts.append(ds[:, lags - i:nobs - 1 - i, None])
    x = np.concatenate(parts, axis=2)
    yy = np.broadcast_to(dy[rows], (x.shape[0], x.shape[1]))
    which = dz.shape[2]
    _, tphi = ols_tstat_batch(yy, x, which)
    if lags == 0:
        return tphi, np.full(tphi.shape, np.nan)
    _, tlast = ols_tstat_batch(yy, x, x.shape[2] - 1)
    return tphi, tlast


def lm_search(y: np.ndarray, dates: np.ndarray, model: str, lags: int | str,
              max_lags: int) -> tuple[float, np.ndarray, int, np.ndarray]:
    """Minimum LM statistic over the candidate dates.

    With ``lags="sequential-t"`` the lag order is chosen at every candidate by the general-to-specific
    rule: start at ``max_lags`` and drop the last lag while its |t| < 1.645. Returns the minimum
    statistic, its break dates, its lag order and the statistic at every candidate.
    """
    if isinstance(lags, int):
        stats, _ = lm_statistics(y, dates, model, lags)
        chosen = np.full(dates.shape[0], lags)
    else:
        stats = np.full(dates.shape[0], np.nan)
        chosen = np.full(dates.shape[0], -1)
        for k in range(max_lags, -1, -1):
            tphi, tlast = lm_statistics(y, dates, model, k)
            take = (chosen < 0) & np.isfinite(tphi) & ((k == 0) | (np.abs(tlast) >= GTS_CRITICAL))
            stats[take] = tphi[take]
            chosen[take] = k
    if not np.isfinite(stats).any():
        raise np.linalg.LinAlgError("every candidate regression is singular")
    best = int(np.nanargmin(stats))
    return float(stats[best]), dates[best], int(chosen[best]), stats
