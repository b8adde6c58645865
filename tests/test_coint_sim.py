"""Seeded panel simulators shared by the cointegration tests (scaffolding only; no check values)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from evidence.panel import Panel, load_panel


def to_panel(y: np.ndarray, x: np.ndarray, *, start: int = 1960) -> Panel:
    """A Panel with columns y, x1..xk from arrays y (N, T) and x (N, T, k)."""
    n_units, n_years = y.shape
    x = x.reshape(n_units, n_years, -1)
    rows = {"unit": np.repeat([f"u{i:02d}" for i in range(n_units)], n_years),
            "year": np.tile(np.arange(start, start + n_years), n_units), "y": y.ravel()}
    for m in range(x.shape[2]):
        rows[f"x{m + 1}"] = x[:, :, m].ravel()
    return load_panel(pd.DataFrame(rows), unit="unit", time="year")


def simulate(rng: np.random.Generator, n_units: int, n_years: int, *, coint: bool, k: int = 1,
             rho: float = 0.5, beta: float | np.ndarray = 1.0, common: float = 0.0,
             endogenous: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """Random-walk regressors; y cointegrated with slope ``beta`` (AR(1) error ``rho``) or a random walk.

    ``common`` loads a common shock on the errors (cross-sectional dependence); ``endogenous``
    correlates the error innovation with the regressor innovation.
    """
    shocks = rng.standard_normal((n_units, n_years, k))
    x = np.cumsum(shocks, axis=1)
    eps = rng.standard_normal((n_units, n_years)) + common * rng.standard_normal(n_years)[None, :]
    eps = eps + endogenous * shocks[:, :, 0]
    if coint:
        u = np.zeros((n_units, n_years))
        for t in range(1, n_years):
            u[:, t] = rho * u[:, t - 1] + eps[:, t]
        b = np.broadcast_to(np.asarray(beta, dtype=float), (n_units, k))
        y = rng.normal(0, 1, (n_units, 1)) + np.einsum("ntk,nk->nt", x, b) + u
    else:
        y = np.cumsum(eps, axis=1)
    return y, x
