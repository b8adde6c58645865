"""A panel relation as unit-major arrays, and the batched least-squares helpers of the tests.

A panel relation arrives as a :class:`~evidence.panel.Panel`, a ``dependent`` column and one or more
``regressors``. :func:`relation_block` takes it through the package's one adapter,
:meth:`Panel.arrays(..., span="common") <evidence.panel.Panel.arrays>` (missing values at the start
or end of a unit are trimmed and listed in ``excluded``; a gap inside a unit's series, a constant
series or a block too short for the regression raises :class:`~evidence.errors.DataError` naming
the unit, column and year) and lays the values out unit by unit: ``y`` of shape ``(N, T)`` and
``x`` of shape ``(N, T, k)``, the layout of every batched regression below. Long-run covariances
and bandwidths come from :mod:`evidence._hac`; option checks from :mod:`evidence._validation`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

from evidence._validation import check_int
from evidence.errors import DataError, SpecError
from evidence.panel import Panel

__all__ = ["ARCH_TREND", "Block", "as_columns", "batch_ols", "deterministics", "lag_matrix",
           "option_int", "relation_block"]

#: The package's trend words in the spelling of arch and statsmodels.
ARCH_TREND: dict[str, Literal["n", "c", "ct"]] = {"none": "n", "constant": "c", "trend": "ct"}


@dataclass(frozen=True, eq=False)
class Block:
    """A balanced relation over the years every unit covers: ``y`` (N, T), ``x`` (N, T, k).

    A unit-major view of :class:`evidence._arrays.PanelArrays` (which is ``(T, N, k)``) with the
    names of the dependent column and the regressors; ``excluded`` is in the one layout of
    :data:`evidence.results.EXCLUDED_COLUMNS`.
    """

    y: np.ndarray
    x: np.ndarray
    units: tuple[str, ...]
    years: np.ndarray
    dependent: str
    regressors: tuple[str, ...]
    excluded: pd.DataFrame

    @property
    def n_units(self) -> int:
        return int(self.y.shape[0])

    @property
    def n_years(self) -> int:
        return int(self.y.shape[1])

    @property
    def span(self) -> str:
        return f"{int(self.years[0])}:{int(self.years[-1])}"


def option_int(parameter: str, value: object, minimum: int, *, default: int | None = None) -> int:
    """An integer option of at least ``minimum`` (:func:`~evidence._validation.check_int`);
    ``None`` gives ``default`` when one is set."""
    checked = check_int(parameter, value, minimum=minimum, allow_none=default is not None)
    return default if checked is None else checked  # type: ignore[return-value]


def as_columns(regressors: str | Sequence[str]) -> tuple[str, ...]:
    """A regressor name or list of names as a tuple."""
    cols = (regressors,) if isinstance(regressors, str) else tuple(regressors)
    if not cols:
        raise SpecError("regressors is empty; give at least one regressor column.")
    return cols


def relation_block(panel: Panel, dependent: str, regressors: str | Sequence[str], *,
                   min_years: int, purpose: str) -> Block:
    """The balanced block of ``dependent`` and ``regressors`` over the years all units cover."""
    if not isinstance(panel, Panel):
        raise DataError(f"{purpose} needs a Panel (see evidence.load_panel); got {type(panel).__name__}.")
    cols = as_columns(regressors)
    if dependent in cols or len(set(cols)) != len(cols):
        raise SpecError(f"dependent='{dependent}' and regressors={list(cols)} must be different "
                        "columns.")
    arrays = panel.arrays([dependent, *cols], span="common", gaps="raise", short="raise",
                          constant="raise", min_years=min_years, purpose=purpose)
    values = np.moveaxis(arrays.values, 0, 1)  # (N, T, 1 + k)
    return Block(y=np.ascontiguousarray(values[:, :, 0]), x=np.ascontiguousarray(values[:, :, 1:]),
                 units=arrays.units, years=arrays.years, dependent=dependent, regressors=cols,
                 excluded=arrays.excluded)


def deterministics(trend: str, n: int) -> np.ndarray:
    """Deterministic columns for ``n`` periods: none, a constant, or a constant and a linear trend."""
    if trend == "none":
        return np.empty((n, 0))
    const = np.ones((n, 1))
    if trend == "constant":
        return const
    if trend != "trend":
        raise ValueError(f"unknown trend {trend!r}")  # internal: public entry points check trend
    return np.hstack([const, np.arange(1, n + 1, dtype=float)[:, None]])


def lag_matrix(v: np.ndarray, lags: Sequence[int]) -> np.ndarray:
    """Columns ``v[t - j]`` for each ``j`` in ``lags`` (negative ``j`` are leads); NaN where absent.

    ``v`` is (..., T); the result is (..., T, len(lags)).
    """
    out = np.full((*v.shape, len(lags)), np.nan)
    n = v.shape[-1]
    for c, j in enumerate(lags):
        if j >= 0:
            out[..., j:, c] = v[..., :n - j] if j else v
        else:
            out[..., :n + j, c] = v[..., -j:]
    return out


def batch_ols(y: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """OLS of each ``y[i]`` (T,) on ``z[i]`` (T, k) for all i at once.

    Returns ``(coef (N, k), resid (N, T), inv(Z'Z) (N, k, k))``. The normal equations are solved
    directly (five times faster than QR on the bootstrap's stacks of short regressions); when a
    design is badly conditioned (the determinant of ``Z'Z`` scaled to unit diagonal below
    ``1e-9``), the whole stack goes through QR instead. A rank-deficient design raises
    :class:`numpy.linalg.LinAlgError`.
    """
    zt = np.swapaxes(z, -1, -2)
    gram = zt @ z
    scale = np.sqrt(np.diagonal(gram, axis1=-2, axis2=-1))
    if np.all(scale > 0):
        sign, logdet = np.linalg.slogdet(gram / (scale[..., :, None] * scale[..., None, :]))
        if np.all(sign > 0) and np.all(logdet > np.log(1e-9)):
            inv = np.linalg.inv(gram)
            coef = (inv @ (zt @ y[..., None]))[..., 0]
            return coef, y - (z @ coef[..., None])[..., 0], inv
    return _qr_ols(y, z)


def _qr_ols(y: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """:func:`batch_ols` through QR (for badly conditioned designs)."""
    q, r = np.linalg.qr(z)
    diag = np.abs(np.diagonal(r, axis1=-2, axis2=-1))
    scale = np.maximum(np.abs(z).max(axis=-2), 1.0)
    if np.any(diag < 1e-10 * scale):
        raise np.linalg.LinAlgError("singular design")
    qty = (np.swapaxes(q, -1, -2) @ y[..., None])[..., 0]
    coef = np.linalg.solve(r, qty[..., None])[..., 0]
    resid = y - (z @ coef[..., None])[..., 0]
    rinv = np.linalg.inv(r)
    return coef, resid, rinv @ np.swapaxes(rinv, -1, -2)
