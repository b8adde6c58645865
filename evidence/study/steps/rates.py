"""Study step ``rates``: trend growth, Tapio class and OECD factor per unit, for each pressure."""

from __future__ import annotations

from evidence.indicators import rates
from evidence.panel import Panel
from evidence.study.spec import StudySpec
from evidence.study.steps._base import StepOutput, TableOut, data_notes, safe_name
from evidence.tables import rates_table

__all__ = ["run"]


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """Rates of every pressure (territorial and consumption) against the activity."""
    notes = data_notes(spec)
    tables, results = [], {}
    for pressure in [*spec.pressure_columns, *spec.consumption.values()]:
        res = rates(panel, pressure, spec.activity, window=spec.window)
        results[pressure] = res.to_dict()
        tables.append(TableOut(f"rates_{safe_name(pressure)}",
                               lambda f, r=res: rates_table(r, f, notes=notes, labels=spec.labels), pressure))
    return StepOutput("Decoupling indicators", tuple(tables), results={"rates": results})
