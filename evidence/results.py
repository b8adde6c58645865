"""Result objects shared by every method, and the one protocol every result class follows.

:class:`TestResult` is the outcome of one test, :class:`Estimate` of one estimator and
:class:`TestGroupResult` a documented group of tests reported together (Pedroni's seven
statistics, say). Every other result class of the package (``BreakResult``, ``GradeResult``...)
is a frozen dataclass built on :class:`ResultProtocol`, which gives it the same face:

* a one-line ``repr`` and ``str(result) == result.summary()``;
* ``_repr_html_`` for notebooks (the summary, escaped);
* ``to_dict()`` from the dataclass fields, JSON-safe; ``to_frame()`` one tidy table;
* ``details`` frozen (read-only), ``warnings`` a tuple, and what was left out in ``excluded``, a
  frame with the columns of :data:`EXCLUDED_COLUMNS` (unit, column, years, reason).

Tables and reports only format these objects; they never recompute a statistic.
"""

from __future__ import annotations

import html
import math
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field, fields
from types import MappingProxyType
from typing import Any, ClassVar

import numpy as np
import pandas as pd
from scipy import stats

from evidence._json import json_safe

__all__ = ["ResultProtocol", "TestResult", "TestGroupResult", "Estimate", "EXCLUDED_COLUMNS",
           "excluded_frame", "format_pvalue", "format_number"]

#: The layout of every ``excluded`` table: which unit, which column, which years, and why.
EXCLUDED_COLUMNS = ("unit", "column", "years", "reason")


def excluded_frame(rows: Iterable[Mapping[str, Any]] | pd.DataFrame | None = None) -> pd.DataFrame:
    """What was left out, in the one layout of :data:`EXCLUDED_COLUMNS` (missing entries are "")."""
    if rows is None:
        records: list[Mapping[str, Any]] = []
    elif isinstance(rows, pd.DataFrame):
        records = rows.to_dict(orient="records")
    else:
        records = list(rows)
    frame = pd.DataFrame([{c: ("" if r.get(c) is None else str(r.get(c, ""))) for c in EXCLUDED_COLUMNS}
                          for r in records], columns=list(EXCLUDED_COLUMNS))
    return frame.astype(object)

LEVELS = (0.01, 0.05, 0.10)


def format_number(value: float | None, digits: int = 4) -> str:
    """Format a number with fixed decimals; NaN/None print as ``nan``."""
    if value is None:
        return "nan"
    value = float(value)
    if math.isnan(value):
        return "nan"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    return f"{value:.{digits}f}"


def format_pvalue(p: float | None) -> str:
    """Format a p-value: four decimals, ``<0.0001`` below that."""
    if p is None or (isinstance(p, float) and math.isnan(p)):
        return "nan"
    return "<0.0001" if p < 1e-4 else f"{p:.4f}"


def _printable(value: Any) -> bool:
    """Whether a details entry is short enough to print in a summary (tables stay in to_dict)."""
    if isinstance(value, (str, bool, int, float, np.integer, np.floating)) or value is None:
        return len(str(value)) <= 120
    if isinstance(value, (tuple, list)):
        return len(value) <= 12 and all(_printable(v) for v in value)
    return False


def _frozen_mapping(value: Mapping[Any, Any] | None) -> Mapping[Any, Any]:
    return MappingProxyType(dict(value or {}))


def _short(value: Any) -> str | None:
    """A scalar shown in a one-line repr, or None when the value is not a short scalar."""
    if isinstance(value, bool) or value is None:
        return None
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        return format_number(float(value))
    if isinstance(value, str) and len(value) <= 40:
        return repr(value)
    if isinstance(value, tuple) and len(value) <= 4 and all(isinstance(v, (int, np.integer)) for v in value):
        return repr(tuple(int(v) for v in value))
    return None


class ResultProtocol:
    """The face every result class shares (mix into a frozen dataclass).

    Subclasses set ``_repr_fields`` (the fields shown in the one-line repr; default: the first
    short scalar fields) and implement ``summary()`` and, where a table is natural, ``to_frame()``.
    ``details`` is frozen, ``warnings`` made a tuple and ``excluded`` put in the one layout when the
    dataclass has such fields. Fields listed in ``_private_fields`` stay out of ``to_dict()``.
    """

    _repr_fields: ClassVar[tuple[str, ...]] = ()
    _private_fields: ClassVar[tuple[str, ...]] = ()

    def __post_init__(self) -> None:
        names = {f.name for f in fields(self)}  # type: ignore[arg-type]
        if "details" in names:
            # getattr: a mixin, and only some result classes have these fields
            object.__setattr__(self, "details", _frozen_mapping(getattr(self, "details")))  # noqa: B009
        if "warnings" in names:
            object.__setattr__(self, "warnings",
                               tuple(str(w) for w in getattr(self, "warnings")))  # noqa: B009
        if "excluded" in names:
            object.__setattr__(self, "excluded", excluded_frame(getattr(self, "excluded")))  # noqa: B009

    def summary(self) -> str:
        """A readable block of text (subclasses give their own)."""
        return repr(self)

    def __str__(self) -> str:
        return self.summary()

    def __repr__(self) -> str:
        shown = self._repr_fields or tuple(f.name for f in fields(self))  # type: ignore[arg-type]
        parts = []
        for name in shown:
            text = _short(getattr(self, name, None))
            if text is not None:
                parts.append(f"{name}={text}")
            if not self._repr_fields and len(parts) == 4:
                break
        return f"{type(self).__name__}({', '.join(parts)})"

    def _repr_html_(self) -> str:
        return f"<pre>{html.escape(self.summary())}</pre>"

    def to_frame(self) -> pd.DataFrame:
        """One row of the short scalar fields (subclasses with a natural table override this)."""
        row = {f.name: getattr(self, f.name) for f in fields(self)  # type: ignore[arg-type]
               if _short(getattr(self, f.name)) is not None or isinstance(getattr(self, f.name), bool)}
        return pd.DataFrame([row])

    def to_dict(self) -> dict[str, Any]:
        """Every public field as JSON-safe Python objects."""
        out = {f.name: getattr(self, f.name) for f in fields(self)  # type: ignore[arg-type]
               if f.name not in self._private_fields and not f.name.startswith("_")}
        return json_safe(out)


@dataclass(frozen=True, repr=False)
class TestResult(ResultProtocol):
    """The outcome of one hypothesis test.

    Attributes
    ----------
    test : str
        Name of the test, e.g. ``"Pesaran CD"``.
    statistic, pvalue : float
        The test statistic and its p-value (NaN when the test could not apply).
    critical_values : mapping
        Critical values keyed by significance level (0.01, 0.05, 0.10) where known.
    null, alternative : str
        The hypotheses in words.
    nobs : int
        Observations used.
    details : mapping
        Options and by-products (lags, trend, bandwidth, seed, window...).
    reference : str
        Citation key of the method (see ``docs/methods``).
    warnings : tuple of str
        Cautions that apply to this result (small T, skipped units...).
    """

    __test__ = False  # not a pytest test class

    test: str
    statistic: float
    pvalue: float
    critical_values: Mapping[float, float] = field(default_factory=dict)
    null: str = ""
    alternative: str = ""
    nobs: int = 0
    details: Mapping[str, Any] = field(default_factory=dict)
    reference: str = ""
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "statistic", float(self.statistic))
        object.__setattr__(self, "pvalue", float(self.pvalue))
        object.__setattr__(self, "nobs", int(self.nobs))
        cv = {float(k): float(v) for k, v in dict(self.critical_values).items()}
        object.__setattr__(self, "critical_values", _frozen_mapping(cv))
        object.__setattr__(self, "details", _frozen_mapping(self.details))
        object.__setattr__(self, "warnings", tuple(str(w) for w in self.warnings))

    @classmethod
    def inapplicable(cls, test: str, *, reason: str, nobs: int = 0, reference: str = "") -> TestResult:
        """A result for a test that cannot apply here: NaN statistic and p-value, with the reason."""
        return cls(test=test, statistic=math.nan, pvalue=math.nan, nobs=nobs,
                   details={"inapplicable": reason}, reference=reference, warnings=(reason,))

    @property
    def applicable(self) -> bool:
        """False when the test could not be computed (see ``warnings`` for why)."""
        return "inapplicable" not in self.details

    def reject(self, alpha: float = 0.05) -> bool | None:
        """Whether H0 is rejected at level ``alpha`` (``None`` when the p-value is unknown)."""
        if math.isnan(self.pvalue):
            return None
        return bool(self.pvalue < alpha)

    def __repr__(self) -> str:
        return (f"TestResult(test={self.test!r}, statistic={format_number(self.statistic)}, "
                f"pvalue={format_pvalue(self.pvalue)}, nobs={self.nobs})")

    def summary(self) -> str:
        """A readable block of text: hypotheses, statistic, p-value, critical values, options."""
        lines = [self.test]
        if self.null:
            lines.append(f"  H0: {self.null}")
        if self.alternative:
            lines.append(f"  H1: {self.alternative}")
        lines.append(f"  statistic {format_number(self.statistic)}   p-value "
                     f"{format_pvalue(self.pvalue)}   nobs {self.nobs}")
        if self.critical_values:
            cvs = "  ".join(f"{k:.0%}: {format_number(v, 3)}"
                            for k, v in sorted(self.critical_values.items()))
            lines.append(f"  critical values  {cvs}")
        for key, value in self.details.items():
            if key != "inapplicable" and _printable(value):
                lines.append(f"  {key}: {value}")
        if self.reference:
            lines.append(f"  reference: {self.reference}")
        lines.extend(f"  warning: {w}" for w in self.warnings)
        return "\n".join(lines)

    def to_frame(self) -> pd.DataFrame:
        """One tidy row: test, statistic, p-value, critical values, nobs."""
        row: dict[str, Any] = {"test": self.test, "statistic": self.statistic,
                               "pvalue": self.pvalue, "nobs": self.nobs}
        for level in LEVELS:
            row[f"cv_{round(level * 100)}"] = self.critical_values.get(level, math.nan)
        row["null"] = self.null
        row["warnings"] = "; ".join(self.warnings)
        return pd.DataFrame([row])

    def to_dict(self) -> dict[str, Any]:
        """All fields as JSON-safe Python objects."""
        return json_safe({
            "test": self.test, "statistic": self.statistic, "pvalue": self.pvalue,
            "critical_values": {str(k): v for k, v in sorted(self.critical_values.items())},
            "null": self.null, "alternative": self.alternative, "nobs": self.nobs,
            "details": dict(self.details), "reference": self.reference,
            "warnings": list(self.warnings),
        })


@dataclass(frozen=True, eq=False, repr=False)
class TestGroupResult(ResultProtocol):
    """Several statistics of one test reported together, each a :class:`TestResult`.

    Returned by the tests whose papers define a family of statistics (Pedroni's seven, Kao's,
    Westerlund's four, Johansen's trace and maximum eigenvalue). Iterate over it, index it by
    position or by statistic name (``res["Gt"]``), or turn it into one row per statistic.

    Attributes
    ----------
    test : str
        Name of the test family.
    results : tuple of TestResult
        One result per statistic, in the published order.
    details : mapping
        Options and by-products shared by the statistics (lags, bandwidth, seed...).
    excluded : pandas.DataFrame
        Units and years left out (unit, column, years, reason).
    reference, warnings
        As for :class:`TestResult`.
    """

    __test__ = False

    test: str
    results: tuple[TestResult, ...]
    details: Mapping[str, Any] = field(default_factory=dict)
    excluded: pd.DataFrame = field(default_factory=excluded_frame)
    reference: str = ""
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        super().__post_init__()
        object.__setattr__(self, "results", tuple(self.results))

    def __iter__(self) -> Iterator[TestResult]:
        return iter(self.results)

    def __len__(self) -> int:
        return len(self.results)

    def __getitem__(self, name: str | int) -> TestResult:
        """A statistic by position or by name (the part after the family name, e.g. ``"Gt"``)."""
        if isinstance(name, int):
            return self.results[name]
        for res in self.results:
            if res.test == name or res.test.endswith(f" {name}") or res.details.get("statistic") == name:
                return res
        names = ", ".join(repr(r.details.get("statistic", r.test)) for r in self.results)
        raise KeyError(f"{name!r} is not one of {names}.")

    def __repr__(self) -> str:
        parts = ", ".join(f"{r.details.get('statistic', r.test)}={format_number(r.statistic)} "
                          f"(p {format_pvalue(r.pvalue)})" for r in self.results)
        return f"{type(self).__name__}({self.test!r}: {parts})"

    def to_frame(self) -> pd.DataFrame:
        """One tidy row per statistic (as :meth:`TestResult.to_frame`)."""
        return pd.concat([r.to_frame() for r in self.results], ignore_index=True)

    def summary(self) -> str:
        """The summaries of every statistic, one after another, then what was left out."""
        blocks = [r.summary() for r in self.results]
        if len(self.excluded):
            blocks.append("left out: " + "; ".join(
                f"{r.unit} {r.column} {r.years} ({r.reason})".replace("  ", " ")
                for r in self.excluded.itertuples()))
        return "\n".join(blocks)

    def to_dict(self) -> dict[str, Any]:
        """All fields as JSON-safe Python objects."""
        return json_safe({"test": self.test, "results": [r.to_dict() for r in self.results],
                          "details": dict(self.details),
                          "excluded": self.excluded.to_dict(orient="records"),
                          "reference": self.reference, "warnings": list(self.warnings)})


def _as_series(values: Any, index: pd.Index, name: str) -> pd.Series:
    series = pd.Series(np.asarray(values, dtype=float), index=index, name=name)
    return series


@dataclass(frozen=True, eq=False, repr=False)
class Estimate(ResultProtocol):
    """Coefficients of one estimated model with their covariance.

    Attributes
    ----------
    estimator : str
        Name of the estimator (``"fixed effects"``, ``"CCE mean group"``...).
    dependent : str
        The dependent variable.
    params, std_errors : pandas.Series
        Coefficients and standard errors, indexed by regressor name.
    cov : pandas.DataFrame
        Covariance of the coefficients.
    cov_type : str
        How ``cov`` was computed, in words (e.g. ``"Driscoll-Kraay, bandwidth 3"``).
    nobs : int
        Observations used.
    df_resid : float or None
        Degrees of freedom of the Student t reference distribution; ``None`` for the normal.
    details, reference, warnings
        As for :class:`TestResult`.
    resid : pandas.Series or None
        Residuals indexed by (unit, time) where the estimator provides them (for fixed effects,
        the idiosyncratic residuals net of the estimated effects). Not part of ``to_dict()``.
    """

    estimator: str
    dependent: str
    params: pd.Series
    std_errors: pd.Series
    cov: pd.DataFrame
    cov_type: str
    nobs: int
    df_resid: float | None = None
    details: Mapping[str, Any] = field(default_factory=dict)
    reference: str = ""
    warnings: tuple[str, ...] = ()
    resid: pd.Series | None = None

    def __post_init__(self) -> None:
        params = pd.Series(self.params, dtype=float).copy()
        index = params.index
        object.__setattr__(self, "params", params.rename("params"))
        object.__setattr__(self, "std_errors", _as_series(self.std_errors, index, "std_errors"))
        cov = pd.DataFrame(np.asarray(self.cov, dtype=float), index=index, columns=index)
        object.__setattr__(self, "cov", cov)
        object.__setattr__(self, "nobs", int(self.nobs))
        object.__setattr__(self, "details", _frozen_mapping(self.details))
        object.__setattr__(self, "warnings", tuple(str(w) for w in self.warnings))
        if self.resid is not None:
            object.__setattr__(self, "resid", pd.Series(self.resid, dtype=float, name="resid").copy())

    @property
    def tstats(self) -> pd.Series:
        """Coefficient divided by its standard error."""
        return (self.params / self.std_errors).rename("tstats")

    @property
    def pvalues(self) -> pd.Series:
        """Two-sided p-values (Student t with ``df_resid`` degrees of freedom, else normal)."""
        t = np.abs(self.tstats.to_numpy())
        p = 2 * stats.norm.sf(t) if self.df_resid is None else 2 * stats.t.sf(t, self.df_resid)
        return pd.Series(p, index=self.params.index, name="pvalues")

    def conf_int(self, alpha: float = 0.05) -> pd.DataFrame:
        """Two-sided ``1 - alpha`` confidence intervals, columns ``lower`` and ``upper``."""
        if self.df_resid is None:
            q = stats.norm.ppf(1 - alpha / 2)
        else:
            q = stats.t.ppf(1 - alpha / 2, self.df_resid)
        return pd.DataFrame({"lower": self.params - q * self.std_errors,
                             "upper": self.params + q * self.std_errors})

    def __repr__(self) -> str:
        coefs = ", ".join(f"{k}={format_number(v)}" for k, v in self.params.items())
        return f"Estimate(estimator={self.estimator!r}, {coefs}, nobs={self.nobs})"

    def to_frame(self) -> pd.DataFrame:
        """One row per coefficient: estimate, standard error, t, p-value and 95 % interval."""
        ci = self.conf_int()
        return pd.DataFrame({"estimate": self.params, "std_error": self.std_errors,
                             "tstat": self.tstats, "pvalue": self.pvalues,
                             "lower": ci["lower"], "upper": ci["upper"]})

    def summary(self) -> str:
        """A readable coefficient table with the estimator, covariance and sample."""
        lines = [f"{self.estimator}: {self.dependent}",
                 f"  covariance: {self.cov_type}   nobs {self.nobs}"]
        frame = self.to_frame()
        width = max([len(str(k)) for k in frame.index] + [8])
        lines.append(f"  {'':<{width}} {'estimate':>10} {'std.err':>10} {'t':>8} {'p-value':>9}")
        for name, row in frame.iterrows():
            lines.append(f"  {name!s:<{width}} {format_number(row['estimate']):>10} "
                         f"{format_number(row['std_error']):>10} {format_number(row['tstat'], 2):>8} "
                         f"{format_pvalue(row['pvalue']):>9}")
        for key, value in self.details.items():
            if _printable(value):
                lines.append(f"  {key}: {value}")
        if self.reference:
            lines.append(f"  reference: {self.reference}")
        lines.extend(f"  warning: {w}" for w in self.warnings)
        return "\n".join(lines)

    def to_dict(self) -> dict[str, Any]:
        """All fields as JSON-safe Python objects."""
        return json_safe({
            "estimator": self.estimator, "dependent": self.dependent,
            "params": self.params, "std_errors": self.std_errors,
            "pvalues": self.pvalues, "cov": {str(k): self.cov[k] for k in self.cov.columns},
            "cov_type": self.cov_type, "nobs": self.nobs, "df_resid": self.df_resid,
            "details": dict(self.details), "reference": self.reference,
            "warnings": list(self.warnings),
        })
