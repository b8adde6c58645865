"""The size card: measured rejection rates of every test at the panel sizes users have.

Each family of tests ships a JSON file in ``evidence/_sizes/`` made by a seeded Monte Carlo
(:mod:`evidence._montecarlo`; the script that regenerates it is named in the file's
``generated_by``). One entry is one test, its options, one data-generating process under the null
(or an alternative: ``"hypothesis": "alternative"``), ``n_units``, ``n_years``, the rejection rate
at 5 % nominal and its Monte Carlo standard error. ``docs/methods/size.md`` prints the card.

:func:`size_note` finds the entry nearest to a result's own N and T so that the result can say,
in its ``details``, how its p-value behaved in the simulations, and the report can say which
p-values are calibrated.
"""

from __future__ import annotations

import json
import math
from functools import lru_cache
from importlib import resources
from typing import Any

import pandas as pd

__all__ = ["size_card", "size_note", "CONTROLLED"]

#: A rejection rate at 5 % nominal inside this range counts as a controlled size.
CONTROLLED = (0.03, 0.075)


@lru_cache(maxsize=1)
def _entries() -> tuple[dict[str, Any], ...]:
    rows: list[dict[str, Any]] = []
    folder = resources.files("evidence") / "_sizes"
    if not folder.is_dir():
        return ()
    for item in sorted(folder.iterdir(), key=lambda p: p.name):
        if not item.name.endswith(".json"):
            continue
        data = json.loads(item.read_text(encoding="utf-8"))
        for entry in data.get("entries", []):
            rows.append({"family": data.get("family", item.name[:-5]),
                         "generated_by": data.get("generated_by", ""),
                         "seed": data.get("seed"), **entry})
    return tuple(rows)


def size_card(test: str | None = None) -> pd.DataFrame:
    """All entries of the card (or those of one test) as a table."""
    frame = pd.DataFrame(list(_entries()))
    if test is not None and not frame.empty:
        frame = frame.loc[frame["test"] == test]
    return frame.reset_index(drop=True)


def size_note(test: str, n_units: int | None, n_years: int, *, options: str | None = None) -> dict[str, Any]:
    """The card's entries under the null for ``test`` nearest to (``n_units``, ``n_years``).

    Returns ``{}`` when the card has no entry for the test. Otherwise a mapping with the grid
    point used, the worst rejection rate over the processes simulated there (and which process),
    and whether it lies in :data:`CONTROLLED`; it goes into a result's ``details["size"]``.
    """
    rows = [r for r in _entries() if r.get("test") == test and r.get("hypothesis", "null") == "null"
            and (options is None or r.get("options") == options)]
    if not rows:
        return {}

    def distance(r: dict[str, Any]) -> float:
        d = abs(math.log(max(r["n_years"], 1) / max(n_years, 1)))
        if n_units and r.get("n_units"):
            d += 0.5 * abs(math.log(r["n_units"] / n_units))
        return d

    best = min(distance(r) for r in rows)
    near = [r for r in rows if distance(r) == best]
    worst = max(near, key=lambda r: abs(r["rejection"] - 0.05))
    low, high = CONTROLLED
    return {"nominal": 0.05, "measured": worst["rejection"], "process": worst.get("dgp", ""),
            "n_units": worst.get("n_units"), "n_years": worst["n_years"],
            "processes": len(near), "controlled": all(low <= r["rejection"] <= high for r in near),
            "source": "docs/methods/size.md"}
