"""The audit section every study ends with: everything in the data that was not used, and why.

Rows that differ only by unit are condensed for people ("all 30 units, 1990–1994"); CSV and JSON
keep one row per unit.
"""

from __future__ import annotations

import pandas as pd

from evidence.panel import Panel
from evidence.study.spec import StudySpec
from evidence.study.steps._base import StepOutput, TableOut, data_notes
from evidence.tables import audit_table

__all__ = ["run", "condense_audit"]

#: Units named in a condensed row before "and n more".
NAMED = 6


def condense_audit(audit: pd.DataFrame, units: tuple[str, ...] | list[str]) -> pd.DataFrame:
    """One row per (column, years, count, reason), with the units it concerns in words.

    ``units`` are the panel's units (before any exclusion) so that "all N units" is exact.
    """
    if audit.empty or "unit" not in audit.columns:
        return audit
    keys = [c for c in audit.columns if c != "unit"]
    frame = audit.astype({c: str for c in keys})
    rows = []
    for values, group in frame.groupby(keys, sort=False):
        names = list(dict.fromkeys(str(u) for u in group["unit"]))
        if len(names) > 1 and set(names) >= set(units):
            who = f"all {len(names)} units"
        elif len(names) > NAMED:
            who = f"{len(names)} units: {', '.join(names[:NAMED])} and {len(names) - NAMED} more"
        else:
            who = ", ".join(names)
        rows.append({"units": who, **dict(zip(keys, values, strict=True))})
    return pd.DataFrame(rows, columns=["units", *keys])


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """The panel's audit as a table (condensed for people, one row per unit for machines)."""
    notes = data_notes(spec)
    condensed = condense_audit(panel.audit, list(panel.units))
    lead = (f"Everything in the data file that the study did not use, and why: {len(panel.audit)} "
            f"item(s), shown condensed ({len(condensed)} row(s)); tables/audit.csv lists them one "
            "unit at a time.",) if len(panel.audit) else ("Every cell of the columns used was "
                                                          "used.",)
    return StepOutput("Audit: data not used", (TableOut(
        "audit", lambda f, c=True: audit_table(
            panel.audit if f in ("csv", "json") else condensed, f, notes=notes,
            labels=spec.labels, caution=c)),), lead=lead)
