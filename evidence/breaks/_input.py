"""Input checks shared by the break functions: series, years, trimming and the number of breaks."""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evidence._validation import check_choice
from evidence.breaks.segment import MODELS, min_length
from evidence.errors import DataError, SpecError

__all__ = ["as_series", "check_trim", "check_breaks", "check_model", "regressor_matrix", "SELECTIONS"]

SELECTIONS = ("bic", "lwz", "sequential")


def as_series(y: Any, years: Any = None, *, name: str = "series") -> tuple[np.ndarray, np.ndarray, str]:
    """Values, integer years and a label; leading/trailing NaN are dropped, inner NaN raise."""
    if isinstance(y, pd.Series):
        label = str(y.name) if y.name is not None else name
        values = pd.to_numeric(y, errors="coerce").to_numpy(dtype=float)
        index = np.asarray(y.index if years is None else years)
    else:
        label = name
        values = np.asarray(y, dtype=float)
        if values.ndim != 1:
            raise DataError(f"{label}: y must be one-dimensional; got shape {values.shape}.")
        index = np.arange(1, values.size + 1) if years is None else np.asarray(years)
    if index.size != values.size:
        raise DataError(f"{label}: years has {index.size} entries but y has {values.size}.")
    try:
        index = index.astype(int)
    except (TypeError, ValueError):
        raise DataError(f"{label}: the index must be integer years.") from None
    if np.any(np.diff(index) != 1):
        raise DataError(f"{label}: years must be consecutive and increasing "
                        f"({index[0]}..{index[-1]}); fill or cut the gap first.")
    ok = np.isfinite(values)
    if not ok.any():
        raise DataError(f"{label}: no finite values.")
    first, last = np.argmax(ok), ok.size - 1 - np.argmax(ok[::-1])
    inner = np.flatnonzero(~ok[first:last + 1]) + first
    if inner.size:
        raise DataError(f"{label}: missing value in year {index[inner[0]]} inside the series "
                        f"({index[first]}-{index[last]}); interpolate it or shorten the window.")
    values, index = values[first:last + 1], index[first:last + 1]
    if np.ptp(values) == 0:
        raise DataError(f"{label}: the series is constant ({values[0]:g}) over "
                        f"{index[0]}-{index[-1]}; there is nothing to break.")
    return values, index, label


def check_trim(trim: Any) -> float:
    """``trim`` must be a fraction in (0, 0.5)."""
    if isinstance(trim, bool) or not isinstance(trim, (int, float)) or not 0 < trim < 0.5:
        raise SpecError(f"trim={trim!r} must be a fraction strictly between 0 and 0.5 "
                        "(common choices: 0.05, 0.10, 0.15, 0.20).")
    return float(trim)


def check_breaks(label: str, nobs: int, q: int, p: int, trim: float, max_breaks: Any,
                 first: int, last: int) -> int:
    """Minimum regime length ``h``; raises when T is too short or ``max_breaks`` impossible."""
    if isinstance(max_breaks, bool) or not isinstance(max_breaks, (int, np.integer)) or max_breaks < 1:
        raise SpecError(f"max_breaks={max_breaks!r} must be an integer of at least 1.")
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
