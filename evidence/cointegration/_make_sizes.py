"""Regenerate the size card of the cointegration and elasticity tests (``evidence/_sizes/``).

Run ``python -m evidence.cointegration._make_sizes`` (all tests; a few hours on one core), or a
part of it, e.g. ``--tests pedroni,kao --out part1.json`` and later ``--merge part1.json
part2.json``. Each entry is a seeded Monte Carlo (:mod:`evidence._montecarlo`): ``reps`` panels
from one process, each test run at its defaults with ``reps`` bootstrap replications
(``BOOTSTRAP_REPS``) and, from the same runs, its asymptotic p-values. A bootstrap p-value
``(1 + #)/(B + 1)`` rejects at 5 % when it is at most 0.05 (with ``B = 99`` that is exactly 5 of
100 ranks); an asymptotic one when it is below 0.05.
"""

from __future__ import annotations

import argparse
import json
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np

from evidence._montecarlo import simulate
from evidence.parallel import task_seeds

__all__ = ["main", "CONFIGS", "run_config", "markdown"]

SEED = 20261202
MC_REPS = 400
BOOTSTRAP_REPS = 99
N_UNITS = 20
YEARS = (30, 40)
ROOT = Path(__file__).resolve().parents[1] / "_sizes"

#: Processes under H0 (and one alternative) for the residual-based and error-correction tests.
COINTEGRATION_NULLS = [
    ("walks", {}, "independent random walks"),
    ("walks", {"drift": 1.0}, "independent random walks, x drifting (2 %/yr with 2 % shocks)"),
    ("walks", {"rho": 0.5}, "independent I(1) series, AR(0.5) differences"),
    ("walks", {"drift": 1.0, "rho": 0.5}, "independent I(1), x drifting, AR(0.5) differences"),
    ("walks", {"drift": 1.0, "factor": 0.5},
     "independent I(1), x drifting, a common factor (half the shock variance)"),
    ("walks", {"rho": 0.8}, "independent I(1) series, AR(0.8) differences"),
    ("walks", {"drift": 1.0, "rho": 0.8}, "independent I(1), x drifting, AR(0.8) differences"),
]
COINTEGRATION_ALTERNATIVE = ("cointegrated", {"drift": 1.0, "rho": 0.5},
                             "cointegrated, slope 0.7, AR(0.5) error, x drifting")
CAUSALITY_NULLS = [
    ("granger", {"rho": 0.7}, "no causality, stationary AR(0.7) series"),
    ("granger", {"rho": 0.7, "factor": 0.5}, "no causality, AR(0.7), a common factor"),
    ("granger", {"rho": 0.8, "factor": 0.5}, "no causality, AR(0.8), a common factor"),
]
CAUSALITY_ALTERNATIVE = ("granger", {"rho": 0.7, "effect": 0.3}, "x_t-1 enters y_t (0.3), AR(0.7)")
HOMOGENEITY_NULLS = [
    ("slopes", {"rho": 0.0}, "homogeneous slopes, iid errors"),
    ("slopes", {"rho": 0.5}, "homogeneous slopes, AR(0.5) errors"),
    ("slopes", {"rho": 0.8, "rho_x": 0.8}, "homogeneous slopes, AR(0.8) errors and regressor"),
]
HOMOGENEITY_ALTERNATIVE = ("slopes", {"rho": 0.5, "spread": 0.3},
                           "slopes 1 + 0.3 N(0, 1) across units, AR(0.5) errors")


def _relation(func_name: str) -> Callable[[Any, int], Any]:
    from evidence.cointegration import panel as tests

    func = getattr(tests, func_name)
    return lambda panel, seed: func(panel, "y", "x", reps=BOOTSTRAP_REPS, seed=seed)


def _homogeneity(panel: Any, seed: int) -> Any:
    from evidence.elasticity.homogeneity import slope_homogeneity_test

    return [slope_homogeneity_test(panel, "y", "x", log=False, reps=BOOTSTRAP_REPS, seed=seed)]


def _causality(panel: Any, seed: int) -> Any:
    from evidence.cointegration.causality import dumitrescu_hurlin_test

    return [dumitrescu_hurlin_test(panel, "y", "x", reps=BOOTSTRAP_REPS, seed=seed,
                                   inference="bootstrap")]


#: test family → (family file, runner, nulls, alternative)
CONFIGS: dict[str, tuple[str, Callable[[Any, int], Any], list, tuple]] = {
    "pedroni": ("cointegration", _relation("pedroni_test"), COINTEGRATION_NULLS,
                COINTEGRATION_ALTERNATIVE),
    "kao": ("cointegration", _relation("kao_test"), COINTEGRATION_NULLS, COINTEGRATION_ALTERNATIVE),
    "westerlund": ("cointegration", _relation("westerlund_test"), COINTEGRATION_NULLS,
                   COINTEGRATION_ALTERNATIVE),
    "dumitrescu-hurlin": ("cointegration", _causality, CAUSALITY_NULLS, CAUSALITY_ALTERNATIVE),
    "homogeneity": ("elasticity", _homogeneity, HOMOGENEITY_NULLS, HOMOGENEITY_ALTERNATIVE),
}


def _pvalue_of(result: Any) -> tuple[float, float]:
    """The default (bootstrap) p-value and the asymptotic one of a result."""
    details = result.details
    asym = details.get("asymptotic_pvalue", details.get("z_bar_tilde_pvalue", np.nan))
    return float(result.pvalue), float(asym)


def run_config(runner: Callable[[Any, int], Any], dgp: str, params: dict[str, Any], label: str,
               n_years: int, *, reps: int, seed: int, hypothesis: str) -> list[dict[str, Any]]:
    """Rejection rates of every statistic of a family at 5 %, bootstrap and asymptotic."""
    boot: dict[str, list[bool]] = {}
    asym: dict[str, list[bool]] = {}
    for i, task in enumerate(task_seeds(seed, reps)):
        panel = simulate(dgp, N_UNITS, n_years, rng=np.random.default_rng(task), **params)
        for res in runner(panel, i):
            p_boot, p_asym = _pvalue_of(res)
            boot.setdefault(res.test, []).append(bool(p_boot <= 0.05))
            asym.setdefault(res.test, []).append(bool(p_asym < 0.05))
    entries = []
    for test in boot:
        for options, hits in (("inference=bootstrap", boot[test]), ("inference=asymptotic", asym[test])):
            rate = float(np.mean(hits))
            entries.append({"test": test, "options": options, "dgp": label, "hypothesis": hypothesis,
                            "n_units": N_UNITS, "n_years": n_years, "rejection": round(rate, 4),
                            "mc_se": round(float(np.sqrt(max(rate * (1 - rate), 1e-12) / reps)), 4),
                            "reps": reps, "process": {"name": dgp, **params}})
    return entries


def collect(tests: list[str], *, reps: int, seed: int) -> dict[str, list[dict[str, Any]]]:
    """Entries for the given test families, grouped by family file."""
    out: dict[str, list[dict[str, Any]]] = {}
    for name in tests:
        family, runner, nulls, alternative = CONFIGS[name]
        for n_years in YEARS:
            for k, (dgp, params, label) in enumerate(nulls):
                start = time.time()
                rows = run_config(runner, dgp, params, label, n_years, reps=reps,
                                  seed=seed + 1000 * k + n_years, hypothesis="null")
                out.setdefault(family, []).extend(rows)
                print(f"{name} T={n_years} {label}: {time.time() - start:.0f}s", flush=True)
            dgp, params, label = alternative
            rows = run_config(runner, dgp, params, label, n_years, reps=max(reps // 2, 50),
                              seed=seed + 999 + n_years, hypothesis="alternative")
            out.setdefault(family, []).extend(r for r in rows if r["options"] == "inference=bootstrap")
    return out


def write(entries: dict[str, list[dict[str, Any]]], *, reps: int, seed: int) -> None:
    """Write (replace) the family files with these entries."""
    generated_by = "python -m evidence.cointegration._make_sizes"
    for family, rows in entries.items():
        rows = sorted(rows, key=lambda r: (r["test"], r["options"], r["hypothesis"], r["n_years"],
                                           r["dgp"]))
        # a merged card may hold families simulated with different numbers of panels: the
        # largest is recorded here, each entry keeps its own ``reps``
        most = max((r["reps"] for r in rows if r["hypothesis"] == "null"), default=reps)
        data = {"family": family, "generated_by": generated_by, "seed": seed, "alpha": 0.05,
                "mc_reps": most, "bootstrap_reps": BOOTSTRAP_REPS,
                "rule": "bootstrap: p <= 0.05 with p = (1 + #)/(B + 1); asymptotic: p < 0.05",
                "entries": rows}
        (ROOT / f"{family}.json").write_text(json.dumps(data, indent=1, ensure_ascii=False) + "\n",
                                             encoding="utf-8")


def markdown(family: str) -> str:
    """The family's section of ``docs/methods/size.md``, from its JSON file."""
    data = json.loads((ROOT / f"{family}.json").read_text(encoding="utf-8"))
    rows = data["entries"]
    years = sorted({r["n_years"] for r in rows})
    tests = list(dict.fromkeys(r["test"] for r in rows))
    per_test = {t: max(r["reps"] for r in rows if r["test"] == t and r["hypothesis"] == "null")
                for t in tests}
    counts = sorted(set(per_test.values()))
    if len(counts) == 1:
        panels = f"{counts[0]} panels per process"
    else:
        families = lambda n: ", ".join(dict.fromkeys(  # noqa: E731
            t.split()[0] for t, k in per_test.items() if k == n))
        panels = f"{counts[-1]} panels per process for {families(counts[-1])}, " + ", ".join(
            f"{n} for {families(n)}" for n in counts[:-1])
    se = " / ".join(f"{100 * (0.05 * 0.95 / n) ** 0.5:.1f}" for n in reversed(counts))
    lines = [f"Generated by `{data['generated_by']}` (seed {data['seed']}, {panels}, "
             f"N = {rows[0]['n_units']}, bootstrap {data['bootstrap_reps']} "
             f"replications; {data['rule']}). Rejection rates at 5 % nominal, in %; Monte Carlo "
             f"s.e. about {se} points at 5 %. "
             "**Default** is the bootstrap; the asymptotic p-values "
             "are the fast option, whose results quote these figures when they fall outside "
             "[3 %, 7.5 %].", ""]
    for test in tests:
        mine = [r for r in rows if r["test"] == test]
        head = " | ".join(f"T={t} default | T={t} asymptotic" for t in years)
        lines += [f"**{test}**", "", f"| process | {head} |",
                  "|---|" + "---|" * (2 * len(years))]
        for label in dict.fromkeys(r["dgp"] for r in mine if r["hypothesis"] == "null"):
            cells = []
            for t in years:
                for options in ("inference=bootstrap", "inference=asymptotic"):
                    hit = [r for r in mine if r["dgp"] == label and r["n_years"] == t
                           and r["options"] == options and r["hypothesis"] == "null"]
                    cells.append(f"{100 * hit[0]['rejection']:.1f}" if hit else "")
            lines.append(f"| {label} | " + " | ".join(cells) + " |")
        power = [r for r in mine if r["hypothesis"] == "alternative"]
        if power:
            text = ", ".join(f"T={r['n_years']} {100 * r['rejection']:.0f} %" for r in
                             sorted(power, key=lambda r: r["n_years"]))
            lines.append(f"| power (default): {power[0]['dgp']} | {text} |" + " |" * (2 * len(years) - 1))
        lines.append("")
    low, high = 0.03, 0.075
    face = [r for r in rows if r["hypothesis"] == "null" and r["options"] == "inference=bootstrap"
            and not low <= r["rejection"] <= high]
    if face:
        near = all(r["rejection"] + 2 * r["mc_se"] >= low and r["rejection"] - 2 * r["mc_se"] <= high
                   for r in face)
        lines += ["Default cells outside [3 %, 7.5 %] at face value ("
                  + ("all within two Monte Carlo s.e. of the band" if near else
                     "some more than two Monte Carlo s.e. beyond the band") + "): " + "; ".join(
                      f"{r['test']}, T={r['n_years']}, {r['dgp']}: {100 * r['rejection']:.1f} %"
                      for r in face) + ".", ""]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> None:
    """Command line: simulate (all or ``--tests``), or ``--merge`` partial files."""
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--tests", default=",".join(CONFIGS))
    parser.add_argument("--reps", type=int, default=MC_REPS)
    parser.add_argument("--seed", type=int, default=SEED)
    parser.add_argument("--out", default=None, help="write a partial file instead of the card")
    parser.add_argument("--merge", nargs="*", default=None, help="partial files to merge")
    parser.add_argument("--markdown", default=None, help="print a family's size.md section")
    args = parser.parse_args(argv)
    if args.markdown:
        print(markdown(args.markdown))
        return
    if args.merge:
        merged: dict[str, list[dict[str, Any]]] = {}
        for part in args.merge:
            for family, rows in json.loads(Path(part).read_text(encoding="utf-8")).items():
                merged.setdefault(family, []).extend(rows)
        write(merged, reps=args.reps, seed=args.seed)
        return
    entries = collect([t.strip() for t in args.tests.split(",") if t.strip()], reps=args.reps,
                      seed=args.seed)
    if args.out:
        Path(args.out).write_text(json.dumps(entries, ensure_ascii=False), encoding="utf-8")
    else:
        write(entries, reps=args.reps, seed=args.seed)


if __name__ == "__main__":
    main()
