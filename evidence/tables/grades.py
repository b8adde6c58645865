"""Formatting of the grade table: the rung beside the four axes, never alone.

Columns whose value is the same on every row (the pressure, its basis, the window, the required
change, a sufficiency verdict of "no target") leave the table for the caption and a note, so the
table keeps to what differs between units.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import pandas as pd

from evidence.grading import GradeResult
from evidence.tables._cells import Number, table_pvalue
from evidence.tables._names import display_name, relabel
from evidence.tables._render import Table, finish_notes, is_numeric_column, render, render_frame
from evidence.tables.regression import check_table_options

__all__ = ["grade_table", "RUNG_MEANINGS"]

#: The rungs from the weakest, each with its meaning (docs/methods/grading.md).
RUNG_MEANINGS = (
    ("coupled", "none of the below"),
    ("relative", "intensity falls significantly (adjusted)"),
    ("recession-driven", "pressure falls significantly only with recession years counted"),
    ("absolute-tentative", "activity grows significantly and the pressure trend (recessions set "
                           "apart) is negative, but not significant after adjustment"),
    ("absolute-significant", "pressure falls significantly (adjusted, recessions set apart) "
                             "while activity grows significantly"),
    ("absolute-sustained", "absolute-significant, a decline run of the sustained length, and a "
                           "significant decline over the latest sustained-length years"),
    ("target-consistent", "absolute-sustained and sufficient against the stated target"),
)
_MOVABLE = ("pressure", "basis", "span", "required %/yr", "sufficiency", "consumption basis",
            "gap %/yr")


def _pct(value: Any, digits: int = 2) -> Any:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    return Number(100 * float(value), digits)


def _interval(low: Any, high: Any) -> str:
    a, b = _pct(low), _pct(high)
    if a == "" or b == "":
        return ""
    return f"[{a.plain()}, {b.plain()}]"


def _gap(g: Any, low: Any, high: Any) -> str:
    if g is None or (isinstance(g, float) and math.isnan(g)):
        return ""
    cells = [_pct(v) for v in (g, low, high)]
    texts = [c.plain() if isinstance(c, Number) else "n/a" for c in cells]
    return f"{texts[0]} [{texts[1]}, {texts[2]}]"


def _break_label(rec: Mapping[str, Any]) -> str:
    if rec.get("break_years") is None:
        return "n/a"
    if not rec["break_years"]:
        return "none"
    trend = "falls" if rec["break_slope"] < 0 else "rises"
    return f"{rec['latest_break']} ({trend})"


def _size_text(result: GradeResult) -> str:
    size = result.details.get("size") or {}
    if not size:
        return "Its size is not on the size card."
    state = "within" if size.get("controlled") else "OUTSIDE"
    return (f"Monte Carlo size at T={size['n_years']} (the card's length nearest the median span): "
            f"{100 * size['measured']:.1f} % at 5 % nominal, worst of {size['processes']} noise "
            f"processes ({size['process']}), {state} [3 %, 7.5 %]; see docs/methods/size.md.")


def _notes(result: GradeResult) -> list[str]:
    crit = result.criteria
    tests = result.details["tests"]
    return [
        f"Direction: {tests['direction']}; level {crit.alpha}. {_size_text(result)}",
        "Recession years (activity below its earlier peak, and the rebound year) are set apart "
        "by impulse and step dummies; 'recession-driven' marks a decline significant only with "
        "them counted.",
        f"Duration: longest run of years with falling pressure and growing activity, in the data "
        f"and on {tests['smoothing']} trends (a run broken in any year activity fell); episode "
        f"from {crit.episode_years}, sustained from {crit.sustained_years} years; 'p latest': "
        f"{tests['latest_regime']}, one-sided. Break years (Bai–Perron, last year of the old "
        "regime) are reported only and do not enter the grade.",
        f"Robustness: share of sub-windows in which the claim holds ({tests['subwindows']}); "
        f"basis gap: {tests['basis_gap']}, in % a year with its interval.",
        f"Sufficiency: observed annual change of the pressure with its interval "
        f"({tests['interval']}) against the required change (a normative choice, stated in the "
        "criteria).",
        "Span: each unit is graded on its own longest complete span inside the window.",
        *[f"Warning: {w}" for w in result.warnings],
        "Grades, weakest first: " + "; ".join(f"{rung}: {text}" for rung, text in RUNG_MEANINGS)
        + ".",
    ]


def grade_table(result: GradeResult, fmt: str = "text", *, notes: Sequence[str] = (),
                labels: Mapping[str, str] | None = None, label: str | None = None,
                caution: bool = True, fit: str = "auto", title: str = "") -> str:
    """The grade table; CSV and JSON carry every column at full precision.

    Columns with one value on every row move to the caption (pressure, window) and a note.
    ``labels``, ``label``, ``caution`` and ``fit`` as in :func:`~evidence.tables.regression_table`.
    """
    fmt, _, labels, label, fit = check_table_options(fmt, 0, labels, label, fit)
    excluded = [f"Excluded: {r.unit} / {r.column} {r.years} ({r.reason})."
                for r in result.excluded.itertuples()]
    base_notes = [*_notes(result), *notes, *excluded]
    if fmt in ("csv", "json"):
        return render_frame(result.table, fmt, title=title or "Decoupling grade", notes=base_notes,
                            index=False, labels=labels, caution=caution)
    t = result.table
    records = result.records
    shown: dict[str, list[Any]] = {
        "unit": [labels.get(u, u) for u in t["unit"]],
        "pressure": [display_name(p, labels) for p in t["pressure"]],
        "basis": list(t["basis"]),
        "span": [w.replace("-", "–") for w in t["span"]],
        "grade": list(t["rung"]), "flags": list(t["flags"]),
        "p abs. (adj.)": [table_pvalue(p) for p in t["p_absolute_adj"]],
        "p growth": [table_pvalue(p) for p in t["p_growth"]],
        "p rel. (adj.)": [table_pvalue(p) for p in t["p_relative_adj"]],
        "run (years)": [Number(float(v), 0) for v in t["longest_run"]],
        "run on trends": [Number(float(v), 0) for v in t["smoothed_run"]],
        "duration": list(t["duration"]),
        "p latest": [table_pvalue(p) for p in t["p_latest_regime"]],
        "latest break": [_break_label(records[(u, pr)])
                         for u, pr in zip(t["unit"], t["pressure"], strict=True)],
        "sub-windows": ["" if s != s else f"{100 * s:.0f}%" for s in t["subwindow_share"]],
        "consumption basis": list(t["consumption_direction"].fillna("n/a")),
        "gap %/yr": [_gap(g, lo, hi) for g, lo, hi in zip(t["gap_trend"], t["gap_lower"],
                                                           t["gap_upper"], strict=True)],
        "change %/yr": [_pct(v) for v in t["observed_change"]],
        "interval": [_interval(a, b) for a, b in zip(t["observed_change_lower"],
                                                     t["observed_change_upper"], strict=True)],
        "required %/yr": [_pct(v) for v in t["required_change"]],
        "sufficiency": list(t["sufficiency"]),
    }
    fixed = []
    for name in _MOVABLE:
        if name not in shown:
            continue
        values = [v.plain() if isinstance(v, Number) else str(v) for v in shown[name]]
        if (len(values) > 1 and len(set(values)) == 1) or (values and all(v == "" for v in values)):
            del shown[name]
            if values[0] and name not in ("pressure", "span"):
                fixed.append(f"{name} {values[0]}")
    caption = title or _caption(shown, t, labels)
    moved = [f"Same on every row: {'; '.join(fixed)}."] if fixed else []
    table = Table(header=list(shown), rows=[list(r) for r in zip(*shown.values(), strict=True)],
                  numeric=[is_numeric_column(v) for v in shown.values()],
                  title=relabel(caption, labels),
                  notes=finish_notes([*moved, *base_notes], caution, labels), label=label, fit=fit)
    return render(table, fmt)


def _caption(shown: Mapping[str, Any], t: pd.DataFrame, labels: Mapping[str, str]) -> str:
    parts = []
    if "pressure" not in shown and len(t):
        parts.append(display_name(str(t["pressure"].iloc[0]), labels))
    if "span" not in shown and len(t):
        parts.append(str(t["span"].iloc[0]).replace("-", "–"))
    return "Decoupling grade" + (": " + ", ".join(parts) if parts else "")

