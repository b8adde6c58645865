"""Simulated null distributions of the pooled panel statistics (LLC, Breitung, CIPS) and of the
cross-sectional dependence statistics, for the panel's own N and T.

Unit-root statistics: N independent Gaussian random walks of length T whose increments are a
stationary AR(1) with coefficient φ, one row of draws per φ in :data:`PANEL_GRID`; the statistic
is computed exactly as for the data (same deterministic terms, lag rule, bandwidth, truncation).
The p-value of a panel is read in the rows around its pooled, bias-corrected first-order
autocorrelation of Δy (the mean over units of φ̂_i, plus Kendall's correction), interpolated
linearly. Pooling makes φ precise, so the plug-in costs little; the rows make the p-value right
for persistent differences, where the published adjustments reject 10–16 % of the time at T = 30
(``docs/methods/size.md``).

Dependence statistics: N independent Gaussian random walks through the same prewhitening filter
(one row; the filtered series are close to white noise whatever the persistence).

Draws are split into seeded tasks (:func:`evidence.parallel.task_seeds`), so every executor gives
the same numbers, and cached on disk (:mod:`evidence._cache`).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from evidence._cache import load_cached, save_cached
from evidence.parallel import task_seeds, using_executor
from evidence.roots._calibrate import ar1_coefficient, bias_corrected

__all__ = ["PANEL_GRID", "PanelNull", "panel_null", "pooled_phi", "STATISTICS", "register"]

#: Autocorrelations of the increments at which panel nulls are simulated.
PANEL_GRID = (-0.2, 0.0, 0.2, 0.4, 0.6, 0.8)
_CHUNK = 250
_BURN = 50
_VERSION = 1

#: name -> function(panels (R, T, N), trend, options) -> statistic (R,) or dict of them.
STATISTICS: dict[str, Callable[..., Any]] = {}


def register(name: str) -> Callable[[Callable[..., Any]], Callable[..., Any]]:
    """Make a batch statistic available to :func:`panel_null` under ``name``."""
    def wrap(func: Callable[..., Any]) -> Callable[..., Any]:
        STATISTICS[name] = func
        return func
    return wrap


@dataclass(frozen=True, eq=False)
class PanelNull:
    """Sorted null draws of a panel statistic (one row per grid φ, or a single row)."""

    grid: tuple[float, ...]
    draws: np.ndarray          # (rows, R), each row sorted
    label: str

    def pvalue(self, stat: float, phi: float | None = None, *, tail: str = "lower") -> float:
        """Share of draws at least as extreme, ``(count + 1)/(R + 1)``, interpolated in φ."""
        reps = self.draws.shape[1]

        def one(row: np.ndarray) -> float:
            count = (np.searchsorted(row, stat, side="right") if tail == "lower"
                     else reps - np.searchsorted(row, stat, side="left"))
            return (count + 1.0) / (reps + 1.0)

        if len(self.grid) == 1 or phi is None:
            return one(self.draws[0 if len(self.grid) == 1 else self.grid.index(0.0)])
        grid = np.asarray(self.grid)
        pos = float(np.interp(np.clip(phi, grid[0], grid[-1]), grid, np.arange(grid.size)))
        lo = math.floor(pos)
        hi = min(lo + 1, grid.size - 1)
        w = pos - lo
        return (1 - w) * one(self.draws[lo]) + w * one(self.draws[hi])

    def quantiles(self, phi: float | None, levels: tuple[float, ...] = (0.01, 0.05, 0.10),
                  ) -> dict[float, float]:
        """Critical values at ``phi`` (interpolated between rows)."""
        grid = np.asarray(self.grid)
        if grid.size == 1 or phi is None:
            row = self.draws[0 if grid.size == 1 else list(self.grid).index(0.0)]
            return {a: float(np.quantile(row, a)) for a in levels}
        pos = float(np.interp(np.clip(phi, grid[0], grid[-1]), grid, np.arange(grid.size)))
        lo, w = math.floor(pos), pos - math.floor(pos)
        hi = min(lo + 1, grid.size - 1)
        return {a: float((1 - w) * np.quantile(self.draws[lo], a) + w * np.quantile(self.draws[hi], a))
                for a in levels}


def pooled_phi(y: np.ndarray) -> float:
    """Mean over units of the first-order autocorrelation of Δy, bias-corrected (``y`` is (T, N))."""
    y = np.asarray(y, dtype=float)
    phi = ar1_coefficient(np.diff(y, axis=0))
    return float(bias_corrected(np.nanmean(phi), y.shape[0] - 1, detrended=False))


def _panels(rng: np.random.Generator, reps: int, n_years: int, n_units: int, phi: float) -> np.ndarray:
    e = rng.standard_normal((n_years + _BURN, reps, n_units))
    u = np.empty_like(e)
    u[0] = e[0] / math.sqrt(1.0 - phi ** 2)
    for t in range(1, e.shape[0]):
        u[t] = phi * u[t - 1] + e[t]
    return np.moveaxis(np.cumsum(u[_BURN:], axis=0), 1, 0)      # (R, T, N)


def _chunk(task: tuple[Any, ...]) -> np.ndarray:
    import evidence.roots  # noqa: F401  (registers the statistics in a fresh worker process)

    name, seed, reps, n_years, n_units, phi, trend, options = task
    rng = np.random.default_rng(seed)
    out = STATISTICS[name](_panels(rng, reps, n_years, n_units, phi), trend, dict(options))
    return np.asarray(out, dtype=float)


def panel_null(name: str, n_units: int, n_years: int, trend: str, options: dict[str, Any], *,
               reps: int, seed: int | None, executor: Any = "serial",
               grid: tuple[float, ...] = PANEL_GRID) -> PanelNull:
    """The simulated null of statistic ``name`` for N units and T years (cached when seeded).

    ``reps`` panels per grid point. The statistic function may return several statistics as the
    rows of a ``(k, R)`` array; then ``draws`` has one block of rows per statistic in turn.
    """
    params = {"name": name, "N": int(n_units), "T": int(n_years), "trend": trend,
              "options": {k: options[k] for k in sorted(options)}, "grid": list(grid),
              "reps": int(reps), "seed": seed, "version": _VERSION}
    cacheable = seed is not None
    cached = load_cached("roots-panel-null", params) if cacheable else None
    if cached is not None and "draws" in cached:
        draws = cached["draws"]
    else:
        sizes = [_CHUNK] * (reps // _CHUNK) + ([reps % _CHUNK] if reps % _CHUNK else [])
        seeds = task_seeds(seed, len(grid) * len(sizes))
        tasks, k = [], 0
        for phi in grid:
            for size in sizes:
                tasks.append((name, seeds[k], size, int(n_years), int(n_units), float(phi), trend,
                              tuple(sorted(options.items()))))
                k += 1
        with using_executor(executor) as runner:
            parts = runner.map(_chunk, tasks)
        rows = []
        for g in range(len(grid)):
            block = parts[g * len(sizes):(g + 1) * len(sizes)]
            rows.append(np.concatenate(block, axis=-1))
        draws = np.sort(np.stack(rows, axis=0), axis=-1)
        if cacheable:
            save_cached("roots-panel-null", params, {"draws": draws})
    label = (f"simulated for N={n_units}, T={n_years} ({reps} panels at each of "
             f"{len(grid)} increment autocorrelations, seed {seed})")
    return PanelNull(tuple(grid), draws, label)
