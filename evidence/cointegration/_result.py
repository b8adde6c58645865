"""Result classes for tests that report several statistics at once (Pedroni, Kao, Westerlund, Johansen)."""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import pandas as pd

from evidence._json import json_safe
from evidence.results import TestResult

__all__ = ["JohansenResult", "KaoResult", "PedroniResult", "TestGroupResult", "WesterlundResult"]


@dataclass(frozen=True, eq=False)
class TestGroupResult:
    """Several statistics of one test, each a :class:`~evidence.results.TestResult`.

    Attributes
    ----------
    test : str
        Name of the test family.
    results : tuple of TestResult
        One result per statistic, in the published order.
    details : mapping
        Options and by-products shared by the statistics (lags, bandwidth, seed...).
    excluded : pandas.DataFrame
        Units and years left out (unit, years, reason).
    reference, warnings
        As for :class:`~evidence.results.TestResult`.
    """

    __test__ = False

    test: str
    results: tuple[TestResult, ...]
    details: Mapping[str, Any] = field(default_factory=dict)
    excluded: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(columns=["unit", "years", "reason"]))
    reference: str = ""
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "results", tuple(self.results))
        object.__setattr__(self, "details", MappingProxyType(dict(self.details)))
        object.__setattr__(self, "excluded", pd.DataFrame(self.excluded).copy())
        object.__setattr__(self, "warnings", tuple(str(w) for w in self.warnings))

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
        parts = ", ".join(repr(r) for r in self.results)
        return f"{type(self).__name__}({self.test!r}: {parts})"

    def to_frame(self) -> pd.DataFrame:
        """One tidy row per statistic (as :meth:`TestResult.to_frame`)."""
        return pd.concat([r.to_frame() for r in self.results], ignore_index=True)

    def summary(self) -> str:
        """The summaries of every statistic, one after another."""
        blocks = [r.summary() for r in self.results]
        if len(self.excluded):
            blocks.append("left out: " + "; ".join(f"{r.unit} {r.years} ({r.reason})"
                                                   for r in self.excluded.itertuples()))
        return "\n".join(blocks)

    def to_dict(self) -> dict[str, Any]:
        """All fields as JSON-safe Python objects."""
        return json_safe({"test": self.test, "results": [r.to_dict() for r in self.results],
                          "details": dict(self.details),
                          "excluded": self.excluded.to_dict(orient="records"),
                          "reference": self.reference, "warnings": list(self.warnings)})


@dataclass(frozen=True, repr=False, eq=False)
class PedroniResult(TestGroupResult):
    """Pedroni's seven statistics: panel v, rho, PP, ADF; group rho, PP, ADF."""

    __test__ = False


@dataclass(frozen=True, repr=False, eq=False)
class KaoResult(TestGroupResult):
    """Kao's residual-based DF and ADF statistics."""

    __test__ = False


@dataclass(frozen=True, repr=False, eq=False)
class WesterlundResult(TestGroupResult):
    """Westerlund's four error-correction statistics: Gt, Ga, Pt, Pa."""

    __test__ = False


@dataclass(frozen=True, repr=False, eq=False)
class JohansenResult(TestGroupResult):
    """Johansen's trace and maximum-eigenvalue tests for each cointegrating rank."""

    __test__ = False
