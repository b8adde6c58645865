"""Pesaran's (2007) CADF regressions, the CIPS statistic and its simulated null distribution.

Default (``inference="simulated"``): the p-value and critical values come from the statistic
simulated for the panel's N, T, deterministic terms, lags and truncation under independent
Gaussian random walks whose increments are AR(1), read at the panel's pooled autocorrelation of
Δy (``_panel_null``); with one lag this holds the size under AR(0.5) increments and a common
factor (``docs/methods/size.md``). ``inference="asymptotic"``: Pesaran (2007) Table II critical
values (``_cips_tables``) when N and T are tabulated and no lags are used, otherwise quantiles,
and the p-value, of the simulation under independent Gaussian random walks with white-noise
increments (``simulate_cips``), which over-rejects when the increments are autocorrelated.
Simulations run through :mod:`evidence.parallel` and are cached with :mod:`evidence._cache`;
their replications and seed are recorded in the result's ``details``.

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
from evidence._validation import check_choice, check_int, check_lags, check_seed, check_trend
from evidence.errors import SpecError
from evidence.parallel import ExecutorLike, task_seeds, using_executor
from evidence.results import TestResult
from evidence.roots import _cips_tables as tables
from evidence.roots._common import (
    INFERENCE,
    N_DETERMINISTIC,
    column_block,
    excluded_records,
    require_balanced,
    size_details,
)
from evidence.roots._panel_null import panel_null, pooled_phi, register
from evidence.roots._unit_batch import trend_columns

__all__ = ["cips_test", "cadf_tstats", "cips_statistic", "simulate_cips", "table_critical_values"]

#: Default number of simulated panels for p-values and untabulated critical values (per grid point
#: of the increments' autocorrelation with ``inference="simulated"``).
REPS = 2000
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
    reps, nobs, _ = y.shape
    ybar = y.mean(axis=2, keepdims=True)
    dy, dbar = np.diff(y, axis=1), np.diff(ybar, axis=1)
    rows = nobs - lags - 1
    sl = slice(lags, nobs - 1)                       # Δ index for t = p+2..T
    # Frisch–Waugh: the regressors shared by every unit of a panel (ȳ_{t-1}, Δȳ_{t-j},
    # deterministic terms) are partialled out once per panel; each unit then has a regression on
    # its own columns y_{i,t-1}, Δy_{i,t-j} only (the same OLS, regrouped)
    det = trend_columns(rows, trend)
    common = [ybar[:, lags:nobs - 1, 0], dbar[:, sl, 0]]
    common += [dbar[:, lags - j:nobs - 1 - j, 0] for j in range(1, lags + 1)]
    common += [np.broadcast_to(det[:, k], (reps, rows)) for k in range(det.shape[1])]
    w = np.stack(common, axis=2)                                           # (R, rows, kc)
    own = [y[:, lags:nobs - 1, :]] + [dy[:, lags - j:nobs - 1 - j, :] for j in range(1, lags + 1)]
    z = np.stack(own, axis=3)                                              # (R, rows, N, ko)
    lhs = dy[:, sl, :]                                                     # (R, rows, N)
    wtw_inv, bad_panel = _inverse(np.einsum("rtk,rtl->rkl", w, w))

    def partial(v: np.ndarray) -> np.ndarray:     # residuals on w, per panel: (R, rows, ...)
        flat = v.reshape(reps, rows, -1)
        coef = wtw_inv @ np.einsum("rtk,rtm->rkm", w, flat)
        return (flat - w @ coef).reshape(v.shape)

    zt = partial(z)
    et = partial(lhs)
    zz = np.einsum("rtnk,rtnl->rnkl", zt, zt)                             # (R, N, ko, ko)
    ze = np.einsum("rtnk,rtn->rnk", zt, et)
    ee = np.einsum("rtn,rtn->rn", et, et)
    ko = z.shape[3]
    zz_inv, bad_unit = _inverse(zz)
    bad_unit |= bad_panel[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        beta = np.einsum("rnkl,rnl->rnk", zz_inv, ze)
        ssr = ee - np.einsum("rnk,rnk->rn", beta, ze)
        s2 = ssr / (rows - (w.shape[2] + ko))
        var = s2 * zz_inv[..., 0, 0]
        t = beta[..., 0] / np.sqrt(np.where(var > 0, var, np.nan))
    t = np.where(bad_unit, np.nan, t)
    return t[0] if single else t


def _inverse(a: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Inverses of a stack of square matrices and which are singular (those get the identity;
    their regressions give NaN, as :func:`evidence.roots._unit_batch.ols_tstat_batch` does)."""
    bad = np.zeros(a.shape[:-2], dtype=bool)
    try:
        return np.linalg.inv(a), bad
    except np.linalg.LinAlgError:
        bad = np.linalg.matrix_rank(a) < a.shape[-1]
        a = a.copy()
        a[bad] = np.eye(a.shape[-1])
        return np.linalg.inv(a), bad


def cips_statistic(t: np.ndarray, trend: str, truncate: bool) -> np.ndarray:
    """Mean of the CADF statistics over units (last axis), truncated to [-K1, K2] for CIPS*."""
    if truncate:
        k1, k2 = tables.TRUNCATION[trend]
        t = np.clip(t, -k1, k2)
    return np.mean(t, axis=-1)


@register("cips")
def _cips_draws(y: np.ndarray, trend: str, options: dict[str, Any]) -> np.ndarray:
    return cips_statistic(cadf_tstats(y, trend, options["lags"]), trend, options["truncate"])


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


def cips_test(panel: Any, column: str, *, trend: str = "constant", lags: int = 1,
              truncate: bool = True, inference: str = "simulated", reps: int = REPS,
              seed: Seed = DEFAULT_SEED, executor: ExecutorLike = "serial") -> TestResult:
    """Pesaran's CIPS panel unit-root test, robust to one common factor (balanced panel).

    Parameters
    ----------
    trend : {"none", "constant", "trend"}
        Case I, II or III of Pesaran (2007).
    lags : int
        Lags p of the CADF regressions (the same for every unit); default 1 (with 0 the test has
        no size under autocorrelated increments: 0 % rejections under AR(0.5) at T = 30).
    truncate : bool
        True: CIPS*, the mean of CADF statistics truncated to [-K1, K2] (robust at small T).
    inference : {"simulated", "asymptotic"}
        See the module docstring; "asymptotic" rejects up to 10 % of the time at 5 % with
        autocorrelated increments (``details["size"]``).
    reps, seed, executor
        Simulated panels (per grid point with "simulated"), their seed, where to run them.

    Notes
    -----
    ``CADF_i`` is the t-ratio of b_i in the cross-sectionally augmented regression (see
    :func:`cadf_tstats`); ``CIPS = N⁻¹ Σ CADF_i``. H0: every unit has a unit root; H1: some
    units are stationary. Reject for small values. The p-value is the share of simulated values
    at or below the statistic (its Monte Carlo error is about sqrt(p(1-p)/R)).

    References
    ----------
    pesaran2007 (see the module docstring).
    """
    trend = check_trend(trend)
    lags = check_lags(lags, rules=())  # type: ignore[assignment]
    if not isinstance(truncate, bool):
        raise SpecError(f"truncate={truncate!r} must be True or False.")
    inference = check_choice("inference", inference, INFERENCE)
    reps = check_int("reps", reps, minimum=100)
    seed = check_seed(seed)
    if isinstance(seed, np.random.Generator):
        seed = int(seed.integers(0, 2**62))
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
    details: dict[str, Any] = {"trend": trend, "lags": lags, "truncated": truncate,
                               "inference": inference, "units": n, "periods": nobs,
                               "reps": reps, "seed": seed}
    if inference == "simulated":
        null = panel_null("cips", n, nobs, trend, {"lags": lags, "truncate": truncate}, reps=reps,
                          seed=seed, executor=executor)
        phi = pooled_phi(y)
        pvalue = null.pvalue(stat, phi, tail="lower")
        cv = null.quantiles(phi)
        details.update({"critical_values_source": null.label, "pooled_phi": round(phi, 6)})
    else:
        draws = simulate_cips(n, nobs, trend=trend, lags=lags, truncate=truncate, reps=reps,
                              seed=seed, executor=executor)
        pvalue = float((np.sum(draws <= stat) + 1) / (draws.size + 1))
        table = table_critical_values(n, nobs, trend, truncate) if lags == 0 else None
        if table is not None:
            cv, source = table, "Pesaran (2007), Table II"
        else:
            cv = {a: float(np.quantile(draws, a)) for a in (0.01, 0.05, 0.10)}
            source = f"simulated under white-noise increments ({reps} replications, seed {seed})"
        details["critical_values_source"] = source
    details["pvalue_mc_error"] = math.sqrt(max(pvalue * (1 - pvalue), 1e-12) / reps)
    details["unit_cadf"] = dict(zip(block.units, np.round(t, 6).tolist(), strict=True))
    warn = ([f"{len(block.excluded)} item(s) left out; see details['excluded']."]
            if len(block.excluded) else [])
    if n < 10 or nobs < 10:
        warn.append(f"N={n}, T={nobs}: below Pesaran's smallest tabulated panel (N=10, T=10).")
    name = "CIPS*" if truncate else "CIPS"
    details["size"], size_warn = size_details(name, n, nobs, inference, trend)
    details["excluded"] = excluded_records(block.excluded)
    return TestResult(
        test=name, statistic=stat, pvalue=pvalue, critical_values=cv,
        null="every unit has a unit root", alternative="some units are stationary",
        nobs=int((nobs - lags - 1) * n), details=details, reference="pesaran2007",
        warnings=tuple(warn + size_warn))
