"""The one adapter from data to arrays: a single series cleaner and the panel's ``(T, N, k)`` block.

Every method that computes on arrays gets its data here, so the rules are the same everywhere:

* leading and trailing years without complete data are trimmed (and listed);
* a missing year or cell inside a unit's span, a unit with too few years and a constant series
  either raise :class:`~evidence.errors.DataError` naming the unit, the column and the year, or
  exclude the unit, as the caller chooses;
* whatever is left out is listed in ``excluded`` in the one layout of
  :data:`evidence.results.EXCLUDED_COLUMNS` (unit, column, years, reason).

Arrays without years are numbered from 1 (the first observation is year 1), the convention of
the break-date literature (a break at ``T1`` means observations ``1..T1`` form the first regime).
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from evidence._validation import check_choice, format_years
from evidence.errors import DataError
from evidence.results import excluded_frame

__all__ = ["SeriesData", "PanelArrays", "clean_series", "series_values", "panel_arrays",
           "GAP_RULES", "SPANS"]

#: What to do with a unit whose span has a missing year or cell inside it.
GAP_RULES = ("raise", "exclude", "longest")
#: Which years the block covers: those every kept unit covers, or each unit's own (NaN outside).
SPANS = ("common", "own")


@dataclass(frozen=True, eq=False)
class SeriesData:
    """A clean series: values, their integer years, and a label for messages."""

    values: np.ndarray
    years: np.ndarray
    label: str

    @property
    def nobs(self) -> int:
        return int(self.values.size)

    @property
    def span(self) -> str:
        return f"{int(self.years[0])}:{int(self.years[-1])}"


def _label(name: Any) -> str:
    return f"series '{name}'" if name not in (None, "") else "the series"


def series_values(y: Any, years: Any = None, *, name: str | None = None,
                  purpose: str = "this method") -> tuple[np.ndarray, np.ndarray, str]:
    """Values, integer years and a label from a Series (indexed by year), a one-column frame or a 1-D array.

    No cleaning beyond type checks: see :func:`clean_series`.
    """
    if isinstance(y, pd.DataFrame):
        if y.shape[1] != 1:
            raise DataError(f"expected one series, got a table with {y.shape[1]} columns; pass one "
                            "column (df['x']).")
        y = y.iloc[:, 0]
    if isinstance(y, pd.Series):
        label = _label(name or (str(y.name) if y.name is not None else None))
        values = pd.to_numeric(y, errors="coerce").to_numpy(dtype=float)
        if np.isnan(values).sum() > int(y.isna().sum()):
            raise DataError(f"{label} holds non-numeric values; {purpose} needs numbers.")
        index = np.asarray(y.index if years is None else years)
    else:
        label = _label(name)
        try:
            values = np.asarray(y, dtype=float)
        except (TypeError, ValueError):
            raise DataError(f"{label} holds non-numeric values; {purpose} needs numbers.") from None
        if values.ndim != 1:
            raise DataError(f"{label} must be one-dimensional; got shape {values.shape}.")
        index = np.arange(1, values.size + 1) if years is None else np.asarray(years)
    if index.size != values.size:
        raise DataError(f"{label}: years has {index.size} entries but the series has {values.size}.")
    try:
        as_int = index.astype(float)
        if not np.all(np.isfinite(as_int)) or np.any(as_int != np.round(as_int)):
            raise ValueError
        index = as_int.astype(np.int64)
    except (TypeError, ValueError):
        raise DataError(f"{label}: the index must be integer years (e.g. 1990, 1991, ...).") from None
    if index.size > 1 and np.any(np.diff(index) != 1):
        where = int(np.flatnonzero(np.diff(index) != 1)[0])
        raise DataError(f"{label}: years must be consecutive and increasing; {index[where]} is "
                        f"followed by {index[where + 1]}. Fill the gap or cut the series first.")
    return values, index, label


def clean_series(y: Any, years: Any = None, *, name: str | None = None, min_obs: int,
                 purpose: str) -> SeriesData:
    """A single series ready for a test: outer NaN trimmed; inner NaN, constants and short spans refused."""
    values, index, label = series_values(y, years, name=name, purpose=purpose)
    if np.isinf(values).any():
        raise DataError(f"{label} is infinite in year {int(index[np.isinf(values)][0])}; fix or remove "
                        "the value.")
    finite = np.isfinite(values)
    if not finite.any():
        raise DataError(f"{label} has no values; {purpose} needs at least {min_obs}.")
    first, last = np.flatnonzero(finite)[[0, -1]]
    values, index = values[first:last + 1], index[first:last + 1]
    inner = np.isnan(values)
    if inner.any():
        raise DataError(f"{label} is missing in {format_years(index[inner])} inside its span "
                        f"{int(index[0])}:{int(index[-1])}; {purpose} needs consecutive years. Fill "
                        "the gap, shorten the window, or drop the unit.")
    if values.size < min_obs:
        raise DataError(f"{label} has {values.size} observations ({int(index[0])}:{int(index[-1])}); "
                        f"{purpose} needs at least {min_obs}. Use fewer lags or a longer series.")
    if np.ptp(values) == 0:
        raise DataError(f"{label} is constant ({values[0]:g}) over {int(index[0])}:{int(index[-1])}; "
                        f"{purpose} needs a series that varies.")
    return SeriesData(values, index, label)


@dataclass(frozen=True, eq=False)
class PanelArrays:
    """Panel columns as one array ``values[t, i, j]`` (year ``t``, unit ``i``, column ``j``).

    With ``span="common"`` every unit covers every year; with ``span="own"`` each unit's years
    outside its span are NaN (``first``/``last`` give the span's positions).
    """

    values: np.ndarray
    years: np.ndarray
    units: tuple[str, ...]
    columns: tuple[str, ...]
    excluded: pd.DataFrame
    first: np.ndarray
    last: np.ndarray

    @property
    def n_units(self) -> int:
        return len(self.units)

    @property
    def n_years(self) -> int:
        return int(self.years.size)

    @property
    def balanced(self) -> bool:
        return bool(np.all(self.first == 0) and np.all(self.last == self.years.size - 1))

    def column(self, name: str | int = 0) -> np.ndarray:
        """One column as ``(T, N)``."""
        j = name if isinstance(name, int) else self.columns.index(name)
        return self.values[:, :, j]

    def unit_series(self, unit: int | str, column: str | int = 0) -> SeriesData:
        """One unit's column over its span."""
        i = unit if isinstance(unit, int) else self.units.index(unit)
        sl = slice(int(self.first[i]), int(self.last[i]) + 1)
        name = self.columns[column] if isinstance(column, int) else column
        return SeriesData(self.column(column)[sl, i].copy(), self.years[sl].copy(),
                          f"unit '{self.units[i]}' (column '{name}')")


def _longest_run(ok: np.ndarray) -> tuple[int, int]:
    """First and last index of the longest run of True (the latest among equals)."""
    best, best_start, start = 0, 0, None
    for t, flag in enumerate(np.append(ok, False)):
        if flag and start is None:
            start = t
        elif not flag and start is not None:
            if t - start >= best:
                best, best_start = t - start, start
            start = None
    return best_start, best_start + best - 1


def panel_arrays(frame: pd.DataFrame, columns: Sequence[str], *, span: str = "common",
                 gaps: str = "raise", short: str = "raise", constant: str = "raise",
                 min_years: int = 2, purpose: str = "this method", time_name: str = "year",
                 require_units: int = 1) -> PanelArrays:
    """The block behind :meth:`evidence.panel.Panel.arrays` (``frame`` indexed by (unit, time))."""
    span = check_choice("span", span, SPANS)
    gaps = check_choice("gaps", gaps, GAP_RULES)
    short = check_choice("short", short, ("raise", "exclude"))
    constant = check_choice("constant", constant, ("raise", "exclude"))
    cols = list(columns)
    units_all = frame.index.get_level_values(0)
    years_all = frame.index.get_level_values(1).astype(np.int64)
    unit_index = pd.Index(units_all.unique())
    y0, y1 = int(years_all.min()), int(years_all.max())
    full = np.arange(y0, y1 + 1, dtype=np.int64)
    block = np.full((full.size, unit_index.size, len(cols)), np.nan)
    block[years_all.to_numpy() - y0, unit_index.get_indexer(units_all), :] = (
        frame[cols].to_numpy(dtype=float))
    if np.isinf(block).any():
        t, i, j = (int(v[0]) for v in np.nonzero(np.isinf(block)))
        raise DataError(f"column '{cols[j]}' is infinite for unit '{unit_index[i]}' in {time_name} "
                        f"{full[t]}; fix or remove the value.")
    complete = np.asarray(~np.isnan(block).any(axis=2))
    excluded: list[dict[str, Any]] = []
    keep = np.ones(unit_index.size, dtype=bool)
    first = np.zeros(unit_index.size, dtype=np.int64)
    last = np.zeros(unit_index.size, dtype=np.int64)
    col_label = ", ".join(cols)

    def drop(i: int, years: Any, reason: str) -> None:
        keep[i] = False
        excluded.append({"unit": unit_index[i], "column": col_label, "years": format_years(years),
                         "reason": reason})

    # units with one complete span, no stray rows outside it, enough years and no constant column
    # need none of the checks below: find them at once (thousands of units stay fast)
    any_ok = complete.any(axis=0)
    lo_all = np.argmax(complete, axis=0)
    hi_all = complete.shape[0] - 1 - np.argmax(complete[::-1], axis=0)
    rows = np.arange(complete.shape[0])[:, None]
    inside = (rows >= lo_all[None, :]) & (rows <= hi_all[None, :])
    present_all = ~np.isnan(block).all(axis=2)
    span_ok = complete.sum(axis=0) == hi_all - lo_all + 1
    stray = (present_all & ~inside).any(axis=0)
    with np.errstate(invalid="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        seg_all = np.where(inside[:, :, None], block, np.nan)
        spread_all = np.nanmax(seg_all, axis=0) - np.nanmin(seg_all, axis=0)
        scale_all = np.maximum(1.0, np.nanmax(np.abs(seg_all), axis=0))
    flat_all = (spread_all <= 1e-12 * scale_all).any(axis=1)
    fast = any_ok & span_ok & ~stray & (hi_all - lo_all + 1 >= min_years) & ~flat_all

    for i, unit in enumerate(unit_index):
        if fast[i]:
            first[i], last[i] = lo_all[i], hi_all[i]
            continue
        ok = complete[:, i]
        present = np.asarray(~np.isnan(block[:, i, :]).all(axis=1))
        if not ok.any():
            drop(i, full[present], "unit excluded: no year with every column present")
            continue
        lo, hi = np.flatnonzero(ok)[[0, -1]]
        outer = np.r_[np.flatnonzero(present[:lo]), np.flatnonzero(present[hi + 1:]) + hi + 1]
        if outer.size:
            excluded.append({"unit": unit, "column": col_label, "years": format_years(full[outer]),
                             "reason": "incomplete rows at the start or end of the series"})
        inner = np.flatnonzero(~ok[lo:hi + 1]) + lo
        if inner.size:
            t = int(inner[0])
            missing = [c for c, v in zip(cols, block[t, i, :], strict=True) if np.isnan(v)]
            where = (f"has no value of '{missing[0]}' in {time_name} {full[t]}" if present[t]
                     else f"has no row for {time_name} {full[t]}")
            if gaps == "raise":
                raise DataError(f"unit '{unit}' {where}, inside its span {full[lo]}:{full[hi]}; "
                                f"{purpose} needs consecutive years. Fill the gap, select a window "
                                "that avoids it, or drop the unit.")
            if gaps == "exclude":
                drop(i, full[lo:hi + 1], f"unit excluded: no complete data in "
                     f"{format_years(full[inner])}, inside its span {full[lo]}:{full[hi]}")
                continue
            run_lo, run_hi = _longest_run(ok[lo:hi + 1])
            new_lo, new_hi = lo + run_lo, lo + run_hi
            cut = np.r_[np.arange(lo, new_lo), np.arange(new_hi + 1, hi + 1)]
            excluded.append({"unit": unit, "column": col_label, "years": format_years(full[cut]),
                             "reason": f"outside the longest complete span {full[new_lo]}:{full[new_hi]}"})
            lo, hi = new_lo, new_hi
        first[i], last[i] = lo, hi
        n_years = hi - lo + 1
        if n_years < min_years:
            if short == "raise":
                raise DataError(f"unit '{unit}' has {n_years} complete {time_name}(s) "
                                f"({full[lo]}:{full[hi]}); {purpose} needs at least {min_years}. "
                                "Drop the unit, choose a longer window, or use fewer lags.")
            drop(i, full[lo:hi + 1], f"unit excluded: {n_years} complete year(s), fewer than "
                 f"{min_years}")
            continue
        seg = block[lo:hi + 1, i, :]
        flat = np.flatnonzero(np.ptp(seg, axis=0) <= 1e-12 * np.maximum(1.0, np.abs(seg).max(axis=0)))
        if flat.size:
            if constant == "raise":
                raise DataError(f"column '{cols[flat[0]]}' is constant ({seg[0, flat[0]]:g}) for unit "
                                f"'{unit}' over {full[lo]}:{full[hi]}; {purpose} needs variation in "
                                "every unit. Drop the unit or choose another column.")
            drop(i, full[lo:hi + 1], f"unit excluded: '{cols[flat[0]]}' is constant")
    if keep.sum() < max(require_units, 1):
        reasons = sorted({str(row["reason"]) for row in excluded if str(row["reason"]).startswith("unit")})
        raise DataError(f"{int(keep.sum())} unit(s) have usable data for {col_label}; {purpose} needs "
                        f"at least {max(require_units, 1)}. Left out: {'; '.join(reasons[:3]) or 'none'}. "
                        "Check the column (a ratio of a column to itself is constant) and the window.")
    idx = np.flatnonzero(keep)
    first, last = first[idx], last[idx]
    if span == "common":
        lo, hi = int(first.max()), int(last.min())
        if hi - lo + 1 < min_years:
            raise DataError(f"the {time_name}s every unit covers, {full[lo] if lo <= hi else '-'}:"
                            f"{full[hi] if lo <= hi else '-'}, are {max(hi - lo + 1, 0)}; {purpose} needs "
                            f"at least {min_years}. Select units with longer common data or a window.")
        for pos, i in enumerate(idx.tolist()):
            cut = np.r_[np.arange(first[pos], lo), np.arange(hi + 1, last[pos] + 1)]
            if cut.size:
                excluded.append({"unit": unit_index[i], "column": col_label,
                                 "years": format_years(full[cut]),
                                 "reason": "outside the years every unit covers"})
        values = block[lo:hi + 1][:, idx, :]
        years = full[lo:hi + 1]
        first, last = np.zeros_like(first), np.full_like(last, hi - lo)
    else:
        lo, hi = int(first.min()), int(last.max())
        values = block[lo:hi + 1][:, idx, :].copy()
        for pos in range(idx.size):  # NaN outside each unit's span
            values[:first[pos] - lo, pos, :] = np.nan
            values[last[pos] - lo + 1:, pos, :] = np.nan
        years = full[lo:hi + 1]
        first, last = first - lo, last - lo
    order = sorted(range(len(excluded)), key=lambda k: str(excluded[k]["unit"]))
    return PanelArrays(values=np.ascontiguousarray(values), years=years,
                       units=tuple(str(unit_index[i]) for i in idx), columns=tuple(cols),
                       excluded=excluded_frame([excluded[k] for k in order]),
                       first=first, last=last)
