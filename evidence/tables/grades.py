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
    ("coupled", "no significant relative decoupling after adjustment"),
    ("relative", "intensity falls significantly, pressure does not fall significantly"),
    ("absolute-tentative", "pressure trend negative while activity grows, but not significant "
                           "after adjustment (its adjusted p can be large)"),
    ("absolute-significant", "pressure trend significantly negative (adjusted) while activity grows"),
    ("absolute-sustained", "absolute-significant, a decline run of the sustained length, and the "
                           "latest regime still declining"),
    ("target-consistent", "absolute-sustained and sufficient against the stated target"),
)
_MOVABLE = ("pressure", "basis", "window", "required %/yr", "sufficiency", "consumption basis")


def _pct(value: Any, digits: int = 2) -> Any:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    return Number(100 * float(value), digits)


def _interval(low: Any, high: Any) -> str:
    a, b = _pct(low), _pct(high)
    if a == "" or b == "":
        return ""
    return f"[{a.plain()}, {b.plain()}]"


def _yes(value: object) -> str:
    return {True: "yes", False: "no"}.get(value, "n/a")  # type: ignore[arg-type]


def _break_label(rec: Mapping[str, Any]) -> str:
    if rec.get("break_years") is None:
        return "n/a"
    if not rec["break_years"]:
        return "none"
    trend = "falls" if rec["latest_regime_slope"] < 0 else "rises"
    return f"{rec['latest_break']} ({trend})"


def _notes(result: GradeResult) -> list[str]:
    crit = result.criteria
    adjust = {"bh": "Benjamini–Hochberg", "holm": "Holm"}.get(crit.adjust, "no method")
    return [
        f"Direction: one-sided tests of a falling pressure trend (absolute) and a falling "
        f"intensity trend (relative, i.e. elasticity below 1), Newey–West errors; p-values "
        f"adjusted across units by {adjust}; level {crit.alpha}.",
        f"Duration: longest run of years with falling pressure and growing activity, in the data "
        f"and on Hodrick–Prescott trends (smoothing {crit.smoothing}); episode from "
        f"{crit.episode_years}, sustained from {crit.sustained_years} years. Break years are the "
        "last year of the old regime.",
        f"Robustness: share of sub-windows of at least {crit.min_window} years in which the claim "
        "holds; the claim without recession years; the consumption basis.",
        "Sufficiency: observed annual change of the pressure with its interval against the "
        "required change (a normative choice, stated in the criteria).",
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
        "window": [w.replace("-", "–") for w in t["window"]],
        "grade": list(t["rung"]), "flags": list(t["flags"]),
        "p abs. (adj.)": [table_pvalue(p) for p in t["p_absolute_adj"]],
        "p rel. (adj.)": [table_pvalue(p) for p in t["p_relative_adj"]],
        "run (years)": [Number(float(v), 0) for v in t["longest_run"]],
        "run on trends": [Number(float(v), 0) for v in t["smoothed_run"]],
        "duration": list(t["duration"]),
        "latest break": [_break_label(records[(u, pr)]) for u, pr in zip(t["unit"], t["pressure"])],
        "sub-windows": [f"{100 * s:.0f}%" for s in t["subwindow_share"]],
        "w/o recessions": [_yes(v) for v in t["survives_recession"]],
        "consumption basis": list(t["consumption_direction"].fillna("n/a")),
        "change %/yr": [_pct(v) for v in t["observed_change"]],
        "interval": [_interval(a, b) for a, b in zip(t["observed_change_lower"],
                                                     t["observed_change_upper"])],
        "required %/yr": [_pct(v) for v in t["required_change"]],
        "sufficiency": list(t["sufficiency"]),
    }
    fixed = []
    for name in _MOVABLE:
        values = [v.plain() if isinstance(v, Number) else str(v) for v in shown[name]]
        if len(values) > 1 and len(set(values)) == 1 or (values and all(v == "" for v in values)):
            del shown[name]
            if values[0] and name not in ("pressure", "window"):
                fixed.append(f"{name} {values[0]}")
    caption = title or _caption(shown, t, labels)
    moved = [f"Same on every row: {'; '.join(fixed)}."] if fixed else []
    table = Table(header=list(shown), rows=[list(r) for r in zip(*shown.values())],
                  numeric=[is_numeric_column(v) for v in shown.values()],
                  title=relabel(caption, labels),
                  notes=finish_notes([*moved, *base_notes], caution, labels), label=label, fit=fit)
    return render(table, fmt)


def _caption(shown: Mapping[str, Any], t: pd.DataFrame, labels: Mapping[str, str]) -> str:
    parts = []
    if "pressure" not in shown and len(t):
        parts.append(display_name(str(t["pressure"].iloc[0]), labels))
    if "window" not in shown and len(t):
        parts.append(str(t["window"].iloc[0]).replace("-", "–"))
    return "Decoupling grade" + (": " + ", ".join(parts) if parts else "")

