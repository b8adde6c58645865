"""Study step ``roots``: the unit-root battery on the log of each pressure and of the activity.

Levels are tested with a constant and a linear trend (the series trend; a referee expects the
trend term), first differences with a constant. The report shows, per series, the panel tests
and the count of unit decisions; the unit-by-unit table is folded under them. Every cell that
reads ``n/a`` has its reason in the notes, and the decision rule is stated.
"""

from __future__ import annotations

import math
from collections import Counter
from typing import Any

import pandas as pd

from evidence._typing import Trend
from evidence.panel import Panel, derived_name
from evidence.results import format_pvalue
from evidence.roots import root_battery
from evidence.roots.battery import PANEL_TESTS, SERIES_TESTS
from evidence.study.spec import StudySpec
from evidence.study.steps._base import StepOutput, TableOut, data_notes, safe_name
from evidence.tables import render_frame
from evidence.tables._names import test_name

__all__ = ["run", "RULE", "LEVEL_TREND"]

#: Deterministic terms of the levels: the log series trend, so a constant and a linear trend.
LEVEL_TREND: Trend = "trend"
RULE = ("Decision rule at 5 %: a transform is stationary when every unit-root test (ADF, PP, "
        "DF-GLS, IPS, CIPS, ...) rejects and no stationarity test (KPSS, Hadri) rejects; "
        "non-stationary when no unit-root test rejects. I(0): levels stationary. I(1): levels "
        "non-stationary and first differences stationary. Otherwise inconclusive. Levels are "
        "tested with a constant and a linear trend, differences with a constant. Tests that "
        "could not run are left out of the rule (cells n/a, reasons in the notes).")
_NAMES = {"adf": "ADF", "pp": "PP", "kpss": "KPSS", "dfgls": "DF-GLS", "za": "ZA", "ls": "LS",
          "ips": "IPS", "llc": "LLC", "fisher": "Fisher", "breitung": "Breitung",
          "hadri": "Hadri", "cips": "CIPS"}
#: Panel tests in tables: the author–year forms (the battery's Fisher combination is Choi's Pm).
_PANEL_NAMES = {"ips": test_name("IPS W-tbar"), "llc": test_name("LLC"),
                "fisher": test_name("Fisher (Choi Pm)"), "breitung": test_name("Breitung"),
                "hadri": test_name("Hadri"), "cips": test_name("CIPS")}


def _cell(row: Any) -> str:
    if isinstance(row.pvalue, float) and not math.isnan(row.pvalue):
        return format_pvalue(row.pvalue)
    if row.reject is True:
        return "reject"
    if row.reject is False:
        return "no reject"
    return "n/a"


def _unit_frame(res: Any, units: list[str]) -> tuple[pd.DataFrame, list[str]]:
    """Units × (series test, transform) p-values, the decision and its reason; notes for n/a."""
    table = res.table[res.table["unit"].isin(units) & res.table["test"].isin(SERIES_TESTS)]
    rows: dict[str, dict[str, str]] = {u: {"unit": u} for u in units}
    why: dict[str, list[str]] = {}
    for row in table.itertuples(index=False):
        key = f"{_NAMES[row.test]} {'level' if row.series == 'level' else 'diff.'}"
        cell = _cell(row)
        rows[row.unit][key] = cell
        if cell == "n/a" and str(row.note or ""):
            why.setdefault(f"{key}: {row.note}", []).append(row.unit)
    for r in res.excluded.itertuples():
        why.setdefault(f"{r.reason}", []).append(r.unit)
    decisions = res.decisions.set_index("unit")
    for unit in units:
        if unit in decisions.index:
            rows[unit]["decision"] = decisions.loc[unit, "decision"]
            rows[unit]["reason"] = decisions.loc[unit, "reason"]
    frame = pd.DataFrame(list(rows.values())).fillna("n/a")
    notes = [f"n/a for {', '.join(who) if len(who) <= 6 else f'{len(who)} units'}: {text}"
             for text, who in why.items()]
    return frame, notes


def _panel_frame(res: Any) -> tuple[pd.DataFrame, list[str]]:
    table = res.table[res.table["test"].isin(PANEL_TESTS)]
    rows, notes = [], []
    for row in table.itertuples(index=False):
        cell = _cell(row)
        rows.append({"test": _PANEL_NAMES[row.test], "transform": row.series,
                     "statistic": row.statistic, "p-value": cell,
                     "lags": str(row.lags).replace("-", "–"),
                     "rejects at 5 %": {True: "yes", False: "no"}.get(row.reject, "n/a")})
        if cell == "n/a" and str(row.note or ""):
            notes.append(f"{_PANEL_NAMES[row.test]} ({row.series}) could not be computed: "
                         f"{row.note}")
    return pd.DataFrame(rows, columns=["test", "transform", "statistic", "p-value", "lags",
                                       "rejects at 5 %"]), notes


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """Per series: the panel tests (shown) and the unit decisions (folded), in the window."""
    notes = data_notes(spec)
    base = panel.window(spec.window) if spec.window else panel
    tables, results, lead = [], {}, []
    one, many = spec.unit_words
    chosen = tuple(spec.analyses["roots"])
    for column in [*spec.pressure_columns, spec.activity]:
        logged = derived_name("log", column)
        res = root_battery(base.with_log(column, name=logged), logged, tests=chosen,
                           trend=LEVEL_TREND)
        results[column] = res.to_dict()
        units = [u for u in res.decisions["unit"] if u in set(base.units)]
        decided = Counter(res.decisions.set_index("unit").loc[units, "decision"])
        panel_frame, panel_notes = _panel_frame(res)
        panel_keys = [t for t in res.table["test"] if t in PANEL_TESTS]
        panel_text = "; ".join(
            f"{_NAMES[key]} {r['transform']} p {r['p-value']}"
            for key, (_, r) in zip(panel_keys, panel_frame.iterrows(), strict=True))
        lead.append(f"ln {column}: unit decisions " + ", ".join(
            f"{k} {v}" for k, v in decided.most_common()) + f" (of {len(units)} {many})"
            + (f"; panel tests: {panel_text}." if panel_text else "."))
        if len(panel_frame):
            title = f"Panel unit-root tests, ln {column}"
            pnotes = [RULE, *panel_notes, *_size_lines(res), *notes]
            tables.append(TableOut(
                f"roots_panel_{safe_name(column)}",
                lambda f, c=True, fr=panel_frame, t=title, n=pnotes: render_frame(
                    fr, f, title=t, index=False, notes=n, labels=spec.labels, caution=c),
                column))
        unit_frame, unit_notes = _unit_frame(res, units)
        title = f"Unit-root tests by {one}, ln {column} (p-values)"
        unotes = [RULE, *unit_notes, *_size_lines(res), *notes]
        tables.append(TableOut(
            f"roots_{safe_name(column)}",
            lambda f, c=True, r=res, fr=unit_frame, t=title, n=unotes: render_frame(
                r.to_frame() if f in ("csv", "json") else fr, f, title=t, index=False, notes=n,
                labels=spec.labels, caution=c), column, shown="folded",
            summary=f"Unit-root tests of every {one}, ln {column}"))
    lead.append(RULE)
    return StepOutput("Unit roots", tuple(tables), results={"roots": results}, lead=tuple(lead))


def _size_lines(res: Any) -> list[str]:
    """Which of the battery's p-values are calibrated (a ``size`` column where the battery
    carries one; else the statement that they are nominal)."""
    table = res.table
    if "size" in table.columns:
        known = [f"{_NAMES.get(r.test, r.test)} ({r.series}) {r.size}"
                 for r in table.drop_duplicates(["test", "series"]).itertuples(index=False)
                 if isinstance(r.size, str) and r.size]
        if known:
            return ["Size at 5 % nominal at this N and T (size card): " + "; ".join(known) + "."]
    return ["Size: these unit-root tests carry no size-card entry at this N and T "
            "(docs/methods/size.md); read their p-values as nominal."]
