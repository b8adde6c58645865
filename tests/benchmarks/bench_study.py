"""Benchmark: a whole study on a 3,000-unit, 30-year panel, and the same analyses by hand.

Run: ``python tests/benchmarks/bench_study.py [N_UNITS] [--reference-units K]``.

Builds a seeded panel of invented counties (``county 0001`` ...; GDP, population, energy,
territorial and consumption-based emissions, 1994-2023) whose units decouple absolutely,
relatively or not at all, with AR(1) noise, a shared recession and a common factor, writes it
as CSV with a study file that turns on the demo study's analyses, and then

* runs ``evidence study`` on it (a fresh process, so that peak memory is the study's own):
  seconds and peak memory (max RSS). Goals: under 3 minutes and under 4 GB at 3,000 units;
* runs the same per-unit analyses as a hand-written loop over units that calls statsmodels and
  arch directly (OLS trend growth of the log intensity with HAC errors, Tapio elasticity, the
  ADF and KPSS unit-root tests of each log series, a structural-break screen by the sup-F of a
  broken trend over every admissible break year, OLS per unit for the mean-group elasticity) on
  ``--reference-units`` units and prints seconds per unit for both and the ratio (goal ≥ 20x).

Not part of the default test run.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20261217
FIRST_YEAR, N_YEARS = 1994, 30
TYPES = ("absolute", "relative", "coupled")


def _ar1(rng: np.random.Generator, shape: tuple[int, int], sd: float, rho: float = 0.5) -> np.ndarray:
    shocks = rng.normal(0.0, sd * np.sqrt(1.0 - rho**2), shape)
    out = np.empty(shape)
    out[:, 0] = rng.normal(0.0, sd, shape[0])
    for t in range(1, shape[1]):
        out[:, t] = rho * out[:, t - 1] + shocks[:, t]
    return out


def build_panel(n_units: int, n_years: int = N_YEARS, seed: int = SEED) -> pd.DataFrame:
    """A seeded panel of invented counties, long format (one row per county and year)."""
    rng = np.random.default_rng(seed)
    years = np.arange(FIRST_YEAR, FIRST_YEAR + n_years)
    s = (years - FIRST_YEAR).astype(float)[None, :]
    kind = rng.choice(len(TYPES), size=n_units, p=[0.3, 0.4, 0.3])[:, None]
    recession = np.where(years == 2009, 1.0, np.where(years == 2010, 0.5, 0.0))[None, :]
    factor = rng.normal(0.0, 0.01, n_years).cumsum()[None, :]
    loading = rng.uniform(0.5, 1.5, (n_units, 1))
    growth = rng.uniform(0.01, 0.03, (n_units, 1))
    log_gdp = (rng.uniform(np.log(2e3), np.log(5e4), (n_units, 1)) + growth * s
               - rng.uniform(0.02, 0.05, (n_units, 1)) * recession + loading * factor
               + _ar1(rng, (n_units, n_years), 0.008))
    log_pop = rng.uniform(np.log(20.0), np.log(900.0), (n_units, 1)) + rng.uniform(
        -0.002, 0.012, (n_units, 1)) * s + rng.normal(0.0, 0.001, (n_units, n_years))
    slope = np.choose(kind, [rng.uniform(-0.05, -0.035, (n_units, 1)),
                             rng.uniform(-0.025, -0.008, (n_units, 1)),
                             rng.uniform(-0.004, 0.004, (n_units, 1))])
    brk = rng.integers(8, n_years - 8, (n_units, 1))
    # absolute decouplers: intensity flat-ish growth before the break, steep decline after it
    kink = np.where(kind == 0, slope * np.maximum(s - brk, 0.0) + (slope + 0.03) * np.minimum(s - brk, 0.0), slope * s)
    log_int = (rng.uniform(np.log(0.2), np.log(0.8), (n_units, 1)) + kink
               - 0.02 * recession + _ar1(rng, (n_units, n_years), 0.012))
    log_ghg = log_gdp + log_int
    log_energy = log_gdp + rng.uniform(np.log(0.004), np.log(0.01), (n_units, 1)) + rng.uniform(
        -0.02, -0.005, (n_units, 1)) * s + _ar1(rng, (n_units, n_years), 0.008)
    log_cons = log_ghg + rng.uniform(-0.2, 0.3, (n_units, 1)) + rng.uniform(
        -0.003, 0.006, (n_units, 1)) * s + _ar1(rng, (n_units, n_years), 0.01)
    units = np.array([f"county {i + 1:04d}" for i in range(n_units)])
    cols = {"gdp": (log_gdp, 1), "population": (log_pop, 2), "energy": (log_energy, 3),
            "ghg_territorial": (log_ghg, 2), "ghg_consumption": (log_cons, 2)}
    data = {"county": np.repeat(units, n_years), "year": np.tile(years, n_units)}
    for name, (logs, digits) in cols.items():
        data[name] = np.round(np.exp(logs).ravel(), digits)
    return pd.DataFrame(data)


STUDY = """\
[study]
title = "Decoupling in {n} invented counties (benchmark)"
claim = "Territorial greenhouse-gas emissions have decoupled from GDP in the counties."

[data]
file = "counties.csv"
unit = "county"
time = "year"
source = "Seeded benchmark panel (invented)"

[roles]
activity = "gdp"
population = "population"
energy = "energy"

[[pressures]]
column = "ghg_territorial"
basis = "territorial"
consumption = "ghg_consumption"

[criteria]
alpha = 0.05
adjust = "bh"
episode_years = 5
sustained_years = 10
required_rate = 0.05

[breaks]
max_breaks = 2
trim = 0.15

[analyses]
rates = true
grade = true
elasticity = ["fe", "twfe", "mg", "ccemg", "amg"]
roots = ["adf", "kpss", "ips", "cips"]
dependence = true
convergence = ["beta", "sigma", "stochastic", "clubs"]
decomposition = true

[output]
formats = ["markdown", "latex", "html", "csv", "json"]
figures = true
seed = 20261202
"""


def write_study(folder: Path, n_units: int, n_years: int = N_YEARS) -> Path:
    """Write ``counties.csv`` and ``study.toml`` into ``folder``; the study file's path."""
    build_panel(n_units, n_years).to_csv(folder / "counties.csv", index=False)
    path = folder / "study.toml"
    path.write_text(STUDY.format(n=n_units), encoding="utf-8")
    return path
