"""Option checks shared by the break functions: trimming, the number of breaks, model, regressors.

Series are cleaned by the package's one cleaner, :func:`evidence._arrays.clean_series`; panels
become arrays through :meth:`evidence.panel.Panel.arrays`.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evidence._arrays import clean_series
from evidence._validation import check_choice, check_int, check_number
from evidence.breaks.segment import MODELS, min_length
from evidence.errors import DataError, SpecError

__all__ = ["series_input", "check_trim", "check_breaks", "check_model", "regressor_matrix", "SELECTIONS"]

SELECTIONS = ("bic", "lwz", "sequential")


def series_input(y: Any, years: Any, purpose: str) -> tuple[np.ndarray, np.ndarray, str, str]:
    """Values, integer years, a label for messages and the series' name (``"series"`` if none).

    Leading and trailing missing values are dropped; a missing value inside the series, a
    constant series or non-consecutive years raise ``DataError`` (``clean_series``). Arrays
    without ``years`` are numbered from 1.
    """
    name = str(y.name) if isinstance(y, pd.Series) and y.name is not None else "series"
    data = clean_series(y, years, name=None if name == "series" else name, min_obs=1,
                        purpose=purpose)
    return data.values, data.years, data.label, name


def check_trim(trim: Any) -> float:
    """``trim`` must be a fraction in (0, 0.5)."""
    return check_number("trim", trim, low=0.0, high=0.5, inclusive=False,
                        hint=" (common choices: 0.05, 0.10, 0.15, 0.20)")


def check_breaks(label: str, nobs: int, q: int, p: int, trim: float, max_breaks: Any,
                 first: int, last: int) -> int:
    """Minimum regime length ``h``; raises when T is too short or ``max_breaks`` impossible."""
    max_breaks = check_int("max_breaks", max_breaks, minimum=1)
    h = min_length(nobs, trim)
    need = q + 1
    if h < need or 2 * h > nobs:
        shortest = int(np.ceil(need / trim))
        raise DataError(f"{label}: {nobs} years ({first}-{last}) are too few for trim={trim}: "
                        f"regimes of floor({trim}*{nobs}) = {h} years cannot fit {q} "
                        f"coefficients and a residual; use at least {max(shortest, 2 * need)} years "
                        "or a larger trim.")
    possible = nobs // h - 1
    if max_breaks > possible:
        raise SpecError(f"max_breaks={max_breaks} is impossible for {label}: with {nobs} years and "
                        f"trim={trim} each regime needs {h} years, so at most {possible} break(s) "
                        f"fit; use max_breaks<={possible} or a smaller trim.")
    if nobs - (max_breaks + 1) * q - p <= 0:
        raise SpecError(f"max_breaks={max_breaks} leaves no residual degrees of freedom for {label}.")
    return h


def regressor_matrix(values: Any, nobs: int, label: str, what: str) -> tuple[np.ndarray | None, list[str]]:
    """A (T, k) float matrix and column names from a DataFrame, 2-D array or ``None``."""
    if values is None:
        return None, []
    if isinstance(values, pd.Series):
        values = values.to_frame()
    if isinstance(values, pd.DataFrame):
        names = [str(c) for c in values.columns]
        matrix = values.to_numpy(dtype=float)
    else:
        matrix = np.asarray(values, dtype=float)
        if matrix.ndim == 1:
            matrix = matrix[:, None]
        names = [f"{what}{i + 1}" for i in range(matrix.shape[1])]
    if matrix.shape[0] != nobs:
        raise DataError(f"{label}: {what} has {matrix.shape[0]} rows but the series has {nobs} "
                        "(after dropping leading/trailing missing values); align them by year.")
    if not np.isfinite(matrix).all():
        raise DataError(f"{label}: {what} contains missing or infinite values.")
    return matrix, names


def check_model(model: Any) -> str:
    """``model`` in {"level", "trend"}."""
    return check_choice("model", model, tuple(MODELS))
