"""Study step ``elasticity``: the elasticity of each pressure by every estimator the spec names."""

from __future__ import annotations

from dataclasses import replace

from evidence.elasticity import decoupling_tests, elasticity
from evidence.panel import Panel
from evidence.study.spec import StudySpec
from evidence.study.steps._base import StepOutput, TableOut, data_notes, safe_name, size_notes
from evidence.tables import regression_table, test_table

__all__ = ["run"]

RULE = ("Decision rule: relative decoupling when the one-sided test of H0 elasticity ≥ 1 rejects "
        "at 5 %; absolute decoupling when the test of H0 elasticity ≥ 0 rejects.")


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """One regression table and one table of one-sided decoupling tests per pressure."""
    notes = data_notes(spec)
    tables, results, lead = [], {}, []
    for pressure in spec.pressure_columns:
        fits = [elasticity(panel, pressure, spec.activity, estimator=e, window=spec.window)
                for e in spec.analyses["elasticity"]]
        tests = [replace(t, test=f"{fit.estimator}: {t.test}") for fit in fits
                 for t in decoupling_tests(fit)]
        results[pressure] = [f.to_dict() for f in fits]
        values = ", ".join(f"{fit.estimator} {fit.params.iloc[0]:.2f}" for fit in fits)
        lead.append(f"Elasticity of ln {pressure} with respect to ln {spec.activity} "
                    f"(log–log, so a slope below 1 means relative and below 0 absolute "
                    f"decoupling on average): {values}.")
        title = f"Elasticity of {pressure} with respect to {spec.activity}"
        tables.append(TableOut(f"elasticity_{safe_name(pressure)}",
                               lambda f, c=True, fs=fits, t=title: regression_table(
                                   fs, f, title=t, notes=notes, labels=spec.labels, caution=c),
                               pressure))
        test_notes = [RULE, *size_notes(tests)]
        tables.append(TableOut(
            f"elasticity_tests_{safe_name(pressure)}",
            lambda f, c=True, ts=tests, n=test_notes, p=pressure: test_table(
                ts, f, title=f"One-sided decoupling tests, {p}", notes=n,
                labels=spec.labels, caution=c), pressure))
    lead.append(RULE)
    return StepOutput("Elasticities", tuple(tables), results={"elasticity": results},
                      lead=tuple(lead))
