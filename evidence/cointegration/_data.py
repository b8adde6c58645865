"""Input checks and batched array helpers shared by the cointegration tests and estimators.

A panel relationship arrives as a :class:`~evidence.panel.Panel`, a dependent column and one or more
regressor columns. It becomes a balanced block: ``y`` of shape ``(N, T)`` and ``x`` of shape
``(N, T, k)`` over the years every unit covers. Missing values at the start or end of a unit's data
are trimmed and listed in ``excluded``; a missing value inside a unit's series, a constant series or
a block too short for the regression raises :class:`~evidence.errors.DataError` naming the unit,
column and year. The helpers below do least squares and long-run covariances for all units at once.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from evidence._validation import check_choice, format_years
from evidence.errors import DataError, SpecError
from evidence.panel import Panel
from evidence.indicators import newey_west_lags

__all__ = [
    "TRENDS",
    "Block",
    "as_columns",
    "bartlett_bandwidth",
    "batch_ols",
    "check_lags",
    "check_trend",
    "default_max_lags",
    "deterministics",
    "lag_matrix",
    "long_run_cov",
    "panel_block",
]

TRENDS = ("n", "c", "ct")


@dataclass(frozen=True, eq=False)
class Block:
    """A balanced panel block: ``y`` (N, T), ``x`` (N, T, k), the units, years and names."""

    y: np.ndarray
    x: np.ndarray
    units: tuple[str, ...]
    years: np.ndarray
    dependent: str
    regressors: tuple[str, ...]
    excluded: tuple[dict[str, Any], ...]

    @property
    def n_units(self) -> int:
        return self.y.shape[0]

    @property
    def n_years(self) -> int:
        return self.y.shape[1]

    def excluded_frame(self) -> pd.DataFrame:
        """What was left out: unit, years, reason."""
        return pd.DataFrame(list(self.excluded), columns=["unit", "years", "reason"])


def check_trend(trend: Any) -> str:
    """``trend`` in {"n", "c", "ct"}, matched without regard to case."""
    return check_choice("trend", trend, TRENDS)


def check_lags(lags: Any, *, name: str = "lags", methods: Sequence[str] = ("aic", "bic")) -> int | str:
    """An integer of at least 0, or a selection method name."""
    if isinstance(lags, str):
        return check_choice(name, lags, tuple(methods))
    if isinstance(lags, bool) or not isinstance(lags, (int, np.integer)) or lags < 0:
        allowed = " or ".join(repr(m) for m in methods)
        raise SpecError(f"{name}={lags!r} must be an integer of at least 0{' or ' + allowed if methods else ''}.")
    return int(lags)


def as_columns(x: str | Sequence[str]) -> tuple[str, ...]:
    """A regressor name or list of names as a tuple."""
    cols = (x,) if isinstance(x, str) else tuple(x)
    if not cols:
        raise SpecError("x is empty; give at least one regressor column.")
    return cols


def panel_block(panel: Panel, y: str, x: str | Sequence[str], *, min_years: int,
                purpose: str) -> Block:
    """The balanced block of ``y`` and ``x`` over the years all units cover (see module docstring)."""
    if not isinstance(panel, Panel):
        raise DataError(f"{purpose} needs a Panel (see evidence.load_panel); got {type(panel).__name__}.")
    regressors = as_columns(x)
    if y in regressors or len(set(regressors)) != len(regressors):
        raise SpecError(f"y='{y}' and x={list(regressors)} must be different columns.")
    panel.require(y, *regressors)
    frame = panel.frame[[y, *regressors]]
    excluded: list[dict[str, Any]] = []
    spans: dict[str, tuple[int, int]] = {}
    for unit, rows in frame.groupby(level=0, sort=True):
        years = rows.index.get_level_values(1).astype(int).to_numpy()
        ok = rows.notna().all(axis=1).to_numpy()
        if not ok.any():
            excluded.append({"unit": unit, "years": format_years(years), "reason": "no complete rows"})
            continue
        first, last = int(np.argmax(ok)), len(ok) - 1 - int(np.argmax(ok[::-1]))
        inside = rows.iloc[first:last + 1]
        gap = np.flatnonzero(np.diff(years[first:last + 1]) != 1)
        if gap.size:
            raise DataError(f"unit '{unit}' has no row for the years after {years[first + gap[0]]}; "
                            f"{purpose} needs consecutive years. Fill the gap or select a window.")
        if inside.isna().any().any():
            col = inside.columns[inside.isna().any().to_numpy()][0]
            year = int(inside.index.get_level_values(1)[inside[col].isna().to_numpy()][0])
            raise DataError(f"column '{col}' is missing for unit '{unit}' in {year}, inside its series; "
                            f"{purpose} needs complete series. Fill the value or select a window "
                            f"that avoids it.")
        dropped = np.r_[years[:first], years[last + 1:]]
        if dropped.size:
            excluded.append({"unit": unit, "years": format_years(dropped),
                             "reason": "missing values at the start or end of the series"})
        spans[unit] = (int(years[first]), int(years[last]))
    if not spans:
        raise DataError(f"no unit has complete data for {y} and {', '.join(regressors)}.")
    start = max(s for s, _ in spans.values())
    end = min(e for _, e in spans.values())
    units = tuple(spans)
    for unit, (s, e) in spans.items():
        cut = [yr for yr in range(s, e + 1) if yr < start or yr > end]
        if cut:
            excluded.append({"unit": unit, "years": format_years(cut),
                             "reason": "outside the years every unit covers"})
    n_years = end - start + 1
    if n_years < min_years:
        raise DataError(f"the years every unit covers, {start}:{end}, are {max(n_years, 0)}; {purpose} "
                        f"needs at least {min_years} with these options. Use fewer lags or leads, "
                        f"or select units with longer common data.")
    years = np.arange(start, end + 1)
    times = frame.index.get_level_values(1).astype(int)
    sub = frame.loc[(times >= start) & (times <= end)]
    sub = sub.loc[sub.index.get_level_values(0).isin(units)]
    arr = sub.to_numpy(dtype=float).reshape(len(units), n_years, 1 + len(regressors))
    for j, col in enumerate((y, *regressors)):
        spread = arr[:, :, j].max(axis=1) - arr[:, :, j].min(axis=1)
        flat = np.flatnonzero(spread <= 1e-12 * np.maximum(1.0, np.abs(arr[:, :, j]).max(axis=1)))
        if flat.size:
            raise DataError(f"column '{col}' is constant for unit '{units[flat[0]]}' in {start}:{end}; "
                            f"{purpose} needs variation in every unit. Drop the unit with "
                            f"panel.select(...) or choose another column.")
    return Block(y=arr[:, :, 0].copy(), x=arr[:, :, 1:].copy(), units=units, years=years,
                 dependent=y, regressors=regressors, excluded=tuple(excluded))


def deterministics(trend: str, n: int) -> np.ndarray:
    """Deterministic columns for ``n`` periods: none, a constant, or a constant and a linear trend."""
    if trend == "n":
        return np.empty((n, 0))
    const = np.ones((n, 1))
    if trend == "c":
        return const
    return np.hstack([const, np.arange(1, n + 1, dtype=float)[:, None]])


def lag_matrix(v: np.ndarray, lags: Sequence[int]) -> np.ndarray:
    """Columns ``v[t - j]`` for each ``j`` in ``lags`` (negative ``j`` are leads); NaN where absent.

    ``v`` is (..., T); the result is (..., T, len(lags)).
    """
    out = np.full(v.shape + (len(lags),), np.nan)
    n = v.shape[-1]
    for c, j in enumerate(lags):
        if j >= 0:
            out[..., j:, c] = v[..., :n - j] if j else v
        else:
            out[..., :n + j, c] = v[..., -j:]
    return out


def batch_ols(y: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """OLS of each ``y[i]`` (T,) on ``z[i]`` (T, k) for all i at once, through QR.

    Returns ``(coef (N, k), resid (N, T), inv(Z'Z) (N, k, k))``. A rank-deficient design raises
    :class:`numpy.linalg.LinAlgError`.
    """
    q, r = np.linalg.qr(z)
    diag = np.abs(np.diagonal(r, axis1=-2, axis2=-1))
    scale = np.maximum(np.abs(z).max(axis=-2), 1.0)
    if np.any(diag < 1e-10 * scale):
        raise np.linalg.LinAlgError("singular design")
    qty = np.einsum("ntk,nt->nk", q, y)
    coef = np.linalg.solve(r, qty[..., None])[..., 0]
    resid = y - np.einsum("ntk,nk->nt", z, coef)
    rinv = np.linalg.inv(r)
    return coef, resid, rinv @ np.swapaxes(rinv, -1, -2)


def bartlett_bandwidth(nobs: int) -> int:
    """Newey–West (1994) rule ``floor(4 (T/100)^(2/9))``."""
    return newey_west_lags(nobs)


def default_max_lags(nobs: int) -> int:
    """Default largest lag for lag selection: ``floor(4 (T/100)^(1/4))`` (Schwert 1989, common practice)."""
    return math.floor(4.0 * (nobs / 100.0) ** 0.25)


def long_run_cov(u: np.ndarray, bandwidth: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Bartlett-kernel long-run covariances of ``u`` (N, T, m), for all units at once.

    Returns ``(sigma, omega, delta)``, each (N, m, m): ``sigma = (1/T) sum_t u_t u_t'``,
    ``omega = sigma + sum_{l=1}^{L} w_l (G_l + G_l')`` and the one-sided
    ``delta = sigma + sum_{l=1}^{L} w_l G_l`` with ``G_l = (1/T) sum_t u_t u_{t-l}'`` and
    ``w_l = 1 - l/(L+1)``. The series are used as given (not demeaned).
    """
    n = u.shape[1]
    sigma = np.einsum("nti,ntj->nij", u, u) / n
    one_sided = np.zeros_like(sigma)
    for lag in range(1, bandwidth + 1):
        w = 1.0 - lag / (bandwidth + 1.0)
        gamma = np.einsum("nti,ntj->nij", u[:, lag:], u[:, :-lag]) / n  # E u_t u_{t-l}'
        one_sided += w * np.swapaxes(gamma, -1, -2)
    omega = sigma + one_sided + np.swapaxes(one_sided, -1, -2)
    return sigma, omega, sigma + one_sided
