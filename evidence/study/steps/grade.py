"""Study step ``grade``: the four axes and the grade per unit and pressure, with its figures.

The grade figure (every unit's observed change with its interval, coloured by grade) opens the
report beside the verdict. Unit figures (indexed series, sub-window maps) are drawn for the units
:func:`evidence.study.choice.choose_units` picks — or for every unit with
``[output] unit_figures = "all"`` — and a small-multiples figure shows every unit at a glance.
"""

from __future__ import annotations

from dataclasses import replace

import pandas as pd

from evidence.grading import RUNGS, Criteria, GradeResult, grade
from evidence.panel import Panel
from evidence.study import figures as figs
from evidence.study.choice import Pick, choose_units
from evidence.study.spec import StudySpec
from evidence.study.steps._base import FigureOut, StepOutput, TableOut, data_notes, safe_name
from evidence.tables import grade_table

__all__ = ["run", "criteria", "for_people", "SMALL_MULTIPLES", "BREAK_SERIES_NOTE"]

#: Units drawn in the small-multiples figure (the chosen units first, then in panel order).
SMALL_MULTIPLES = 48


def criteria(spec: StudySpec) -> Criteria:
    """The grade's criteria from ``[criteria]`` (``reps`` included), the study seed and
    ``[breaks]``."""
    return Criteria(**{**spec.criteria, "seed": spec.seed,
                       **{k: v for k, v in spec.breaks.items() if k in ("max_breaks", "trim")}})


#: Which series the grade's break years were searched on (and which the Breaks section).
BREAK_SERIES_NOTE = ("Latest break: Bai–Perron trend breaks searched on the log of the pressure (ln "
            "pressure, not the intensity), reported only; the Structural breaks section screens "
            "the log intensity, so its years can differ.")


def for_people(res: GradeResult) -> tuple[GradeResult, list[str]]:
    """The grade ordered for a reader (strongest grade first, then the largest decline) with a
    flag that every row carries moved to a note; CSV and JSON keep the result's own order."""
    table = res.table.copy()
    strength = {rung: i for i, rung in enumerate(reversed(RUNGS))}
    table["_order"] = table["rung"].map(strength)
    table = table.sort_values(["pressure", "_order", "observed_change", "unit"],
                              kind="stable").drop(columns="_order")
    table["pressure"] = pd.Categorical(table["pressure"], list(dict.fromkeys(res.table["pressure"])))
    table = table.sort_values("pressure", kind="stable")
    table["pressure"] = table["pressure"].astype(str)
    lists = [[f.strip() for f in str(c or "").split(",") if f.strip()] for c in table["flags"]]
    common = [f for f in (lists[0] if lists else []) if all(f in row for row in lists)]
    notes = []
    if common and len(table) > 1:
        table["flags"] = [", ".join(f for f in row if f not in common) for row in lists]
        notes.append(f"Every row is flagged {', '.join(common)}"
                     + (f" (graded on fewer than {res.criteria.short_window} years)"
                        if "short-window" in common else "") + "; the flag is left out of the "
                     "flags column.")
    return replace(res, table=table.reset_index(drop=True)), notes


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """Grade every unit on every pressure; figures when the spec asks for them."""
    pressures = spec.pressure_columns
    res = grade(panel, list(pressures), spec.activity, window=spec.window,
                criteria=criteria(spec), consumption=spec.consumption)
    notes = [*data_notes(spec), BREAK_SERIES_NOTE]
    figures: tuple[FigureOut, ...] = ()
    more = ""
    if spec.figures:
        figures, more = _figures(panel, spec, res)
    one, _many = spec.unit_words
    lead = (f"Each {one} is graded on four axes, reported separately: direction (is the decline "
            "significant?), duration (how long?), robustness (in how many sub-windows, and on "
            "the consumption basis?) and sufficiency (fast enough for the stated target?). The "
            "grade summarises them; the notes under the table define every grade and flag.",)
    shown, common = for_people(res)
    people_notes = [*common, *notes]
    tables = (TableOut("grade", lambda f, c=True: grade_table(
        res if f in ("csv", "json") else shown, f, notes=notes if f in ("csv", "json")
        else people_notes, labels=spec.labels, caution=c)),)
    return StepOutput("Grade", tables, figures, lead=lead, more_figures=more,
                      results={"grade": res.to_dict()}, value=res)


def _figures(panel: Panel, spec: StudySpec, res: GradeResult) -> tuple[tuple[FigureOut, ...], str]:
    pressures = spec.pressure_columns
    table = res.table
    one, many = spec.unit_words
    required = res.criteria.required_rate
    out: list[FigureOut] = []
    for number, pressure in enumerate(pressures):
        rows = table[table["pressure"] == pressure]
        if rows.empty:
            continue
        out.append(FigureOut(
            f"grade_{safe_name(pressure)}", lambda p=pressure: figs.grade_figure(
                table, p, required=None if required is None else -required, unit_word=one),
            top=number == 0, in_report=True,
            caption=(f"Grade across {many}: the observed annual change of {pressure} with its "
                     f"interval ({res.details['tests']['interval']}), {many} sorted by it, "
                     "coloured by grade; † marks a basis gap"
                     + (f"; dashed: the required change of −{100 * required:.1f} % a year"
                        if required is not None else "") + ".")))
    picks = choose_units(table, named=spec.figure_units)
    chosen = [p.unit for p in picks]
    first = pressures[0]
    rungs = {str(r.unit): str(r.rung) for r in table[table["pressure"] == first].itertuples()}
    window = tuple(res.details["windows"][first])
    units = list(dict.fromkeys([*chosen, *panel.units]))[:SMALL_MULTIPLES]
    shown_note = "" if len(panel.units) <= SMALL_MULTIPLES else (
        f" (the first {SMALL_MULTIPLES} of {len(panel.units)}: the chosen {many} first)")
    out.append(FigureOut("all_units", lambda: figs.small_multiples(
        panel, units, spec.activity, first, window, rungs=rungs), in_report=True,
        caption=f"Every {one}{shown_note}: {spec.activity} and {first} indexed to the first "
                f"year of the window = 100; each title is coloured by the {one}'s grade."))
    drawn = picks if spec.unit_figures == "chosen" else [
        *picks, *(Pick(u, "") for u in panel.units if u not in chosen)]
    records = res.records
    consumption = list(spec.consumption.values())
    for pick in drawn:
        unit = pick.unit
        rec = records.get((unit, first))
        if rec is None:
            continue
        why = f" — shown as {pick.reason}" if pick.reason else ""
        breaks = {p: records[(unit, p)].get("break_years") or []
                  for p in pressures if (unit, p) in records}
        out.append(FigureOut(
            f"indexed_{safe_name(unit)}", lambda u=unit, b=breaks: figs.indexed_figure(
                panel, u, spec.activity, [*pressures, *consumption], window, b),
            in_report=bool(pick.reason), source=unit,
            caption=(f"{unit}, graded {rec['rung']}{why}: {spec.activity} and the pressures "
                     f"indexed to the first year = 100; dotted lines follow the break years "
                     f"found in ln {first} (log pressure).")))
        share = rec.get("subwindow_share")
        share_text = "" if share is None or share != share else f" ({100 * share:.0f} % of them)"
        out.append(FigureOut(
            f"subwindows_{safe_name(unit)}", lambda u=unit, r=rec: figs.heatmap_figure(
                r["subwindow_matrix"], _span_years(r["span"]),
                f"{u}: sub-windows where the {r['claim_tested']} claim holds"),
            in_report=bool(pick.reason), source=unit,
            caption=(f"{unit}: every sub-window (first year × last year, at least "
                     f"{res.criteria.min_window} years) in which the {rec['claim_tested']} claim "
                     f"holds (green) or not (orange){share_text}.")))
    more = ""
    if spec.unit_figures == "chosen" and len(picks) < len(panel.units):
        more = (f"Unit figures are drawn for the {len(picks)} {many} chosen above (decoupled, "
                f"basis gaps, flags); set [output] unit_figures = \"all\" for every {one}, or "
                f"name {many} in [output] figure_units.")
    return tuple(out), more


def _span_years(span: str) -> list[int]:
    start, end = (int(v) for v in span.split("-"))
    return list(range(start, end + 1))

