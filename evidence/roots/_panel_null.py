"""Simulated null distributions of the pooled panel statistics (LLC, Breitung, CIPS) and of the
cross-sectional dependence statistics, for the panel's own N and T.

Unit-root statistics: N independent Gaussian random walks of length T whose increments are a
stationary AR(1) with coefficient φ, one row of draws per φ in :data:`PANEL_GRID`; the statistic
is computed exactly as for the data (same deterministic terms, lag rule, bandwidth, truncation).
The p-value of a panel is read in the rows around its pooled, bias-corrected first-order
autocorrelation of Δy (the mean over units of φ̂_i, plus Kendall's correction), interpolated
linearly; the rows make the p-value right for persistent differences, where the published
adjustments reject 10–16 % of the time at T = 30 (``docs/methods/size.md``).

That plug-in p-value is then calibrated (prepivoting; Beran 1987, *Biometrika* 74, 457–468, from
memory): every simulated panel keeps its own pooled φ̂*, its plug-in p-value p* is computed the
same way as the data's, and the reported p-value is the share of draws with ``p* <= p``, read in
the rows around φ̂. Without this step the plug-in is conservative, because the statistic and φ̂
are correlated (LLC with a trend at N = 20, T = 40: 3.4 % at 5 % nominal with the plug-in, 4.7 %
at the true φ, in 1000 panels of our Monte Carlo).

Dependence statistics: N independent Gaussian random walks through the same prewhitening filter
(one row; the filtered series are close to white noise whatever the persistence).

Draws are split into seeded tasks (:func:`evidence.parallel.task_seeds`), so every executor gives
the same numbers, and cached on disk (:mod:`evidence._cache`).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from evidence._cache import load_cached, save_cached
from evidence.parallel import task_seeds, using_executor
from evidence.roots._calibrate import ar1_coefficient, bias_corrected

__all__ = ["PANEL_GRID", "PanelNull", "panel_null", "pooled_phi", "pooled_phis", "STATISTICS", "register"]

#: Autocorrelations of the increments at which panel nulls are simulated.
PANEL_GRID = (-0.2, 0.0, 0.2, 0.4, 0.6, 0.8)
_CHUNK = 250
_BURN = 50
_VERSION = 2

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
    #: each draw's own pooled φ̂* (aligned with ``draws``; rows of a grid of more than one φ)
    phi_hat: np.ndarray | None = None
    _pivots: dict[str, np.ndarray] = field(default_factory=dict, repr=False)

    def _weights(self, phi: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        grid = np.asarray(self.grid)
        pos = np.interp(np.clip(phi, grid[0], grid[-1]), grid, np.arange(grid.size))
        lo = np.floor(pos).astype(int)
        return lo, np.minimum(lo + 1, grid.size - 1), pos - lo

    def _row_weights(self, phi: float) -> tuple[int, int, float]:
        lo, hi, w = self._weights(np.asarray(phi, dtype=float))
        return int(lo), int(hi), float(w)

    def plugin_pvalue(self, stat: Any, phi: Any, tail: str = "lower") -> np.ndarray:
        """The share of draws at least as extreme, ``(count + 1)/(R + 1)``, in the rows around
        ``phi`` (interpolated linearly); vectorised over ``stat`` and ``phi``."""
        stat, phi = np.broadcast_arrays(np.asarray(stat, dtype=float), np.asarray(phi, dtype=float))
        reps = self.draws.shape[1]
        lo, hi, w = self._weights(phi)
        out = np.zeros(stat.shape)
        for g in np.unique(np.concatenate([lo.ravel(), hi.ravel()])):
            row = self.draws[g]
            count = (np.searchsorted(row, stat, side="right") if tail == "lower"
                     else reps - np.searchsorted(row, stat, side="left"))
            p = (count + 1.0) / (reps + 1.0)
            out += np.where(lo == g, 1.0 - w, 0.0) * p + np.where(hi == g, w, 0.0) * p
        return out

    def _pivot(self, tail: str) -> np.ndarray:
        """Sorted plug-in p-values of the draws themselves, per row (computed once per tail)."""
        if tail not in self._pivots:
            assert self.phi_hat is not None
            self._pivots[tail] = np.sort(self.plugin_pvalue(self.draws, self.phi_hat, tail), axis=1)
        return self._pivots[tail]

    def pvalue(self, stat: float, phi: float | None = None, *, tail: str = "lower") -> float:
        """The p-value of ``stat`` for a panel whose pooled φ̂ is ``phi``: the plug-in p-value,
        calibrated by the draws' own plug-in p-values when the draws carry their φ̂*."""
        if len(self.grid) == 1 or phi is None:
            row = self.grid.index(0.0) if len(self.grid) > 1 else 0
            reps = self.draws.shape[1]
            srt = self.draws[row]
            count = (np.searchsorted(srt, stat, side="right") if tail == "lower"
                     else reps - np.searchsorted(srt, stat, side="left"))
            return float((count + 1.0) / (reps + 1.0))
        plug = float(self.plugin_pvalue(stat, phi, tail))
        if self.phi_hat is None:
            return plug
        pivot = self._pivot(tail)
        lo, hi, w = self._row_weights(phi)
        share = lambda g: (np.searchsorted(pivot[g], plug, side="right") + 1.0) / (pivot.shape[1] + 1.0)  # noqa: E731
        return float(min(1.0, (1.0 - w) * share(lo) + w * share(hi)))

    def quantiles(self, phi: float | None, levels: tuple[float, ...] = (0.01, 0.05, 0.10),
                  ) -> dict[float, float]:
        """Critical values at ``phi`` (lower tail; interpolated between rows, at the calibrated
        levels when the draws carry their φ̂*)."""
        grid = np.asarray(self.grid)
        if grid.size == 1 or phi is None:
            row = self.draws[0 if grid.size == 1 else list(self.grid).index(0.0)]
            return {a: float(np.quantile(row, a)) for a in levels}
        lo, hi, w = self._row_weights(phi)
        out = {}
        for a in levels:
            level = a
            if self.phi_hat is not None:   # the plug-in level whose calibrated p-value is a
                pivot = self._pivot("lower")
                level = float((1 - w) * np.quantile(pivot[lo], a) + w * np.quantile(pivot[hi], a))
            out[a] = float((1 - w) * np.quantile(self.draws[lo], level)
                           + w * np.quantile(self.draws[hi], level))
        return out


def pooled_phi(y: np.ndarray) -> float:
    """Mean over units of the first-order autocorrelation of Δy, bias-corrected (``y`` is (T, N))."""
    return float(pooled_phis(np.asarray(y, dtype=float)[None])[0])


def pooled_phis(panels: np.ndarray) -> np.ndarray:
    """:func:`pooled_phi` of each panel of ``panels`` (``(R, T, N)``)."""
    reps, nobs, n_units = panels.shape
    dy = np.diff(panels, axis=1)
    phi = ar1_coefficient(np.moveaxis(dy, 1, 0).reshape(nobs - 1, reps * n_units))
    return bias_corrected(np.nanmean(phi.reshape(reps, n_units), axis=1), nobs - 1, detrended=False)


def _panels(rng: np.random.Generator, reps: int, n_years: int, n_units: int, phi: float) -> np.ndarray:
    e = rng.standard_normal((n_years + _BURN, reps, n_units))
    u = np.empty_like(e)
    u[0] = e[0] / math.sqrt(1.0 - phi ** 2)
    for t in range(1, e.shape[0]):
        u[t] = phi * u[t - 1] + e[t]
    return np.moveaxis(np.cumsum(u[_BURN:], axis=0), 1, 0)      # (R, T, N)


def _chunk(task: tuple[Any, ...]) -> tuple[np.ndarray, np.ndarray]:
    import evidence.roots  # noqa: F401  (registers the statistics in a fresh worker process)

    name, seed, reps, n_years, n_units, phi, trend, options = task
    rng = np.random.default_rng(seed)
    panels = _panels(rng, reps, n_years, n_units, phi)
    out = STATISTICS[name](panels, trend, dict(options))
    return np.asarray(out, dtype=float), pooled_phis(panels)


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
        draws, phi_hat = cached["draws"], cached.get("phi_hat")
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
        rows, phis = [], []
        for g in range(len(grid)):
            block = parts[g * len(sizes):(g + 1) * len(sizes)]
            rows.append(np.concatenate([b[0] for b in block], axis=-1))
            phis.append(np.concatenate([b[1] for b in block]))
        raw = np.stack(rows, axis=0)
        order = np.argsort(raw, axis=-1, kind="stable")
        draws = np.take_along_axis(raw, order, axis=-1)
        phi_hat = None
        if len(grid) > 1 and raw.ndim == 2:   # one statistic on a grid: keep each draw's φ̂*
            phi_hat = np.take_along_axis(np.stack(phis, axis=0), order, axis=-1)
        if cacheable:
            save_cached("roots-panel-null", params, {"draws": draws} if phi_hat is None
                        else {"draws": draws, "phi_hat": phi_hat})
    label = (f"simulated for N={n_units}, T={n_years} ({reps} panels at each of "
             f"{len(grid)} increment autocorrelations, seed {seed})")
    return PanelNull(tuple(grid), draws, label, phi_hat)
