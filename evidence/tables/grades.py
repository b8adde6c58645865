"""Formatting of the grade table: the rung beside the four axes, never alone."""

from __future__ import annotations

import math
from collections.abc import Sequence

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


def _break_label(result: GradeResult, unit: str, pressure: str) -> str:
    rec = result.records[(unit, pressure)]
    if rec.get("break_years") is None:
        return "n/a"
    if not rec["break_years"]:
        return "none"
    trend = "falls" if rec["break_slope"] < 0 else "rises"
    return f"{rec['latest_break']} ({trend})"


def _size_text(result: GradeResult) -> str:
    size = result.details.get("size") or {}
    if not size:
        return "its size is not on the size card."
    state = "within" if size.get("controlled") else "OUTSIDE"
    return (f"Monte Carlo size at T={size['n_years']} (the card's length nearest the median span): "
            f"{100 * size['measured']:.1f} % at 5 % nominal, worst of {size['processes']} noise "
            f"processes ({size['process']}), {state} [3 %, 7.5 %]; see docs/methods/size.md.")


def grade_table(result: GradeResult, fmt: str = "text", *, notes: Sequence[str] = ()) -> str:
    """The grade table; CSV and JSON carry every column at full precision."""
    crit = result.criteria
    tests = result.details["tests"]
    extra = list(notes)
    notes = [*extra,
        f"Direction: {tests['direction']}; level {crit.alpha}. {_size_text(result)}",
        "Recession years (activity fell) are set apart: their changes do not count towards the "
        "absolute claim; 'recession-driven' marks a decline significant only with them counted.",
        f"Duration: longest run of years with falling pressure and growing activity (raw / on "
        f"{tests['smoothing']} trends, a run broken in any year activity fell); episode from "
        f"{crit.episode_years}, sustained from {crit.sustained_years} years, and "
        f"'latest': {tests['latest_regime']}, one-sided p-value. Break years (Bai-Perron, "
        "reported only, last year of the old regime) do not enter the grade.",
        f"Robustness: share of sub-windows in which the claim holds ({tests['subwindows']}); "
        f"basis gap: {tests['basis_gap']}, in % a year with its interval.",
        f"Sufficiency: observed annual change of the pressure with its interval "
        f"({tests['interval']}) against the required change (a normative choice, stated in the "
        "criteria).",
        "Span: each unit is graded on its own longest complete span inside the window.",
        *[f"Excluded: {r.unit} / {r.column} {r.years} ({r.reason})." for r in result.excluded.itertuples()],
        *[f"Warning: {w}" for w in result.warnings],
        CAUTION,
    ]
    if fmt.lower() in ("csv", "json"):
        return render_frame(result.table, fmt, title="Decoupling grade", notes=notes, index=False)
    t = result.table
    shown = pd.DataFrame({
        "unit": t["unit"], "pressure": t["pressure"], "basis": t["basis"], "span": t["span"],
        "grade": t["rung"], "flags": t["flags"],
        "p abs (adj)": [format_pvalue(p) for p in t["p_absolute_adj"]],
        "p growth": [format_pvalue(p) for p in t["p_growth"]],
        "p rel (adj)": [format_pvalue(p) for p in t["p_relative_adj"]],
        "run": [f"{a}/{b}" for a, b in zip(t["longest_run"], t["smoothed_run"])],
        "duration": t["duration"],
        "p latest": [format_pvalue(p) for p in t["p_latest_regime"]],
        "break": [_break_label(result, u, pr) for u, pr in zip(t["unit"], t["pressure"])],
        "sub-windows": [f"{100 * s:.0f}%" for s in t["subwindow_share"]],
        "consumption": t["consumption_direction"].fillna("n/a"),
        "gap %/yr": [_gap(g, lo, hi) for g, lo, hi in zip(t["gap_trend"], t["gap_lower"],
                                                           t["gap_upper"])],
        "change %/yr": [_pct(v) for v in t["observed_change"]],
        "interval": [f"[{_pct(a)}, {_pct(b)}]" for a, b in zip(t["observed_change_lower"],
                                                             t["observed_change_upper"])],
        "required": [_pct(v) for v in t["required_change"]],
    })
    return render_frame(shown, fmt, title="Decoupling grade", notes=notes, index=False)


def _gap(g: float, lo: float, hi: float) -> str:
    if g is None or (isinstance(g, float) and math.isnan(g)):
        return "n/a"
    return f"{100 * g:.2f} [{100 * lo:.2f}, {100 * hi:.2f}]"
