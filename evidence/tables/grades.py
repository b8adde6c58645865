"""Formatting of the grade table: the rung beside the four axes, never alone."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import pandas as pd

from evidence._cautions import CAUTION
from evidence.grading import GradeResult
from evidence.results import format_pvalue
from evidence.tables._render import render_frame

__all__ = ["grade_table"]


def _pct(value: float | None) -> str:
    return "" if value is None or (isinstance(value, float) and math.isnan(value)) else f"{100 * value:.2f}"


def _yes(value: object) -> str:
    return {True: "yes", False: "no"}.get(value, "n/a")  # type: ignore[arg-type]


def _break_label(rec: dict[str, Any]) -> str:
    if rec.get("break_years") is None:
        return "n/a"
    if not rec["break_years"]:
        return "none"
    trend = "falls" if rec["latest_regime_slope"] < 0 else "rises"
    return f"{rec['latest_break']} ({trend})"


def grade_table(result: GradeResult, fmt: str = "text", *, notes: Sequence[str] = ()) -> str:
    """The grade table; CSV and JSON carry every column at full precision."""
    crit = result.criteria
    extra = list(notes)
    notes = [*extra,
        f"Direction: one-sided tests of a falling pressure trend (absolute) and a falling "
        f"intensity trend (relative, i.e. elasticity below 1), Newey-West errors; p-values "
        f"adjusted across units by {crit.adjust.upper() if crit.adjust != 'none' else 'no method'}"
        f"; level {crit.alpha}.",
        f"Duration: longest run of years with falling pressure and growing activity (raw / on "
        f"Hodrick-Prescott trends, smoothing {crit.smoothing}); episode from "
        f"{crit.episode_years}, sustained from {crit.sustained_years} years. Break years are the "
        "last year of the old regime.",
        f"Robustness: share of sub-windows of at least {crit.min_window} years in which the claim "
        "holds; the claim without recession years and on filtered trends; the consumption basis.",
        "Sufficiency: observed annual change of the pressure with its interval against the "
        "required change (a normative choice, stated in the criteria).",
        *[f"Excluded: {r.unit} / {r.column} {r.years} ({r.reason})." for r in result.excluded.itertuples()],
        CAUTION,
    ]
    if fmt.lower() in ("csv", "json"):
        return render_frame(result.table, fmt, title="Decoupling grade", notes=notes, index=False)
    t = result.table
    records = result.records
    shown = pd.DataFrame({
        "unit": t["unit"], "pressure": t["pressure"], "basis": t["basis"], "window": t["window"],
        "grade": t["rung"], "flags": t["flags"],
        "p abs (adj)": [format_pvalue(p) for p in t["p_absolute_adj"]],
        "p rel (adj)": [format_pvalue(p) for p in t["p_relative_adj"]],
        "run": [f"{a}/{b}" for a, b in zip(t["longest_run"], t["smoothed_run"])],
        "duration": t["duration"],
        "latest break": [_break_label(records[(u, pr)]) for u, pr in zip(t["unit"], t["pressure"])],
        "sub-windows": [f"{100 * s:.0f}%" for s in t["subwindow_share"]],
        "w/o recessions": [_yes(v) for v in t["survives_recession"]],
        "consumption": t["consumption_direction"].fillna("n/a"),
        "change %/yr": [_pct(v) for v in t["observed_change"]],
        "interval": [f"[{_pct(a)}, {_pct(b)}]" for a, b in zip(t["observed_change_lower"],
                                                             t["observed_change_upper"])],
        "required": [_pct(v) for v in t["required_change"]],
    })
    return render_frame(shown, fmt, title="Decoupling grade", notes=notes, index=False)
