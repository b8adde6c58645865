"""The result of :func:`evidence.breaks.find_breaks`: break years, intervals, regimes, tests."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any

import pandas as pd

from evidence._json import json_safe
from evidence.results import ResultProtocol, TestResult, format_number, format_pvalue

__all__ = ["BreakResult", "CONVENTION"]

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
        conf = int(round((1 - self.alpha) * 100))
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
            lines.append(f"    {name:<12} {format_number(test.statistic):>10}   p {format_pvalue(test.pvalue):>8}"
                         f"   5% cv {format_number(cv, 2) if cv is not None else 'nan'}")
        for key in ("critical_values_source", "pvalue_source"):
            if key in self.details:
                lines.append(f"  {key.replace('_', ' ')}: {self.details[key]}")
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

    def plot(self, path: str | Path | None = None):  # noqa: ANN201
        """Series, fitted regimes and interval bands (matplotlib Figure; saved if ``path``)."""
        from evidence.breaks.plot import plot_breaks

        return plot_breaks(self, path=path)
