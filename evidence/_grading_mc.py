"""Seeded Monte Carlo of the grade itself: truth × rung over processes that mimic annual panels.

Run ``python -m evidence._grading_mc [--reps R] [--write]`` to print the confusion table of
``docs/methods/grading.md`` (``--write`` also rewrites ``evidence/_sizes/grade.json``).
Each simulated panel mixes ``UNITS_PER_PROCESS`` units of every process below, so that the
multiple-testing adjustment runs over a realistic mix of decliners and non-decliners.

Activity (log GDP): trend growth ``g`` (2 %/yr; 0.2–0.8 %/yr for ``weak-growth``), one or two
recessions in years common to the panel, drawn at random per panel (a fall of 2–4 % below the
previous year, half of it still missing the year after and a fifth the year after that),
and AR(1) noise (ρ = 0.5, innovations 1 %).
Pressure (log): a path of its own plus the recession profile of activity (pressure follows the
cycle with elasticity one) plus noise, AR(1) with innovations of 2 % unless stated.

==========================  =====================================================  ===========
process                     pressure path                                          truth
==========================  =====================================================  ===========
``flat-ar0/ar5/ar8``        flat; noise AR(1) ρ = 0, 0.5, 0.8                       no decline
``flat-rw``                 flat; random-walk noise (innovations 2 %)               no decline
``recession-step``          flat, one drop of 10–25 % in a recession year, no        no decline
                            recovery of the pressure
``recession-rebound``       as above, half of the drop recovered over two years      no decline
``weak-growth``             GDP grows 0.2–0.8 %/yr with random-walk noise; pressure  no decline
                            coupled to it (elasticity one) plus random-walk noise
``late-short``              flat, then falling 2–3 %/yr over the last 5–7 years       short decline
``break-decline``           flat until a break at 30–45 % of the window, then         sustained
                            falling 1–3 %/yr
``steady-decline``          falling 1–3 %/yr throughout                              sustained
``offshoring``              territorial falling 1–2 %/yr throughout; consumption     sustained,
                            flat (common noise, plus its own)                        basis gap
``unbalanced``              as ``steady-decline``, starting 3–8 years late and with  sustained,
                            one missing year in the first third of its span          own span
==========================  =====================================================  ===========
"""

from __future__ import annotations

import argparse
import json
import sys
from collections import Counter
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evidence._montecarlo import ar1
from evidence.panel import Panel

__all__ = ["PROCESSES", "TRUTH", "simulate_panel", "run", "confusion_table"]

PROCESSES = ("flat-ar0", "flat-ar5", "flat-ar8", "flat-rw", "recession-step", "recession-rebound",
             "weak-growth", "late-short", "break-decline", "steady-decline", "offshoring",
             "unbalanced")
TRUTH = {"flat-ar0": "no decline", "flat-ar5": "no decline", "flat-ar8": "no decline",
         "flat-rw": "no decline", "recession-step": "no decline",
         "recession-rebound": "no decline", "weak-growth": "no decline",
         "late-short": "short decline", "break-decline": "sustained decline",
         "steady-decline": "sustained decline", "offshoring": "sustained decline",
         "unbalanced": "sustained decline"}
UNITS_PER_PROCESS = 4
SEED = 20261202


def recession_starts(rng: np.random.Generator, n_years: int) -> list[int]:
    """One or two recession years shared by the units of a panel (common shocks)."""
    count = int(rng.integers(1, 3))
    return sorted(rng.choice(np.arange(3, n_years - 3), size=count, replace=False).tolist())


def _recessions(rng: np.random.Generator, n_years: int,
                starts: list[int]) -> tuple[np.ndarray, list[int]]:
    """Log-activity profile of the recessions starting in ``starts`` (unit-specific depths)."""
    profile = np.zeros(n_years)
    for s in starts:
        depth = 0.02 + rng.uniform(0.02, 0.04)  # one year's growth plus a fall of 2-4 %
        for k, share in enumerate((1.0, 0.5, 0.2)):
            if s + k < n_years:
                profile[s + k] -= depth * share
    return profile, starts


def _unit(rng: np.random.Generator, process: str, n_years: int,
          starts: list[int] | None = None) -> dict[str, np.ndarray]:
    t = np.arange(n_years, dtype=float)
    cycle, starts = _recessions(rng, n_years, starts or recession_starts(rng, n_years))
    growth = rng.uniform(0.002, 0.008) if process == "weak-growth" else 0.02
    if process == "weak-growth":
        gdp = growth * t + 0.01 * rng.standard_normal(n_years).cumsum() + cycle
    else:
        gdp = growth * t + cycle + 0.01 * ar1(rng.standard_normal(n_years), 0.5)
    rho = {"flat-ar0": 0.0, "flat-ar8": 0.8}.get(process, 0.5)
    if process in ("flat-rw", "weak-growth"):
        noise = 0.02 * rng.standard_normal(n_years).cumsum()
    else:
        noise = 0.02 * ar1(rng.standard_normal(n_years), rho)
    path = np.zeros(n_years)
    if process in ("recession-step", "recession-rebound"):
        s = starts[0]
        drop = rng.uniform(0.10, 0.25)
        path[s:] -= drop
        if process == "recession-rebound":
            path[s + 1:] += 0.25 * drop
            path[s + 2:] += 0.25 * drop
    elif process == "weak-growth":
        path = gdp - cycle
    elif process == "late-short":
        k = int(rng.integers(5, 8))
        path = -rng.uniform(0.02, 0.03) * np.maximum(t - (n_years - 1 - k), 0.0)
    elif process == "break-decline":
        b = round(rng.uniform(0.30, 0.45) * n_years)
        path = -rng.uniform(0.01, 0.03) * np.maximum(t - b, 0.0)
    elif process in ("steady-decline", "unbalanced"):
        path = -rng.uniform(0.01, 0.03) * t
    elif process == "offshoring":
        path = -rng.uniform(0.01, 0.02) * t
    pressure = 5.0 + path + cycle + noise
    consumption = pressure.copy()
    if process == "offshoring":
        consumption = 5.2 + cycle + noise + 0.01 * ar1(rng.standard_normal(n_years), 0.5)
    out = {"a": 8.0 + gdp, "p": pressure, "c": consumption}
    if process == "unbalanced":
        late = int(rng.integers(3, 9))
        hole = late + int(rng.integers(1, max(2, (n_years - late) // 3)))
        for key in out:
            out[key] = out[key].copy()
            out[key][:late] = np.nan
            out[key][hole] = np.nan
    return out


def simulate_panel(rng: np.random.Generator, n_years: int,
                   units_per_process: int = UNITS_PER_PROCESS) -> tuple[Panel, dict[str, str]]:
    """One mixed panel (levels, not logs) and the process of each unit."""
    names: list[str] = []
    cols: dict[str, list[Any]] = {"a": [], "p": [], "c": []}
    starts = recession_starts(rng, n_years)
    for process in PROCESSES:
        for k in range(units_per_process):
            unit = _unit(rng, process, n_years, starts)
            names.append(f"{process}-{k}")
            for key in cols:
                cols[key].append(np.exp(unit[key]))
    arrays = {key: np.column_stack(v) for key, v in cols.items()}
    panel = Panel.from_arrays(arrays, units=names, years=range(1990, 1990 + n_years))
    return panel, {name: name.rsplit("-", 1)[0] for name in names}


def run(reps: int = 30, years: tuple[int, ...] = (25, 30, 35), seed: int = SEED,
        trend_test: str = "perron-yabu", progress: bool = False, **criteria: Any) -> pd.DataFrame:
    """Grade ``reps`` panels per length; one row per graded unit (process, T, rung, flags, span).

    ``progress`` prints a line per graded panel on stderr (the first run simulates the
    calibration of every new recession design, about two seconds each; later runs read them from
    the cache)."""
    from evidence.grading import Criteria, grade

    crit = Criteria(trend_test=trend_test, subwindows=False, **criteria)
    rows = []
    for n_years in years:
        rng = np.random.default_rng([seed, n_years])
        for rep in range(reps):
            panel, process = simulate_panel(rng, n_years)
            res = grade(panel, ["p"], "a", criteria=crit, consumption={"p": "c"},
                        latest_break=False)
            if progress:
                print(f"T={n_years}: panel {rep + 1} of {reps} graded", file=sys.stderr, flush=True)
            for row in res.table.itertuples():
                rows.append({"process": process[row.unit], "T": n_years, "rung": row.rung,
                             "flags": row.flags, "span": row.span, "years": row.years,
                             "basis_gap": "basis-gap" in row.flags})
            for row in res.excluded.itertuples():
                if row.reason.startswith("unit excluded"):
                    rows.append({"process": process[row.unit], "T": n_years, "rung": "excluded",
                                 "flags": "", "span": "", "years": 0, "basis_gap": False})
    return pd.DataFrame(rows)


def confusion_table(units: pd.DataFrame) -> pd.DataFrame:
    """Shares of each rung per process (rows) over all lengths, in %, with the unit counts."""
    from evidence.grading import RUNGS

    table = pd.crosstab(units["process"], units["rung"], normalize="index") * 100
    table = table.reindex(index=list(PROCESSES), columns=[r for r in (*RUNGS, "excluded")
                                                          if r in table.columns]).fillna(0.0)
    table["n"] = units["process"].value_counts().reindex(list(PROCESSES)).to_numpy()
    table["basis-gap %"] = units.groupby("process")["basis_gap"].mean().reindex(list(PROCESSES)) * 100
    return table


def criteria_check(units: pd.DataFrame) -> dict[str, float]:
    """The measures of issue 12's done-criteria, in shares."""
    absolute = units["rung"].isin(("absolute-significant", "absolute-sustained", "target-consistent"))
    sustained = units["rung"].isin(("absolute-sustained", "target-consistent"))
    null = units["process"].map(TRUTH) == "no decline"
    real = units["process"].isin(("break-decline", "steady-decline", "offshoring", "unbalanced"))
    unb = units[units["process"] == "unbalanced"]
    own = float((unb["years"] < unb["T"]).mean()) if len(unb) else float("nan")
    return {"non-decoupling graded absolute-significant+": float(absolute[null].mean()),
            "planted basis gaps flagged": float(units.loc[units["process"] == "offshoring",
                                                          "basis_gap"].mean()),
            "recession-step graded absolute-sustained": float(
                sustained[units["process"] == "recession-step"].mean()),
            "real sustained declines absolute-significant+": float(absolute[real].mean()),
            "real sustained declines absolute-sustained": float(sustained[real].mean()),
            "unbalanced decliners graded on their own (shorter) span": own}


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--reps", type=int, default=30)
    parser.add_argument("--test", default="perron-yabu")
    parser.add_argument("--years", default="25,30,35")
    parser.add_argument("--write", action="store_true")
    args = parser.parse_args(argv)
    years = tuple(int(v) for v in args.years.split(","))
    units = run(reps=args.reps, years=years, trend_test=args.test, progress=True)
    table = confusion_table(units)
    with pd.option_context("display.width", 200, "display.max_columns", 20):
        print(table.round(1).to_string())
        for T, part in units.groupby("T"):
            print(f"T={T}: " + ", ".join(f"{k} {100 * v:.1f} %" for k, v in criteria_check(part).items()))
        print("all: " + ", ".join(f"{k} {100 * v:.1f} %" for k, v in criteria_check(units).items()))
    if args.write:
        entries = []
        for (process, T), part in units.groupby(["process", "T"]):
            absolute = part["rung"].isin(("absolute-significant", "absolute-sustained",
                                          "target-consistent"))
            rate = float(absolute.mean())
            entries.append({"test": "grade", "options": f"trend_test={args.test}",
                            "dgp": process, "hypothesis": "null" if TRUTH[process] == "no decline"
                            else "alternative", "n_units": UNITS_PER_PROCESS * len(PROCESSES),
                            "n_years": int(T), "rejection": rate,
                            "mc_se": float(np.sqrt(max(rate * (1 - rate), 1e-12) / len(part))),
                            "reps": len(part), "counts": dict(Counter(part["rung"]))})
        data = {"family": "grade", "generated_by": "python -m evidence._grading_mc --write",
                "seed": SEED, "alpha": 0.05,
                "note": "rejection = share graded absolute-significant or higher", "entries": entries}
        path = Path(__file__).resolve().parent / "_sizes" / "grade.json"
        path.parent.mkdir(exist_ok=True)
        path.write_text(json.dumps(data, indent=1, sort_keys=True) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
