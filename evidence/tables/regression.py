"""Multi-model regression tables and test tables (estimates in columns, tests in rows).

Values come from ``Estimate`` and ``TestResult`` objects unchanged; this module only formats.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import pandas as pd

from evidence._cautions import CAUTION
from evidence._validation import check_choice, check_int
from evidence.errors import SpecError
from evidence.results import Estimate, TestResult, format_pvalue
from evidence.tables._render import render_frame

__all__ = ["regression_table", "test_table", "unit_table", "STARS"]

#: Significance marks: p < 0.01 ***, p < 0.05 **, p < 0.10 *.
STARS = ((0.01, "***"), (0.05, "**"), (0.10, "*"))


def _stars(p: float) -> str:
    if math.isnan(p):
        return ""
    for level, mark in STARS:
        if p < level:
            return mark
    return ""


def _tidy(estimates: Sequence[Estimate]) -> pd.DataFrame:
    frames = []
    for i, est in enumerate(estimates, start=1):
        frame = est.to_frame().rename_axis("term").reset_index()
        frame.insert(0, "model", i)
        frame.insert(1, "estimator", est.estimator)
        frame.insert(2, "dependent", est.dependent)
        frame["cov_type"] = est.cov_type
        frame["nobs"] = est.nobs
        frames.append(frame)
    return pd.concat(frames, ignore_index=True)


def _exclusions(estimates: Sequence[Estimate]) -> list[str]:
    """Notes listing what each estimate left out (rows, units), so no table hides an exclusion."""
    out = []
    for i, est in enumerate(estimates, start=1):
        for key in ("excluded", "skipped_units"):
            frame = est.details.get(key)
            if isinstance(frame, pd.DataFrame) and not frame.empty:
                items = "; ".join(" ".join(str(v) for v in row if str(v)) for row in
                                  frame.itertuples(index=False))
                out.append(f"({i}) left out: {items}.")
    return out


def regression_table(estimates: Sequence[Estimate], fmt: str = "text", *, stat: str = "se",
                     title: str = "", notes: Sequence[str] = (), digits: int = 3) -> str:
    """Estimates side by side: coefficient with stars, and beneath it the s.e., t or p-value.

    Rows after the coefficients: estimator, dependent variable, covariance, N, units, years and
    within R² where the estimate has them. ``csv`` and ``json`` give one tidy row per model and
    coefficient instead.
    """
    if not estimates:
        raise SpecError("regression_table needs at least one estimate (an Estimate, or a list of them).")
    stat = check_choice("stat", stat, ("se", "t", "p"))
    digits = check_int("digits", digits, minimum=0, maximum=12)
    label = {"se": "standard errors", "t": "t statistics", "p": "p-values"}[stat]
    all_notes = [f"{label.capitalize()} in parentheses. *** p<0.01, ** p<0.05, * p<0.10.",
                 *notes, *_exclusions(estimates), CAUTION]
    if fmt.lower() in ("csv", "json"):
        return render_frame(_tidy(estimates), fmt, title=title, notes=all_notes, index=False)
    terms: list[str] = []
    for est in estimates:
        terms += [t for t in est.params.index if t not in terms]
    columns = {}
    for i, est in enumerate(estimates, start=1):
        cells = []
        for term in terms:
            if term in est.params.index:
                p = float(est.pvalues[term])
                below = {"se": est.std_errors[term], "t": est.tstats[term], "p": p}[stat]
                cells += [f"{est.params[term]:.{digits}f}{_stars(p)}",
                          f"({below:.{digits}f})" if stat != "p" else f"({format_pvalue(p)})"]
            else:
                cells += ["", ""]
        d = est.details
        years = d.get("years_mean")
        cells += [est.estimator, est.dependent, str(d.get("effects", "")), est.cov_type, str(est.nobs),
                  str(d.get("units", "")), "" if years is None else f"{years:.1f}",
                  "" if d.get("r2_within") is None else f"{d['r2_within']:.{digits}f}"]
        columns[f"({i})"] = cells
    index = []
    for term in terms:
        index += [term, ""]
    index += ["estimator", "dependent", "fixed effects", "covariance", "N", "units", "years (mean)",
              "R2 within"]
    table = pd.DataFrame(columns, index=pd.Index(index, name=""))
    n_terms = 2 * len(terms)
    empty = [i for i in range(n_terms, len(index)) if (table.iloc[i] == "").all()]
    table = table.iloc[[i for i in range(len(index)) if i not in empty]]
    return render_frame(table, fmt, title=title, notes=all_notes, digits=digits)


def unit_table(estimate: Estimate, fmt: str = "text", *, title: str = "",
               notes: Sequence[str] = ()) -> str:
    """Unit-level slopes of a mean-group-type estimate, one row per unit (the transposed layout)."""
    units = estimate.details.get("unit_params")
    if units is None:
        raise SpecError(f"the {estimate.estimator} estimate has no unit-level coefficients; unit_table "
                        "takes a mean-group-type estimate (mg, ccemg, amg).")
    frame = units.copy()
    mean = pd.DataFrame([estimate.params.to_numpy()], columns=frame.columns,
                        index=pd.Index([f"{estimate.details.get('mean', 'mean')}"], name=frame.index.name))
    return render_frame(pd.concat([frame, mean]), fmt,
                        title=title or f"Unit coefficients, {estimate.estimator}: {estimate.dependent}",
                        notes=[*notes, CAUTION])


def test_table(results: Sequence[TestResult], fmt: str = "text", *, title: str = "",
               notes: Sequence[str] = ()) -> str:
    """One row per test: statistic, p-value, 5 % critical value, N, H0 and warnings."""
    rows = pd.concat([r.to_frame() for r in results], ignore_index=True)
    if fmt.lower() not in ("csv", "json"):
        rows = rows[["test", "statistic", "pvalue", "cv_5", "nobs", "null"]].rename(
            columns={"cv_5": "5% critical value", "pvalue": "p-value", "null": "H0"})
        rows["p-value"] = [format_pvalue(p) for p in rows["p-value"]]
    return render_frame(rows, fmt, title=title, notes=[*notes, CAUTION], index=False, digits=4)


test_table.__test__ = False  # type: ignore[attr-defined]  # not a pytest test
