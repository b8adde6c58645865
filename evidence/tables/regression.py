"""Estimates side by side, each column headed by its estimator, and unit-level coefficient tables.

Values come from ``Estimate`` objects unchanged; this module only formats. The layout is ours:
a column per estimate headed by the estimator's name; each coefficient with its superscript
significance mark and, on the line below, its standard error (or t statistic, or p-value) in
parentheses; a block of sample facts (effects, observations, units, years, R²) below a rule; notes
that name the dependent variable and, column by column, the errors actually used.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from evidence._validation import check_choice, check_int
from evidence.errors import SpecError
from evidence.results import Estimate
from evidence.tables._cells import Number, table_pvalue
from evidence.tables._latex import FITS
from evidence.tables._names import check_labels, display_name, relabel
from evidence.tables._render import Table, check_label, finish_notes, render, render_frame

__all__ = ["regression_table", "unit_table", "STARS", "EstimateColumns", "estimate_columns",
           "stars_note", "STAT_WORDS"]

#: Significance marks: p < 0.01 ***, p < 0.05 **, p < 0.10 *.
STARS = ((0.01, "***"), (0.05, "**"), (0.10, "*"))
#: What the line below a coefficient shows, in words.
STAT_WORDS = {"se": "standard error", "t": "t statistic", "p": "p-value"}


def _stars(p: float) -> str:
    if math.isnan(p):
        return ""
    for level, mark in STARS:
        if p < level:
            return mark
    return ""


def stars_note(stat: str) -> str:
    """The note saying what is below a coefficient and what its superscripts mean."""
    return (f"Below each coefficient: its {STAT_WORDS[stat]}, in parentheses. Superscript marks "
            "give the two-sided p-value: *** below 0.01, ** below 0.05, * below 0.10.")


def term_name(term: str, labels: Mapping[str, str]) -> str:
    """A coefficient's row name: ``const`` reads "constant", others as :func:`display_name`."""
    if term in labels:
        return labels[term]
    if term == "const":
        return "constant"
    return relabel(term, labels)


def _digits_for(value: float, digits: int) -> int:
    """``digits``, or more (up to 8) so that a small non-zero coefficient shows two significant
    digits instead of rounding to zero."""
    if not math.isfinite(value) or value == 0 or abs(value) >= 0.5 * 10.0 ** -digits:
        return digits
    return min(8, max(digits, -math.floor(math.log10(abs(value))) + 1))


def _head(text: str) -> str:
    return text[:1].upper() + text[1:]


@dataclass
class EstimateColumns:
    """The body of an estimates table: heads, rows (name, cells), rule position, notes."""

    heads: list[str]
    rows: list[tuple[str, list[Any]]] = field(default_factory=list)
    rule: int = 0
    notes: list[str] = field(default_factory=list)


def _unique_heads(estimates: Sequence[Estimate], labels: Mapping[str, str]) -> list[str]:
    heads = [_head(relabel(est.estimator, labels)) for est in estimates]
    if len(set(heads)) < len(heads):
        deps = [display_name(est.dependent, labels) for est in estimates]
        if len(set(deps)) > 1:
            heads = [f"{h}: {d}" for h, d in zip(heads, deps, strict=True)]
    if len(set(heads)) < len(heads):
        covs = [est.cov_type.split(",")[0] for est in estimates]
        heads = [f"{h}, {c}" for h, c in zip(heads, covs, strict=True)]
    if len(set(heads)) < len(heads):
        heads = [f"{h} {chr(ord('A') + i)}" for i, h in enumerate(heads)]
    return heads


def _effects(details: Mapping[str, Any], which: str) -> str:
    effects = details.get("effects")
    if effects is None:
        return ""
    return "yes" if which in str(effects) else "no"


def _years(details: Mapping[str, Any]) -> Any:
    low, high, mean = details.get("years_min"), details.get("years_max"), details.get("years_mean")
    if low is not None and low == high:
        return Number(float(low), 0)
    if mean is None:
        return ""
    return Number(float(mean), 0 if float(mean).is_integer() else 1)


def estimate_columns(estimates: Sequence[Estimate], *, stat: str = "se", digits: int = 3,
                     labels: Mapping[str, str] | None = None) -> EstimateColumns:
    """Coefficients, the line below them and the sample facts, one column per estimate."""
    labels = labels or {}
    heads = _unique_heads(estimates, labels)
    terms: list[str] = []
    for est in estimates:
        terms += [t for t in est.params.index if t not in terms]
    out = EstimateColumns(heads)
    for term in terms:
        top: list[Number | str] = []
        below: list[Number | str] = []
        for est in estimates:
            if term not in est.params.index:
                top.append("")
                below.append("")
                continue
            p = float(est.pvalues[term])
            coef = float(est.params[term])
            d = _digits_for(coef, digits)
            top.append(Number(coef, d, stars=_stars(p)))
            if stat == "p":
                cell = table_pvalue(p, 3)
                below.append(Number(cell.value, 3, enclose="()", pvalue=True)
                             if isinstance(cell, Number) else "")
            else:
                value = est.std_errors[term] if stat == "se" else est.tstats[term]
                below.append(Number(float(value), d, enclose="()"))
        out.rows += [(term_name(str(term), labels), top), ("", below)]
    out.rule = len(out.rows)
    deps = [display_name(est.dependent, labels) for est in estimates]
    facts: list[tuple[str, list[Any]]] = []
    if len(set(deps)) > 1:
        facts.append(("Dependent variable", deps))
    facts += [
        ("Unit effects", [_effects(est.details, "unit") for est in estimates]),
        ("Year effects", [_effects(est.details, "year") for est in estimates]),
        ("Obs.", [Number(float(est.nobs), 0, thousands=True) for est in estimates]),
        ("Units", ["" if est.details.get("units") is None else Number(float(est.details["units"]), 0)
                   for est in estimates]),
        ("Years per unit", [_years(est.details) for est in estimates]),
        ("R² (within)", ["" if est.details.get("r2_within") is None
                         else Number(float(est.details["r2_within"]), digits) for est in estimates]),
        ("R²", ["" if est.details.get("r2") is None else Number(float(est.details["r2"]), digits)
                for est in estimates]),
    ]
    out.rows += [(name, cells) for name, cells in facts if any(c != "" for c in cells)]
    if len(set(deps)) == 1:
        out.notes.append(f"Dependent variable: {deps[0]}.")
    out.notes.append(stars_note(stat))
    out.notes += _errors_notes(estimates, heads, stat, labels)
    out.notes += _exclusions(estimates, heads)
    return out


def _errors_notes(estimates: Sequence[Estimate], heads: list[str], stat: str,
                  labels: Mapping[str, str]) -> list[str]:
    """One line naming the errors of every column (one line when all columns share them)."""
    word = "Standard errors" if stat == "se" else "Covariance"
    covs = [relabel(est.cov_type, labels) for est in estimates]
    if len(set(covs)) == 1:
        return [f"{word}: {covs[0]}."]
    groups: dict[str, list[str]] = {}
    for head, cov in zip(heads, covs, strict=True):
        groups.setdefault(cov, []).append(head)
    return [f"{word}, {' and '.join(who)}: {cov}." for cov, who in groups.items()]


def _exclusions(estimates: Sequence[Estimate], heads: list[str]) -> list[str]:
    """Notes listing what each estimate left out (rows, units), so no table hides an exclusion."""
    out = []
    for head, est in zip(heads, estimates, strict=True):
        for key in ("excluded", "skipped_units"):
            frame = est.details.get(key)
            if isinstance(frame, pd.DataFrame) and not frame.empty:
                items = "; ".join(" ".join(str(v) for v in row if str(v)) for row in
                                  frame.itertuples(index=False))
                out.append(f"{head} left out: {items}.")
    return out


def _tidy(estimates: Sequence[Estimate], heads: list[str]) -> pd.DataFrame:
    frames = []
    for head, est in zip(heads, estimates, strict=True):
        frame = est.to_frame().rename_axis("term").reset_index()
        frame.insert(0, "model", head)
        frame.insert(1, "estimator", est.estimator)
        frame.insert(2, "dependent", est.dependent)
        frame["cov_type"] = est.cov_type
        frame["nobs"] = est.nobs
        frames.append(frame)
    return pd.concat(frames, ignore_index=True)


def table_of_columns(body: EstimateColumns, fmt: str, *, title: str, notes: Sequence[str],
                     labels: Mapping[str, str], label: str | None, caution: bool, fit: str,
                     extra_rule: int | None = None) -> str:
    """Render an :class:`EstimateColumns` (also used by the convergence and EKC tables);
    ``extra_rule`` draws a further rule before that row."""
    table = Table(header=["", *body.heads], rows=[[name, *cells] for name, cells in body.rows],
                  numeric=[False] + [True] * len(body.heads), title=relabel(title, labels),
                  notes=finish_notes([*body.notes, *notes], caution, labels),
                  rules=(body.rule,) if extra_rule is None else (body.rule, extra_rule),
                  label=label, fit=fit)
    return render(table, fmt)


def check_table_options(fmt: str, digits: int, labels: Any, label: Any, fit: str) -> tuple:
    """The options every table function shares, validated."""
    from evidence.tables._render import FORMATS

    return (check_choice("format", fmt, FORMATS), check_int("digits", digits, minimum=0, maximum=12),
            check_labels(labels), check_label(label), check_choice("fit", fit, FITS))


def regression_table(estimates: Sequence[Estimate] | Estimate, fmt: str = "text", *,
                     stat: str = "se", title: str = "", notes: Sequence[str] = (), digits: int = 3,
                     labels: Mapping[str, str] | None = None, label: str | None = None,
                     caution: bool = True, fit: str = "auto") -> str:
    """Estimates side by side, each column headed by its estimator.

    Each coefficient carries a superscript mark of its two-sided p-value (``***`` < 0.01, ``**`` < 0.05,
    ``*`` < 0.10) and, beneath it, its standard error (``stat="se"``), t statistic (``"t"``) or
    p-value (``"p"``) in parentheses. Below a rule: unit and year effects, observations, units,
    years per unit and R² where the estimates have them. The notes name the dependent variable and
    the errors of each column, then ``notes``, what each estimate left out and (``caution=True``)
    the caution. ``labels`` renames variables (``{"log_gdp": "ln GDP"}``); ``label`` is the LaTeX
    ``\\label`` (default from the title); ``fit`` fits a wide LaTeX table to the page (``"auto"``,
    ``"shrink"``, ``"landscape"``, ``"none"``). ``csv`` and ``json`` give one tidy row per
    estimate and coefficient instead.
    """
    if isinstance(estimates, Estimate):
        estimates = [estimates]
    if not estimates:
        raise SpecError("regression_table needs at least one estimate (an Estimate, or a list of them).")
    stat = check_choice("stat", stat, ("se", "t", "p"))
    fmt, digits, labels, label, fit = check_table_options(fmt, digits, labels, label, fit)
    body = estimate_columns(estimates, stat=stat, digits=digits, labels=labels)
    if fmt in ("csv", "json"):
        return render_frame(_tidy(estimates, body.heads), fmt, title=title,
                            notes=[*body.notes, *notes], index=False, labels=labels,
                            caution=caution)
    return table_of_columns(body, fmt, title=title, notes=notes, labels=labels, label=label,
                            caution=caution, fit=fit)


def unit_table(estimate: Estimate, fmt: str = "text", *, title: str = "",
               notes: Sequence[str] = (), labels: Mapping[str, str] | None = None,
               label: str | None = None, caution: bool = True, fit: str = "auto") -> str:
    """Unit-level slopes of a mean-group-type estimate, one row per unit (the transposed layout)."""
    units = estimate.details.get("unit_params")
    if units is None:
        raise SpecError(f"the {estimate.estimator} estimate has no unit-level coefficients; unit_table "
                        "takes a mean-group-type estimate (mg, ccemg, amg).")
    labels = check_labels(labels)
    frame = units.copy()
    mean = pd.DataFrame([estimate.params.to_numpy()], columns=frame.columns,
                        index=pd.Index([f"{estimate.details.get('mean', 'mean')}"], name=frame.index.name))
    shown = pd.concat([frame, mean])
    if fmt.lower() not in ("csv", "json"):
        shown = shown.rename(columns={c: term_name(str(c), labels) for c in shown.columns})
    return render_frame(shown, fmt, title=title or f"Unit coefficients, {estimate.estimator}: "
                        f"{estimate.dependent}", notes=notes, labels=labels, label=label,
                        caution=caution, fit=fit)
