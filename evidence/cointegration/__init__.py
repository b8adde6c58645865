"""Cointegration: single-series and panel tests, long-run estimators, panel Granger non-causality."""

from evidence.cointegration._result import (
    JohansenResult,
    KaoResult,
    PedroniResult,
    TestGroupResult,
    WesterlundResult,
)
from evidence.cointegration.causality import dumitrescu_hurlin_test
from evidence.cointegration.longrun import hausman_test, long_run
from evidence.cointegration.panel import kao_test, pedroni_test, westerlund_test
from evidence.cointegration.series import (
    ardl_bounds_test,
    cointegrating_regression,
    engle_granger_test,
    johansen_test,
    phillips_ouliaris_test,
)

__all__ = [
    "JohansenResult",
    "KaoResult",
    "PedroniResult",
    "TestGroupResult",
    "WesterlundResult",
    "ardl_bounds_test",
    "cointegrating_regression",
    "dumitrescu_hurlin_test",
    "engle_granger_test",
    "hausman_test",
    "johansen_test",
    "kao_test",
    "long_run",
    "pedroni_test",
    "phillips_ouliaris_test",
    "westerlund_test",
]
