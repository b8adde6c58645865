"""Study step ``dependence``: Pesaran's CD test on the log of each pressure."""

from __future__ import annotations

from evidence.panel import Panel, derived_name
from evidence.roots import pesaran_cd_test
from evidence.study.spec import StudySpec
from evidence.study.steps._base import StepOutput, TableOut
from evidence.tables import test_table

__all__ = ["run"]


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """One CD test per pressure, in the study window."""
    base = panel.window(spec.window) if spec.window else panel
    tests = []
    for column in spec.pressure_columns:
        logged = derived_name("log", column)
        tests.append(pesaran_cd_test(base.with_log(column, name=logged), logged))
    return StepOutput("Cross-sectional dependence", (TableOut(
        "dependence", lambda f: test_table(tests, f, title="Pesaran CD test",
                                             labels=spec.labels)),),
        results={"dependence": [t.to_dict() for t in tests]})
