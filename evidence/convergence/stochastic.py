"""Stochastic convergence: is each unit's log relative to the cross-section mean stationary?

References
----------
carlinomills1993 : Carlino, G. A. & Mills, L. O. (1993). Are U.S. regional incomes converging? A
    time series analysis. Journal of Monetary Economics 32(2), 335–346.
bernardduflauf1995 : Bernard, A. B. & Durlauf, S. N. (1995). Convergence in international
    output. Journal of Applied Econometrics 10(2), 97–108.
strazicich2004 : Strazicich, M. C., Lee, J. & Day, E. (2004). Are incomes converging among OECD
    countries? Time series evidence with two structural breaks. Journal of Macroeconomics 26(1),
    131–145.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evidence._typing import Trend, Window
from evidence._validation import check_window
from evidence.errors import DataError
from evidence.panel import Panel
from evidence.results import ResultProtocol, excluded_frame

__all__ = ["StochasticResult", "stochastic_convergence", "relative_series"]

_VERDICTS = {"I(0)": "converging", "I(1)": "not converging", "I(1) or higher": "not converging",
             "inconclusive": "inconclusive"}


def relative_series(panel: Panel, column: str, *, window: Window | str | None = None) -> Panel:
    """Add ``relative_<column>`` = ``ln(y_it / ȳ_t)``, ``ȳ_t`` the cross-section mean of year t.

    Only years in which every unit has a positive value enter, so the mean compares like with
    like; other years are left missing (and listed by the unit-root tests that skip them).
    """
    panel.require(column)
    if window is not None:
        panel = panel.window(check_window(window, panel.years))
    wide = panel.wide(column).reindex(columns=list(panel.units))
    if (wide <= 0).any().any():
        row, col = np.argwhere((wide <= 0).to_numpy())[0]
        raise DataError(f"column '{column}' is not positive at unit '{wide.columns[col]}', year "
                        f"{wide.index[row]}; the log relative series needs positive values.")
    complete = wide.notna().all(axis=1)
    rel = np.log(wide.loc[complete].div(wide.loc[complete].mean(axis=1), axis=0))
    if rel.shape[0] < 10:
        raise DataError(f"only {rel.shape[0]} years have '{column}' for every unit; stochastic "
                        "convergence needs at least 10.")
    long = rel.stack().reorder_levels([1, 0]).sort_index()
    long.index.names = [panel.unit_name, panel.time_name]
    frame = panel.frame
    frame[f"relative_{column}"] = long.reindex(frame.index)
    return Panel(frame, audit=panel.audit, meta=panel.meta)


@dataclass(frozen=True, eq=False, repr=False)
class StochasticResult(ResultProtocol):
    """Per-unit verdicts (``table``), the underlying unit-root battery (``battery``) and what was
    left out (``excluded``: unit, column, years, reason)."""

    table: pd.DataFrame
    battery: Any
    column: str
    details: dict[str, Any] = field(default_factory=dict)
    excluded: pd.DataFrame = field(default_factory=excluded_frame)
    warnings: tuple[str, ...] = ()

    _repr_fields = ("column",)

    def to_frame(self) -> pd.DataFrame:
        """The verdict table (a copy)."""
        return self.table.copy()

    def summary(self) -> str:
        """Counts of verdicts."""
        counts = self.table["verdict"].value_counts()
        lines = [f"Stochastic convergence of {self.column}: "
                 + ", ".join(f"{k} {int(v)}" for k, v in counts.items())]
        lines += [f"  left out: {r.unit} {r.column} {r.years} ({r.reason})"
                  for r in self.excluded.itertuples()]
        lines += [f"  warning: {w}" for w in self.warnings]
        return "\n".join(lines)


def stochastic_convergence(panel: Panel, column: str, *, tests: Sequence[str] = ("adf", "kpss"),
                           panel_tests: Sequence[str] = ("ips", "cips"), trend: Trend = "constant",
                           alpha: float = 0.05,
                           window: Window | str | None = None) -> StochasticResult:
    """Unit-root and stationarity tests on each unit's log relative series, and verdicts.

    Stochastic convergence (Carlino & Mills 1993; Bernard & Durlauf 1995) holds for a unit when
    shocks to its relative position ``ln(y_it / ȳ_t)`` die out: the relative series is
    stationary (``trend="constant"``; with ``"trend"`` it may converge along a deterministic
    trend — "catching up"). The tests and the decision rule are those of
    :func:`evidence.roots.root_battery` on the relative series (levels only): ``I(0)`` → converging,
    non-stationary → not converging,
    otherwise inconclusive. Add ``"za"`` or ``"ls"`` to ``tests`` for versions that allow
    structural breaks (Zivot–Andrews; Lee–Strazicich, as in Strazicich, Lee & Day 2004), and
    panel tests on the same relative series with ``panel_tests`` (row ``"(panel)"``).
    """
    from evidence.roots import root_battery

    work = relative_series(panel, column, window=window)
    name = f"relative_{column}"
    battery = root_battery(work, name, tests=(*tests, *panel_tests), trend=trend, alpha=alpha,
                           differences=False)
    decisions = battery.decisions.copy()
    decisions["verdict"] = decisions["decision"].map(_VERDICTS).fillna("inconclusive")
    return StochasticResult(table=decisions, battery=battery, column=column,
                            details={"relative_to": "cross-section mean each year", "trend": trend,
                                     "alpha": alpha, "tests": list(tests),
                                     "panel_tests": list(panel_tests)},
                            excluded=battery.excluded, warnings=battery.warnings)
