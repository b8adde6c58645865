"""Segment sums of squared residuals and the global least-squares partition (dynamic programming).

For a series of length T and a regime design ``z`` (a constant for the ``level`` model, a constant
and a time trend for the ``trend`` model, or user regressors), ``SSR[i, j]`` is the sum of squared
OLS residuals of the observations ``i..j`` (inclusive, 0-based). The table is built from cumulative
sums of ``z'z``, ``z'y`` and ``y'y`` -- never by one regression per segment -- and the optimal
partition with ``m`` breaks minimises the total SSR over all partitions whose regimes have at
least ``h`` observations (Bai & Perron 2003). Everything is vectorised over units: ``Y`` of shape
``(N, T)`` gives tables of shape ``(N, T, T)``; callers chunk the units to bound memory.

Break positions are returned as 0-based indices of the *last observation of the old regime*.

References
----------
baiperron2003 : Bai, J. & Perron, P. (2003). Computation and analysis of multiple structural change
    models. Journal of Applied Econometrics 18(1), 1–22.
"""

from __future__ import annotations

import numpy as np

__all__ = ["MODELS", "regime_design", "ssr_tables", "ssr_table_general", "optimal_partitions",
           "segment_bounds", "min_length"]

#: Regime models that need no user regressors, and the number of changing coefficients q.
MODELS = {"level": 1, "trend": 2}


def min_length(nobs: int, trim: float) -> int:
    """Minimum regime length ``h = floor(trim * T)`` (Bai & Perron's convention)."""
    return int(np.floor(trim * nobs + 1e-9))


def regime_design(model: str, nobs: int) -> np.ndarray:
    """The regime regressors of a built-in model: ``(T, 1)`` constant or ``(T, 2)`` constant and trend."""
    if model == "level":
        return np.ones((nobs, 1))
    t = np.arange(1, nobs + 1, dtype=float)
    return np.column_stack([np.ones(nobs), t])


def _mask(nobs: int, h: int) -> np.ndarray:
    """True where the segment ``i..j`` is admissible (at least ``h`` observations)."""
    i = np.arange(nobs)[:, None]
    j = np.arange(nobs)[None, :]
    return (j - i + 1) >= h


def ssr_tables(y: np.ndarray, model: str, h: int) -> np.ndarray:
    """SSR of every segment for every unit, built-in models (closed form from cumulative sums).

    Parameters
    ----------
    y : ndarray, shape (N, T)
        One series per row (no missing values).
    model : {"level", "trend"}
        Regime means, or intercept and slope per regime.
    h : int
        Minimum segment length; shorter segments get ``inf``.

    Returns
    -------
    ndarray, shape (N, T, T)
        ``out[n, i, j]`` = SSR of unit ``n`` on observations ``i..j``; ``inf`` below the diagonal
        and for segments shorter than ``h``.

    Notes
    -----
    Each row is first replaced by its residuals from the full-sample fit of the same model (a
    change that leaves every segment's residuals unchanged, since the full-sample fit lies in the
    span of each segment's regressors) and the trend is centred; this keeps the cumulative sums
    well conditioned. With ``n``, ``S_t``, ``S_tt``, ``S_y``, ``S_ty``, ``S_yy`` the segment sums,

    level: ``SSR = S_yy - S_y^2 / n``;
    trend: ``SSR = C_yy - C_ty^2 / C_tt`` with ``C_ab = S_ab - S_a S_b / n``.
    """
    y = np.atleast_2d(np.asarray(y, dtype=float))
    n_units, nobs = y.shape
    t = np.arange(nobs, dtype=float) - (nobs - 1) / 2.0
    if model == "level":
        r = y - y.mean(axis=1, keepdims=True)
    else:
        slope = (r0 := y - y.mean(axis=1, keepdims=True)) @ t / (t @ t)
        r = r0 - slope[:, None] * t[None, :]
    zero = np.zeros((n_units, 1))
    count = np.arange(1, nobs + 1)[None, :] - np.arange(nobs)[:, None]  # j - i + 1
    with np.errstate(divide="ignore"):
        inv_n = np.where(count > 0, 1.0 / np.maximum(count, 1), 0.0)
    cy = np.concatenate([zero, np.cumsum(r, axis=1)], axis=1)
    cyy = np.concatenate([zero, np.cumsum(r * r, axis=1)], axis=1)
    sy = cy[:, None, 1:] - cy[:, :-1, None]
    out = cyy[:, None, 1:] - cyy[:, :-1, None]
    work = sy * sy
    work *= inv_n
    out -= work
    if model == "trend":
        ct = np.concatenate([[0.0], np.cumsum(t)])
        ctt = np.concatenate([[0.0], np.cumsum(t * t)])
        st = ct[None, 1:] - ct[:-1, None]
        c_tt = (ctt[None, 1:] - ctt[:-1, None]) - st * st * inv_n
        inv_ctt = np.where(c_tt > 1e-12, 1.0 / np.where(c_tt > 1e-12, c_tt, 1.0), 0.0)
        a = st * inv_n
        cty = np.concatenate([zero, np.cumsum(r * t[None, :], axis=1)], axis=1)
        c_ty = cty[:, None, 1:] - cty[:, :-1, None]
        np.multiply(a, sy, out=work)
        c_ty -= work
        c_ty *= c_ty
        c_ty *= inv_ctt
        out -= c_ty
    np.maximum(out, 0.0, out=out)
    out[:, ~_mask(nobs, h)] = np.inf
    return out


def ssr_table_general(y: np.ndarray, z: np.ndarray, h: int) -> np.ndarray:
    """SSR of every segment of one series on arbitrary regime regressors ``z`` (shape ``(T, q)``).

    Built from cumulative sums of ``z z'`` and ``z y`` with one batched linear solve per starting
    observation (the segment solves for every end point at once). Segments whose ``z'z`` is
    singular use the pseudo-inverse. Shorter segments than ``h`` get ``inf``.
    """
    y = np.asarray(y, dtype=float)
    z = np.asarray(z, dtype=float)
    nobs, q = z.shape
    coef, *_ = np.linalg.lstsq(z, y, rcond=None)
    r = y - z @ coef
    czz = np.concatenate([np.zeros((1, q, q)), np.cumsum(z[:, :, None] * z[:, None, :], axis=0)])
    czy = np.concatenate([np.zeros((1, q)), np.cumsum(z * r[:, None], axis=0)])
    cyy = np.concatenate([[0.0], np.cumsum(r * r)])
    out = np.full((nobs, nobs), np.inf)
    for i in range(nobs - h + 1):
        ends = np.arange(i + h, nobs + 1)
        a = czz[ends] - czz[i]
        b = czy[ends] - czy[i]
        try:
            sol = np.linalg.solve(a, b[:, :, None])[:, :, 0]
        except np.linalg.LinAlgError:
            sol = np.einsum("nij,nj->ni", np.linalg.pinv(a), b)
        fitted = np.einsum("ni,ni->n", sol, b)
        out[i, ends - 1] = np.maximum(cyy[ends] - cyy[i] - fitted, 0.0)
    return out


def optimal_partitions(tables: np.ndarray, max_breaks: int, h: int, *,
                       backtrack: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """Global SSR minimisers for ``m = 0..max_breaks`` breaks, for every unit.

    Parameters
    ----------
    tables : ndarray, shape (N, T, T)
        Segment SSR tables (``inf`` for inadmissible segments).
    max_breaks : int
        Largest number of breaks.
    h : int
        Minimum segment length.
    backtrack : bool
        Recover the break dates (otherwise ``breaks`` is all -1; the SSRs are unaffected).

    Returns
    -------
    ssr : ndarray, shape (N, max_breaks + 1)
        The smallest total SSR with ``m`` breaks.
    breaks : ndarray, shape (N, max_breaks + 1, max_breaks)
        0-based last observation of each old regime for the optimal ``m``-break partition
        (row ``m`` uses its first ``m`` entries; the rest are -1).

    Notes
    -----
    ``V_m(j) = min_i [V_{m-1}(i) + SSR(i+1, j)]`` with ``V_0(j) = SSR(0, j)``; the minimum runs
    over ``i`` for which both pieces are admissible. Ties go to the earliest break.
    """
    tables = np.asarray(tables, dtype=float)
    n_units, nobs, _ = tables.shape
    values = [tables[:, 0, :]]  # V_0(j)
    ssr = np.full((n_units, max_breaks + 1), np.inf)
    ssr[:, 0] = values[0][:, -1]
    for m in range(1, max_breaks + 1):
        lo_i, hi_i, lo_j = m * h - 1, nobs - 1 - h, (m + 1) * h - 1
        value = np.full((n_units, nobs), np.inf)
        if hi_i >= lo_i and lo_j <= nobs - 1:
            cand = values[-1][:, lo_i:hi_i + 1, None] + tables[:, lo_i + 1:hi_i + 2, lo_j:]
            value[:, lo_j:] = cand.min(axis=1)
        values.append(value)
        ssr[:, m] = value[:, -1]
    breaks = np.full((n_units, max_breaks + 1, max(max_breaks, 1)), -1, dtype=np.int64)
    if not backtrack:
        return ssr, breaks[:, :, :max_breaks]
    rows = np.arange(n_units)[:, None]
    i = np.arange(nobs - 1)[None, :]
    for m in range(1, max_breaks + 1):
        end = np.full((n_units, 1), nobs - 1)
        for level_ in range(m, 0, -1):
            cand = values[level_ - 1][:, :-1] + tables[rows, i + 1, end]
            last = np.argmin(cand, axis=1)
            breaks[:, m, level_ - 1] = last
            end = last[:, None]
    breaks[~np.isfinite(ssr)] = -1
    return ssr, breaks[:, :, :max_breaks]


def segment_bounds(breaks: np.ndarray, nobs: int) -> list[tuple[int, int]]:
    """``(start, end)`` inclusive 0-based bounds of the regimes cut at ``breaks``."""
    cuts = [int(b) for b in breaks if b >= 0]
    starts = [0] + [b + 1 for b in cuts]
    ends = [*cuts, nobs - 1]
    return list(zip(starts, ends, strict=True))
