"""Finite-sample null distributions of the break tests under AR(1) noise, and conditional p-values.

Why
---
The Bai–Perron statistics assume serially uncorrelated errors. Annual series deviate from their
trend with first-order autocorrelation of 0.3–0.8, and then the homoskedastic UDmax rejects a true
no-break null in about two thirds of 34-year series (AR(1) noise, rho = 0.5). A long-run variance
does not repair this at T = 25–60: the autocorrelation estimated under the null absorbs a real
break (the test loses its power) and the one estimated under the alternative is biased towards
zero by the fitted breaks (the test over-rejects).

What
----
The statistics stay Bai & Perron's (homoskedastic supF(k), UDmax, WDmax, supF(l+1|l)); only their
p-values change. For the series' own length ``T``, model, minimum regime length ``h`` and
``max_breaks``, the statistics are simulated under the null with Gaussian AR(1) noise for
``rho`` on a grid ``0, 0.05, ..., 0.8`` (they do not depend on the regime coefficients nor on the
noise scale). Under the null of no break, the first-order autocorrelation ``r0`` of the residuals
from the no-break fit is (approximately) sufficient for ``rho``; the p-value is computed
*conditionally on r0*:

    p = P( S* >= S | r0* = r0 ),   S* simulated under H0 with rho uniform on [0, 0.8],

from the draws binned by ``r0*`` (equal-count bins, survival function in
each bin, linear interpolation between bin centres). A test with this Neyman structure is
(approximately) similar: its size does not depend on ``rho`` (Lehmann & Romano 2005, *Testing
Statistical Hypotheses*, ch. 4). Our Monte Carlo (``docs/methods/size.md``) measures 4–6.5 % at
5 % nominal for rho = 0 to 0.8 at T = 25, 34 and 60; above 0.8 the test over-rejects (about 12 %
at rho = 0.9) and the result says that its residual autocorrelation is outside the range covered.

The sequential statistic supF(l+1|l) is simulated the same way with ``l`` breaks at random
admissible dates (its value does not depend on the sizes of those breaks) and conditioned on
the residual autocorrelation of the ``l``-break fit.

Tables are computed once per ``(model, T, h, max_breaks)`` as seeded tasks through the executor
and cached on disk (``evidence._cache``); the result never depends on the executor.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from evidence._cache import load_cached, save_cached
from evidence.breaks._batch import ar1_of, piecewise_fit
from evidence.breaks.segment import optimal_partitions, ssr_tables
from evidence.parallel import ExecutorLike, using_executor

__all__ = ["GRID", "COVERED", "TABLE_REPS", "PLANTED_REPS", "TABLE_SEED", "NullTable",
           "null_table", "split_statistic", "supf_statistics"]

#: AR(1) coefficients simulated (uniform grid on [0, COVERED]).
GRID = tuple(round(0.05 * i, 2) for i in range(17))
#: Largest AR(1) coefficient the p-values are calibrated for (the draws pooled).
COVERED = 0.8
#: Replications per grid point: no-break null, and each number of planted breaks.
TABLE_REPS = 2000
PLANTED_REPS = 500
#: Seed of every table.
TABLE_SEED = 20140622
#: Equal-count bins of the conditioning autocorrelation.
BINS = 20
_VERSION = 2


def supf_statistics(ssr: np.ndarray, nobs: int, q: int) -> np.ndarray:
    """Homoskedastic ``F(k)``, k = 1..K, from the best SSR for ``m = 0..K`` (last axis)."""
    k = np.arange(1, ssr.shape[-1])
    dof = nobs - (k + 1) * q
    with np.errstate(divide="ignore", invalid="ignore"):
        return ((ssr[..., :1] - ssr[..., 1:]) / k) / (ssr[..., 1:] / dof)


def split_statistic(tables: np.ndarray, breaks: np.ndarray, h: int, q: int) -> np.ndarray:
    """Homoskedastic supF(l+1|l) at the ``l``-break partitions ``breaks`` ``(N, l)``, per unit.

    Each regime is split at its best admissible date; the statistic is the largest SSR gain over
    the SSR of the refined partition divided by ``T - (l + 2) q`` (Bai & Perron 1998, section 5).
    Regimes shorter than ``2 h`` cannot be split (gain 0).
    """
    n_units, nobs, _ = tables.shape
    breaks = np.asarray(breaks, dtype=np.int64).reshape(n_units, -1)
    ell = breaks.shape[1]
    starts = np.concatenate([np.zeros((n_units, 1), np.int64), breaks + 1], axis=1)
    ends = np.concatenate([breaks, np.full((n_units, 1), nobs - 1)], axis=1)
    rows = np.arange(n_units)
    tau = np.arange(nobs - 1)[None, :]
    whole = np.zeros(n_units)
    best = np.zeros(n_units)
    for r in range(ell + 1):
        s, e = starts[:, r], ends[:, r]
        seg = tables[rows, s, e]
        whole += seg
        ok = (tau >= s[:, None] + h - 1) & (tau <= e[:, None] - h)
        left = tables[rows[:, None], s[:, None], tau]
        right = tables[rows[:, None], tau + 1, e[:, None]]
        split = np.where(ok, left + right, np.inf).min(axis=1)
        gain = np.where(np.isfinite(split), seg - split, 0.0)
        best = np.maximum(best, gain)
    refined = whole - best
    with np.errstate(divide="ignore", invalid="ignore"):
        return best / (refined / (nobs - (ell + 2) * q))


def _planted_breaks(rng: np.random.Generator, n: int, nobs: int, h: int, ell: int) -> np.ndarray:
    """``ell`` break dates per row, uniform over the partitions whose regimes have >= h points."""
    spare = nobs - (ell + 1) * h
    # a uniform composition of `spare` into ell + 1 non-negative parts: ell sorted cut points
    keys = rng.random((n, spare + ell)).argsort(axis=1)[:, :ell]
    cuts = np.sort(keys, axis=1) - np.arange(ell)[None, :]  # extra points before each break
    return cuts + h * np.arange(1, ell + 1)[None, :] - 1


def _simulate(task: tuple) -> dict[str, np.ndarray]:
    """One task: ``(model, nobs, h, max_breaks, rho, ell, reps, seed_sequence)``."""
    model, nobs, h, max_breaks, rho, ell, reps, seed = task
    rng = np.random.default_rng(seed)
    shocks = rng.standard_normal((reps, nobs))
    u = np.empty_like(shocks)
    u[:, 0] = shocks[:, 0] / math.sqrt(1.0 - rho * rho)
    for t in range(1, nobs):
        u[:, t] = rho * u[:, t - 1] + shocks[:, t]
    q = 1 if model == "level" else 2
    breaks = (np.zeros((reps, 0), np.int64) if ell == 0
              else _planted_breaks(rng, reps, nobs, h, ell))
    r = ar1_of(piecewise_fit(u, breaks, model)["resid"])
    stat = np.empty((reps, max_breaks)) if ell == 0 else np.empty(reps)
    for start in range(0, reps, 100):  # SSR tables in cache-sized blocks
        part = slice(start, start + 100)
        tables = ssr_tables(u[part], model, h)
        if ell == 0:
            ssr, _ = optimal_partitions(tables, max_breaks, h, backtrack=False)
            stat[part] = supf_statistics(ssr, nobs, q)
        else:
            stat[part] = split_statistic(tables, breaks[part], h, q)
    return {"r": r, "supf" if ell == 0 else "split": stat}


@dataclass(frozen=True, eq=False)
class _Conditional:
    """Draws of one statistic binned by the conditioning autocorrelation."""

    centres: np.ndarray
    draws: tuple[np.ndarray, ...]

    @classmethod
    def build(cls, stat: np.ndarray, r: np.ndarray, bins: int = BINS) -> _Conditional:
        order = np.argsort(r, kind="stable")
        parts = np.array_split(order, bins)
        return cls(np.array([np.median(r[p]) for p in parts]),
                   tuple(np.sort(stat[p]) for p in parts))

    def pvalue(self, stat: np.ndarray, r: np.ndarray) -> np.ndarray:
        stat = np.atleast_1d(np.asarray(stat, dtype=float))
        surv = np.stack([(d.size - np.searchsorted(d, stat, side="left") + 1.0) / (d.size + 1.0)
                         for d in self.draws], axis=1)
        return self._interpolate(surv, r)

    def quantile(self, prob: float, r: np.ndarray) -> np.ndarray:
        values = np.array([np.quantile(d, prob) for d in self.draws])
        r = np.atleast_1d(np.asarray(r, dtype=float))
        return self._interpolate(np.broadcast_to(values, (r.size, values.size)), r)

    def _interpolate(self, values: np.ndarray, r: np.ndarray) -> np.ndarray:
        c = self.centres
        rr = np.clip(np.atleast_1d(np.asarray(r, dtype=float)), c[0], c[-1])
        lo = np.clip(np.searchsorted(c, rr, side="right") - 1, 0, c.size - 2)
        w = (rr - c[lo]) / np.maximum(c[lo + 1] - c[lo], 1e-12)
        rows = np.arange(rr.size)
        return (1.0 - w) * values[rows, lo] + w * values[rows, lo + 1]


@dataclass(frozen=True, eq=False)
class NullTable:
    """Simulated finite-sample nulls for one ``(model, nobs, h, max_breaks)``.

    ``pvalue(name, stat, r)`` gives conditional p-values for ``"supF(k)"``, ``"UDmax"``,
    ``"WDmax"`` (conditioning on the no-break residual autocorrelation) and ``"supF(l+1|l)"``
    (conditioning on that of the ``l``-break fit); ``median_r(l)`` the median of the
    conditioning autocorrelation at every grid ``rho``.
    """

    model: str
    nobs: int
    h: int
    max_breaks: int
    weights: tuple[float, ...]
    stats: dict
    medians: dict
    reps: int
    planted_reps: int

    def pvalue(self, name: str, stat: np.ndarray, r: np.ndarray) -> np.ndarray:
        return self.stats[name].pvalue(stat, r)

    def critical_values(self, name: str, r: float) -> dict[float, float]:
        """Conditional critical values at 10 %, 5 % and 1 % for autocorrelation ``r``."""
        table = self.stats[name]
        return {lv: float(table.quantile(1.0 - lv, np.array([r]))[0]) for lv in (0.10, 0.05, 0.01)}

    def median_r(self, ell: int = 0) -> np.ndarray:
        """Median of the conditioning autocorrelation at every grid ``rho`` (``ell`` breaks)."""
        return self.medians[ell]


def _tasks(model: str, nobs: int, h: int, max_breaks: int, reps: int, planted_reps: int,
           seed: int) -> list[tuple]:
    out = []
    for ell in range(max_breaks):
        if ell > 0 and (ell + 2) * h > nobs:
            break
        n = reps if ell == 0 else planted_reps
        seeds = np.random.SeedSequence([seed, ell]).spawn(len(GRID))
        out += [(model, nobs, h, max_breaks, rho, ell, n, s) for rho, s in zip(GRID, seeds, strict=True)]
    return out


_MEMORY: dict[tuple, NullTable] = {}


def _table(model: str, nobs: int, h: int, max_breaks: int, weights: tuple[float, ...],
           executor: ExecutorLike, reps: int, planted_reps: int, seed: int) -> NullTable:
    params = {"model": model, "nobs": nobs, "h": h, "max_breaks": max_breaks, "reps": reps,
              "planted_reps": planted_reps, "seed": seed, "grid": list(GRID), "version": _VERSION}
    cached = load_cached("bp-finite", params)
    if cached is None:
        tasks = _tasks(model, nobs, h, max_breaks, reps, planted_reps, seed)
        with using_executor(executor) as runner:
            parts = runner.map(_simulate, tasks)
        cached = {}
        for ell in sorted({t[5] for t in tasks}):
            chunk = [p for p, t in zip(parts, tasks, strict=True) if t[5] == ell]
            cached[f"r_{ell}"] = np.stack([c["r"] for c in chunk]).astype(np.float32)
            cached[f"s_{ell}"] = np.stack([c["supf" if ell == 0 else "split"]
                                           for c in chunk]).astype(np.float32)
        save_cached("bp-finite", params, cached)
    keep = np.asarray(GRID) <= COVERED + 1e-9  # every grid point (the grid ends at COVERED)
    stats: dict[str, _Conditional] = {}
    medians: dict[int, np.ndarray] = {}
    r0 = cached["r_0"]
    supf = cached["s_0"]  # (grid, reps, max_breaks)
    pooled_r = r0[keep].ravel()
    pooled = supf[keep].reshape(-1, supf.shape[-1])
    for k in range(max_breaks):
        stats[f"supF({k + 1})"] = _Conditional.build(pooled[:, k], pooled_r)
    stats["UDmax"] = _Conditional.build(pooled.max(axis=1), pooled_r)
    stats["WDmax"] = _Conditional.build((pooled * np.asarray(weights)).max(axis=1), pooled_r)
    stats["supF(1|0)"] = stats["supF(1)"]
    medians[0] = np.median(r0, axis=1)
    ell = 1
    while f"r_{ell}" in cached:
        r = cached[f"r_{ell}"]
        stats[f"supF({ell + 1}|{ell})"] = _Conditional.build(cached[f"s_{ell}"][keep].ravel(),
                                                              r[keep].ravel())
        medians[ell] = np.median(r, axis=1)
        ell += 1
    return NullTable(model, nobs, h, max_breaks, tuple(weights), stats, medians, reps, planted_reps)


def null_table(model: str, nobs: int, h: int, max_breaks: int, weights: np.ndarray, *,
               executor: ExecutorLike = "serial", reps: int = TABLE_REPS,
               planted_reps: int = PLANTED_REPS, seed: int = TABLE_SEED) -> NullTable:
    """The :class:`NullTable` for a series of ``nobs`` observations (simulated once, then cached).

    ``weights`` are the WDmax weights ``c(1)/c(k)``. The first call for a configuration runs
    ``len(GRID)`` seeded tasks per number of planted breaks through ``executor``; the table does
    not depend on the executor.
    """
    key = (model, int(nobs), int(h), int(max_breaks), tuple(round(float(w), 12) for w in weights),
           int(reps), int(planted_reps), int(seed))
    if key not in _MEMORY:
        if len(_MEMORY) >= 64:
            _MEMORY.pop(next(iter(_MEMORY)))
        _MEMORY[key] = _table(key[0], key[1], key[2], key[3], key[4], executor, key[5], key[6],
                              key[7])
    return _MEMORY[key]
