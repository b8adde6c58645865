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

``--crossover 25 50 100 200`` times only the grade on the first N units on each executor (the
crossover N of ``docs/scale.md``). Not part of the default test run.
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
    kink = np.where(kind == 0, slope * np.maximum(s - brk, 0.0)
                    + (slope + 0.03) * np.minimum(s - brk, 0.0), slope * s)
    # first-year emissions of 5-25 t per person (population in thousands, emissions in kt)
    start = rng.uniform(np.log(5.0), np.log(25.0), (n_units, 1)) + log_pop[:, :1] - log_gdp[:, :1]
    log_int = (start + kink
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


# ----------------------------------------------------------------------------- the reference
def reference_unit(frame: pd.DataFrame) -> dict[str, float]:
    """The study's per-unit analyses for one unit, written by hand on statsmodels and arch.

    ``frame``: one unit's years (sorted) with the panel's columns. What the study computes per
    unit, done the plain way: trend growth (OLS with Newey-West errors) of the log pressures,
    activity and intensity and the Tapio elasticity (rates); the direction tests with recession
    dummies, the latest-regime kinked trend, every sub-window of at least 10 years, the
    Hodrick-Prescott trends and a two-break trend search by least squares (grade); ADF and KPSS
    on each log series in levels and differences (roots); the unit's own regression of log
    pressure on log activity (mean-group elasticity); an ADF test of log relative per-capita
    pressure (stochastic convergence); the LMDI effects of the Kaya factors (decomposition).
    """
    import statsmodels.api as sm
    from arch.unitroot import ADF, KPSS
    from statsmodels.tsa.filters.hp_filter import hpfilter

    out: dict[str, float] = {}
    years = frame["year"].to_numpy(dtype=float)
    logs = {c: np.log(frame[c].to_numpy(dtype=float))
            for c in ("gdp", "population", "energy", "ghg_territorial", "ghg_consumption")}
    logs["intensity"] = logs["ghg_territorial"] - logs["gdp"]
    trend = sm.add_constant(years - years.mean())
    lags = int(np.floor(4 * (years.size / 100) ** (2 / 9)))

    def hac_slope(y: np.ndarray, x: np.ndarray) -> tuple[float, float]:
        fit = sm.OLS(y, x).fit(cov_type="HAC", cov_kwds={"maxlags": lags, "use_correction": True})
        return float(fit.params[1]), float(fit.pvalues[1])

    for name in ("ghg_territorial", "ghg_consumption", "gdp", "intensity"):       # rates
        out[f"growth_{name}"] = hac_slope(logs[name], trend)[0]
    out["tapio"] = ((logs["ghg_territorial"][-1] - logs["ghg_territorial"][0])
                    / (logs["gdp"][-1] - logs["gdp"][0]))
    peak = np.maximum.accumulate(logs["gdp"])                                     # grade
    below = np.r_[False, logs["gdp"][1:] < peak[:-1]]
    dummies = np.column_stack([np.eye(years.size)[:, below]]) if below.any() else np.zeros((years.size, 0))
    out["p_absolute"] = hac_slope(logs["ghg_territorial"], np.column_stack([trend, dummies]))[1]
    kink = np.maximum(years - years[-11], 0.0)
    out["p_latest"] = hac_slope(logs["ghg_territorial"], np.column_stack([trend, kink]))[1]
    holds = []
    for length in range(10, years.size + 1):
        for start in range(0, years.size - length + 1):
            part = slice(start, start + length)
            x = sm.add_constant(years[part] - years[part].mean())
            holds.append(hac_slope(logs["ghg_territorial"][part], x)[1] < 0.05
                         and hac_slope(logs["gdp"][part], x)[0] > 0)
    out["subwindow_share"] = float(np.mean(holds))
    out["hp_slope"] = float(np.polyfit(years, hpfilter(logs["ghg_territorial"], 100)[1], 1)[0])
    h = max(3, int(0.15 * years.size))
    best = (np.inf, None)
    for b1 in range(h, years.size - 2 * h):
        for b2 in range(b1 + h, years.size - h):
            x = np.column_stack([trend, np.maximum(years - years[b1], 0), np.maximum(years - years[b2], 0)])
            ssr = sm.OLS(logs["ghg_territorial"], x).fit().ssr
            best = min(best, (ssr, (b1, b2)), key=lambda v: v[0])
    out["break_ssr"] = float(best[0])
    for name in ("ghg_territorial", "gdp"):                                       # roots
        for series in (logs[name], np.diff(logs[name])):
            out[f"adf_{name}_{series.size}"] = float(ADF(series, trend="ct").pvalue)
            out[f"kpss_{name}_{series.size}"] = float(KPSS(series, trend="ct", lags=lags).pvalue)
    fit = sm.OLS(logs["ghg_territorial"], sm.add_constant(logs["gdp"])).fit()     # elasticity
    out["mg_slope"] = float(fit.params[1])
    per_capita = logs["ghg_territorial"] - logs["population"]                     # convergence
    out["adf_relative"] = float(ADF(per_capita - per_capita.mean(), trend="c").pvalue)
    factors = [logs["population"], logs["gdp"] - logs["population"],              # decomposition
               logs["energy"] - logs["gdp"], logs["ghg_territorial"] - logs["energy"]]
    change = np.expm1(logs["ghg_territorial"][-1] - logs["ghg_territorial"][0])
    level0, level1 = np.exp(logs["ghg_territorial"][0]), np.exp(logs["ghg_territorial"][-1])
    weight = (level1 - level0) / (np.log(level1) - np.log(level0)) if change else level0
    out["lmdi"] = float(sum(weight * (f[-1] - f[0]) for f in factors))
    return out


# ----------------------------------------------------------------------------- the runs
CHILD = r"""
import json, os, resource, sys, time
from pathlib import Path
import evidence as ev
spec, out, executor = sys.argv[1], sys.argv[2], sys.argv[3]
from evidence._cache import cache_dir
folder = cache_dir()
before = set(folder.glob("*.npz")) if folder and folder.exists() else set()
start = time.perf_counter()
result = ev.run_study(spec, out, executor=executor, overwrite=True)
elapsed = time.perf_counter() - start
after = set(folder.glob("*.npz")) if folder and folder.exists() else set()
own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
kids = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
cpu = sum(resource.getrusage(w).ru_utime + resource.getrusage(w).ru_stime
          for w in (resource.RUSAGE_SELF, resource.RUSAGE_CHILDREN))
print(json.dumps({"seconds": elapsed, "peak_mib": own, "peak_child_mib": kids, "cpu": cpu,
                  "files": len(result.files), "new_cache_entries": len(after - before),
                  "figures": sum(1 for f in result.files if f.suffix == ".png")}))
"""


def run_study_child(spec: Path, out: Path, executor: str = "serial") -> dict[str, float]:
    """Run the study in a fresh process (imports not timed); seconds, peak memory, files."""
    import json

    done = subprocess.run([sys.executable, "-c", CHILD, str(spec), str(out), executor],
                          check=True, capture_output=True, text=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def reference_seconds_per_unit(frame: pd.DataFrame, units: int) -> float:
    """Seconds per unit of the hand-written loop on the first ``units`` units."""
    chosen = frame["county"].drop_duplicates().iloc[:units]
    parts = [g.sort_values("year") for _, g in frame[frame["county"].isin(chosen)].groupby("county")]
    start = time.perf_counter()
    for part in parts:
        reference_unit(part)
    return (time.perf_counter() - start) / len(parts)


def crossover(sizes: list[int], panel_units: int = 300) -> None:
    """The grade (both bases, basis gap) on the first N units, serial against 2 local processes
    and a new local Dask cluster (started inside the call, as a study does); cache warmed first."""
    from evidence.grading import grade
    from evidence.panel import load_panel

    full = build_panel(max(panel_units, *sizes))
    options = {"consumption": {"ghg_territorial": "ghg_consumption"}}
    for n in sizes:
        units = full["county"].drop_duplicates().iloc[:n]
        panel = load_panel(full[full["county"].isin(units)], unit="county", time="year")
        grade(panel, "ghg_territorial", "gdp", **options)  # simulate and cache the designs
        line = [f"N={n}:"]
        for executor in ("serial", "processes", "dask"):
            start = time.perf_counter()
            grade(panel, "ghg_territorial", "gdp", executor=executor, **options)
            line.append(f"{executor} {time.perf_counter() - start:6.1f} s")
        print("  ".join(line), flush=True)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("units", nargs="?", type=int, default=3000)
    parser.add_argument("--reference-units", type=int, default=20)
    parser.add_argument("--executor", default="serial")
    parser.add_argument("--keep", type=Path, default=None, help="write the panel and output here")
    parser.add_argument("--crossover", type=int, nargs="+", default=None, metavar="N",
                        help="only time the grade on N units on each executor")
    args = parser.parse_args()
    if args.crossover:
        crossover(args.crossover)
        return
    with tempfile.TemporaryDirectory() as tmp:
        folder = args.keep or Path(tmp)
        folder.mkdir(parents=True, exist_ok=True)
        spec = write_study(folder, args.units)
        print(f"panel: {args.units} invented counties x {N_YEARS} years, seed {SEED}; "
              f"study: the demo study's analyses; executor {args.executor}")
        ours = run_study_child(spec, folder / "out", args.executor)
        peak = max(ours["peak_mib"], ours["peak_child_mib"])
        print(f"evidence study: {ours['seconds']:7.1f} s wall ({ours['cpu']:.1f} s CPU), peak memory "
              f"{peak:,.0f} MiB (this process {ours['peak_mib']:,.0f}, largest worker "
              f"{ours['peak_child_mib']:,.0f}); {ours['files']} files, {ours['figures']} figures (PNG); "
              f"{ours['new_cache_entries']} null distributions simulated and cached on this run")
        if args.units >= 3000:
            print(f"  goals at 3,000 units: < 180 s {'met' if ours['seconds'] < 180 else 'NOT met'}, "
                  f"< 4 GB {'met' if peak < 4096 else 'NOT met'}")
        else:
            print(f"  (the goals are stated at 3,000 units; this run has {args.units})")
        frame = pd.read_csv(folder / "counties.csv")
        per_ref = reference_seconds_per_unit(frame, args.reference_units)
        per_ours = ours["seconds"] / args.units
        print(f"hand-written loop (statsmodels + arch), {args.reference_units} units: "
              f"{per_ref * 1000:8.1f} ms per unit")
        print(f"evidence study, whole panel:                 {per_ours * 1000:8.1f} ms per unit "
              f"(everything included: loading, every analysis, tables, report)")
        print(f"ratio (per unit): {per_ref / per_ours:.1f}x (goal >= 20x: "
              f"{'met' if per_ref / per_ours >= 20 else 'NOT met'})")


if __name__ == "__main__":
    main()
