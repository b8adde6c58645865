"""Type aliases shared across the package."""

from __future__ import annotations

from typing import Literal, Union

import numpy as np
import pandas as pd

Trend = Literal["n", "c", "ct"]
Layout = Literal["auto", "long", "wide"]
Window = tuple[int, int]
ArrayLike1D = Union[np.ndarray, pd.Series, list, tuple]
Seed = Union[int, np.random.Generator, None]

__all__ = ["Trend", "Layout", "Window", "ArrayLike1D", "Seed"]
