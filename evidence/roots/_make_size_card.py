"""Regenerate the size card of the unit-root and dependence tests (``evidence/_sizes/roots.json``).

Run: ``nice -n 10 python -m evidence.roots._make_size_card`` (well under an hour on one core at
the default ``--reps 300``; the file records the CPU time it took; ``--quick`` for a smoke run).
Every entry is the rejection rate at 5 % nominal of one test with one set of options
under one data-generating process of :mod:`evidence._montecarlo`, for N = 20 units and T = 30 or
40 years, computed by the public functions exactly as a user calls them. Processes:

* unit-root nulls — random walks with white-noise increments; with AR(0.5) increments; with a
  common factor in the increments (second-generation tests); trend "trend" uses drifting walks;
* stationarity nulls — white noise; AR(0.5) (around a linear trend for trend "trend");
* dependence nulls — independent white noise, AR(0.8) and random walks;
* alternatives (power) — stationary AR(0.8) (around a trend for "trend") against a unit root;
  random walks against stationarity; a common factor against independence.

Single-series tests are applied to the first two units of each panel (two draws per panel);
Zivot–Andrews and Lee–Strazicich (one break) with the model the battery uses (level for trend
"constant", level and trend for "trend"). Lee–Strazicich with ``inference="asymptotic"`` has no
p-value: a draw rejects when the statistic is below the 5 % critical value. The fast non-default
options (``inference="asymptotic"``, unfiltered dependence tests) are measured on half as many
panels, under the nulls only (their size is what their results report).
"""

from __future__ import annotations

import argparse
import json
import math
import sys
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from evidence._montecarlo import rejection_rates
from evidence.panel import Panel
from evidence.roots import dependence, panel as panel_tests, series
from evidence.roots._common import card_options

__all__ = ["CELLS", "make_card", "markdown", "summary_table", "main"]

SEED = 20261202
#: Panels per null process relative to ``--reps``: the cheap groups get more, for a smaller s.e.
GROUP_REPS = {"unit_root": 1, "factor": 2, "stationary": 2, "dependence": 1}
N_UNITS = 20
YEARS = (30, 40)
SINGLE_UNITS = 2
#: Default panels per null process (``--reps``) and per alternative (``--power-reps``).
REPS, POWER_REPS = 300, 200
#: Tests applied to single series (their entries have ``n_units`` 1).
SINGLE = ("ADF", "Phillips-Perron", "DF-GLS", "KPSS", "Zivot-Andrews", "Lee-Strazicich")
OUTPUT = Path(__file__).resolve().parents[1] / "_sizes" / "roots.json"


@dataclass(frozen=True)
class Cell:
    """One process: where to draw, what to call it, which group of tests it serves."""

    group: str
    dgp: str
    params: tuple[tuple[str, Any], ...]
    label: str
    hypothesis: str
    trend: str
    column: str = "y"


def _cells() -> list[Cell]:
    cells = []
    for trend, drift in (("constant", 0.0), ("trend", 1.0)):
        walk = "drifting random walks" if drift else "random walks"
        cells += [
            Cell("unit_root", "unit_root", (("drift", drift), ("rho", 0.0)),
                 f"{walk}, white-noise increments", "null", trend),
            Cell("unit_root", "unit_root", (("drift", drift), ("rho", 0.5)),
                 f"{walk}, AR(0.5) increments", "null", trend),
            Cell("factor", "unit_root", (("drift", drift), ("factor", 1.0), ("rho", 0.0)),
                 f"{walk}, common factor", "null", trend),
            Cell("factor", "unit_root", (("drift", drift), ("factor", 1.0), ("rho", 0.5)),
                 f"{walk}, common factor and AR(0.5) increments", "null", trend),
            Cell("unit_root", "trend_ar" if drift else "ar",
                 (("rho", 0.8),) + ((("slope", 0.02),) if drift else ()),
                 "stationary AR(0.8)" + (" around a trend" if drift else ""), "alternative", trend),
            Cell("stationary", "trend_ar" if drift else "ar",
                 (("rho", 0.0),) + ((("slope", 0.02),) if drift else ()),
                 "white noise" + (" around a trend" if drift else ""), "null", trend),
            Cell("stationary", "trend_ar" if drift else "ar",
                 (("rho", 0.5),) + ((("slope", 0.02),) if drift else ()),
                 "AR(0.5)" + (" around a trend" if drift else ""), "null", trend),
            Cell("stationary", "unit_root", (("drift", drift), ("rho", 0.0)), walk, "alternative",
                 trend),
        ]
    cells += [
        Cell("dependence", "ar", (("rho", 0.0),), "independent white noise", "null", "constant"),
        Cell("dependence", "ar", (("rho", 0.8),), "independent AR(0.8)", "null", "constant"),
        Cell("dependence", "unit_root", (("rho", 0.0),), "independent random walks", "null",
             "constant"),
        Cell("dependence", "unit_root", (("factor", 1.0), ("rho", 0.0)),
             "random walks with a common factor", "alternative", "constant"),
    ]
    return cells


CELLS = _cells()


def _key(test: str, inference: str, trend: str) -> str:
    return f"{test}|{card_options(inference, trend)}"


def _unit_root_tests(data: Panel, trend: str, column: str, inference: str) -> dict[str, float]:
    out: dict[str, float] = {}
    ips = panel_tests.ips_test(data, column, trend=trend, inference=inference)
    out[_key("IPS W-tbar", inference, trend)] = ips.pvalue
    fisher = panel_tests.fisher_test(data, column, trend=trend, inference=inference)
    for code, name in (("p", "Maddala-Wu P"), ("z", "Choi Z"), ("pm", "Choi Pm"),
                       ("l", "Choi L*")):
        out[_key(f"Fisher-ADF ({name})", inference, trend)] = \
            fisher.details["combinations"][code]["pvalue"]
    pp = panel_tests.fisher_test(data, column, trend=trend, unit_test="pp",
                                 inference=inference)
    for code, name in (("p", "Maddala-Wu P"), ("z", "Choi Z"), ("pm", "Choi Pm"),
                       ("l", "Choi L*")):
        out[_key(f"Fisher-PP ({name})", inference, trend)] = \
            pp.details["combinations"][code]["pvalue"]
    out[_key("LLC", inference, trend)] = panel_tests.llc_test(
        data, column, trend=trend, inference=inference).pvalue
    out[_key("Breitung", inference, trend)] = panel_tests.breitung_test(
        data, column, trend=trend, inference=inference).pvalue
    out.update(_cips(data, trend, column, inference))
    for k, unit in enumerate(data.units[:SINGLE_UNITS]):
        y = data.series(unit, column)
        for name, func in (("ADF", series.adf_test), ("Phillips-Perron", series.pp_test),
                           ("DF-GLS", series.dfgls_test)):
            out[_key(name, inference, trend) + f"#{k}"] = func(y, trend=trend,
                                                               inference=inference).pvalue
        out.update(_break_tests(y, trend, k, inference))
    return out


def _break_tests(y: Any, trend: str, k: int, inference: str) -> dict[str, float]:
    """Zivot–Andrews and Lee–Strazicich (one break) with the model the battery uses for
    ``trend``; with ``inference="asymptotic"`` Lee–Strazicich has no p-value, so its draw is 0
    (reject at 5 %) or 1."""
    model = "both" if trend == "trend" else "level"
    za = series.za_test(y, model=model, inference=inference)
    ls = series.lee_strazicich_test(y, model=model, inference=inference)
    ls_p = (ls.pvalue if inference == "simulated"
            else 0.0 if ls.statistic < ls.critical_values[0.05] else 1.0)
    return {f"Zivot-Andrews|inference={inference}; model={model}#{k}": za.pvalue,
            f"Lee-Strazicich|inference={inference}; model={model}; n_breaks=1#{k}": ls_p}


def _cips(data: Panel, trend: str, column: str, inference: str = "simulated") -> dict[str, float]:
    res = panel_tests.cips_test(data, column, trend=trend, inference=inference)
    return {_key("CIPS*", inference, trend): res.pvalue}


def _factor_tests(data: Panel, trend: str, column: str, inference: str) -> dict[str, float]:
    return _cips(data, trend, column, inference)


def _stationarity_tests(data: Panel, trend: str, column: str, inference: str) -> dict[str, float]:
    out: dict[str, float] = {}
    out[_key("Hadri (robust)", inference, trend)] = panel_tests.hadri_test(
        data, column, trend=trend, inference=inference).pvalue
    for k, unit in enumerate(data.units[:SINGLE_UNITS]):
        out[_key("KPSS", inference, trend) + f"#{k}"] = series.kpss_test(
            data.series(unit, column), trend=trend, inference=inference).pvalue
    return out


def _dependence_tests(data: Panel, trend: str, column: str, inference: str) -> dict[str, float]:
    out: dict[str, float] = {}
    funcs = (("Pesaran CD", dependence.pesaran_cd_test), ("Breusch-Pagan LM", dependence.lm_test),
             ("Pesaran scaled LM", dependence.scaled_lm_test),
             ("Baltagi-Feng-Kao bias-corrected LM", dependence.bias_corrected_lm_test))
    for name, func in funcs:
        if inference == "simulated":
            out[_key(name, "simulated", trend)] = func(data, column, trend=trend).pvalue
        else:
            out[_key(name, "asymptotic", trend)] = func(data, column, trend=trend,
                                                        inference="asymptotic").pvalue
            out[_key(f"{name} (unfiltered)", "asymptotic", trend)] = func(
                data, column, trend=trend, prewhiten=False).pvalue
    return out


_GROUPS = {"unit_root": _unit_root_tests, "factor": _factor_tests,
           "stationary": _stationarity_tests, "dependence": _dependence_tests}


def make_card(*, reps: int, power_reps: int, years: tuple[int, ...] = YEARS,
              groups: tuple[str, ...] = tuple(_GROUPS), progress: bool = True) -> dict[str, Any]:
    """Simulate every cell and return the card (the JSON written by :func:`main`)."""
    entries = []
    clock = time.process_time()
    runs = [(n_years, c, cell, inference) for n_years in years for c, cell in enumerate(CELLS)
            for inference in ("simulated", "asymptotic")
            if cell.group in groups and (inference == "simulated" or cell.hypothesis == "null")]
    for n_years, c, cell, inference in runs:
        start = time.time()
        count = reps * GROUP_REPS[cell.group] if cell.hypothesis == "null" else power_reps
        if inference == "asymptotic":
            count = max(count // 2, 1)
        func = _GROUPS[cell.group]
        rates = rejection_rates(
            lambda d, f=func, tr=cell.trend, col=cell.column, inf=inference: f(d, tr, col, inf),
            cell.dgp, N_UNITS, n_years, reps=count, seed=SEED + 1000 * n_years + c,
            params=dict(cell.params))
        for key, rate in sorted(rates.items()):
            test, options = key.split("|")
            single = test in SINGLE
            entries.append({"test": test, "options": options, "dgp": cell.label,
                            "hypothesis": cell.hypothesis,
                            "n_units": 1 if single else N_UNITS, "n_years": n_years,
                            "rejection": round(rate["rejection"], 4),
                            "mc_se": round(rate["mc_se"], 4), "reps": int(rate["reps"]),
                            "failed": round(rate["failed"], 4)})
        if progress:
            print(f"T={n_years} {cell.trend:<8} {inference:<10} {cell.hypothesis:<11} "
                  f"{cell.label:<55} {count} panels, {time.time() - start:.0f}s",
                  file=sys.stderr, flush=True)
    group_reps = {g: reps * GROUP_REPS[g] for g in groups}
    return {"family": "roots", "generated_by": "python -m evidence.roots._make_size_card "
                                               f"--reps {reps} --power-reps {power_reps}",
            "seed": SEED, "alpha": 0.05, "n_units": N_UNITS,
            "reps": {"null_panels": group_reps, "alternative_panels": power_reps,
                     "single_series_per_panel": SINGLE_UNITS,
                     "asymptotic_options": "half the panels of the default, nulls only"},
            "mc_se_at_5pct": {g: round(math.sqrt(0.05 * 0.95 / n), 4)
                              for g, n in group_reps.items()},
            "cpu_seconds": round(time.process_time() - clock),
            "note": f"single-series tests: the first {SINGLE_UNITS} units of each panel (n_units "
                    "1, draws = panels x units); null cells of the factor and stationarity groups "
                    "on twice --reps panels; asymptotic options on half as many, under the nulls "
                    "only; each entry's mc_se is sqrt(r (1 - r) / draws)",
            "entries": entries}


_ORDER = ("ADF", "Phillips-Perron", "DF-GLS", "KPSS", "Zivot-Andrews", "Lee-Strazicich",
          "IPS W-tbar", "Fisher-ADF (Choi Z)", "Fisher-ADF (Maddala-Wu P)",
          "Fisher-ADF (Choi Pm)", "Fisher-ADF (Choi L*)", "Fisher-PP (Choi Z)",
          "Fisher-PP (Maddala-Wu P)", "Fisher-PP (Choi Pm)", "Fisher-PP (Choi L*)", "LLC", "Breitung", "Hadri (robust)", "CIPS*", "Pesaran CD",
          "Breusch-Pagan LM", "Pesaran scaled LM", "Baltagi-Feng-Kao bias-corrected LM")


def _options_label(options: str) -> str:
    return options.replace("inference=", "").replace("; trend=", ", ").replace("; ", ", ")


def _pct(value: float) -> str:
    text = f"{100 * value:.1f}"
    return text if 0.03 <= value <= 0.075 else f"**{text}**"


def summary_table(card: dict[str, Any]) -> str:
    """One row per test and options: the range of its sizes over the null processes and its power
    against the alternative, at each T (bold: a size outside [3 %, 7.5 %])."""
    entries = card["entries"]
    years = sorted({e["n_years"] for e in entries})
    groups: dict[tuple[str, str], list[dict[str, Any]]] = {}
    for e in entries:
        groups.setdefault((e["test"], e["options"]), []).append(e)
    rank = {name: i for i, name in enumerate(_ORDER)}
    head = ("| test | inference, trend | " + " | ".join(f"size T = {t}" for t in years) + " | "
            + " | ".join(f"power T = {t}" for t in years) + " | alternative |")
    lines = [head, "|---|---|" + "---|" * (2 * len(years) + 1)]

    def order(key: tuple[str, str]) -> tuple[int, str, int, str]:
        base = key[0].replace(" (unfiltered)", "")
        return (rank.get(base, len(rank)), key[0], 0 if "simulated" in key[1] else 1, key[1])

    for key in sorted(groups, key=order):
        rows = groups[key]
        sizes, powers = [], []
        for t in years:
            null = [r["rejection"] for r in rows if r["n_years"] == t and r["hypothesis"] == "null"]
            alt = [r["rejection"] for r in rows if r["n_years"] == t
                   and r["hypothesis"] == "alternative"]
            sizes.append("" if not null else _pct(min(null)) if min(null) == max(null) else
                         f"{_pct(min(null))}–{_pct(max(null))}")
            powers.append(f"{100 * alt[0]:.1f}" if alt else "—")
        alternative = next((r["dgp"] for r in rows if r["hypothesis"] == "alternative"), "—")
        lines.append(f"| {key[0]} | {_options_label(key[1])} | " + " | ".join(sizes) + " | "
                     + " | ".join(powers) + f" | {alternative} |")
    return "\n".join(lines) + "\n"


def markdown(card: dict[str, Any]) -> str:
    """The card as Markdown: the summary (:func:`summary_table`), then test × process × T →
    rejection %, sizes then power."""
    entries = card["entries"]
    lines = ["**Summary**: range of the size over the null processes (bold outside [3 %, 7.5 %]) "
             "and power, in %, N = 20:", "", summary_table(card)]
    for hypothesis, title in (("null", "Size (5 % nominal; rejection rate under H0)"),
                              ("alternative", "Power (rejection rate at 5 % under the alternative)")):
        rows: dict[tuple[str, str, str], dict[int, str]] = {}
        for e in entries:
            if e["hypothesis"] != hypothesis:
                continue
            key = (e["test"], _options_label(e["options"]), e["dgp"])
            rows.setdefault(key, {})[e["n_years"]] = (_pct(e["rejection"]) if hypothesis == "null"
                                                      else f"{100 * e['rejection']:.1f}")
        if not rows:
            continue
        years = sorted({e["n_years"] for e in entries})
        lines += [f"**{title}**, N = {card.get('n_units', 20)} (single-series tests: draws of "
                  "single series; each entry's draws and Monte Carlo s.e. are in the JSON):", "",
                  "| test | inference, trend | process | " + " | ".join(f"T = {t}" for t in years)
                  + " |", "|---|---|---|" + "---|" * len(years)]
        rank = {name: i for i, name in enumerate(_ORDER)}

        def order(key: tuple[str, str, str]) -> tuple[int, str, str, str]:
            base = key[0].replace(" (unfiltered)", "")
            return (rank.get(base, len(rank)), key[0], key[1], key[2])

        for key in sorted(rows, key=order):
            test, options, dgp = key
            cells = " | ".join(rows[key].get(t, "") for t in years)
            lines.append(f"| {test} | {options} | {dgp} | {cells} |")
        lines.append("")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--reps", type=int, default=REPS, help="panels per null process")
    parser.add_argument("--power-reps", type=int, default=POWER_REPS,
                        help="panels per alternative")
    parser.add_argument("--quick", action="store_true", help="a smoke run (few panels, T = 30)")
    parser.add_argument("--output", type=Path, default=OUTPUT)
    parser.add_argument("--groups", default=",".join(_GROUPS),
                        help="groups to simulate (others are kept from --output): "
                             + ", ".join(_GROUPS))
    parser.add_argument("--markdown", action="store_true",
                        help="print the card at --output as Markdown tables and stop")
    args = parser.parse_args(argv)
    if args.markdown:
        print(markdown(json.loads(args.output.read_text(encoding="utf-8"))))
        return 0
    groups = tuple(g.strip() for g in args.groups.split(",") if g.strip())
    unknown = sorted(set(groups) - set(_GROUPS))
    if unknown:
        parser.error(f"unknown groups {unknown}; use {', '.join(_GROUPS)}")
    if args.quick:
        card = make_card(reps=20, power_reps=10, years=(30,), groups=groups)
    else:
        card = make_card(reps=args.reps, power_reps=args.power_reps, groups=groups)
    if set(groups) != set(_GROUPS) and args.output.exists():
        old = json.loads(args.output.read_text(encoding="utf-8"))
        made = {(e["test"], e["options"], e["dgp"], e["n_years"]) for e in card["entries"]}
        kept = [e for e in old["entries"]
                if (e["test"], e["options"], e["dgp"], e["n_years"]) not in made]
        card["entries"] = kept + card["entries"]
    args.output.parent.mkdir(parents=True, exist_ok=True)
    args.output.write_text(json.dumps(card, indent=1, sort_keys=True) + "\n", encoding="utf-8")
    bad = [e for e in card["entries"] if e["hypothesis"] == "null"
           and e["options"].startswith("inference=simulated")
           and not (0.03 <= e["rejection"] <= 0.075) and math.isfinite(e["rejection"])]
    for e in bad:
        print(f"outside [3 %, 7.5 %]: {e['test']} {e['options']} {e['dgp']} T={e['n_years']}: "
              f"{100 * e['rejection']:.1f} %", file=sys.stderr)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
