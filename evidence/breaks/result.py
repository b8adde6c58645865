"""Results of the break functions: one series (``BreakResult``), a panel screen (``ScreenResult``)
and common breaks (``CommonBreakResult``)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np
import pandas as pd

from evidence._json import json_safe
from evidence.results import ResultProtocol, TestResult, format_number, format_pvalue

__all__ = ["BreakResult", "ScreenResult", "CommonBreakResult", "CONVENTION"]

_ADJUST_NAMES = {"bh": "Benjamini-Hochberg", "holm": "Holm", "none": "no"}

CONVENTION = "A break year is the last year of the old regime; the new regime starts the year after."


@dataclass(frozen=True, eq=False, repr=False)
class BreakResult(ResultProtocol):
    """Breaks found in one series.

    Attributes
    ----------
    series, model : str
        Label of the series; ``"level"`` or ``"trend"`` (plus any user regressors).
    n_breaks : int
        Number of breaks selected (by ``select``).
    break_years : tuple of int
        Last year of each old regime.
    intervals : pandas.DataFrame
        One row per break: ``break_year``, ``lower``, ``upper`` (``1 - alpha`` interval, years).
    regimes : pandas.DataFrame
        One row per regime and changing coefficient: ``first_year``, ``last_year``, ``nobs``,
        ``estimate``, ``std_error``.
    fixed_params : pandas.DataFrame
        Coefficients held fixed across regimes, with standard errors (empty if none).
    ssr : pandas.Series
        The smallest SSR for every number of breaks ``m = 0..max_breaks``.
    partitions : mapping
        ``m -> break years`` of the SSR-minimising partition with ``m`` breaks.
    criteria : pandas.DataFrame
        BIC and LWZ for every ``m``.
    tests : mapping of str to TestResult
        supF(k), UDmax, WDmax and sequential supF(l+1|l).
    data, fitted : pandas.Series
        The series used and its fitted values under the selected partition.
    """

    series: str
    model: str
    n_breaks: int
    break_years: tuple[int, ...]
    intervals: pd.DataFrame
    regimes: pd.DataFrame
    fixed_params: pd.DataFrame
    ssr: pd.Series
    partitions: Mapping[int, tuple[int, ...]]
    criteria: pd.DataFrame
    tests: Mapping[str, TestResult]
    data: pd.Series
    fitted: pd.Series
    nobs: int
    trim: float
    max_breaks: int
    select: str
    alpha: float
    details: Mapping[str, Any] = field(default_factory=dict)
    reference: str = "baiperron1998; baiperron2003; bai1997"
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        super().__post_init__()
        object.__setattr__(self, "partitions", MappingProxyType(dict(self.partitions)))
        object.__setattr__(self, "tests", MappingProxyType(dict(self.tests)))
        object.__setattr__(self, "break_years", tuple(int(b) for b in self.break_years))

    def __repr__(self) -> str:
        years = ", ".join(str(b) for b in self.break_years) or "none"
        return (f"BreakResult(series={self.series!r}, model={self.model!r}, n_breaks={self.n_breaks}, "
                f"break_years=[{years}], nobs={self.nobs})")

    @property
    def supf_pvalue(self) -> float:
        """p-value of UDmax (no break against 1..max_breaks breaks)."""
        return self.tests["UDmax"].pvalue

    def summary(self) -> str:
        """A readable report: breaks with intervals, regimes, SSR by m, tests."""
        first, last = int(self.data.index[0]), int(self.data.index[-1])
        lines = [f"Structural breaks in {self.series} ({self.model} model, {first}-{last}, T={self.nobs})",
                 f"  trim {self.trim}, max_breaks {self.max_breaks}, selection {self.select}: "
                 f"{self.n_breaks} break(s)", f"  {CONVENTION}"]
        conf = round((1 - self.alpha) * 100)
        for row in self.intervals.itertuples(index=False):
            lines.append(f"  break {row.break_year}   {conf}% interval {row.lower}-{row.upper}")
        lines.append("  regimes:")
        for (regime, term), row in self.regimes.iterrows():
            lines.append(f"    {regime} {int(row['first_year'])}-{int(row['last_year'])} {term:<10} "
                         f"{format_number(row['estimate']):>12} ({format_number(row['std_error'])})")
        for term, row in self.fixed_params.iterrows():
            lines.append(f"    fixed {term:<10} {format_number(row['estimate']):>12} "
                         f"({format_number(row['std_error'])})")
        lines.append("  best SSR by number of breaks: " + ", ".join(
            f"{m}: {v:.6g}" for m, v in self.ssr.items()))
        lines.append("  tests:")
        for name, test in self.tests.items():
            cv = test.critical_values.get(0.05)
            lines.append(f"    {name:<12} {format_number(test.statistic):>10}"
                         f"   p {format_pvalue(test.pvalue):>8}"
                         f"   5% cv {format_number(cv, 2) if cv is not None else 'nan'}")
        for key in ("critical_values_source", "pvalue_source"):
            if key in self.details:
                lines.append(f"  {key.replace('_', ' ')}: {self.details[key]}")
        if "resid_ar1" in self.details:
            inside = "within" if self.details.get("ar1_covered") else "OUTSIDE"
            lines.append(f"  residual AR(1) of the selected fit {self.details['resid_ar1']:.2f} "
                         f"(bias-adjusted), {inside} the range the p-values are calibrated for "
                         "(0 to 0.8)")
        size = self.details.get("size") or {}
        if "measured" in size:
            state = "controlled" if size.get("controlled") else "NOT controlled"
            lines.append(f"  size at 5 % nominal, T={size['n_years']}: {size['measured']:.1%} in the "
                         f"worst of {size['processes']} noise processes ({state}; "
                         "docs/methods/size.md)")
        elif "note" in size:
            lines.append(f"  size: {size['note']}")
        lines.append(f"  reference: {self.reference}")
        lines.extend(f"  warning: {w}" for w in self.warnings)
        return "\n".join(lines)

    def to_frame(self) -> pd.DataFrame:
        """One tidy row: the series, its years, the breaks with their intervals and the UDmax test."""
        ud = self.tests.get("UDmax")
        return pd.DataFrame([{
            "series": self.series, "model": self.model, "first_year": int(self.data.index[0]),
            "last_year": int(self.data.index[-1]), "nobs": self.nobs, "n_breaks": self.n_breaks,
            "break_years": self.break_years,
            "lower": tuple(int(v) for v in self.intervals["lower"]),
            "upper": tuple(int(v) for v in self.intervals["upper"]),
            "udmax": ud.statistic if ud is not None else float("nan"),
            "pvalue": ud.pvalue if ud is not None else float("nan")}])

    def to_dict(self) -> dict[str, Any]:
        """All fields as JSON-safe Python objects."""
        return json_safe({
            "series": self.series, "model": self.model, "n_breaks": self.n_breaks,
            "break_years": list(self.break_years), "convention": CONVENTION,
            "intervals": self.intervals.to_dict(orient="records"),
            "regimes": self.regimes.reset_index().to_dict(orient="records"),
            "fixed_params": self.fixed_params.reset_index().to_dict(orient="records"),
            "ssr": {str(k): v for k, v in self.ssr.items()},
            "partitions": {str(k): list(v) for k, v in self.partitions.items()},
            "criteria": self.criteria.reset_index().to_dict(orient="records"),
            "tests": {k: v.to_dict() for k, v in self.tests.items()},
            "nobs": self.nobs, "trim": self.trim, "max_breaks": self.max_breaks,
            "select": self.select, "alpha": self.alpha, "details": dict(self.details),
            "reference": self.reference, "warnings": list(self.warnings),
        })

    def plot(self, path: str | Path | None = None):
        """Series, fitted regimes and interval bands (matplotlib Figure; saved if ``path``)."""
        from evidence.breaks.plot import plot_breaks

        return plot_breaks(self, path=path)


@dataclass(frozen=True, eq=False, repr=False)
class ScreenResult(ResultProtocol):
    """Per-unit breaks of one column.

    Attributes
    ----------
    column : str
        The column screened.
    table : pandas.DataFrame
        One row per unit (index ``unit``): ``first_year``, ``last_year``, ``n_breaks``,
        ``break_years``, interval bounds ``lower`` and ``upper`` (tuples, one entry per break),
        ``supf_1``, ``udmax``, its ``pvalue`` and ``pvalue_adjusted`` across units, ``ar1`` (the
        bias-adjusted AR(1) coefficient of the residuals of the selected fit) and ``ar1_covered``
        (whether it lies in the range for which the p-values are calibrated).
    counts : pandas.Series
        Units with a break in each year.
    clustering : TestResult
        Permutation test of whether break years cluster across units.
    excluded : pandas.DataFrame
        Units and years left out (unit, column, years, reason).
    details, reference, warnings
        Options, sources and cautions.
    """

    column: str
    table: pd.DataFrame
    counts: pd.Series
    clustering: TestResult
    excluded: pd.DataFrame
    details: Mapping[str, Any] = field(default_factory=dict)
    reference: str = "baiperron2003; benjaminihochberg1995"
    warnings: tuple[str, ...] = ()
    _series: Any = field(default=None, repr=False, compare=False)
    _partitions: Any = field(default=None, repr=False, compare=False)

    _private_fields = ("_series", "_partitions")

    def partitions(self, m: int) -> pd.Series:
        """Every unit's least-squares partition with ``m`` breaks (break years, last year of the
        old regime), whatever number was selected; ``m`` from 0 to ``max_breaks``."""
        data = self._partitions
        if data is None or not 0 <= int(m) < data["breaks"].shape[1]:
            raise KeyError(f"m={m!r}: partitions are kept for m = 0..{self.details.get('max_breaks')}.")
        cut = data["breaks"][:, int(m), :int(m)].astype(np.int64) + data["first"][:, None]
        return pd.Series([tuple(row) for row in cut.tolist()], index=pd.Index(data["units"], name="unit"),
                         name=f"partition_{int(m)}")

    def unit(self, name: str) -> BreakResult:
        """The full :class:`BreakResult` of one unit, computed on request with the screen's options.

        Its break years, intervals and UDmax p-value equal the unit's row of ``table``.
        """
        from evidence.breaks.find import find_breaks

        if self._series is None or name not in self._series:
            raise KeyError(f"unit {name!r} was not screened; screened units are the index of .table.")
        series = self._series[name]
        opts = {k: self.details[k] for k in ("model", "max_breaks", "trim", "select", "alpha",
                                            "inference")}
        return find_breaks(series, **opts)

    def __repr__(self) -> str:
        flagged = int((self.table["n_breaks"] > 0).sum()) if len(self.table) else 0
        return (f"ScreenResult(column={self.column!r}, units={len(self.table)}, "
                f"with_breaks={flagged}, excluded={len(self.excluded)})")

    def to_frame(self) -> pd.DataFrame:
        """The per-unit table with ``unit`` as a column."""
        return self.table.reset_index()

    def summary(self) -> str:
        """Units screened, units with breaks, the most common break years, clustering, exclusions."""
        tab = self.table
        flagged = tab[tab["n_breaks"] > 0]
        lines = [f"Break screen of {self.column}: {len(tab)} unit(s), {len(flagged)} with at least "
                 f"one break ({self.details.get('model')} model, trim {self.details.get('trim')}, "
                 f"selection {self.details.get('select')})", f"  {CONVENTION}"]
        alpha = float(self.details.get("alpha", 0.05))
        adj = _ADJUST_NAMES.get(str(self.details.get("adjust")), str(self.details.get("adjust")))
        lines.append(f"  UDmax significant at {alpha:g} after {adj} adjustment: "
                     f"{int((tab['pvalue_adjusted'] < alpha).sum())} unit(s); p-values "
                     f"{self.details.get('inference')}")
        outside = int((~tab["ar1_covered"]).sum()) if "ar1_covered" in tab else 0
        if outside:
            lines.append(f"  residual AR(1) above the calibrated range in {outside} unit(s) "
                         "(column ar1_covered)")
        top = self.counts[self.counts > 0].sort_values(ascending=False, kind="stable").head(5)
        if len(top):
            lines.append("  most common break years: " + ", ".join(f"{y} ({n})" for y, n in top.items()))
        if self.clustering.applicable:
            lines.append(f"  clustering: {self.clustering.statistic:.0f} units within "
                         f"+-{self.clustering.details.get('spread')} year(s), permutation p "
                         f"{format_pvalue(self.clustering.pvalue)}")
        for row in flagged.itertuples():
            years = ", ".join(f"{b} ({lo}-{hi})"
                              for b, lo, hi in zip(row.break_years, row.lower, row.upper, strict=True))
            cover = "" if getattr(row, "ar1_covered", True) else ", outside the calibrated range"
            lines.append(f"    {row.Index}: {years}   p {format_pvalue(row.pvalue)}   residual "
                         f"AR(1) {row.ar1:.2f}{cover}")
        if len(self.excluded):
            lines.append(f"  left out: {len(self.excluded)} row(s); see .excluded")
        lines.append(f"  reference: {self.reference}")
        lines.extend(f"  warning: {w}" for w in self.warnings)
        return "\n".join(lines)

    def to_dict(self) -> dict[str, Any]:
        """All fields as JSON-safe Python objects."""
        return json_safe({"column": self.column, "table": self.to_frame().to_dict(orient="records"),
                          "counts": {str(k): int(v) for k, v in self.counts.items()},
                          "clustering": self.clustering.to_dict(),
                          "excluded": self.excluded.to_dict(orient="records"),
                          "details": dict(self.details), "reference": self.reference,
                          "warnings": list(self.warnings)})


@dataclass(frozen=True, eq=False, repr=False)
class CommonBreakResult(ResultProtocol):
    """Common break years of a panel column, their intervals, and the pooled test."""

    column: str
    n_breaks: int
    break_years: tuple[int, ...]
    intervals: pd.DataFrame
    ssr: pd.Series
    test: TestResult
    excluded: pd.DataFrame
    details: Mapping[str, Any] = field(default_factory=dict)
    reference: str = "bai2010"
    warnings: tuple[str, ...] = ()

    _repr_fields = ("column", "n_breaks", "break_years")

    def __post_init__(self) -> None:
        super().__post_init__()
        object.__setattr__(self, "break_years", tuple(int(b) for b in self.break_years))

    def to_frame(self) -> pd.DataFrame:
        """One row per common break: break year and interval."""
        return self.intervals.copy()

    def summary(self) -> str:
        """Break years with intervals, the pooled test and what was left out."""
        lines = [f"Common breaks in {self.column}: {self.n_breaks} break(s) across "
                 f"{self.details.get('units')} unit(s) ({self.details.get('model')} model)",
                 f"  {CONVENTION}"]
        for row in self.intervals.itertuples(index=False):
            lines.append(f"  break {row.break_year}   interval {row.lower}-{row.upper}")
        lines.append(f"  {self.test.test}: {self.test.statistic:.4f}, p {format_pvalue(self.test.pvalue)}")
        if len(self.excluded):
            lines.append(f"  left out: {len(self.excluded)} row(s); see .excluded")
        lines.append(f"  reference: {self.reference}")
        lines.extend(f"  warning: {w}" for w in self.warnings)
        return "\n".join(lines)

    def to_dict(self) -> dict[str, Any]:
        """All fields as JSON-safe Python objects."""
        return json_safe({"column": self.column, "n_breaks": self.n_breaks,
                          "break_years": list(self.break_years),
                          "intervals": self.intervals.to_dict(orient="records"),
                          "ssr": {str(k): v for k, v in self.ssr.items()},
                          "test": self.test.to_dict(),
                          "excluded": self.excluded.to_dict(orient="records"),
                          "details": dict(self.details), "reference": self.reference,
                          "warnings": list(self.warnings)})
