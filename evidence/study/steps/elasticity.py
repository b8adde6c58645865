"""Study step ``elasticity``: the elasticity of each pressure by every estimator the spec names."""

from __future__ import annotations

from dataclasses import replace

from evidence.elasticity import decoupling_tests, elasticity
from evidence.panel import Panel
from evidence.study.spec import StudySpec
from evidence.study.steps._base import StepOutput, TableOut, data_notes, safe_name
from evidence.tables import regression_table, test_table

__all__ = ["run"]


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """One regression table and one table of one-sided decoupling tests per pressure."""
    notes = data_notes(spec)
    tables, results = [], {}
    for pressure in spec.pressure_columns:
        fits = [elasticity(panel, pressure, spec.activity, estimator=e, window=spec.window)
                for e in spec.analyses["elasticity"]]
        tests = [replace(t, test=f"{fit.estimator}: {t.test}") for fit in fits
                 for t in decoupling_tests(fit)]
        results[pressure] = [f.to_dict() for f in fits]
        title = f"Elasticity of {pressure} with respect to {spec.activity}"
        tables.append(TableOut(f"elasticity_{safe_name(pressure)}", lambda f, fs=fits, t=title:
                               regression_table(fs, f, title=t, notes=notes,
                                                labels=spec.labels), pressure))
        tables.append(TableOut(f"elasticity_tests_{safe_name(pressure)}", lambda f, ts=tests: test_table(
            ts, f, title="One-sided decoupling tests", labels=spec.labels), pressure))
    return StepOutput("Elasticities", tuple(tables), results={"elasticity": results})
