"""Study step ``cointegration``: panel cointegration of log pressure and log activity, and the
long-run elasticity where the relation cointegrates."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from evidence.cointegration import kao_test, long_run, pedroni_test, westerlund_test
from evidence.panel import Panel, derived_name
from evidence.study.spec import StudySpec
from evidence.study.steps._base import StepOutput, TableOut, data_notes, safe_name, size_notes
from evidence.tables import regression_table, test_table
from evidence.tables.tests import flatten_tests

__all__ = ["run"]

_TESTS: dict[str, Callable[..., Any]] = {"pedroni": pedroni_test, "kao": kao_test,
                                          "westerlund": westerlund_test}
RULE = ("Decision rule: H0 is no cointegration; a statistic rejects at 5 % when its p-value is "
        "below 0.05. p-values come from each test's default inference (a sieve bootstrap under H0 "
        "that reproduces drifting activity and dependence across units, where the test has one).")


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """The tests named in ``[analyses] cointegration`` on ln pressure and ln activity."""
    base = panel.window(spec.window) if spec.window else panel
    x = derived_name("log", spec.activity)
    base = base.with_log(spec.activity, name=x)
    notes = data_notes(spec)
    tables, results, lead = [], {}, []
    for pressure in spec.pressure_columns:
        y = derived_name("log", pressure)
        work = base.with_log(pressure, name=y)
        found: list[Any] = []
        for name in spec.analyses["cointegration"]:
            found.append(_TESTS[name](work, y, x, seed=spec.seed, executor=spec.executor))
        tests = flatten_tests(found)
        rejected = [t.test for t in tests if t.applicable and t.pvalue < 0.05]
        lead.append(f"ln {pressure} on ln {spec.activity}: {len(rejected)} of {len(tests)} "
                    "statistics reject no cointegration at 5 %"
                    + (f" ({', '.join(rejected)})." if rejected else "."))
        results[pressure] = {name: r.to_dict() for name, r in zip(spec.analyses["cointegration"],
                                                                  found, strict=True)}
        test_notes = [RULE, *size_notes(tests), *notes]
        tables.append(TableOut(
            f"cointegration_{safe_name(pressure)}",
            lambda f, c=True, ts=tests, n=test_notes, p=pressure: test_table(
                ts, f, title=f"Panel cointegration of {p} and {spec.activity} (logs)", notes=n,
                labels=spec.labels, caution=c), pressure))
        fits = [long_run(work, y, x, estimator=e) for e in ("dols", "fmols")]
        results[pressure]["long_run"] = [f.to_dict() for f in fits]
        tables.append(TableOut(
            f"long_run_{safe_name(pressure)}",
            lambda f, c=True, fs=fits, p=pressure: regression_table(
                fs, f, title=f"Long-run elasticity of {p} (pooled DOLS and FMOLS)",
                notes=["Meaningful only where the tests above find cointegration.", *notes],
                labels=spec.labels, caution=c), pressure, shown="folded",
            summary=f"Long-run elasticity of {pressure} (pooled DOLS and FMOLS)"))
    lead.append(RULE)
    return StepOutput("Cointegration", tuple(tables), results={"cointegration": results},
                      lead=tuple(lead))
