"""The one-break unit-root statistics for many series at once (pure NumPy), for simulated nulls.

* :func:`za_batch` — the Zivot–Andrews statistic exactly as ``arch.unitroot.ZivotAndrews``
  computes it for each column of ``y`` (lag order chosen once per series by an ADF regression with
  a constant and trend and no break, then the minimum over break dates of the t-ratio of
  ``y_{t-1}``);
* :func:`ls_batch` — the Lee–Strazicich minimum LM statistic of ``_lm_breaks.lm_search`` with one
  or two breaks, for each column.

``y`` is ``(T, B)``: B series of the same length, no missing values. The tests check equality with
the single-series functions.
"""

from __future__ import annotations

import numpy as np

from evidence.roots._lm_breaks import GTS_CRITICAL, break_grid, deterministics
from evidence.roots._unit_batch import adf_select, ols_tstat_batch

__all__ = ["za_batch", "ls_batch"]



def _tstats(y: np.ndarray, x: np.ndarray, cols: tuple[int, ...]) -> list[np.ndarray]:
    """t-ratios of the coefficients ``cols`` in B regressions ``y (B, n)`` on ``x (B, n, k)``
    (``s^2 = e'e/(n - k)``), from one inverse per regression; NaN where one is singular."""
    xt = np.swapaxes(x, 1, 2)
    xtx = xt @ x
    xty = (xt @ y[..., None])[..., 0]
    try:
        inv = np.linalg.inv(xtx)
    except np.linalg.LinAlgError:
        return [ols_tstat_batch(y, x, c)[1] for c in cols]
    beta = (inv @ xty[..., None])[..., 0]
    resid = y - (x @ beta[..., None])[..., 0]
    s2 = np.einsum("bn,bn->b", resid, resid) / (x.shape[1] - x.shape[2])
    out = []
    with np.errstate(divide="ignore", invalid="ignore"):
        for c in cols:
            var = s2 * inv[:, c, c]
            out.append(beta[:, c] / np.sqrt(np.where(var > 0, var, np.nan)))
    return out


def _za_fixed(y: np.ndarray, model: str, lags: int, trim: float) -> np.ndarray:
    """ZA statistic of every column of ``y`` (T, B) with ``lags`` augmentation terms."""
    nobs, width = y.shape
    trimcnt = int(nobs * trim)
    dy = np.diff(y, axis=0)                         # (T-1, B)
    n = nobs - 1 - lags
    rows = np.arange(n)
    t_col = np.arange(lags + 2, nobs + 1, dtype=float)   # arch's trend, up to scale
    ylag = y[lags:nobs - 1].T                              # (B, n)
    lagged = [dy[lags - i:nobs - 1 - i].T for i in range(1, lags + 1)]
    best = np.full(width, np.inf)
    for bp in range(trimcnt + 1, nobs - trimcnt + 1):
        cutoff = bp - (lags + 1)
        cols = [np.ones(n)]
        if model != "trend":
            cols += [(rows >= cutoff).astype(float), t_col]
            if model == "both":
                cols.append(np.where(rows >= cutoff, rows - cutoff + 1.0, 0.0))
        else:
            cols += [t_col, np.where(rows >= cutoff - 1, rows - cutoff + 2.0, 0.0)]
        det = np.broadcast_to(np.column_stack(cols), (width, n, len(cols)))
        x = np.concatenate([ylag[:, :, None], det] + [v[:, :, None] for v in lagged], axis=2)
        best = np.fmin(best, _tstats(np.ascontiguousarray(dy[lags:].T), x, (0,))[0])
    return best


def za_batch(y: np.ndarray, model: str, lags: int | None, max_lags: int, rule: str,
             trim: float = 0.15) -> tuple[np.ndarray, np.ndarray]:
    """ZA statistics ``(B,)`` and lag orders ``(B,)`` of the columns of ``y``; ``lags=None``
    chooses the order by ``rule`` up to ``max_lags`` on an ADF regression with constant and trend
    (as arch does)."""
    y = np.asarray(y, dtype=float)
    if lags is not None:
        chosen = np.full(y.shape[1], int(lags))
    else:
        chosen = np.asarray(adf_select(y, "trend", max_lags, rule)[1], dtype=int)
    out = np.full(y.shape[1], np.nan)
    for k in np.unique(chosen):
        cols = chosen == k
        out[cols] = _za_fixed(y[:, cols], model, int(k), trim)
    return out, chosen


def _lm_fixed(y: np.ndarray, z: np.ndarray, lags: int) -> tuple[np.ndarray, np.ndarray]:
    """t of φ and of the last lag at every (series, date): ``(B, D)`` each (see ``_lm_breaks``)."""
    nobs, width = y.shape
    dates = z.shape[0]
    dz = np.diff(z, axis=1)[:, :, 1:]                       # (D, T-1, m-1)
    dy = np.diff(y, axis=0).T                               # (B, T-1)
    xtx = np.einsum("dnk,dnl->dkl", dz, dz)
    xty = np.einsum("dnk,bn->bdk", dz, dy)
    delta = np.linalg.solve(xtx[None], xty[..., None])[..., 0]          # (B, D, m-1)
    fitted = np.einsum("dtk,bdk->bdt", z[:, :, 1:], delta)            # (B, D, T)
    psi = y[0][:, None] - fitted[:, :, 0]
    s = y.T[:, None, :] - psi[:, :, None] - fitted                     # (B, D, T)
    ds = np.diff(s, axis=2)
    rows = slice(lags, nobs - 1)
    n = nobs - 1 - lags
    parts = [np.broadcast_to(dz[None, :, rows, :], (width, dates, n, dz.shape[2])),
             s[:, :, lags:nobs - 1, None]]
    for i in range(1, lags + 1):
        parts.append(ds[:, :, lags - i:nobs - 1 - i, None])
    x = np.concatenate(parts, axis=3).reshape(width * dates, n, -1)
    yy = np.ascontiguousarray(np.broadcast_to(dy[:, None, rows], (width, dates, n))
                              ).reshape(width * dates, n)
    which = dz.shape[2]
    if lags == 0:
        tphi = _tstats(yy, x, (which,))[0]
        tlast = np.full(tphi.shape, np.nan)
    else:
        tphi, tlast = _tstats(yy, x, (which, x.shape[2] - 1))
    return tphi.reshape(width, dates), tlast.reshape(width, dates)


def ls_batch(y: np.ndarray, model: str, n_breaks: int, lags: int | str, max_lags: int,
             trim: float = 0.1, *, chunk: int = 200) -> np.ndarray:
    """Minimum LM statistic ``(B,)`` of every column of ``y`` (T, B), as
    ``_lm_breaks.lm_search`` (``lags`` an order or ``"sequential-t"`` up to ``max_lags``)."""
    y = np.asarray(y, dtype=float)
    nobs = y.shape[0]
    dates = break_grid(nobs, n_breaks, float(trim))
    z = deterministics(nobs, dates, model)
    out = np.empty(y.shape[1])
    for start in range(0, y.shape[1], chunk):
        block = y[:, start:start + chunk]
        if isinstance(lags, int):
            stats = _lm_fixed(block, z, lags)[0]
        else:
            stats = np.full((block.shape[1], dates.shape[0]), np.nan)
            chosen = np.zeros(stats.shape, dtype=bool)
            for k in range(max_lags, -1, -1):
                tphi, tlast = _lm_fixed(block, z, k)
                take = ~chosen & np.isfinite(tphi) & ((k == 0) | (np.abs(tlast) >= GTS_CRITICAL))
                stats[take] = tphi[take]
                chosen |= take
        with np.errstate(all="ignore"):
            out[start:start + chunk] = np.nanmin(np.where(np.isfinite(stats), stats, np.nan),
                                                 axis=1)
    return out
