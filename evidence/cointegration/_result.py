"""Result classes for tests that report several statistics at once (Pedroni, Kao, Westerlund, Johansen)."""

from __future__ import annotations

from dataclasses import dataclass

from evidence.results import TestGroupResult

__all__ = ["JohansenResult", "KaoResult", "PedroniResult", "TestGroupResult", "WesterlundResult"]


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
