"""Tables of tests: one row per test, named in its author–year form; hypotheses in the notes."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import pandas as pd

from evidence.errors import SpecError
from evidence.results import TestGroupResult, TestResult
from evidence.tables._cells import Number, table_pvalue
from evidence.tables._names import relabel, test_name
from evidence.tables._render import Table, finish_notes, render, render_frame
from evidence.tables.regression import check_table_options

__all__ = ["test_table", "flatten_tests", "hypothesis_notes"]


def flatten_tests(results: Sequence[TestResult | TestGroupResult] | TestResult) -> list[TestResult]:
    """Tests in order, the members of a test group (Pedroni's seven, say) in place of the group."""
    if isinstance(results, (TestResult, TestGroupResult)):
        results = [results]
    out: list[TestResult] = []
    for item in results:
        if isinstance(item, TestGroupResult):
            out.extend(item.results)
        elif isinstance(item, TestResult):
            out.append(item)
        else:
            raise SpecError(f"test_table takes TestResult objects (or groups of them); got "
                            f"{type(item).__name__}.")
    return out


def _symbols(text: str) -> str:
    return text.replace(">=", "≥").replace("<=", "≤").replace("!=", "≠")


def hypothesis_notes(results: Sequence[TestResult], names: Sequence[str]) -> list[str]:
    """H0 of every test in one line when they agree, else one line per distinct H0; then why a
    test was not computed; then each distinct warning with the tests it concerns ("every test"
    when it concerns them all)."""
    nulls = [_symbols(r.null) for r in results]
    notes: list[str] = []
    if nulls and all(n == nulls[0] for n in nulls) and nulls[0]:
        notes.append(f"H0 of {'every test' if len(results) > 1 else 'the test'}: {nulls[0]}.")
    else:
        seen: dict[str, list[str]] = {}
        for name, null in zip(names, nulls, strict=True):
            if null:
                seen.setdefault(null, []).append(name)
        notes += [f"H0 of {', '.join(dict.fromkeys(who))}: {null}." for null, who in seen.items()]
    warned: dict[str, list[str]] = {}
    for name, res in zip(names, results, strict=True):
        if not res.applicable:
            notes.append(f"{name}: not computed ({res.details['inapplicable']}).")
            continue
        for warning in res.warnings:
            warned.setdefault(warning, []).append(name)
    every = len(dict.fromkeys(names)) > 1
    notes += [f"{'Every test' if every and set(who) == set(names) else ', '.join(dict.fromkeys(who))}"
              f": {w}" for w, who in warned.items()]
    return notes


def test_table(results: Sequence[TestResult | TestGroupResult] | TestResult, fmt: str = "text", *,
               title: str = "", notes: Sequence[str] = (), digits: int = 3,
               labels: Mapping[str, str] | None = None, label: str | None = None,
               caution: bool = True, fit: str = "auto") -> str:
    """One row per test: its author–year name, statistic, p-value, 5 % critical value and Obs.

    The hypotheses, the reason a test could not be computed (its cells stay blank) and the tests'
    warnings are notes below the table, then ``notes`` and (``caution=True``) the caution.
    p-values carry three decimals, ``<0.001`` below. ``labels``, ``label`` and ``fit`` as in
    :func:`~evidence.tables.regression_table`. ``csv`` and ``json`` carry every column of each
    test's ``to_frame()`` at full precision.
    """
    tests = flatten_tests(results)
    if not tests:
        raise SpecError("test_table needs at least one TestResult.")
    fmt, digits, labels, label, fit = check_table_options(fmt, digits, labels, label, fit)
    names = [test_name(r.test, labels) for r in tests]
    explained = hypothesis_notes(tests, names)
    if fmt in ("csv", "json"):
        rows = pd.concat([r.to_frame() for r in tests], ignore_index=True)
        return render_frame(rows, fmt, title=title, notes=[*explained, *notes], index=False,
                            labels=labels, caution=caution)
    columns: dict[str, list[Any]] = {
        "Test": names,
        "Statistic": [Number(r.statistic, digits) for r in tests],
        "p-value": [table_pvalue(r.pvalue, 3) for r in tests],
        "5% critical value": [Number(r.critical_values.get(0.05, float("nan")), digits) for r in tests],
        "Obs.": [Number(float(r.nobs), 0, thousands=True) if r.nobs else "" for r in tests],
    }
    columns = {k: [("" if isinstance(c, Number) and not c.plain() else c) for c in v]
               for k, v in columns.items()}
    columns = {k: v for k, v in columns.items() if k == "Test" or any(c != "" for c in v)}
    table = Table(header=list(columns), rows=[list(r) for r in zip(*columns.values(), strict=True)],
                  numeric=[False] + [True] * (len(columns) - 1), title=relabel(title, labels),
                  notes=finish_notes([*explained, *notes], caution, labels), label=label, fit=fit)
    return render(table, fmt)


test_table.__test__ = False  # type: ignore[attr-defined]  # not a pytest test
