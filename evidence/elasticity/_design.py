"""The regression design shared by the elasticity estimators: logs, controls, checks, exclusions."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from evidence._typing import Window
from evidence._validation import check_window, format_years
from evidence.errors import DataError
from evidence.panel import Panel, check_positive, derived_name
from evidence.results import excluded_frame

__all__ = ["Design", "build_design", "unit_blocks"]


@dataclass(frozen=True, eq=False)
class Design:
    """Dependent variable and regressors indexed by (unit, time), with what was left out."""

    y: pd.Series
    x: pd.DataFrame
    dependent: str
    regressors: tuple[str, ...]
    excluded: pd.DataFrame  # unit, column, years, reason (evidence.results.EXCLUDED_COLUMNS)

    @property
    def units(self) -> tuple[str, ...]:
        return tuple(self.y.index.get_level_values(0).unique())


def _log_name(column: str, log: bool) -> str:
    return derived_name("log", column) if log else column


def build_design(panel: Panel, pressure: str, activity: str, *, controls: Sequence[str] = (),
                 log: bool = True, window: Window | str | None = None,
                 min_obs: int | None = None, drop_short: bool = False) -> Design:
    """Assemble ``y = ln pressure`` and ``X = [ln activity, controls]`` (logs when ``log``).

    Rows with a missing value in any used column are left out and listed in ``excluded`` (with the
    years). A unit left with fewer than ``min_obs`` rows (default: regressors + 2) raises a
    :class:`DataError` naming it, unless ``drop_short=True`` excludes it (listed in ``excluded``).
    """
    controls = (controls,) if isinstance(controls, str) else tuple(controls)
    panel.require(pressure, activity, *controls)
    if len(set((pressure, activity, *controls))) != 2 + len(controls):
        raise DataError("pressure, activity and controls must be different columns.")
    if window is not None:
        panel = panel.window(check_window(window, panel.years))
    frame = panel.frame[[pressure, activity, *controls]]
    if log:
        for column in (pressure, activity):
            check_positive(frame[column], column, panel.time_name)
        frame = frame.assign(**{pressure: np.log(frame[pressure]),
                                activity: np.log(frame[activity])})
    frame = frame.rename(columns={pressure: _log_name(pressure, log),
                                  activity: _log_name(activity, log)})
    dependent = _log_name(pressure, log)
    regressors = (_log_name(activity, log), *controls)
    excluded = []
    missing = frame.isna().any(axis=1)
    if missing.any():
        for unit, rows in frame.loc[missing].groupby(level=0):
            years = rows.index.get_level_values(1)
            lacking = ", ".join(str(c) for c in rows.columns[rows.isna().any().to_numpy()])
            excluded.append({"unit": unit, "column": lacking, "years": format_years(years),
                             "reason": "missing value in a model variable"})
        frame = frame.loc[~missing]
    need = (len(regressors) + 2) if min_obs is None else min_obs
    counts = frame.groupby(level=0).size()
    short = counts[counts < need]
    if len(short) and not drop_short:
        unit, count = short.index[0], int(short.iloc[0])
        raise DataError(f"unit '{unit}' has {count} usable year(s) for '{dependent}' on "
                        f"{', '.join(regressors)}; at least {need} are needed. Drop the unit, or "
                        "pass drop_short=True to exclude it (it will be listed in the result).")
    for unit, count in short.items():
        years = frame.loc[unit].index
        excluded.append({"unit": unit, "column": ", ".join((dependent, *regressors)),
                         "years": format_years(years),
                         "reason": f"unit excluded: {count} usable years, at least {need} needed"})
    if len(short):
        frame = frame.loc[~frame.index.get_level_values(0).isin(short.index)]
    if frame.empty:
        raise DataError(f"no unit has enough usable years for '{dependent}' on "
                        f"{', '.join(regressors)}; check missing values and the window.")
    _check_variation(frame, regressors)
    return Design(y=frame[dependent], x=frame[list(regressors)], dependent=dependent,
                  regressors=regressors,
                  excluded=excluded_frame(excluded))


def _check_variation(frame: pd.DataFrame, regressors: Sequence[str]) -> None:
    x = frame[list(regressors)].to_numpy(dtype=float)
    for j, name in enumerate(regressors):
        if np.ptp(x[:, j]) == 0:
            raise DataError(f"regressor '{name}' is constant; it cannot be estimated. Drop it.")
    demeaned = x - x.mean(axis=0)
    if x.shape[1] > 1 and np.linalg.matrix_rank(demeaned) < x.shape[1]:
        raise DataError(f"the regressors {', '.join(repr(r) for r in regressors)} are collinear; "
                        "drop one of the collinear controls.")


def unit_blocks(design: Design) -> list[tuple[str, np.ndarray, np.ndarray, np.ndarray]]:
    """Per unit: (unit, years, y_i, X_i) as NumPy arrays, in unit order."""
    blocks = []
    years = design.y.index.get_level_values(1).to_numpy()
    units = design.y.index.get_level_values(0).to_numpy()
    y = design.y.to_numpy(dtype=float)
    x = design.x.to_numpy(dtype=float)
    for unit in design.units:
        rows = units == unit
        blocks.append((unit, years[rows], y[rows], x[rows]))
    return blocks
