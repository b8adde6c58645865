"""Pesaran & Yamagata (2008) test of slope homogeneity across units (the Δ test).

References
----------
pesaranyamagata2008 : Pesaran, M. H. & Yamagata, T. (2008). Testing slope homogeneity in large
    panels. Journal of Econometrics 142(1), 50–93.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy import stats

from evidence._typing import Window
from evidence.elasticity._design import build_design, unit_blocks
from evidence.errors import DataError
from evidence.panel import Panel
from evidence.results import TestResult

__all__ = ["slope_homogeneity_test", "delta_statistics"]


def _demean(a: np.ndarray) -> np.ndarray:
    return a - a.mean(axis=0)


def delta_statistics(blocks: Sequence[tuple[np.ndarray, np.ndarray]]) -> tuple[float, float, float]:
    """Δ and adjusted Δ from per-unit ``(y_i, X_i)`` (unit intercepts partialled out).

    Returns ``(delta, delta_adjusted, s_tilde)`` with ``k`` slopes and the average ``T``.
    """
    k = blocks[0][1].shape[1]
    n = len(blocks)
    xmx = [_demean(x).T @ _demean(x) for _, x in blocks]
    xmy = [_demean(x).T @ _demean(y) for y, x in blocks]
    beta_fe = np.linalg.solve(sum(xmx), sum(xmy))
    sigma2 = []
    for (y, x) in blocks:
        e = _demean(y) - _demean(x) @ beta_fe
        sigma2.append(float(e @ e) / (y.size - 1))
    if min(sigma2) <= 0:
        raise DataError("a unit fits exactly (zero residual variance); the Δ test cannot weight it.")
    beta_wfe = np.linalg.solve(sum(m / s for m, s in zip(xmx, sigma2)),
                               sum(v / s for v, s in zip(xmy, sigma2)))
    s_tilde = 0.0
    for m, v, s in zip(xmx, xmy, sigma2):
        b_i = np.linalg.solve(m, v)
        d = b_i - beta_wfe
        s_tilde += float(d @ m @ d) / s
    t_bar = float(np.mean([y.size for y, _ in blocks]))
    delta = np.sqrt(n) * (s_tilde / n - k) / np.sqrt(2 * k)
    delta_adj = np.sqrt(n) * (s_tilde / n - k) / np.sqrt(2 * k * (t_bar - k - 1) / (t_bar + 1))
    return float(delta), float(delta_adj), s_tilde


def slope_homogeneity_test(panel: Panel, pressure: str, activity: str, *,
                           controls: Sequence[str] = (), adjusted: bool = True, log: bool = True,
                           window: Window | str | None = None) -> TestResult:
    """Pesaran–Yamagata Δ test that all units share the same slopes.

    H0: the slopes are equal across units. H1: they differ for some units.

    Notes
    -----
    With unit intercepts partialled out (``M`` demeans within unit), ``β_FE`` the pooled within
    estimator, ``σ̃_i² = (y_i − X_i β_FE)' M (y_i − X_i β_FE) / (T_i − 1)``,
    ``β_WFE = [Σ X_i'MX_i / σ̃_i²]⁻¹ Σ X_i'My_i / σ̃_i²`` and ``β̂_i`` the unit OLS slopes,

        S̃ = Σ_i (β̂_i − β_WFE)' (X_i'MX_i / σ̃_i²) (β̂_i − β_WFE),
        Δ = √N (S̃/N − k) / √(2k),
        Δ_adj = √N (S̃/N − k) / √(2k (T − k − 1)/(T + 1)),

    with ``k`` slopes and ``T`` the average number of years. Both are N(0, 1) under H0; large
    values indicate heterogeneity, so the p-value is the upper tail (the two-sided value is in
    ``details``). ``adjusted=True`` (the default) reports Δ_adj, recommended for small T with
    normal errors.
    """
    design = build_design(panel, pressure, activity, controls=controls, log=log, window=window,
                          min_obs=len(controls) + 3)
    blocks = [(y, x) for _, _, y, x in unit_blocks(design)]
    if len(blocks) < 2:
        raise DataError("the slope homogeneity test needs at least 2 units.")
    for (unit, _, y, x) in unit_blocks(design):
        if np.linalg.matrix_rank(_demean(x)) < x.shape[1]:
            raise DataError(f"unit '{unit}' has no variation in a regressor; its own slope cannot "
                            "be estimated. Drop the unit or the regressor.")
    delta, delta_adj, s_tilde = delta_statistics(blocks)
    stat = delta_adj if adjusted else delta
    name = "Pesaran-Yamagata adjusted Delta" if adjusted else "Pesaran-Yamagata Delta"
    return TestResult(
        test=name, statistic=stat, pvalue=float(stats.norm.sf(stat)),
        critical_values={a: float(stats.norm.isf(a)) for a in (0.01, 0.05, 0.10)},
        null="slopes are equal across units", alternative="slopes differ across units",
        nobs=int(design.y.size),
        details={"delta": delta, "delta_adjusted": delta_adj, "s_tilde": s_tilde,
                 "units": len(blocks), "slopes": len(design.regressors),
                 "pvalue_two_sided": float(2 * stats.norm.sf(abs(stat))),
                 "excluded_units": int(design.excluded["unit"].nunique())},
        reference="pesaranyamagata2008")
