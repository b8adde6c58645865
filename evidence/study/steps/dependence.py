"""Study step ``dependence``: Pesaran's CD test on the log of each pressure."""

from __future__ import annotations

from evidence.panel import Panel, derived_name
from evidence.roots import pesaran_cd_test
from evidence.study.spec import StudySpec
from evidence.study.steps._base import StepOutput, TableOut, p_words, size_notes
from evidence.tables import test_table

__all__ = ["run"]


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """One CD test per pressure, in the study window."""
    base = panel.window(spec.window) if spec.window else panel
    tests = []
    for column in spec.pressure_columns:
        logged = derived_name("log", column)
        tests.append(pesaran_cd_test(base.with_log(column, name=logged), logged))
    found = "; ".join(f"{t.test} on ln {c}: {p_words(t.pvalue)}" for t, c in
                      zip(tests, spec.pressure_columns, strict=True))
    lead = (f"Does a shock to one unit's pressure show up in the others? {found}. A rejection "
            "(p < 0.05) calls for the tests and estimators in this report that allow for "
            "cross-sectional dependence (CIPS, CCE mean group, Driscoll–Kraay errors, the "
            "bootstrap of the cointegration tests).",)
    notes = size_notes(tests)
    return StepOutput("Cross-sectional dependence", (TableOut(
        "dependence", lambda f, c=True: test_table(tests, f, title="Pesaran CD test",
                                                   notes=notes, labels=spec.labels,
                                                   caution=c)),),
        results={"dependence": [t.to_dict() for t in tests]}, lead=lead)
