"""Trend tests robust to stationary or integrated noise (the grade's direction test)."""

from evidence.trend.robust import (
                                   ALTERNATIVES,
                                   DEFAULT_TREND_TEST,
                                   MIN_YEARS,
                                   TREND_TESTS,
                                   test_label,
                                   trend_batch,
                                   trend_test,
)

__all__ = ["trend_test", "trend_batch", "test_label", "TREND_TESTS", "DEFAULT_TREND_TEST",
           "ALTERNATIVES", "MIN_YEARS"]
