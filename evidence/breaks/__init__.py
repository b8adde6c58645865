"""Structural breaks: Bai–Perron partitions, break tests, break-date intervals, panel screening.

A break year is the last year of the old regime (Bai & Perron's convention).
"""

from evidence.breaks.common import common_breaks
from evidence.breaks.find import find_breaks
from evidence.breaks.result import BreakResult, CommonBreakResult, ScreenResult
from evidence.breaks.screen import screen_breaks
from evidence.breaks.stability import chow_test, cusum_test, ols_cusum_test

__all__ = ["BreakResult", "CommonBreakResult", "ScreenResult", "chow_test", "common_breaks",
           "cusum_test", "find_breaks", "ols_cusum_test", "screen_breaks"]
