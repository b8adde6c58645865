"""Timing helper shared by the benchmark scripts (best of several runs, wall clock)."""

from __future__ import annotations

import time
from collections.abc import Callable


def best_of(func: Callable[[], object], repeat: int = 3) -> float:
    """The shortest wall-clock time of ``repeat`` calls of ``func``, in seconds."""
    best = float("inf")
    for _ in range(repeat):
        start = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - start)
    return best
