"""Bai–Perron tests for multiple breaks: supF(k), UDmax, WDmax, sequential supF(l+1|l).

Pure functions on NumPy arrays; :func:`evidence.breaks.find_breaks` wraps them into ``TestResult``.

Notes
-----
With T observations, q regressors whose coefficients change, p whose coefficients are fixed and
a partition with k breaks, the statistic for H0: no break vs H1: k breaks is

    F_T(k) = (T - (k+1) q - p) / (T k) * delta' R' (R V R')^{-1} R delta,

with ``delta`` the stacked regime coefficients, ``R`` the differences of adjacent regimes and ``V``
their covariance computed with the residual variance divided by T. Under homoskedastic,
serially uncorrelated errors this is ``[(SSR_0 - SSR_k) / k] / [SSR_k / (T - (k+1) q - p)]`` and its
supremum over partitions is reached at the global SSR minimiser; the robust versions (HAC and/or
regime-specific variances) are evaluated at that partition (Bai & Perron 2003). UDmax is
``max_k F(k)``; WDmax is ``max_k [c(1)/c(k)] F(k)`` with c(k) the 5 % critical values. The
sequential statistic for l+1 vs l breaks splits each regime of the l-break partition at its best
date and takes the largest F for the q equality restrictions of the split regime.

References
----------
baiperron1998 : Bai, J. & Perron, P. (1998). Estimating and testing linear models with multiple
    structural changes. Econometrica 66(1), 47–78.
baiperron2003 : Bai, J. & Perron, P. (2003). Computation and analysis of multiple structural change
    models. Journal of Applied Econometrics 18(1), 1–22.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from evidence._hac import long_run_cov
from evidence.breaks import _bp_tables
from evidence.breaks.segment import segment_bounds

__all__ = ["supf_homoskedastic", "break_covariance", "wald_equal_regimes", "split_segments",
           "table_critical_values", "simulated_critical_values", "tail_pvalue", "wdmax_weights",
           "score_long_run"]

LEVELS = (0.10, 0.05, 0.01)


def supf_homoskedastic(ssr: np.ndarray, nobs: int, q: int, p: int) -> np.ndarray:
    """``F(k)`` for k = 1..K from the best SSR for each m (last axis ``m = 0..K``); vectorised."""
    ssr = np.asarray(ssr, dtype=float)
    k = np.arange(1, ssr.shape[-1])
    dof = nobs - (k + 1) * q - p
    with np.errstate(divide="ignore", invalid="ignore"):
        return ((ssr[..., :1] - ssr[..., 1:]) / k) / (ssr[..., 1:] / dof)


def score_long_run(scores: np.ndarray, hac_lags: int, prewhiten: bool = False) -> np.ndarray:
    """Bartlett long-run covariance of the rows of ``scores``, summed over the rows (not averaged).

    ``evidence._hac.long_run_cov`` (an average over T, optionally VAR(1)-prewhitened as in
    Andrews & Monahan 1992) times the number of rows.
    """
    return scores.shape[0] * long_run_cov(scores, hac_lags, prewhiten=prewhiten).long_run


def break_covariance(design: np.ndarray, resid: np.ndarray, bounds: list[tuple[int, int]], *,
                     robust: bool, regime_variances: bool, hac_lags: int,
                     prewhiten: bool = True) -> np.ndarray:
    """Covariance of OLS coefficients, residual variance divided by T (no dof correction).

    ``robust``: Bartlett HAC of ``x_t u_t`` (AR(1)-prewhitened unless ``prewhiten=False``);
    ``regime_variances``: the middle matrix is built regime by regime (each with its own variance
    or its own HAC), as in Bai & Perron (2003).
    """
    nobs = design.shape[0]
    bread = np.linalg.pinv(design.T @ design)
    scores = design * resid[:, None]
    if not robust and not regime_variances:
        meat = (resid @ resid / nobs) * (design.T @ design)
    elif not regime_variances:
        meat = score_long_run(scores, hac_lags, prewhiten)
    else:
        meat = np.zeros((design.shape[1], design.shape[1]))
        for start, end in bounds:
            block = slice(start, end + 1)
            if robust:
                meat += score_long_run(scores[block], min(hac_lags, end - start), prewhiten)
            else:
                xb = design[block]
                rb = resid[block]
                meat += (rb @ rb / len(rb)) * (xb.T @ xb)
    return bread @ meat @ bread


def wald_equal_regimes(y: np.ndarray, z: np.ndarray, x: np.ndarray | None, breaks: list[int], *,
                       robust: bool, regime_variances: bool, hac_lags: int,
                       pairs: list[int] | None = None) -> tuple[float, np.ndarray, np.ndarray]:
    """Wald statistic for equal regime coefficients at a given partition.

    Returns ``(wald, coef, cov)`` where ``coef`` stacks the fixed coefficients (first p) and the
    regime coefficients; ``pairs`` restricts the restrictions to the given adjacent-regime indices
    (regime i vs i+1), default all.
    """
    nobs, q = z.shape
    bounds = segment_bounds(np.asarray(breaks), nobs)
    blocks = np.zeros((nobs, q * len(bounds)))
    for r, (start, end) in enumerate(bounds):
        blocks[start:end + 1, r * q:(r + 1) * q] = z[start:end + 1]
    design = blocks if x is None else np.column_stack([x, blocks])
    p = 0 if x is None else x.shape[1]
    coef, *_ = np.linalg.lstsq(design, y, rcond=None)
    resid = y - design @ coef
    cov = break_covariance(design, resid, bounds, robust=robust,
                           regime_variances=regime_variances, hac_lags=hac_lags)
    pairs = list(range(len(bounds) - 1)) if pairs is None else pairs
    if not pairs:
        return 0.0, coef, cov
    restrict = np.zeros((q * len(pairs), design.shape[1]))
    for row, i in enumerate(pairs):
        for c in range(q):
            restrict[row * q + c, p + i * q + c] = -1.0
            restrict[row * q + c, p + (i + 1) * q + c] = 1.0
    diff = restrict @ coef
    middle = restrict @ cov @ restrict.T
    wald = float(diff @ np.linalg.pinv(middle) @ diff)
    return wald, coef, cov


def split_segments(table: np.ndarray, breaks: list[int], nobs: int, h: int) -> list[tuple[int, float, float]]:
    """For each regime of ``breaks``: ``(best split, SSR of the regime, SSR split in two)``.

    A regime shorter than ``2h`` cannot be split: it gets split ``-1`` and equal SSRs.
    """
    out = []
    for start, end in segment_bounds(np.asarray(breaks), nobs):
        whole = float(table[start, end])
        taus = np.arange(start + h - 1, end - h + 1)
        if taus.size == 0:
            out.append((-1, whole, whole))
            continue
        total = table[start, taus] + table[taus + 1, end]
        best = int(np.argmin(total))
        out.append((int(taus[best]), whole, float(total[best])))
    return out


def _tabulated(kind: str, q: int, trim: float) -> dict[float, tuple[float, ...]] | None:
    tables: dict[str, Mapping[tuple[float, int, float], tuple[float, ...]]] = {
        "supf": _bp_tables.SUPF, "dmax": _bp_tables.DMAX, "sequential": _bp_tables.SEQUENTIAL}
    source = tables[kind]
    for tab_trim in _bp_tables.TRIMS:
        if abs(trim - tab_trim) < 1e-9 and (tab_trim, q, 0.05) in source:
            return {level: source[(tab_trim, q, level)] for level in LEVELS}
    return None


def table_critical_values(kind: str, q: int, trim: float, k: int) -> dict[float, float] | None:
    """Published critical values (keys 0.10, 0.05, 0.01) or ``None`` where not tabulated.

    ``kind`` is ``"supf"`` (k = number of breaks), ``"udmax"``, ``"wdmax"`` or ``"sequential"``
    (k = l + 1).
    """
    name = "dmax" if kind in ("udmax", "wdmax") else kind
    table = _tabulated(name, q, trim)
    if table is None:
        return None
    index = {"udmax": 0, "wdmax": 1}.get(kind, k - 1)
    if index >= len(table[0.05]):
        return None
    return {level: float(values[index]) for level, values in table.items()}


def simulated_critical_values(draws: np.ndarray) -> dict[float, float]:
    """Upper quantiles of simulated null draws (keys 0.10, 0.05, 0.01)."""
    return {level: float(np.quantile(draws, 1.0 - level)) for level in LEVELS}


def tail_pvalue(statistic: float, draws: np.ndarray) -> float:
    """Share of null draws at least as large as ``statistic`` (NaN for a NaN statistic)."""
    if not np.isfinite(statistic):
        return math.nan if math.isnan(statistic) else 0.0
    return float(np.mean(np.asarray(draws) >= statistic))


def wdmax_weights(q: int, trim: float, draws: np.ndarray, max_breaks: int, *,
                  use_table: bool = True) -> np.ndarray:
    """Weights ``c(1)/c(k)`` from the 5 % critical values (table where published, else simulated)."""
    cvs = []
    for k in range(1, max_breaks + 1):
        cv = table_critical_values("supf", q, trim, k) if use_table else None
        cvs.append(cv[0.05] if cv else float(np.quantile(draws[:, k - 1], 0.95)))
    weights = np.asarray(cvs)
    return weights[0] / weights
