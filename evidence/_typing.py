"""Type aliases shared across the package."""

from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd

#: Deterministic terms of a test regression: none, a constant, or a constant and a linear trend.
Trend = Literal["none", "constant", "trend"]
#: The spellings of :data:`Trend`, in order of the terms they add.
TRENDS: tuple[str, ...] = ("none", "constant", "trend")
#: Lag-order selection rules: information criteria, or general-to-specific on the last lag's t.
LAG_RULES: tuple[str, ...] = ("aic", "bic", "sequential-t")
#: Multiple-testing adjustments: Benjamini–Hochberg false discovery rate, Holm's step-down.
ADJUSTMENTS: tuple[str, ...] = ("bh", "holm", "none")
#: The seed every simulation and bootstrap uses unless the caller gives one (results reproduce).
DEFAULT_SEED = 20261202
Layout = Literal["auto", "long", "wide"]
Window = tuple[int, int]
ArrayLike1D = np.ndarray | pd.Series | list | tuple
Seed = int | np.random.Generator | None

__all__ = ["Trend", "TRENDS", "LAG_RULES", "ADJUSTMENTS", "DEFAULT_SEED", "Layout", "Window",
           "ArrayLike1D", "Seed"]
