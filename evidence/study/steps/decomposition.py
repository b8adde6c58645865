"""Study step ``decomposition``: the Kaya identity decomposed by LMDI-I over the study window."""

from __future__ import annotations

from evidence.decomposition import kaya
from evidence.errors import DataError
from evidence.panel import Panel
from evidence.study import figures as figs
from evidence.study.spec import StudySpec
from evidence.study.steps._base import FigureOut, StepOutput, TableOut, data_notes
from evidence.tables import render_frame
from evidence.tables._names import header_name

__all__ = ["run"]


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """Additive effects per unit and for all units, with a bar figure of the total."""
    if not spec.population:
        raise DataError("the Kaya decomposition needs [roles] population.")
    pressure = spec.pressure_columns[0]
    res = kaya(panel, pressure, population=spec.population, activity=spec.activity,
               energy=spec.energy, window=spec.window)
    notes = data_notes(spec)
    one, many = spec.unit_words
    title = (f"LMDI-I decomposition of the change in {pressure}, "
             f"{res.window[0]}–{res.window[1]}")
    frame = res.to_frame("additive")
    total = frame.loc[res.total_row]
    shown = {name: header_name(name, spec.labels) for name in res.factors}
    effects = ", ".join(f"{shown[name]} {total[name]:+,.0f}" for name in res.factors)
    change = sum(float(total[name]) for name in res.factors)
    lead = (f"The change in {pressure} from {res.window[0]} to {res.window[1]}, split exactly "
            f"(LMDI-I, additive) into the effects of {', '.join(shown.values())}. All {many} "
            f"together: {effects}; the effects sum to the change, {change:+,.0f}.",)
    table = TableOut("decomposition", lambda f, c=True: render_frame(
        frame, f, title=title, notes=notes, labels=spec.labels, caution=c), shown="folded",
        summary=f"Effects for every {one}")
    figures: tuple[FigureOut, ...] = ()
    if spec.figures:
        effects_frame = frame.loc[[res.total_row], list(res.factors)].rename(columns=shown)
        figures = (FigureOut("decomposition", lambda: figs.decomposition_figure(
            effects_frame, f"Kaya effects on {pressure}, all {many}"), in_report=True,
            caption=(f"Additive LMDI-I effects on the change in {pressure}, "
                     f"{res.window[0]}–{res.window[1]}, all {many} together, in the "
                     "pressure's units: increases orange, decreases blue; the grey bar is their "
                     "sum, the change itself.")),)
    return StepOutput("Decomposition", (table,), figures, results={"decomposition": res.to_dict()},
                      lead=lead)
