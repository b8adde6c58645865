"""Which units a report shows figures of: the one place where figures are chosen by interest.

A reader of a study wants to see the units that carry the answer: those that decoupled (the
strongest grades first), those whose consumption-based accounts tell another story (a basis gap:
territorial pressure falls while the footprint does not), and those with a flag that qualifies
their grade (weak or no activity growth, a decline driven by recession years). Units a study file
names come first. When a panel has no more units than the report has room for, every unit is
shown. Each pick carries the reason, which the figure's caption states.

:func:`choose_units` works on the grade table alone (``GradeResult.table``), so a batched study
of thousands of units can call it without per-unit objects.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import pandas as pd

__all__ = ["Pick", "choose_units", "DEFAULT_LIMIT", "STRONG_RUNGS"]

#: Units with figures in a report, unless the study file says otherwise.
DEFAULT_LIMIT = 8
#: Rungs that show absolute decoupling, strongest first.
STRONG_RUNGS = ("target-consistent", "absolute-sustained", "absolute-significant")
_NEAR_RUNGS = ("recession-driven", "absolute-tentative")


@dataclass(frozen=True)
class Pick:
    """A unit chosen for figures and why (``reason`` is shown in captions)."""

    unit: str
    reason: str


def _flags(cell: object) -> list[str]:
    return [f.strip() for f in str(cell or "").split(",") if f.strip()]


def _number(value: object) -> float:
    try:
        out = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return math.nan
    return out


def _categories(rows: pd.DataFrame) -> list[list[Pick]]:
    """Candidates in order of interest, one list per kind of interest."""
    change = rows["observed_change"].map(_number) if "observed_change" in rows else None
    order = rows.assign(_change=change if change is not None else 0.0)
    order = order.sort_values(["_change", "unit"], kind="stable", na_position="last")
    decoupled: list[Pick] = []
    for rung in (*STRONG_RUNGS, *_NEAR_RUNGS):
        decoupled += [Pick(u, rung) for u in order.loc[order["rung"] == rung, "unit"]]
    gaps: list[Pick] = []
    if "flags" in order:
        has_gap = order["flags"].map(lambda c: "basis-gap" in _flags(c))
        gap = order.loc[has_gap].copy()
        size = gap["gap_trend"].map(_number).abs() if "gap_trend" in gap else 0.0
        gap = gap.assign(_size=size).sort_values(["_size", "unit"], ascending=[False, True],
                                                 kind="stable", na_position="last")
        for row in gap.itertuples(index=False):
            cons = getattr(row, "consumption_direction", None) or "n/a"
            gaps.append(Pick(str(row.unit), f"basis gap (graded {row.rung}; {cons} on the "
                                            "consumption basis)"))
    flagged: list[Pick] = []
    for flag in ("no-growth", "weak-growth", "recession"):
        hit = order["flags"].map(lambda c, f=flag: f in _flags(c))
        flagged += [Pick(str(u), f"flag {flag}") for u in order.loc[hit, "unit"]]
    return [decoupled, gaps, flagged]


def choose_units(table: pd.DataFrame, *, limit: int = DEFAULT_LIMIT,
                 named: Sequence[str] = (), pressure: str | None = None) -> list[Pick]:
    """Up to ``limit`` units of a grade table worth a figure, in the order to show them.

    ``table`` is ``GradeResult.table`` (columns unit, pressure, rung, flags, observed_change,
    gap_trend, consumption_direction...). Rows of ``pressure`` (default: the first pressure) are
    used. ``named`` units (from the study file) come first, then the kinds of interest in turn
    (decoupled, basis gap, flagged), each unit once; a panel with at most ``limit`` units has
    every unit chosen (the reason then says so). Deterministic for the same table.
    """
    if table.empty:
        return []
    pressure = pressure if pressure is not None else str(table["pressure"].iloc[0])
    rows = table.loc[table["pressure"] == pressure]
    units = [str(u) for u in rows["unit"]]
    picks: list[Pick] = [Pick(u, "named in the study file") for u in named if u in units]
    seen = {p.unit for p in picks}
    if len(units) <= limit:
        picks += [Pick(u, "every unit of the panel") for u in units if u not in seen]
        return picks
    queues = [[p for p in kind if p.unit not in seen] for kind in _categories(rows)]
    while len(picks) < limit and any(queues):
        for queue in queues:  # one of each kind in turn, so no kind crowds out the others
            while queue and queue[0].unit in seen:
                queue.pop(0)
            if queue and len(picks) < limit:
                pick = queue.pop(0)
                picks.append(pick)
                seen.add(pick.unit)
    return picks
