"""Study step ``convergence``: beta, sigma, stochastic and club convergence of per-capita pressure.

The dispersion path is a figure, the clubs a table of log t and b per club with the transition
paths drawn (legend, axis labels); the panel row of the stochastic tests is worded for what its
alternative says (some units stationary), so it cannot read as "every unit converges".
"""

from __future__ import annotations

from collections import Counter
from typing import Any

from evidence.convergence import beta_convergence, club_convergence, sigma_convergence, stochastic_convergence
from evidence.errors import DataError
from evidence.panel import Panel, derived_name
from evidence.study import figures as figs
from evidence.study.spec import StudySpec
from evidence.study.steps._base import FigureOut, StepOutput, TableOut, data_notes, p_words, size_notes
from evidence.tables import beta_table, render_frame, test_table
from evidence.tables._names import header_name

__all__ = ["run", "PANEL_ROW_TEXT"]

PANEL_ROW = "(panel)"
#: How the panel row of the stochastic tests reads: its alternative is "some units stationary".
PANEL_ROW_TEXT = {"converging": "some units converge (panel tests reject a unit root; their "
                                "alternative is that a share of the units is stationary)",
                  "not converging": "no evidence that any unit converges (panel tests)",
                  "inconclusive": "inconclusive (the panel tests disagree)"}


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """The methods listed in ``[analyses] convergence``, on the first pressure per person."""
    if not spec.population:
        raise DataError("convergence needs [roles] population (per-capita pressure).")
    pressure = spec.pressure_columns[0]
    column = derived_name("per_capita", pressure)
    work = panel.with_per_capita(pressure, spec.population, name=column)
    chosen = spec.analyses["convergence"]
    _one, many = spec.unit_words
    notes = data_notes(spec)
    tables: list[TableOut] = []
    figures: list[FigureOut] = []
    results: dict[str, Any] = {}
    lead = [f"Convergence of {pressure} per person across {many}, in logs."]
    if "beta" in chosen:
        beta = beta_convergence(work, column, window=spec.window)
        results["beta_convergence"] = beta.to_dict()
        lead.append(_beta_text(beta))
        tables.append(TableOut("beta_convergence", lambda f, c=True: beta_table(
            beta, f, title=f"Beta convergence of {column}", notes=notes, labels=spec.labels,
            caution=c)))
    if "sigma" in chosen:
        sigma = sigma_convergence(work, column, window=spec.window)
        results["sigma_convergence"] = sigma.to_dict()
        path = sigma.path
        lead.append(f"Sigma: the dispersion ({sigma.measure}) went from {path.iloc[0]:.3f} in "
                    f"{path.index[0]} to {path.iloc[-1]:.3f} in {path.index[-1]}; the one-sided "
                    f"test of a falling trend has {p_words(sigma.trend_test.pvalue)}.")
        tests = [sigma.trend_test, *sigma.first_last_tests]
        tables.append(TableOut("sigma_convergence", lambda f, c=True: test_table(
            tests, f, title=f"Sigma convergence of {column}", notes=[*size_notes(tests), *notes],
            labels=spec.labels, caution=c)))
        tables.append(TableOut("dispersion_path", lambda f, c=True: render_frame(
            path.to_frame(), f, title=f"Dispersion of log {column}, by year", digits=4,
            labels=spec.labels, caution=c), shown="file",
            summary="The dispersion year by year (the figure below)"))
        if spec.figures:
            shown = header_name(column, spec.labels)
            figures.append(FigureOut("dispersion", lambda: figs.dispersion_figure(
                path, sigma.measure, f"Dispersion of ln {shown} across {many}"),
                in_report=True, caption=(f"Dispersion of ln {shown} across {many}, year by "
                                         "year, with its linear trend (the dispersion path "
                                         "is tested for a falling trend above).")))
    if "stochastic" in chosen:
        _stochastic(work, column, spec, tables, results, lead)
    if "clubs" in chosen:
        _clubs(work, column, spec, tables, figures, results, lead)
    return StepOutput("Convergence", tuple(tables), tuple(figures), results=results,
                      lead=tuple(lead))


def _beta_text(beta: Any) -> str:
    test = getattr(beta, "test", None)
    p = getattr(test, "pvalue", float("nan"))
    verdict = ("the slope is significantly negative (one-sided "
               f"{p_words(p)}): {'' if p < 0.05 else 'weak '}evidence that low emitters catch up"
               if p < 0.10 else
               f"the slope is not significantly negative (one-sided {p_words(p)}): no evidence of "
               "catching up, so no speed or half-life is reported")
    return f"Beta: growth regressed on the initial level; {verdict}."


def _stochastic(work: Panel, column: str, spec: StudySpec, tables: list, results: dict,
                lead: list) -> None:
    one, many = spec.unit_words
    stoch = stochastic_convergence(work, column, window=spec.window)
    results["stochastic_convergence"] = stoch.to_dict()
    table = stoch.table.copy()
    units = table[table["unit"] != PANEL_ROW]
    counts = Counter(units["verdict"])
    panel_rows = table[table["unit"] == PANEL_ROW]
    panel_verdict = str(panel_rows["verdict"].iloc[0]) if len(panel_rows) else ""
    text = (f"Stochastic: {counts.get('converging', 0)} of {len(units)} {many} have a "
            f"stationary relative series (converging), {counts.get('not converging', 0)} do not, "
            f"{counts.get('inconclusive', 0)} are inconclusive.")
    if panel_verdict:
        text += f" Panel tests: {PANEL_ROW_TEXT.get(panel_verdict, panel_verdict)}."
        if panel_verdict == "converging" and not counts.get("converging"):
            text += (f" This does not contradict the {one}-by-{one} tests: single series of this "
                     "length rarely reject, while the panel pools them.")
    lead.append(text)
    table.loc[table["unit"] == PANEL_ROW, "verdict"] = PANEL_ROW_TEXT.get(panel_verdict,
                                                                          panel_verdict)
    table.loc[table["unit"] == PANEL_ROW, "unit"] = "all units (panel tests)"
    tests = ", ".join(stoch.details.get("tests", [])) or "the battery's tests"
    notes = [f"Tests on each {one}'s log {column} relative to the cross-section mean each year "
             f"({tests}; panel: {', '.join(stoch.details.get('panel_tests', []))}); converging "
             "when the relative series is stationary (I(0)), not converging when it has a unit "
             "root, inconclusive when the tests disagree.", *data_notes(spec)]
    tables.append(TableOut("stochastic_convergence", lambda f, c=True: render_frame(
        table, f, index=False, title=f"Stochastic convergence of {column}", notes=notes,
        labels=spec.labels, caution=c), shown="folded",
        summary=f"Stochastic convergence, {one} by {one}"))


def _clubs(work: Panel, column: str, spec: StudySpec, tables: list, figures: list,
           results: dict, lead: list) -> None:
    one, many = spec.unit_words
    clubs = club_convergence(work, column, window=spec.window)
    results["clubs"] = clubs.to_dict()
    crit = clubs.details.get("critical_value", -1.65)
    per_club = clubs.to_frame().rename(columns={"log_t": "log t", "pvalue": "p-value"})
    per_club["members"] = [", ".join(c) if len(c) <= 8 else f"{', '.join(c[:8])}, …"
                           for c in clubs.clubs]
    overall = clubs.overall.statistic
    lead.append(f"Clubs (Phillips–Sul): the log t test of all {many} together gives "
                f"{overall:.2f} ({'rejects' if overall < crit else 'does not reject'} "
                f"convergence at 5 %, critical value {crit:.2f}); {len(clubs.clubs)} clubs found"
                + (f", {len(clubs.divergent)} divergent {many}." if clubs.divergent else "."))
    notes = [f"log t: t statistic of b in the log t regression (H0: convergence within the club; "
             f"rejected when below {crit:.2f}); b: twice the speed at which the cross-section "
             "variation shrinks (b ≥ 2 absolute, 0 ≤ b < 2 relative convergence).",
             f"Overall log t {overall:.3f}.", *data_notes(spec)]
    tables.append(TableOut("clubs", lambda f, c=True: render_frame(
        per_club, f, index=False, title=f"Convergence clubs of {column}", notes=notes, digits=3,
        labels=spec.labels, caution=c)))
    members = clubs.membership().reset_index()
    tables.append(TableOut("club_membership", lambda f, c=True: render_frame(
        members, f, index=False, title="Club membership (0: divergent)", labels=spec.labels,
        caution=c), shown="folded", summary=f"The club of every {one}"))
    if spec.figures:
        figures.append(FigureOut("club_transitions", lambda: figs.club_figure(
            clubs.transition, clubs.clubs,
            f"Relative transition paths of ln {header_name(column, spec.labels)}, by club"),
            in_report=True, caption=("Relative transition paths (each unit's filtered log value "
                                     "over its club's mean), one panel per club; paths that "
                                     "close in on 1 converge.")))

