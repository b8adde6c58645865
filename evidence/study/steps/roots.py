"""Study step ``roots``: the unit-root battery on the log of each pressure and of the activity."""

from __future__ import annotations

from evidence.panel import Panel, derived_name
from evidence.roots import root_battery
from evidence.study.spec import StudySpec
from evidence.study.steps._base import StepOutput, TableOut, data_notes, safe_name
from evidence.tables import render_frame

__all__ = ["run"]


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """A decision table (levels and differences) per series, in the study window."""
    notes = data_notes(spec)
    base = panel.window(spec.window) if spec.window else panel
    tables, results = [], {}
    for column in [*spec.pressure_columns, spec.activity]:
        logged = derived_name("log", column)
        res = root_battery(base.with_log(column, name=logged), logged,
                           tests=tuple(spec.analyses["roots"]))
        results[column] = res.to_dict()
        title = f"Unit-root battery, log {column} (p-values; decision at 5 %)"
        tables.append(TableOut(f"roots_{safe_name(column)}", lambda f, r=res, t=title: render_frame(
            r.to_frame() if f in ("csv", "json") else r.decision_table(), f, title=t,
            index=False, notes=notes, labels=spec.labels), column))
    return StepOutput("Unit roots", tuple(tables), results={"roots": results})
