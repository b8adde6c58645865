"""Study step ``decomposition``: the Kaya identity decomposed by LMDI-I over the study window."""

from __future__ import annotations

from evidence.decomposition import kaya
from evidence.errors import DataError
from evidence.panel import Panel
from evidence.study import figures as figs
from evidence.study.spec import StudySpec
from evidence.study.steps._base import FigureOut, StepOutput, TableOut, data_notes
from evidence.tables import render_frame

__all__ = ["run"]


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """Additive effects per unit and for all units, with a bar figure of the total."""
    if not spec.population:
        raise DataError("the Kaya decomposition needs [roles] population.")
    pressure = spec.pressure_columns[0]
    res = kaya(panel, pressure, population=spec.population, activity=spec.activity,
               energy=spec.energy, window=spec.window)
    notes = data_notes(spec)
    title = (f"LMDI-I decomposition of the change in {pressure}, "
             f"{res.window[0]}-{res.window[1]}")
    table = TableOut("decomposition", lambda f: render_frame(
        res.to_frame("additive"), f, title=title, notes=notes, labels=spec.labels))
    figures = ()
    if spec.figures:
        effects = res.to_frame("additive").loc[[res.total_row], list(res.factors)]
        figures = (FigureOut("decomposition", lambda: figs.decomposition_figure(
            effects, "Kaya effects, all units"), in_report=True),)
    return StepOutput("Decomposition", (table,), figures, results={"decomposition": res.to_dict()})
