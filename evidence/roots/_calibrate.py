"""Finite-sample null distributions of the single-series statistics, for the series' own T.

The asymptotic p-values of the unit-root and stationarity tests are far off at T = 25–40 (an ADF
with AIC lags rejects 8–11 % of the time at 5 %, DF-GLS 15–22 %, KPSS under AR(0.5) noise 10–14 %;
``docs/methods/size.md``). So the package simulates each statistic under its null for the
series' length T, deterministic terms and lag rule (or bandwidth), as a table of sorted draws on a
grid of first-order autocorrelations φ of the null's noise:

* unit-root statistics (ADF, Phillips–Perron, DF-GLS): ``y_t = y_{t-1} + u_t``, ``u`` a
  stationary Gaussian AR(1) with coefficient φ;
* the KPSS statistic: ``y_t = u_t``, ``u`` a stationary Gaussian AR(1) with coefficient φ;
* the one-break statistics (Zivot–Andrews, Lee–Strazicich): as the unit-root statistics, without
  a break (their null), computed by ``_break_batch`` exactly as for the data (model, trim, lag
  rule); :data:`BREAK_ROW_REPS` draws per grid point (the break search costs more).

The statistics are invariant to the level (and, with a trend, to the drift) and to the scale, so
one table serves every series of that length. Each draw keeps the statistic and the estimate φ̂
the data would give (the first-order autocorrelation of Δy, or of the KPSS residuals).

* A series' p-value is the share of draws at least as extreme *among draws whose φ̂ is near the
  series' own φ̂* (Gaussian kernel of width ``0.3/sqrt(T)``), in the rows of the grid around
  the bias-corrected estimate (Kendall's first-order correction), interpolated linearly. Reading
  the distribution conditional on φ̂ removes most of the dependence on the unknown φ (a plug-in
  AR(1) bootstrap is 1–3 points off at T = 30 because the statistic and φ̂ are correlated).
* Moments of a unit statistic (for IPS and Hadri) are read at the bias-corrected φ with a
  second-order correction for averaging over units whose φ is estimated.

Tables are simulated with a fixed seed, kept in memory and in the package cache
(``evidence._cache``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from evidence._cache import load_cached, save_cached
from evidence._typing import DEFAULT_SEED
from evidence.roots._unit_batch import adf_select, adf_tstats, dfgls_select, kpss_eta, pp_tau

__all__ = ["GRID", "ROW_REPS", "NullTable", "unit_null", "ar1_coefficient", "bias_corrected",
           "phi_hat_of", "KINDS", "TAILS"]

#: Which tail of each statistic rejects.
TAILS = {"adf": "lower", "pp": "lower", "dfgls": "lower", "kpss": "upper", "za": "lower",
         "ls": "lower"}

#: Autocorrelations of the null noise at which the tables are simulated.
GRID = tuple(round(v, 2) for v in np.arange(-0.4, 0.901, 0.1))
#: Simulated series per grid point.
ROW_REPS = 4000
#: Simulated series per grid point of the one-break statistics (two-break LM: a fifth of it).
BREAK_ROW_REPS = 2000
#: The statistics that have tables (``trend`` carries the break model for "za" and "ls").
KINDS = ("adf", "pp", "dfgls", "kpss", "za", "ls")
_BURN = 50
_VERSION = 2


@dataclass(frozen=True, eq=False)
class NullTable:
    """Null draws of one statistic and of φ̂, one row per autocorrelation in :data:`GRID`."""

    kind: str
    n_years: int
    trend: str
    draws: np.ndarray           # (len(GRID), ROW_REPS) statistics
    phis: np.ndarray            # (len(GRID), ROW_REPS) the φ̂ of each draw
    label: str

    @property
    def kernel_width(self) -> float:
        return 0.3 / math.sqrt(self.n_years)

    def phi_tilde(self, phi_hat: np.ndarray) -> np.ndarray:
        """The bias-corrected φ at which rows are read."""
        n_obs = self.n_years - (0 if self.kind == "kpss" else 1)
        detrended = self.kind == "kpss" and self.trend == "trend"
        return bias_corrected(phi_hat, n_obs, detrended=detrended)

    @property
    def grid(self) -> np.ndarray:
        return np.asarray(GRID)

    def _weights(self, phi: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        grid = self.grid
        pos = np.interp(np.clip(phi, grid[0], grid[-1]), grid, np.arange(grid.size))
        lo = np.floor(pos).astype(int)
        hi = np.minimum(lo + 1, grid.size - 1)
        return lo, hi, pos - lo

    def pvalue(self, stat: np.ndarray, phi_hat: np.ndarray, *, tail: str,
               chunk: int = 2000) -> np.ndarray:
        """Conditional p-values of ``stat`` given each series' ``phi_hat`` (see the module)."""
        stat = np.atleast_1d(np.asarray(stat, dtype=float))
        phi_hat = np.broadcast_to(np.asarray(phi_hat, dtype=float), stat.shape)
        lo, hi, w = self._weights(self.phi_tilde(phi_hat))
        out = np.empty(stat.size)
        h = self.kernel_width
        for start in range(0, stat.size, chunk):
            sl = slice(start, start + chunk)
            p_rows = []
            for rows in (lo[sl], hi[sl]):
                kern = np.exp(-0.5 * ((self.phis[rows] - phi_hat[sl, None]) / h) ** 2)
                draws = self.draws[rows]
                hit = draws <= stat[sl, None] if tail == "lower" else draws >= stat[sl, None]
                top = kern.max(axis=1)
                p_rows.append((np.sum(kern * hit, axis=1) + top) / (kern.sum(axis=1) + top))
            out[sl] = (1 - w[sl]) * p_rows[0] + w[sl] * p_rows[1]
        return out

    def quantiles(self, phi_hat: float, levels: tuple[float, ...], *, tail: str) -> dict[float, float]:
        """Critical values of the conditional distribution given ``phi_hat`` (lower-tail levels for
        unit-root statistics, upper-tail for KPSS)."""
        lo, hi, w = self._weights(self.phi_tilde(np.array([phi_hat])))
        draws = np.concatenate([self.draws[lo[0]], self.draws[hi[0]]])
        kern = np.exp(-0.5 * ((np.concatenate([self.phis[lo[0]], self.phis[hi[0]]]) - phi_hat)
                              / self.kernel_width) ** 2)
        kern[:self.draws.shape[1]] *= 1 - w[0]
        kern[self.draws.shape[1]:] *= w[0]
        order = np.argsort(draws)
        cum = np.cumsum(kern[order]) / kern.sum()
        out = {}
        for a in levels:
            q = a if tail == "lower" else 1 - a
            out[a] = float(draws[order][min(int(np.searchsorted(cum, q)), draws.size - 1)])
        return out

    def moments(self, phi: np.ndarray, *, n_obs: int | None = None) -> tuple[np.ndarray, np.ndarray]:
        """Mean and variance of the statistic at ``phi`` (interpolated).

        With ``n_obs``, the second-order correction ``- ½ m''(φ) (1 - φ²)/n_obs`` is applied to
        both, so that averaging the moments over units whose φ is estimated is unbiased to
        second order (the moments are convex in φ).
        """
        phi = np.atleast_1d(np.asarray(phi, dtype=float))
        grid = self.grid
        mean, var = self.draws.mean(axis=1), self.draws.var(axis=1)
        x = np.clip(phi, grid[0], grid[-1])
        m, v = np.interp(x, grid, mean), np.interp(x, grid, var)
        if n_obs:
            step = grid[1] - grid[0]
            m2 = np.gradient(np.gradient(mean, step), step)
            v2 = np.gradient(np.gradient(var, step), step)
            spread = np.maximum(1.0 - x ** 2, 0.05) / n_obs
            m = m - 0.5 * np.interp(x, grid, m2) * spread
            v = np.maximum(v - 0.5 * np.interp(x, grid, v2) * spread, 1e-12)
        return m, v


def ar1_coefficient(x: np.ndarray) -> np.ndarray:
    """First-order autoregressive coefficient of each demeaned column of ``x`` (``(T, B)``)."""
    x = np.asarray(x, dtype=float)
    x = x - x.mean(axis=0)
    den = np.einsum("tb,tb->b", x[:-1], x[:-1])
    return np.einsum("tb,tb->b", x[1:], x[:-1]) / np.where(den > 0, den, np.nan)


def bias_corrected(phi: np.ndarray, n_obs: int | np.ndarray, *, detrended: bool) -> np.ndarray:
    """Kendall's first-order correction of an AR(1) estimate: ``φ + (1 + 3φ)/n`` after
    demeaning, ``φ + (2 + 4φ)/n`` after detrending."""
    phi = np.asarray(phi, dtype=float)
    n = np.asarray(n_obs, dtype=float)
    return phi + ((2.0 + 4.0 * phi) if detrended else (1.0 + 3.0 * phi)) / n


def _noise(rng: np.random.Generator, n_years: int, reps: int, phi: float) -> np.ndarray:
    e = rng.standard_normal((n_years + _BURN, reps))
    u = np.empty_like(e)
    u[0] = e[0] / math.sqrt(1.0 - phi ** 2)
    for t in range(1, e.shape[0]):
        u[t] = phi * u[t - 1] + e[t]
    return u[_BURN:]


def _row_reps(kind: str, n_breaks: int = 1) -> int:
    if kind in ("za", "ls"):
        return BREAK_ROW_REPS if n_breaks == 1 else BREAK_ROW_REPS // 5
    return ROW_REPS


def _statistic(kind: str, y: np.ndarray, trend: str, lags: int | None, max_lags: int,
               rule: str, hac_lags: int, trim: float = 0.15, n_breaks: int = 1) -> np.ndarray:
    if kind == "za":
        from evidence.roots._break_batch import za_batch

        return za_batch(y, trend, lags, max_lags, rule, trim)[0]
    if kind == "ls":
        from evidence.roots._break_batch import ls_batch

        return ls_batch(y, trend, n_breaks, "sequential-t" if lags is None else lags, max_lags,
                        trim)
    if kind == "adf":
        return adf_tstats(y, trend, lags) if lags is not None else adf_select(y, trend, max_lags, rule)[0]
    if kind == "dfgls":
        return dfgls_select(y, trend, lags, max_lags, rule)[0]
    if kind == "pp":
        return pp_tau(y, trend, hac_lags)
    return kpss_eta(y, trend, hac_lags)


def phi_hat_of(kind: str, y: np.ndarray, trend: str) -> np.ndarray:
    """The φ̂ a table conditions on: of Δy (unit-root statistics) or of the KPSS residuals."""
    if kind == "kpss":
        from evidence.roots._unit_batch import residuals_on, trend_columns

        return ar1_coefficient(residuals_on(y, trend_columns(y.shape[0], trend)))
    return ar1_coefficient(np.diff(y, axis=0))


def _simulate(kind: str, n_years: int, trend: str, lags: int | None, max_lags: int, rule: str,
              hac_lags: int, seed: int, trim: float = 0.15, n_breaks: int = 1
              ) -> tuple[np.ndarray, np.ndarray]:
    stats_rows, phi_rows = [], []
    for g, phi in enumerate(GRID):
        rng = np.random.default_rng([seed, n_years, g, KINDS.index(kind)])
        u = _noise(rng, n_years, _row_reps(kind, n_breaks), phi)
        y = u if kind == "kpss" else np.cumsum(u, axis=0)
        stats_rows.append(_statistic(kind, y, trend, lags, max_lags, rule, hac_lags, trim,
                                     n_breaks))
        phi_rows.append(phi_hat_of(kind, y, trend))
    return np.stack(stats_rows), np.stack(phi_rows)


@lru_cache(maxsize=256)
def unit_null(kind: str, n_years: int, trend: str, *, lags: int | None = None, max_lags: int = 0,
              rule: str = "aic", hac_lags: int = 0, seed: int = DEFAULT_SEED,
              trim: float = 0.15, n_breaks: int = 1) -> NullTable:
    """The null table of ``kind`` for series of ``n_years`` (simulated once, then cached).

    ``lags`` fixes the ADF/DF-GLS/ZA/LS order; otherwise ``rule`` ("aic", "bic", "sequential-t")
    searches up to ``max_lags``. ``hac_lags`` is the bandwidth of PP and KPSS. For "za" and "ls"
    ``trend`` is the break model, ``trim`` the share searched out at each end and ``n_breaks``
    the LM test's number of breaks.
    """
    searched = kind in ("adf", "dfgls", "za", "ls") and lags is None
    breaks = kind in ("za", "ls")
    params = {"kind": kind, "T": int(n_years), "trend": trend,
              "lags": None if lags is None else int(lags),
              "max_lags": int(max_lags) if searched else None,
              "rule": rule if searched else None,
              "hac_lags": int(hac_lags) if kind in ("pp", "kpss") else None,
              "grid": list(GRID), "row_reps": _row_reps(kind, n_breaks), "seed": int(seed),
              "version": _VERSION}
    if breaks:
        params.update({"trim": float(trim), "n_breaks": int(n_breaks) if kind == "ls" else 1})
    cached = load_cached("roots-unit-null", params)
    shape = (len(GRID), _row_reps(kind, n_breaks))
    if (cached is not None and cached.get("draws", np.empty(0)).shape == shape
            and cached.get("phis", np.empty(0)).shape == shape):
        draws, phis = cached["draws"], cached["phis"]
    else:
        draws, phis = _simulate(kind, int(n_years), trend, lags, int(max_lags), rule,
                                int(hac_lags), int(seed), float(trim), int(n_breaks))
        save_cached("roots-unit-null", params, {"draws": draws, "phis": phis})
    if lags is not None:
        option = f"{lags} lags"
    elif searched:
        option = f"lags by {rule} up to {max_lags}"
    else:
        option = f"bandwidth {hac_lags}"
    if breaks:
        option += f", trim {trim:g}" + (f", {n_breaks} break(s)" if kind == "ls" else "")
    terms = f"model {trend}" if breaks else trend
    label = (f"simulated for T={n_years}, {terms}, {option} ({len(GRID)} noise autocorrelations "
             f"× {shape[1]} draws, seed {seed})")
    return NullTable(kind, int(n_years), trend, draws, phis, label)
