"""The unit-root battery: levels and first differences, several tests, one decision per series.

Deterministic terms: by default the levels are tested with a constant and a linear trend
(``trend="trend"``), the specification a referee expects for trending series such as GDP,
emissions or material use; pass ``trend="constant"`` for series without a trend (ratios, shares,
relative series). First differences are tested with a constant (without one when the levels have
none).

Decision rule (at level ``alpha``, default 5 %), for a unit, or for the panel from the panel
tests (row ``(panel)``). Tests whose null is a unit root (ADF, PP, DF-GLS, Zivot–Andrews,
Lee–Strazicich, IPS, LLC, Fisher, Breitung, CIPS) "reject" when p < alpha (a test without a
p-value: when the statistic is below the critical value at alpha); tests whose null is
stationarity (KPSS, Hadri) "reject" when p < alpha. In one transform the series is

* **stationary** when every unit-root test rejects and no stationarity test does;
* **non-stationary** when no unit-root test rejects (a stationarity test that also rejects
  confirms it; one that does not is reported, not required: at T = 25–40 a KPSS test that holds
  its size finds a random walk non-stationary only 7–25 % of the time).

The decision is ``I(0)`` when the levels are stationary; ``I(1)`` when the levels are
non-stationary and the first differences stationary; ``I(1) or higher`` when the levels are
non-stationary and differences were not tested; otherwise ``inconclusive`` (the tests disagree,
or the differences are not clearly stationary). The ``reason`` column says which. Tests that
could not apply or could not run are left out of the rule; their cells read ``n/a`` and the
``notes`` column (and the long table's ``note``) says why.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evidence._typing import Trend
from evidence._validation import (
    check_alpha,
    check_choice,
    check_lags,
    check_max_lags,
    check_trend,
    format_years,
)
from evidence.errors import DataError, EvidenceError, SpecError
from evidence.panel import Panel, derived_name
from evidence.results import ResultProtocol, TestResult, excluded_frame, format_pvalue
from evidence.roots import panel as panel_tests
from evidence.roots import series as series_tests

__all__ = ["root_battery", "RootBatteryResult", "SERIES_TESTS", "PANEL_TESTS", "STATIONARITY_NULL",
           "DECISION_RULE", "CELLS"]

SERIES_TESTS = ("adf", "pp", "kpss", "dfgls", "za", "ls")
PANEL_TESTS = ("ips", "llc", "fisher", "breitung", "hadri", "cips")
#: Tests whose null hypothesis is stationarity (their rejection points to a unit root).
STATIONARITY_NULL = ("kpss", "hadri")
DEFAULT_SERIES = ("adf", "kpss")
DEFAULT_PANEL = ("adf", "kpss", "ips", "cips")
PANEL_ROW = "(panel)"
#: The decision rule in words, carried by every result and printed under every table.
DECISION_RULE = (
    "Decision at alpha: a transform is stationary when every unit-root test (ADF, PP, DF-GLS, ZA, "
    "LS, IPS, LLC, Fisher, Breitung, CIPS) rejects and no stationarity test (KPSS, Hadri) rejects; "
    "non-stationary when no unit-root test rejects (a stationarity test that rejects confirms it). "
    "I(0): levels stationary. I(1): levels non-stationary, differences stationary. Otherwise "
    "inconclusive. Tests that could not run are left out (n/a, with the reason in notes).")


#: What the cells of :meth:`RootBatteryResult.decision_table` mean, printed under every table.
CELLS = (
    "Cells: p-values (simulated for each series' own length; docs/methods/roots.md), 'reject' / "
    "'no reject' for a test without one (at alpha). 'n/a': the test could not "
    "run or apply; the notes column says why. Empty: the test does not belong to the row (unit "
    "tests fill the units' rows, panel tests the (panel) row). Measured sizes: "
    "docs/methods/size.md.")


@dataclass(frozen=True, eq=False, repr=False)
class RootBatteryResult(ResultProtocol):
    """The battery's results: one row per unit, transform and test, and one decision per unit.

    ``table`` (long): unit, series ("level"/"difference"), test, statistic, pvalue, cv (at
    ``alpha``), lags, reject, note (why a test did not run or could not apply, and its
    warnings). ``decisions``: unit, decision, reason. ``excluded``: unit, column, years, reason
    for every test that raised on bad data (the layout of
    :data:`evidence.results.EXCLUDED_COLUMNS`). ``details["decision_rule"]`` states the rule.
    """

    table: pd.DataFrame
    decisions: pd.DataFrame
    excluded: pd.DataFrame
    column: str | None
    tests: tuple[str, ...]
    trend: str
    alpha: float
    differences: bool
    reference: str = "see docs/methods/roots.md"
    warnings: tuple[str, ...] = ()
    details: dict[str, Any] = field(default_factory=dict)

    _repr_fields = ("column", "trend", "alpha")

    def to_frame(self) -> pd.DataFrame:
        """The long table with each unit's decision."""
        return self.table.merge(self.decisions[["unit", "decision"]], on="unit", how="left")

    def decision_table(self) -> pd.DataFrame:
        """One row per unit: each test's p-value in levels (and differences), the decision, its
        reason and notes for the cells that read ``n/a``.

        A cell is empty where the test does not belong to the row (see :data:`CELLS`): a panel
        test on a unit's row, a unit test on the ``(panel)`` row."""
        t = self.table.copy()
        t["cell"] = [format_pvalue(p) if not math.isnan(p) else
                     ("reject" if r is True else "no reject" if r is False else "n/a")
                     for p, r in zip(t["pvalue"], t["reject"], strict=True)]
        t["key"] = t["test"] + " " + np.where(t["series"] == "level", "level", "diff")
        wide = t.pivot_table(index="unit", columns="key", values="cell", aggfunc="first", sort=False)
        order = [f"{test} {s}" for test in self.tests for s in ("level", "diff")
                 if f"{test} {s}" in wide.columns]
        wide = wide[order].reset_index()
        notes: dict[str, list[str]] = {}
        for unit, key, note in t.loc[t["cell"] == "n/a", ["unit", "key", "note"]].itertuples(index=False):
            notes.setdefault(unit, []).append(f"{key}: {note}")
        out = wide.merge(self.decisions, on="unit", how="left")
        out[order] = out[order].fillna("")      # a unit test on the (panel) row, a panel test on a unit
        out = out.fillna("n/a")
        out["notes"] = ["; ".join(notes.get(u, [])) for u in out["unit"]]
        return out

    def summary(self) -> str:
        """Counts of decisions, the rule, and what was left out."""
        lines = [f"Unit-root battery: {self.column or 'series'}, tests {', '.join(self.tests)}, "
                 f"levels with trend '{self.trend}', alpha {self.alpha:g}"]
        for label, n in self.decisions["decision"].value_counts().sort_index().items():
            lines.append(f"  {label}: {n}")
        lines.append(f"  rule: {DECISION_RULE}")
        lines.append(f"  {CELLS}")
        lines += [f"  left out: {r.unit} {r.column} {r.years} ({r.reason})"
                  for r in self.excluded.itertuples()]
        lines += [f"  warning: {w}" for w in self.warnings]
        return "\n".join(lines)


def _reject(test: str, res: TestResult, alpha: float) -> bool | None:
    if not res.applicable:
        return None
    if not math.isnan(res.pvalue):
        return bool(res.pvalue < alpha)
    cv = res.critical_values.get(round(alpha, 2))
    if cv is None:
        return None
    return bool(res.statistic < cv)


def _with_constant(trend: str) -> Trend:
    """The tests that need deterministic terms use a constant where none was asked."""
    return "trend" if trend == "trend" else "constant"


def _series_test(test: str, y: pd.Series, trend: Trend, lags: Any, max_lags: Any) -> TestResult:
    if test == "adf":
        return series_tests.adf_test(y, trend=trend, lags=lags, max_lags=max_lags)
    if test == "pp":
        return series_tests.pp_test(y, trend=trend)
    if test == "kpss":
        return series_tests.kpss_test(y, trend=_with_constant(trend))
    if test == "dfgls":
        return series_tests.dfgls_test(y, trend=_with_constant(trend), lags=lags,
                                       max_lags=max_lags)
    if test == "za":
        return series_tests.za_test(y, model="both" if trend == "trend" else "level", lags=lags,
                                    max_lags=max_lags)
    return series_tests.lee_strazicich_test(y, model="both" if trend == "trend" else "level")


def _panel_test(test: str, panel: Panel, column: str, trend: Trend, lags: Any, max_lags: Any) -> TestResult:
    if test == "ips":
        return panel_tests.ips_test(panel, column, trend=_with_constant(trend), lags=lags,
                                    max_lags=max_lags)
    if test == "llc":
        return panel_tests.llc_test(panel, column, trend=trend, lags=lags, max_lags=max_lags)
    if test == "fisher":
        return panel_tests.fisher_test(panel, column, trend=trend, lags=lags, max_lags=max_lags)
    if test == "breitung":
        return panel_tests.breitung_test(panel, column, trend=trend, lags=lags, max_lags=max_lags)
    if test == "hadri":
        return panel_tests.hadri_test(panel, column, trend=_with_constant(trend))
    if isinstance(lags, int):
        return panel_tests.cips_test(panel, column, trend=trend, lags=lags)
    return panel_tests.cips_test(panel, column, trend=trend)


#: Series tests the battery computes for all units of a panel at once (equal to the one-unit
#: functions: the same statistics, tables and warnings; ``tests/test_roots_battery.py``).
BATCHED = ("adf", "pp", "kpss")


def _batched_rows(panel: Panel, column: str, series: str, tests: tuple[str, ...], trend: Trend,
                  lags: Any, max_lags: Any, alpha: float) -> dict[tuple[str, str, str], dict[str, Any]]:
    """Rows of the :data:`BATCHED` tests for every unit of ``column``, computed per span length
    in one batch; empty when any unit needs the one-unit path (a gap, a short or constant unit,
    a unit without values, a singular regression), whose error rows say why."""
    from evidence._hac import newey_west_lags
    from evidence.roots._calibrate import TAILS, phi_hat_of, unit_null
    from evidence.roots._common import N_DETERMINISTIC, column_block, lag_bound, size_details
    from evidence.roots._unit_batch import adf_select, adf_tstats, kpss_eta, pp_tau

    mine = [t for t in tests if t in BATCHED]
    if not mine:
        return {}
    fixed = lags if isinstance(lags, int) else None
    kpss_trend = _with_constant(trend)
    need = max(4 + N_DETERMINISTIC[kpss_trend if t == "kpss" else trend]
               + ((fixed or 0) if t == "adf" else 0) for t in mine)
    try:
        block = column_block(panel, column, min_obs=need, purpose="the unit-root battery")
    except (DataError, SpecError):
        return {}
    if len(block.excluded):
        return {}
    out: dict[tuple[str, str, str], dict[str, Any]] = {}
    for length in np.unique(block.lengths):
        members = np.flatnonzero(block.lengths == length)
        y = np.column_stack([block.unit_values(int(i)) for i in members])
        n = int(length)
        for test in mine:
            tr = kpss_trend if test == "kpss" else trend
            kind, name = {"adf": ("adf", "ADF"), "pp": ("pp", "Phillips-Perron"),
                          "kpss": ("kpss", "KPSS")}[test]
            with np.errstate(all="ignore"):
                if test == "adf":
                    if fixed is not None:
                        stat, order, bound = adf_tstats(y, tr, fixed), np.full(y.shape[1], fixed), None
                    else:
                        bound = lag_bound(n, tr) if max_lags is None else max_lags
                        stat, order, _ = adf_select(y, tr, bound, lags)
                    table = unit_null(kind, n, tr, lags=fixed, max_lags=bound or 0,
                                      rule=lags if fixed is None else "aic")
                    shown = [str(int(v)) for v in order]
                else:
                    band = newey_west_lags(n)
                    stat = (pp_tau if test == "pp" else kpss_eta)(y, tr, band)
                    table = unit_null(kind, n, tr, hac_lags=band)
                    shown = [str(band)] * y.shape[1]
            if not np.isfinite(stat).all():
                return {}
            phi = phi_hat_of(kind, y, tr)
            pvalue = table.pvalue(stat, phi, tail=TAILS[kind])
            _, warn = size_details(name, None, n, "simulated", tr)
            note = "; ".join(warn)
            for j, i in enumerate(members):
                cv = table.quantiles(float(phi[j]), (0.01, 0.05, 0.10), tail=TAILS[kind])
                p = float(pvalue[j])
                out[(block.units[int(i)], series, test)] = {
                    "unit": block.units[int(i)], "series": series, "test": test,
                    "statistic": float(stat[j]), "pvalue": p,
                    "cv": cv.get(round(alpha, 2), math.nan), "lags": shown[j],
                    "reject": bool(p < alpha), "note": note}
    return out


def _row(unit: str, series: str, test: str, res: TestResult, alpha: float) -> dict[str, Any]:
    lags = res.details.get("lags", res.details.get("hac_lags", ""))
    if isinstance(lags, (list, tuple)):
        lags = f"{min(lags)}-{max(lags)}" if lags else ""
    note = "; ".join(res.warnings)
    if not res.applicable:
        note = f"not applicable: {res.details.get('inapplicable', note)}"
    return {"unit": unit, "series": series, "test": test, "statistic": res.statistic,
            "pvalue": res.pvalue, "cv": res.critical_values.get(round(alpha, 2), math.nan),
            "lags": str(lags), "reject": _reject(test, res, alpha), "note": note}


def _not_run(unit: str, series: str, test: str, exc: Exception) -> dict[str, Any]:
    return {"unit": unit, "series": series, "test": test, "statistic": math.nan,
            "pvalue": math.nan, "cv": math.nan, "lags": "", "reject": None,
            "note": f"not run: {exc}"}


def _classify(rows: list[dict[str, Any]]) -> tuple[str, str]:
    """``("stationary" | "non-stationary" | "mixed" | "none", words)`` for one transform."""
    used = [r for r in rows if r["reject"] is not None]
    root = [r for r in used if r["test"] not in STATIONARITY_NULL]
    stat = [r for r in used if r["test"] in STATIONARITY_NULL]
    if not used:
        return "none", "no test could run"
    names = lambda rs: ", ".join(r["test"] for r in rs)  # noqa: E731
    if root and all(r["reject"] for r in root) and not any(r["reject"] for r in stat):
        return "stationary", f"{names(root)} reject a unit root" + (
            f" and {names(stat)} do not reject stationarity" if stat else "")
    if root and not any(r["reject"] for r in root):
        confirming = [r for r in stat if r["reject"]]
        words = f"{names(root)} do not reject a unit root"
        if confirming:
            words += f"; {names(confirming)} reject stationarity"
        elif stat:
            words += f"; {names(stat)} do not reject stationarity (low power at this T)"
        return "non-stationary", words
    if not root:
        rejecting = [r for r in stat if r["reject"]]
        return "mixed", ("only stationarity tests ran; " + (f"{names(rejecting)} reject stationarity"
                                                              if rejecting else "none rejects"))
    return "mixed", "the tests disagree: " + ", ".join(
        f"{r['test']} {'rejects' if r['reject'] else 'does not reject'}" for r in used)


def _decide(rows: list[dict[str, Any]], differences: bool) -> tuple[str, str]:
    level, level_words = _classify([r for r in rows if r["series"] == "level"])
    if level == "stationary":
        return "I(0)", f"levels: {level_words}"
    if level != "non-stationary":
        return "inconclusive", f"levels: {level_words}"
    if not differences:
        return "I(1) or higher", f"levels: {level_words}; differences not tested"
    diff, diff_words = _classify([r for r in rows if r["series"] == "difference"])
    if diff == "stationary":
        return "I(1)", f"levels: {level_words}; differences: {diff_words}"
    return "inconclusive", f"levels: {level_words}; differences not clearly stationary: {diff_words}"


def _unit_series(data: Any, dpanel: Any, unit: str, column: str | None, diff_name: str,
                 series: str, given: pd.Series | None) -> pd.Series:
    """One unit's levels or first differences (``given``: the series of a one-series battery)."""
    if given is not None:
        return given if series == "level" else given.diff()
    if series == "level":
        return data.series(unit, column).rename(f"{unit}: {column}")
    return dpanel.series(unit, diff_name)


def _span(y: pd.Series) -> str:
    years = pd.Series(y).dropna().index
    try:
        return format_years(int(v) for v in years)
    except (TypeError, ValueError):
        return ""


def root_battery(data: Panel | pd.Series | np.ndarray, column: str | None = None, *,
                 tests: tuple[str, ...] | None = None, trend: Trend = "trend",
                 lags: int | str = "aic", max_lags: int | None = None, alpha: float = 0.05,
                 differences: bool = True) -> RootBatteryResult:
    """Run unit-root and stationarity tests on levels and first differences, and decide.

    Parameters
    ----------
    data : Panel, pandas.Series or 1-D array
        A series, or a panel (with ``column``): each unit is tested, and panel tests are run
        on the whole column.
    tests : tuple of str, optional
        From ``SERIES_TESTS`` ("adf", "pp", "kpss", "dfgls", "za", "ls") and, for a panel,
        ``PANEL_TESTS`` ("ips", "llc", "fisher", "breitung", "hadri", "cips"). Default
        ("adf", "kpss") for a series, ("adf", "kpss", "ips", "cips") for a panel.
    trend : {"none", "constant", "trend"}
        Deterministic terms in levels; default a constant and a trend (see the module docstring).
        KPSS, DF-GLS, IPS and Hadri use a constant where "none" is asked.
    lags, max_lags
        Lag choice of the ADF-type tests (and the prewhitening of Breitung; CIPS uses one lag
        unless ``lags`` is an integer).
    alpha : float
        Level of every decision.
    differences : bool
        Also test first differences (needed to call a series I(1)).

    Returns
    -------
    RootBatteryResult
        See the module docstring for the decision rule (also in ``details["decision_rule"]``).
    """
    trend = check_trend(trend)
    alpha = check_alpha(alpha)
    lags = check_lags(lags)
    max_lags = check_max_lags(max_lags)
    is_panel = isinstance(data, Panel)
    if isinstance(data, Panel):
        if column is None:
            raise SpecError("column= is needed with a Panel (the variable to test).")
        data.require(column)
    chosen = tuple(tests) if tests is not None else (DEFAULT_PANEL if is_panel else DEFAULT_SERIES)
    allowed = SERIES_TESTS + (PANEL_TESTS if is_panel else ())
    chosen = tuple(check_choice("tests", t, allowed) for t in chosen)
    if not chosen:
        raise SpecError("tests=() is empty; name at least one test, e.g. ('adf', 'kpss').")
    diff_trend: Trend = "none" if trend == "none" else "constant"
    name = column or "series"
    diff_name = derived_name("diff", name)
    rows: list[dict[str, Any]] = []
    skipped: list[dict[str, str]] = []
    if is_panel:
        assert isinstance(data, Panel) and column is not None  # checked above
        dpanel = data.with_difference(column, name=diff_name) if differences else None
        units = [(u, None) for u in data.units]   # each unit's series is read when needed
    else:
        dpanel = None
        y = data if isinstance(data, pd.Series) else pd.Series(
            np.asarray(data, dtype=float), index=np.arange(1, np.asarray(data).size + 1))
        units = [(str(y.name) if y.name is not None else "series", y)]
    batched: dict[tuple[str, str, str], dict[str, Any]] = {}
    if is_panel:
        assert isinstance(data, Panel) and column is not None  # checked above
        batched.update(_batched_rows(data, column, "level", chosen, trend, lags, max_lags, alpha))
        if dpanel is not None:
            batched.update(_batched_rows(dpanel, diff_name, "difference", chosen, diff_trend,
                                         lags, max_lags, alpha))
    for unit, given in units:
        for series, tr in (("level", trend), ("difference", diff_trend)):
            if series == "difference" and not differences:
                continue
            values: pd.Series | None = None
            for test in (t for t in chosen if t in SERIES_TESTS):
                if (unit, series, test) in batched:
                    rows.append(batched[(unit, series, test)])
                    continue
                if values is None:
                    values = _unit_series(data, dpanel, unit, column, diff_name, series, given)
                try:
                    rows.append(_row(unit, series, test, _series_test(test, values, tr, lags,
                                                                       max_lags), alpha))
                except DataError as exc:
                    rows.append(_not_run(unit, series, test, exc))
                    skipped.append({"unit": unit,
                                    "column": name if series == "level" else diff_name,
                                    "years": _span(values), "reason": f"{test}: {exc}"})
    if is_panel and any(t in PANEL_TESTS for t in chosen):
        assert isinstance(data, Panel) and column is not None  # checked above
        for series, pan, col, tr in (("level", data, column, trend),
                                     ("difference", dpanel, diff_name, diff_trend)):
            if pan is None:
                continue
            for test in (t for t in chosen if t in PANEL_TESTS):
                try:
                    rows.append(_row(PANEL_ROW, series, test,
                                     _panel_test(test, pan, col, tr, lags, max_lags), alpha))
                except EvidenceError as exc:
                    rows.append(_not_run(PANEL_ROW, series, test, exc))
    table = pd.DataFrame(rows, columns=["unit", "series", "test", "statistic", "pvalue", "cv",
                                        "lags", "reject", "note"])
    decisions = []
    for unit in dict.fromkeys([u for u, _ in units] + list(table["unit"])):
        sub = table[table["unit"] == unit].to_dict("records")
        label, reason = _decide(sub, differences) if sub else ("inconclusive", "no test could run")
        decisions.append({"unit": unit, "decision": label, "reason": reason})
    excluded = excluded_frame(skipped)
    warn = []
    if len(excluded):
        warn.append(f"{len(excluded)} test(s) not run for bad data; see 'excluded'.")
    return RootBatteryResult(table=table,
                             decisions=pd.DataFrame(decisions, columns=["unit", "decision", "reason"]),
                             excluded=excluded, column=column, tests=chosen, trend=trend,
                             alpha=alpha, differences=differences, warnings=tuple(warn),
                             details={"difference_trend": diff_trend, "lags": lags,
                                      "max_lags": max_lags, "decision_rule": DECISION_RULE,
                                      "cells": CELLS,
                                      "trend_rule": "levels: constant and trend by default (trending "
                                      "series); differences: a constant"})
