"""Small pieces shared by the unit-root and dependence tests (on top of the package's adapters).

Single series are cleaned by :func:`evidence._arrays.clean_series` and panels turned into arrays
by :meth:`evidence.panel.Panel.arrays`; this module adds what those do not: the words arch uses
for the deterministic terms, the lag bound of the ADF-type tests, and the panel block of one
column with the balance check of the tests that need it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
import pandas as pd

from evidence._arrays import PanelArrays
from evidence._hac import default_max_lags
from evidence._validation import format_years
from evidence.errors import DataError
from evidence.panel import Panel

__all__ = ["ARCH_TREND", "TREND_WORDS", "N_DETERMINISTIC", "lag_bound", "ColumnBlock",
           "column_block", "require_balanced", "excluded_records", "INFERENCE", "size_details",
           "card_options"]

#: The package's deterministic terms and arch's names for them.
ARCH_TREND: dict[str, Literal["n", "c", "ct"]] = {"none": "n", "constant": "c", "trend": "ct"}
#: The deterministic terms in words, for hypotheses.
TREND_WORDS = {"none": "no deterministic terms", "constant": "a constant",
               "trend": "a constant and a linear trend"}
N_DETERMINISTIC = {"none": 0, "constant": 1, "trend": 2}


def lag_bound(nobs: int, trend: str, *, table_max: int | None = None) -> int:
    """The default largest lag of an ADF-type search for a series of ``nobs`` years.

    ``_hac.default_max_lags`` (``floor(4 (T/100)^(1/4))``), bounded by what the series can carry
    (arch's limit ``(T - 1) // 2 - 1`` less the deterministic terms) and by ``table_max``, the
    largest order a published table covers (8 for the IPS moments).

    Examples
    --------
    >>> lag_bound(30, "constant"), lag_bound(100, "trend"), lag_bound(12, "trend")
    (2, 4, 2)
    """
    feasible = max((nobs - 1) // 2 - 1 - N_DETERMINISTIC[trend], 0)
    bound = min(default_max_lags(nobs), feasible)
    return bound if table_max is None else min(bound, table_max)


@dataclass(frozen=True, eq=False)
class ColumnBlock:
    """One panel column as ``(T, N)`` (NaN outside each unit's span) and what was left out."""

    values: np.ndarray
    years: np.ndarray
    units: tuple[str, ...]
    column: str
    excluded: pd.DataFrame
    first: np.ndarray
    last: np.ndarray

    @property
    def balanced(self) -> bool:
        return bool(np.all(self.first == 0) and np.all(self.last == self.years.size - 1))

    @property
    def lengths(self) -> np.ndarray:
        return (self.last - self.first + 1).astype(int)

    def unit_values(self, i: int) -> np.ndarray:
        return self.values[int(self.first[i]):int(self.last[i]) + 1, i]

    def unit_years(self, i: int) -> np.ndarray:
        return self.years[int(self.first[i]):int(self.last[i]) + 1]


def column_block(panel: Any, column: str, *, min_obs: int, purpose: str,
                 gaps: str = "raise") -> ColumnBlock:
    """``panel.arrays(column, span="own")`` for a test that needs ``min_obs`` years per unit.

    A gap inside a unit, a constant unit or one shorter than ``min_obs`` raises
    :class:`DataError` naming it; units without any value are listed in ``excluded``; at least two
    units must remain.
    """
    if not isinstance(panel, Panel):
        raise DataError(f"{purpose} needs a Panel (see evidence.load_panel); got "
                        f"{type(panel).__name__}.")
    block: PanelArrays = panel.arrays(column, span="own", gaps=gaps, short="raise",
                                      constant="raise", min_years=min_obs, purpose=purpose,
                                      require_units=2)
    return ColumnBlock(block.column(0), block.years, block.units, column, block.excluded,
                       block.first, block.last)


def require_balanced(block: ColumnBlock, *, purpose: str) -> None:
    """Raise naming the first unit whose span differs from the panel's."""
    if block.balanced:
        return
    for i, unit in enumerate(block.units):
        missing = np.isnan(block.values[:, i])
        if missing.any():
            raise DataError(f"{purpose} needs a balanced panel, but unit '{unit}' has no value of "
                            f"'{block.column}' in {format_years(block.years[missing])}. Restrict "
                            "the panel to common years (panel.window(...)) or drop the unit "
                            "(panel.select(...)).")


def excluded_records(frame: pd.DataFrame) -> list[dict[str, str]]:
    """An ``excluded`` frame as records for a result's ``details``."""
    return [{k: str(v) for k, v in row.items()} for row in frame.to_dict(orient="records")]


def finite_or_nan(value: Any) -> float:
    """A float, NaN for anything that is not a finite number."""
    try:
        out = float(value)
    except (TypeError, ValueError):
        return math.nan
    return out if math.isfinite(out) else math.nan


#: How p-values are obtained: simulated for the data's own N and T (the default wherever it holds
#: the size), or the published tables and asymptotic approximations (fast; size stated).
INFERENCE = ("simulated", "asymptotic")


def card_options(inference: str, trend: str) -> str:
    """How the size card labels a test's options."""
    return f"inference={inference}; trend={trend}"


def _where(note: dict[str, Any]) -> str:
    n_units = note.get("n_units")
    return (f"N={n_units}, " if n_units and n_units > 1 else "") + f"T={note['n_years']}"


def size_details(test: str, n_units: int | None, n_years: int, inference: str,
                 trend: str = "constant", *, options: str | None = None
                 ) -> tuple[dict[str, Any], list[str]]:
    """The size card's note for a result (``details["size"]``) and, when the card measured this
    option outside the controlled band, a warning with the figure.

    ``options`` replaces the card's label built from ``inference`` and ``trend`` (for tests
    without an ``inference`` option, e.g. ``"model=level"``)."""
    from evidence._size_card import size_note

    label = card_options(inference, trend) if options is None else options
    note = size_note(test, n_units, n_years, options=label)
    warn = []
    if note and not note.get("controlled", True):
        what = f"inference='{inference}'" if options is None else options.replace("; ", ", ")
        warn.append(f"the size of {test} with {what} is not controlled: it "
                    f"rejected {100 * note['measured']:.1f} % of the time at 5 % nominal "
                    f"({note['process']}, {_where(note)}; see "
                    "docs/methods/size.md).")
    return note, warn
