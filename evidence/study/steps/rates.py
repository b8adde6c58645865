"""Study step ``rates``: trend growth, Tapio class and OECD factor per unit, for each pressure."""

from __future__ import annotations

from collections import Counter

from evidence.indicators import rates
from evidence.panel import Panel
from evidence.study.spec import StudySpec
from evidence.study.steps._base import StepOutput, TableOut, data_notes, safe_name
from evidence.tables import rates_table

__all__ = ["run"]


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """Rates of every pressure (territorial and consumption) against the activity.

    The first pressure's table is shown in the report; the others are folded under it.
    """
    notes = data_notes(spec)
    tables, results, lead = [], {}, []
    one, _many = spec.unit_words
    for number, pressure in enumerate([*spec.pressure_columns, *spec.consumption.values()]):
        res = rates(panel, pressure, spec.activity, window=spec.window)
        results[pressure] = res.to_dict()
        classes = Counter(str(c) for c in res.table["tapio_class"] if isinstance(c, str))
        basis = res.details.get("basis", "not stated")
        basis = "basis not stated" if basis == "not stated" else f"{basis} basis"
        lead.append(f"{pressure} ({basis}, {res.window[0]}–{res.window[1]}), Tapio (2005) "
                    "classes over the window: " + ", ".join(
                        f"{name} {n}" for name, n in classes.most_common()) + ".")
        tables.append(TableOut(
            f"rates_{safe_name(pressure)}",
            lambda f, c=True, r=res: rates_table(r, f, notes=notes, labels=spec.labels, caution=c),
            pressure, shown="open" if number == 0 else "folded",
            summary=f"Rates of {pressure} ({basis}) for every {one}"))
    lead.insert(0, f"Trend growth of each pressure and of {spec.activity} (OLS slope of the log on "
                   f"the year, Newey–West errors), the Tapio elasticity and class from the "
                   f"window's end points, and the OECD decoupling factor, per {one}. These are "
                   "descriptive; the Grade section tests them.")
    return StepOutput("Decoupling indicators", tuple(tables), results={"rates": results},
                      lead=tuple(lead))
