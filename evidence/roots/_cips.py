"""Pesaran's (2007) CADF regressions, the CIPS statistic and its simulated null distribution.

Critical values come from Pesaran (2007) Table II (``_cips_tables``) when the panel's N and T are
tabulated and no lags are used; otherwise, and always for the p-value, from a seeded simulation
of the statistic under the null (independent Gaussian random walks, the same N, T, deterministic
terms, lags and truncation), run through :mod:`evidence.parallel` and cached on disk with
:mod:`evidence._cache`. Regenerate a table with ``simulate_cips(...)``; its replications and
seed are recorded in the result's ``details``.

References
----------
pesaran2007 : Pesaran, M. H. (2007). A simple panel unit root test in the presence of cross-section
    dependence. J. Applied Econometrics 22(2), 265–312.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from evidence._cache import load_cached, save_cached
from evidence._typing import DEFAULT_SEED, Seed
from evidence._validation import check_int, check_lags, check_seed, check_trend
from evidence.errors import SpecError
from evidence.parallel import ExecutorLike, task_seeds, using_executor
from evidence.results import TestResult
from evidence.roots import _cips_tables as tables
from evidence.roots._common import N_DETERMINISTIC, column_block, excluded_records, require_balanced
from evidence.roots._unit_batch import ols_tstat_batch, trend_columns

__all__ = ["cips_test", "cadf_tstats", "cips_statistic", "simulate_cips", "table_critical_values"]

#: Default number of simulated panels for p-values and untabulated critical values.
REPS = 5000
_CHUNK = 250


def cadf_tstats(y: np.ndarray, trend: str, lags: int) -> np.ndarray:
    """CADF t-statistics; ``y`` is ``(T, N)`` or a batch ``(R, T, N)`` (returns ``(N,)``/``(R, N)``).

    Unit i's regression, t = p+2..T: ``Δy_it = d_t'a + b y_{i,t-1} + c ȳ_{t-1} +
    Σ_{j=0..p} d_j Δȳ_{t-j} + Σ_{j=1..p} e_j Δy_{i,t-j} + u_it``; the statistic is the t-ratio of b.
    """
    y = np.asarray(y, dtype=float)
    single = y.ndim == 2
    if single:
        y = y[None]
    reps, nobs, n_units = y.shape
    ybar = y.mean(axis=2, keepdims=True)
    dy, dbar = np.diff(y, axis=1), np.diff(ybar, axis=1)
    rows = nobs - lags - 1
    sl = slice(lags, nobs - 1)                       # Δ index for t = p+2..T

    def full(a: np.ndarray) -> np.ndarray:
        return np.broadcast_to(a, (reps, rows, n_units))

    cols = [y[:, lags:nobs - 1, :], full(ybar[:, lags:nobs - 1, :]), full(dbar[:, sl, :])]
    for j in range(1, lags + 1):
        cols.append(full(dbar[:, lags - j:nobs - 1 - j, :]))
        cols.append(dy[:, lags - j:nobs - 1 - j, :])
    det = trend_columns(rows, trend)
    for k in range(det.shape[1]):
        cols.append(full(det[:, k][None, :, None]))
    x = np.stack(cols, axis=3)                       # (R, rows, N, k)
    x = np.moveaxis(x, 2, 1).reshape(reps * n_units, rows, len(cols))
    lhs = np.moveaxis(dy[:, sl, :], 2, 1).reshape(reps * n_units, rows)
    _, t = ols_tstat_batch(lhs, x, 0)
    t = t.reshape(reps, n_units)
    return t[0] if single else t


def cips_statistic(t: np.ndarray, trend: str, truncate: bool) -> np.ndarray:
    """Mean of the CADF statistics over units (last axis), truncated to [-K1, K2] for CIPS*."""
    if truncate:
        k1, k2 = tables.TRUNCATION[trend]
        t = np.clip(t, -k1, k2)
    return np.mean(t, axis=-1)


def _simulate_chunk(task: tuple[Any, ...]) -> np.ndarray:
    seed, reps, n_units, nobs, trend, lags, truncate = task
    rng = np.random.default_rng(seed)
    y = np.cumsum(rng.standard_normal((reps, nobs, n_units)), axis=1)
    return cips_statistic(cadf_tstats(y, trend, lags), trend, truncate)


def simulate_cips(n_units: int, nobs: int, *, trend: str = "constant", lags: int = 0,
                  truncate: bool = True, reps: int = REPS, seed: Seed = DEFAULT_SEED,
                  executor: ExecutorLike = "serial") -> np.ndarray:
    """Sorted simulated null draws of CIPS for N units and T years (seeded; cached on disk).

    Each replication draws N independent Gaussian random walks of length T and computes the
    statistic exactly as :func:`cips_test` does. Replications are split into tasks with their
    own seeds (:func:`evidence.parallel.task_seeds`), so every executor gives the same draws.
    """
    params = {"n": int(n_units), "t": int(nobs), "trend": trend, "lags": int(lags),
              "truncate": bool(truncate), "replications": int(reps),
              "seed": seed if isinstance(seed, (int, np.integer)) else None, "version": 2}
    cacheable = params["seed"] is not None
    if cacheable:
        cached = load_cached("cips-null", params)
        if cached is not None and "draws" in cached:
            return cached["draws"]
    sizes = [_CHUNK] * (reps // _CHUNK) + ([reps % _CHUNK] if reps % _CHUNK else [])
    seeds = task_seeds(seed, len(sizes))
    tasks = [(s, r, int(n_units), int(nobs), trend, int(lags), bool(truncate))
             for s, r in zip(seeds, sizes, strict=True)]
    with using_executor(executor) as runner:
        draws = np.sort(np.concatenate(runner.map(_simulate_chunk, tasks)))
    if cacheable:
        save_cached("cips-null", params, {"draws": draws})
    return draws


def table_critical_values(n_units: int, nobs: int, trend: str, truncate: bool) -> dict[float, float] | None:
    """Pesaran (2007) Table II values when N and T are both tabulated, else ``None``."""
    if n_units not in tables.CIPS_N or nobs not in tables.CIPS_T:
        return None
    i, j = tables.CIPS_T.index(nobs), tables.CIPS_N.index(n_units)
    return {a: tables.CIPS_CV[(trend, truncate, a)][i][j] for a in (0.01, 0.05, 0.10)}


def cips_test(panel: Any, column: str, *, trend: str = "constant", lags: int = 0,
              truncate: bool = True, reps: int = REPS, seed: Seed = DEFAULT_SEED,
              executor: ExecutorLike = "serial") -> TestResult:
    """Pesaran's CIPS panel unit-root test, robust to one common factor (balanced panel).

    Parameters
    ----------
    trend : {"none", "constant", "trend"}
        Case I, II or III of Pesaran (2007).
    lags : int
        Lags p of the CADF regressions (the same for every unit).
    truncate : bool
        True: CIPS*, the mean of CADF statistics truncated to [-K1, K2] (robust at small T).
    reps, seed, executor
        Simulation of the null distribution (p-value; critical values when not tabulated).

    Notes
    -----
    ``CADF_i`` is the t-ratio of b_i in the cross-sectionally augmented regression (see
    :func:`cadf_tstats`); ``CIPS = N⁻¹ Σ CADF_i``. H0: every unit has a unit root; H1: some
    units are stationary. Reject for small values. The statistic's null distribution is
    non-standard: critical values come from Pesaran (2007) Table II when p = 0 and (N, T) is
    tabulated, otherwise from the simulation; the p-value is always the share of simulated
    values at or below the statistic (its Monte Carlo error is about sqrt(p(1-p)/R)).

    References
    ----------
    pesaran2007 (see the module docstring).
    """
    trend = check_trend(trend)
    lags = check_lags(lags, rules=())  # type: ignore[assignment]
    if not isinstance(truncate, bool):
        raise SpecError(f"truncate={truncate!r} must be True or False.")
    reps = check_int("reps", reps, minimum=100)
    seed = check_seed(seed)
    block = column_block(panel, column, min_obs=2 * lags + N_DETERMINISTIC[trend] + 6,
                         purpose="the CIPS test")
    require_balanced(block, purpose="the CIPS test")
    y = block.values
    nobs, n = y.shape
    t = cadf_tstats(y, trend, lags)
    if not np.isfinite(t).all():
        unit = block.units[int(np.flatnonzero(~np.isfinite(t))[0])]
        raise SpecError(f"the CADF regression of unit '{unit}' is singular with lags={lags}; "
                        "use fewer lags.")
    stat = float(cips_statistic(t, trend, truncate))
    draws = simulate_cips(n, nobs, trend=trend, lags=lags, truncate=truncate, reps=reps,
                          seed=seed, executor=executor)
    pvalue = float((np.sum(draws <= stat) + 1) / (draws.size + 1))
    table = table_critical_values(n, nobs, trend, truncate) if lags == 0 else None
    seed_label = seed if isinstance(seed, (int, np.integer)) else str(seed)
    if table is not None:
        cv, source = table, "Pesaran (2007), Table II"
    else:
        cv = {a: float(np.quantile(draws, a)) for a in (0.01, 0.05, 0.10)}
        source = f"simulated ({reps} replications, seed {seed_label})"
    warn = ([f"{len(block.excluded)} item(s) left out; see details['excluded']."]
            if len(block.excluded) else [])
    if n < 10 or nobs < 10:
        warn.append(f"N={n}, T={nobs}: below Pesaran's smallest tabulated panel (N=10, T=10).")
    return TestResult(
        test="CIPS*" if truncate else "CIPS", statistic=stat, pvalue=pvalue, critical_values=cv,
        null="every unit has a unit root", alternative="some units are stationary",
        nobs=int((nobs - lags - 1) * n),
        details={"trend": trend, "lags": lags, "truncated": truncate, "units": n, "periods": nobs,
                 "critical_values_source": source, "reps": reps, "seed": seed_label,
                 "pvalue_mc_error": math.sqrt(max(pvalue * (1 - pvalue), 1e-12) / reps),
                 "unit_cadf": dict(zip(block.units, np.round(t, 6).tolist(), strict=True)),
                 "excluded": excluded_records(block.excluded)},
        reference="pesaran2007", warnings=tuple(warn))
