"""Per-unit statistics of a panel column, computed in batches of units of the same length.

The unit statistics equal arch's (the tests check it): ADF with fixed or automatic lags, the
Phillips–Perron Z-tau and the KPSS statistic, each on the unit's own span.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from evidence._hac import newey_west_lags
from evidence.errors import DataError
from evidence.roots._common import ColumnBlock, lag_bound
from evidence.roots._unit_batch import adf_select, adf_tstats, kpss_eta, pp_tau

__all__ = ["UnitStats", "unit_adf", "unit_pp", "unit_kpss"]


@dataclass(frozen=True)
class UnitStats:
    """One statistic per unit, with its lag order (or bandwidth), length and regression size."""

    stat: np.ndarray
    lags: np.ndarray
    lengths: np.ndarray
    nobs: np.ndarray
    max_lags: np.ndarray


def _groups(block: ColumnBlock) -> dict[int, np.ndarray]:
    lengths = block.lengths
    return {int(n): np.flatnonzero(lengths == n) for n in np.unique(lengths)}


def _unit_matrix(block: ColumnBlock, units: np.ndarray) -> np.ndarray:
    return np.column_stack([block.unit_values(int(i)) for i in units])


def unit_adf(block: ColumnBlock, trend: str, lags: int | str, max_lags: int | None, *,
             table_max: int | None = None) -> UnitStats:
    """ADF t-ratios of every unit (arch's ADF with ``lags`` fixed or chosen by ``lags``).

    With automatic lags and ``max_lags=None`` each unit searches up to ``lag_bound(T_i)``.
    """
    n_units = len(block.units)
    stat, chosen, nobs, bound = (np.empty(n_units), np.zeros(n_units, dtype=int),
                                 np.zeros(n_units, dtype=int), np.zeros(n_units, dtype=int))
    for length, units in _groups(block).items():
        y = _unit_matrix(block, units)
        if isinstance(lags, int):
            stat[units] = adf_tstats(y, trend, lags)
            chosen[units] = lags
            bound[units] = lags
        else:
            top = lag_bound(length, trend, table_max=table_max) if max_lags is None else max_lags
            t, p, _ = adf_select(y, trend, top, lags)
            stat[units], chosen[units], bound[units] = t, p, top
        nobs[units] = length - 1 - chosen[units]
    _check_finite(block, stat, "ADF")
    return UnitStats(stat, chosen, block.lengths, nobs, bound)


def unit_pp(block: ColumnBlock, trend: str, hac_lags: int | None) -> UnitStats:
    """Phillips–Perron Z-tau of every unit (bandwidth ``hac_lags`` or the Newey–West rule)."""
    return _kernel_stat(block, trend, hac_lags, pp_tau, "Phillips-Perron", 1)


def unit_kpss(block: ColumnBlock, trend: str, hac_lags: int | None) -> UnitStats:
    """KPSS statistic of every unit (bandwidth ``hac_lags`` or the Newey–West rule)."""
    return _kernel_stat(block, trend, hac_lags, kpss_eta, "KPSS", 0)


def _kernel_stat(block: ColumnBlock, trend: str, hac_lags: int | None, func, name: str,
                 lost: int) -> UnitStats:
    n_units = len(block.units)
    stat, band = np.empty(n_units), np.zeros(n_units, dtype=int)
    for length, units in _groups(block).items():
        bandwidth = newey_west_lags(length) if hac_lags is None else hac_lags
        stat[units] = func(_unit_matrix(block, units), trend, bandwidth)
        band[units] = bandwidth
    _check_finite(block, stat, name)
    return UnitStats(stat, band, block.lengths, block.lengths - lost, band)


def _check_finite(block: ColumnBlock, stat: np.ndarray, name: str) -> None:
    bad = np.flatnonzero(~np.isfinite(stat))
    if bad.size:
        i = int(bad[0])
        years = block.unit_years(i)
        raise DataError(f"unit '{block.units[i]}' (column '{block.column}', {years[0]}:{years[-1]}): "
                        f"the {name} regression is singular (the series may be constant over long "
                        "stretches or too short for the lags); use fewer lags or drop the unit.")
