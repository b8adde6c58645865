"""Simulated null distributions of the Bai–Perron supF(k) statistics (limiting functionals).

Under H0 (no break) supF_T(k) converges to

    sup_{lambda in Lambda_eps} (1/k) sum_{i=1}^{k} ||lambda_i W(lambda_{i+1}) - lambda_{i+1} W(lambda_i)||^2
                                     / (lambda_i lambda_{i+1} (lambda_{i+1} - lambda_i)),

with W a q-vector of independent standard Brownian motions (Bai & Perron 1998, Theorem 6). On a
grid of G points this equals ``(S_0 - S_k) / k`` where ``S_k`` is the smallest SSR of a q-variate
mean-shift model with k breaks fitted to G i.i.d. N(0, I_q) draws (regimes of at least
``floor(eps G)`` points), so the same SSR tables and dynamic programme as the estimator are used.
The grid biases the supremum downwards by roughly O(1/G); each replication is therefore computed
on the fine grid G and on the grid G/2 obtained by summing neighbouring increments of the same
path, and the draw kept is the two-grid extrapolation ``2 F_G - F_{G/2}``. With G = 400 this
reproduces the published tables to about +-0.1 (checked in ``tests/test_breaks_tables.py``).

The functional above assumes regressors with stable moments (Bai & Perron's conditions). A
regime-wise time trend violates them and has its own limit, so for the ``trend`` design the draws
are the statistic itself on the grid, computed with the regressors ``(1, t/G)`` (plus ``q - 2``
i.i.d. normal regressors for user regressors) and unit-variance Gaussian errors, with the same
two-grid extrapolation.

Replications are split into tasks with independent seeds (``evidence.parallel.task_seeds``), run
through the executor and cached on disk (``evidence._cache``), so any executor gives the same draws.
"""

from __future__ import annotations

import numpy as np

from evidence._cache import load_cached, save_cached
from evidence.breaks.segment import (
    min_length,
    optimal_partitions,
    regime_design,
    ssr_table_general,
    ssr_tables,
)
from evidence.parallel import ExecutorLike, task_seeds, using_executor

__all__ = ["NULL_SEED", "NULL_REPS", "NULL_GRID", "max_k", "null_draws", "simulate_chunk"]

#: Defaults of the shipped null distributions: seed, replications, fine grid.
NULL_SEED = 20030101
NULL_REPS = 5000
NULL_GRID = 400
_TASK_REPS = 250
_CHUNK = 10


def max_k(trim: float, cap: int = 10) -> int:
    """Largest number of breaks with ``(k + 1) trim < 1`` (as in the published tables), capped."""
    return max(1, min(cap, int(np.floor(1.0 / trim - 1.0 - 1e-9))))


def _supf_on_grid(e: np.ndarray, trim: float, k_max: int) -> np.ndarray:
    """supF(1..k_max) draws for increments ``e`` of shape (R, q, G) with unit variance.

    The q-variate mean-shift SSR of a segment ``i..j`` is ``sum e^2 - ||S_j - S_{i-1}||^2 / n``;
    the squared norms of all segment sums come from one Gram matrix of the partial sums, so the
    cost grows with q only through a matrix product.
    """
    reps, q, grid = e.shape
    h = max(min_length(grid, trim), 1)
    csum = np.concatenate([np.zeros((reps, q, 1)), np.cumsum(e, axis=2)], axis=2)
    cee = np.concatenate([np.zeros((reps, 1)), np.cumsum((e * e).sum(1), axis=1)], axis=1)
    norms = (csum * csum).sum(1)
    gram = np.einsum("rqi,rqj->rij", csum, csum)
    seg = norms[:, None, 1:] + norms[:, :-1, None] - 2.0 * gram[:, :-1, 1:]
    count = np.arange(1, grid + 1)[None, :] - np.arange(grid)[:, None]
    inv_n = np.where(count > 0, 1.0 / np.maximum(count, 1), 0.0)
    tables = (cee[:, None, 1:] - cee[:, :-1, None]) - seg * inv_n
    tables[:, count < h] = np.inf
    ssr, _ = optimal_partitions(tables, k_max, h, backtrack=False)
    return (ssr[:, :1] - ssr[:, 1:]) / np.arange(1, k_max + 1)


def _supf_trend_on_grid(e: np.ndarray, x: np.ndarray | None, trim: float, k_max: int,
                        units: int = 1) -> np.ndarray:
    """supF(1..k_max) with known unit variance for the trend design (and extra regressors ``x``);
    with ``units > 1`` the rows of ``e`` come in groups of ``units`` whose SSR tables are summed
    (the pooled statistic of a common break)."""
    reps, grid = e.shape
    h = max(min_length(grid, trim), 3 if x is None else 3 + x.shape[2])
    if x is None:
        tables = ssr_tables(e, "trend", h)
        if units > 1:
            tables = tables.reshape(reps // units, units, grid, grid).sum(1)
    else:
        design = regime_design("trend", grid)
        tables = np.stack([ssr_table_general(e[r], np.column_stack([design, x[r]]), h)
                           for r in range(reps)])
    ssr, _ = optimal_partitions(tables, k_max, h, backtrack=False)
    return (ssr[:, :1] - ssr[:, 1:]) / np.arange(1, k_max + 1)


def simulate_chunk(task: tuple) -> np.ndarray:
    """One task: ``(q, trim, grid, k_max, reps, seed_sequence[, design])`` -> (reps, k_max) draws."""
    q, trim, grid, k_max, reps, seed_seq = task[:6]
    design = task[6] if len(task) > 6 else "level"
    units = task[7] if len(task) > 7 else 1
    rng = np.random.default_rng(seed_seq)
    out = []
    for start in range(0, reps, _CHUNK):
        n = min(_CHUNK, reps - start)
        if design == "level":
            fine = rng.standard_normal((n, q, grid))
            coarse = fine.reshape(n, q, grid // 2, 2).sum(-1) / np.sqrt(2.0)
            out.append(2.0 * _supf_on_grid(fine, trim, k_max) - _supf_on_grid(coarse, trim, k_max))
            continue
        fine = rng.standard_normal((n * units, grid))
        coarse = fine.reshape(n * units, grid // 2, 2).sum(-1) / np.sqrt(2.0)
        x_fine = rng.standard_normal((n, grid, q - 2)) if q > 2 else None
        x_coarse = None if x_fine is None else x_fine.reshape(n, grid // 2, 2, q - 2).mean(2) * np.sqrt(2.0)
        out.append(2.0 * _supf_trend_on_grid(fine, x_fine, trim, k_max, units)
                   - _supf_trend_on_grid(coarse, x_coarse, trim, k_max, units))
    return np.concatenate(out)


def null_draws(q: int, trim: float, *, design: str = "level", units: int = 1, reps: int = NULL_REPS,
               grid: int = NULL_GRID, seed: int = NULL_SEED,
               executor: ExecutorLike = "serial") -> np.ndarray:
    """Draws of the limiting supF(k), k = 1..max_k(trim), for q changing regressors (cached).

    ``design`` is ``"level"`` (Bai & Perron's functional: constant and stationary regressors) or
    ``"trend"`` (a regime-wise trend; q >= 2); ``units`` > 1 pools that many independent trend
    series with common breaks (q = 2 only). ``executor`` runs the seeded tasks (see
    :func:`evidence.parallel.using_executor`); the draws do not depend on it.

    Returns an array of shape ``(reps, max_k(trim))``. The first call for a given
    ``(q, trim, reps, grid, seed)`` simulates (seconds to minutes) and stores the draws; later
    calls read them back.
    """
    trim = round(float(trim), 6)
    k_max = max_k(trim)
    params = {"q": int(q), "trim": trim, "design": design, "units": int(units), "reps": int(reps),
              "grid": int(grid), "seed": int(seed), "k_max": k_max, "version": 2}
    cached = load_cached("bp-null", params)
    if cached is not None and cached.get("draws") is not None:
        return cached["draws"]
    n_tasks = max(1, int(np.ceil(reps / _TASK_REPS)))
    seeds = task_seeds(int(seed), n_tasks)
    sizes = [min(_TASK_REPS, reps - i * _TASK_REPS) for i in range(n_tasks)]
    tasks = [(int(q), trim, int(grid), k_max, size, s, design, int(units))
             for size, s in zip(sizes, seeds, strict=True)]
    with using_executor(executor) as runner:
        draws = np.concatenate(runner.map(simulate_chunk, tasks))
    save_cached("bp-null", params, {"draws": draws})
    return draws
