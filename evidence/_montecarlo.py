"""Seeded Monte Carlo of a test's rejection rate: the data-generating processes of the size card.

The size card (``docs/methods/size.md``, ``evidence/_sizes/*.json``) is made with these pieces, so
anyone can rerun it: :func:`simulate` draws a panel from a named process, :func:`rejection_rate`
applies a test to ``reps`` draws and returns the share of p-values below ``alpha`` with its Monte
Carlo standard error. Every draw takes its own seed from :func:`evidence.parallel.task_seeds`, so
the figure is the same on any executor.

The processes (``y`` the pressure-like series, ``x`` the activity-like one; ``T`` years, ``N``
units; ``e`` iid standard normal unless ``errors`` says otherwise):

``random_walks``      ``y`` and ``x`` independent random walks; ``drift`` is added to ``Δx`` in units of
                      the shock's standard deviation (1.0: GDP growing 2 %/yr with 2 % shocks)
``ar``                ``y`` and ``x`` independent stationary AR(1) around a unit mean (``rho``)
``common_factor``     random walks ``y = λ_i f_t + u``, ``f`` a random walk, ``u`` a random walk (``share``)
``cointegrated``      ``x`` a random walk with ``drift``, ``y = β x + u``, ``u`` AR(1) with ``rho``
``trend_ar``          ``y = a_i + g t + u``, ``u`` AR(1) (``rho``; ``rho=1`` a random walk), slope ``g``
``unit_root``         ``y`` random walks whose increments are ``drift`` plus a stationary AR(1) (``rho``) of
                      ``e_it + factor λ_i f_t`` (a common shock ``f``, loadings U(0.5, 1.5)); ``x`` the same,
                      independent of ``y``
``walks``             ``y`` and ``x`` unrelated I(1): ``Δy``, ``Δx`` AR(1) with ``rho``, ``drift`` added to
                      ``Δx`` (in shock s.d.), a common shock with loadings in [0.5, 1.5] taking the
                      share ``factor`` of the variance of ``y``'s and (another one) of ``x``'s shocks
``granger``           stationary ``x_t = rho x_t-1 + v``, ``y_t = a_i + rho y_t-1 + effect x_t-1 + e``
                      (``effect=0``: no Granger causality), common shocks with share ``factor``
``slopes``            ``x`` AR(1) (``rho_x``) around unit means, ``y = a_i + b_i x + u``, ``u`` AR(1)
                      (``rho``), ``b_i = 1 + spread η_i`` (``spread=0``: homogeneous slopes)
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from evidence.panel import Panel
from evidence.parallel import task_seeds

__all__ = ["DGPS", "simulate", "rejection_rate", "rejection_rates", "ar1"]


def ar1(shocks: np.ndarray, rho: float) -> np.ndarray:
    """AR(1) filter along axis 0 started from the stationary distribution (a random walk at 1)."""
    out = np.empty_like(shocks)
    if abs(rho) < 1:
        out[0] = shocks[0] / np.sqrt(1.0 - rho**2)
    else:
        out[0] = shocks[0]
    for t in range(1, shocks.shape[0]):
        out[t] = rho * out[t - 1] + shocks[t]
    return out


def _random_walks(rng: np.random.Generator, n: int, t: int, *, drift: float = 0.0,
                  burn: int = 0) -> dict[str, np.ndarray]:
    y = rng.standard_normal((t + burn, n)).cumsum(axis=0)[burn:]
    x = (drift + rng.standard_normal((t + burn, n))).cumsum(axis=0)[burn:]
    return {"y": y, "x": x}


def _ar(rng: np.random.Generator, n: int, t: int, *, rho: float = 0.5) -> dict[str, np.ndarray]:
    mean = rng.standard_normal(n)
    return {"y": mean + ar1(rng.standard_normal((t, n)), rho),
            "x": ar1(rng.standard_normal((t, n)), rho)}


def _common_factor(rng: np.random.Generator, n: int, t: int, *,
                   share: float = 0.5) -> dict[str, np.ndarray]:
    factor = rng.standard_normal(t).cumsum()
    loadings = rng.uniform(0.5, 1.5, n)
    own = rng.standard_normal((t, n)).cumsum(axis=0)
    y = np.sqrt(share) * factor[:, None] * loadings + np.sqrt(1 - share) * own
    return {"y": y, "x": rng.standard_normal((t, n)).cumsum(axis=0)}


def _cointegrated(rng: np.random.Generator, n: int, t: int, *, rho: float = 0.5,
                  drift: float = 0.0, beta: float = 0.7) -> dict[str, np.ndarray]:
    x = (drift + rng.standard_normal((t, n))).cumsum(axis=0)
    return {"y": 1.0 + beta * x + ar1(rng.standard_normal((t, n)), rho), "x": x}


def _trend_ar(rng: np.random.Generator, n: int, t: int, *, rho: float = 0.5,
              slope: float = 0.0, scale: float = 0.02) -> dict[str, np.ndarray]:
    time = np.arange(t, dtype=float)[:, None]
    level = rng.normal(0.0, 1.0, n)
    return {"y": level + slope * time + scale * ar1(rng.standard_normal((t, n)), rho),
            "x": 0.02 * time + 0.02 * rng.standard_normal((t, n)).cumsum(axis=0)}


def _unit_root(rng: np.random.Generator, n: int, t: int, *, rho: float = 0.0, drift: float = 0.0,
               factor: float = 0.0) -> dict[str, np.ndarray]:
    out = {}
    for name in ("y", "x"):
        e = rng.standard_normal((t, n))
        if factor:
            e = e + factor * rng.standard_normal((t, 1)) * rng.uniform(0.5, 1.5, n)
        out[name] = (drift + ar1(e, rho)).cumsum(axis=0)
    return out
def _shocks(rng: np.random.Generator, t: int, n: int, factor: float) -> np.ndarray:
    """Standard normal shocks ``(t, n)`` with a common component taking the share ``factor``."""
    own = rng.standard_normal((t, n))
    if factor <= 0:
        return own
    loadings = rng.uniform(0.5, 1.5, n)
    common = rng.standard_normal(t)[:, None] * loadings / np.sqrt(np.mean(loadings ** 2))
    return np.sqrt(1.0 - factor) * own + np.sqrt(factor) * common


def _walks(rng: np.random.Generator, n: int, t: int, *, drift: float = 0.0, rho: float = 0.0,
           factor: float = 0.0, burn: int = 20) -> dict[str, np.ndarray]:
    dy = ar1(_shocks(rng, t + burn, n, factor), rho)[burn:]
    dx = drift + ar1(_shocks(rng, t + burn, n, factor), rho)[burn:]
    return {"y": dy.cumsum(axis=0), "x": dx.cumsum(axis=0)}


def _granger(rng: np.random.Generator, n: int, t: int, *, rho: float = 0.5, effect: float = 0.0,
             factor: float = 0.0, burn: int = 50) -> dict[str, np.ndarray]:
    level = rng.standard_normal(n)
    v = _shocks(rng, t + burn, n, factor)
    e = _shocks(rng, t + burn, n, factor)
    x = ar1(v, rho)
    y = np.empty_like(x)
    y[0] = e[0]
    for s in range(1, t + burn):
        y[s] = (1 - rho) * level + rho * y[s - 1] + effect * x[s - 1] + e[s]
    return {"y": y[burn:], "x": x[burn:]}


def _slopes(rng: np.random.Generator, n: int, t: int, *, rho: float = 0.5, rho_x: float = 0.5,
            spread: float = 0.0) -> dict[str, np.ndarray]:
    x = rng.standard_normal(n) + ar1(rng.standard_normal((t, n)), rho_x)
    slope = 1.0 + spread * rng.standard_normal(n)
    return {"y": rng.standard_normal(n) + slope * x + ar1(rng.standard_normal((t, n)), rho), "x": x}


#: The named processes (see the module docstring).
DGPS: dict[str, Callable[..., dict[str, np.ndarray]]] = {
    "random_walks": _random_walks, "ar": _ar, "common_factor": _common_factor,
    "cointegrated": _cointegrated, "trend_ar": _trend_ar, "unit_root": _unit_root,
    "walks": _walks, "granger": _granger, "slopes": _slopes,
}


def simulate(dgp: str, n_units: int, n_years: int, *, rng: np.random.Generator,
             first_year: int = 1990, **params: Any) -> Panel:
    """One panel drawn from the named process, columns ``y`` and ``x``, years from ``first_year``."""
    arrays = DGPS[dgp](rng, n_units, n_years, **params)
    return Panel.from_arrays(arrays, years=range(first_year, first_year + n_years))


def _one(task: tuple[Callable[[Panel], float], str, int, int, dict[str, Any], Any]) -> float:
    pvalue_of, dgp, n_units, n_years, params, seed = task
    rng = np.random.default_rng(seed)
    return float(pvalue_of(simulate(dgp, n_units, n_years, rng=rng, **params)))


def rejection_rate(pvalue_of: Callable[[Panel], float], dgp: str, n_units: int, n_years: int, *,
                   reps: int, seed: int, alpha: float = 0.05, params: dict[str, Any] | None = None,
                   executor: Any = None) -> dict[str, float]:
    """Share of ``reps`` seeded draws whose p-value is below ``alpha``, and its Monte Carlo s.e.

    ``pvalue_of`` maps a panel to a p-value (NaN counts as "no rejection" and is reported as
    ``failed``). Returns ``{"rejection", "mc_se", "failed", "reps"}``.
    """
    tasks = [(pvalue_of, dgp, n_units, n_years, dict(params or {}), s)
             for s in task_seeds(seed, reps)]
    if executor is None:
        pvalues = np.array([_one(task) for task in tasks])
    else:
        pvalues = np.array(executor.map(_one, tasks))
    failed = ~np.isfinite(pvalues)
    rate = float(np.mean(np.where(failed, False, pvalues < alpha)))
    return {"rejection": rate, "mc_se": float(np.sqrt(max(rate * (1 - rate), 1e-12) / reps)),
            "failed": float(failed.mean()), "reps": float(reps)}


def _many(task: tuple[Callable[[Panel], dict[str, float]], str, int, int, dict[str, Any], Any]
          ) -> dict[str, float]:
    pvalues_of, dgp, n_units, n_years, params, seed = task
    rng = np.random.default_rng(seed)
    return {k: float(v) for k, v in pvalues_of(simulate(dgp, n_units, n_years, rng=rng, **params)).items()}


def rejection_rates(pvalues_of: Callable[[Panel], dict[str, float]], dgp: str, n_units: int,
                    n_years: int, *, reps: int, seed: int, alpha: float = 0.05,
                    params: dict[str, Any] | None = None,
                    executor: Any = None) -> dict[str, dict[str, float]]:
    """:func:`rejection_rate` for several tests on the same draws.

    ``pvalues_of`` maps a panel to ``{name: p-value}`` (a name may have several p-values per
    panel when it returns ``name#k`` keys: all count as draws of ``name``). Returns
    ``{name: {"rejection", "mc_se", "failed", "reps"}}``, ``reps`` the number of draws.
    """
    tasks = [(pvalues_of, dgp, n_units, n_years, dict(params or {}), s)
             for s in task_seeds(seed, reps)]
    rows = [_many(t) for t in tasks] if executor is None else executor.map(_many, tasks)
    draws: dict[str, list[float]] = {}
    for row in rows:
        for key, value in row.items():
            draws.setdefault(key.split("#")[0], []).append(value)
    out = {}
    for name, values in draws.items():
        p = np.asarray(values, dtype=float)
        failed = ~np.isfinite(p)
        rate = float(np.mean(np.where(failed, False, p < alpha)))
        out[name] = {"rejection": rate, "mc_se": float(np.sqrt(max(rate * (1 - rate), 1e-12) / p.size)),
                     "failed": float(failed.mean()), "reps": float(p.size)}
    return out
