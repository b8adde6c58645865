"""Index decomposition of a pressure change: LMDI-I, additive and multiplicative (Ang 2005), and Kaya.

A pressure that is a product of factors, ``V = Σ_i Π_k x_ki`` (``i`` over sub-categories, here the
units), changes between two years by the sum (additive) or product (multiplicative) of one effect
per factor, with no residual.

References
----------
ang2005 : Ang, B. W. (2005). The LMDI approach to decomposition analysis: a practical guide.
    Energy Policy 33(7), 867–871.
kaya1990 : Kaya, Y. (1990). Impact of carbon dioxide emission control on GNP growth:
    interpretation of proposed scenarios. IPCC Energy and Industry Subgroup, Paris.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evidence._json import json_safe
from evidence._typing import Window
from evidence._validation import check_choice, check_window
from evidence.errors import DataError, SpecError
from evidence.panel import Panel
from evidence.results import ResultProtocol

__all__ = ["log_mean", "lmdi_effects", "LMDIResult", "lmdi", "kaya", "total_label"]

#: Value that replaces zeros before logs (Ang 2005 recommends a small positive number).
ZERO_REPLACEMENT = 1e-10


def log_mean(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Logarithmic mean ``L(a, b) = (a − b)/(ln a − ln b)``, ``L(a, a) = a``.

    Examples
    --------
    >>> round(float(log_mean(528.0, 500.0)), 6)
    513.872867
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = (a - b) / (np.log(a) - np.log(b))
    return np.where(np.isclose(a, b, rtol=1e-14, atol=0.0), a, out)


def lmdi_effects(start: np.ndarray, end: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Additive and multiplicative LMDI-I effects of each factor.

    ``start`` and ``end`` are ``(K factors, S sub-categories)`` arrays of positive factor values
    (zeros are replaced by :data:`ZERO_REPLACEMENT`). With ``V_i = Π_k x_ki`` and ``V = Σ_i V_i``:

        ΔV_k = Σ_i L(V_i^T, V_i^0) ln(x_ki^T / x_ki^0)
        D_k  = exp( Σ_i L(V_i^T, V_i^0) / L(V^T, V^0) · ln(x_ki^T / x_ki^0) )

    so that ``Σ_k ΔV_k = V^T − V^0`` and ``Π_k D_k = V^T / V^0`` exactly.
    """
    x0 = np.where(np.asarray(start, dtype=float) == 0, ZERO_REPLACEMENT, start)
    xt = np.where(np.asarray(end, dtype=float) == 0, ZERO_REPLACEMENT, end)
    if (x0 < 0).any() or (xt < 0).any():
        raise DataError("LMDI needs non-negative factor values.")
    v0, vt = x0.prod(axis=0), xt.prod(axis=0)
    weights = log_mean(vt, v0)
    logs = np.log(xt / x0)
    additive = (weights * logs).sum(axis=1)
    multiplicative = np.exp((weights / log_mean(vt.sum(), v0.sum()) * logs).sum(axis=1))
    return additive, multiplicative


@dataclass(frozen=True, eq=False, repr=False)
class LMDIResult(ResultProtocol):
    """Effects of each factor per unit and for the sum over units (row :attr:`total_row`,
    ``"total"`` unless a unit has that name).

    Attributes
    ----------
    additive : pandas.DataFrame
        Per unit and in total: start, end, change, and one column per factor (changes in the
        pressure's units, summing to ``change``).
    multiplicative : pandas.DataFrame
        The same with ``ratio`` and factor ratios (multiplying to ``ratio``).
    factors : tuple of str
        The factor columns, in order.
    pressure : str
        The decomposed pressure column.
    window : (int, int)
        The two years compared.
    details : mapping
        ``method``, ``zero_replacement``.
    """

    additive: pd.DataFrame
    multiplicative: pd.DataFrame
    factors: tuple[str, ...]
    pressure: str
    window: Window
    details: Mapping[str, Any] = field(default_factory=dict)

    @property
    def total_row(self) -> str:
        """The label of the row that decomposes the sum over units (``"total"`` unless a unit
        has that name)."""
        return str(self.details.get("total_row", "total"))

    def __repr__(self) -> str:
        total = self.additive.loc[self.total_row]
        effects = ", ".join(f"{k}={total[k]:.4g}" for k in self.factors)
        return (f"LMDIResult(pressure={self.pressure!r}, window={self.window}, "
                f"change={total['change']:.4g}, {effects})")

    def summary(self) -> str:
        """The total change and each factor's additive and multiplicative effect."""
        add, mul = self.additive.loc[self.total_row], self.multiplicative.loc[self.total_row]
        lines = [f"LMDI-I decomposition of {self.pressure}, {self.window[0]}-{self.window[1]}: "
                 f"change {add['change']:.6g} (ratio {mul['ratio']:.4f}), "
                 f"{len(self.additive) - 1} units"]
        width = max(len(k) for k in self.factors)
        lines += [f"  {k:<{width}}  {add[k]:>14.6g}  x {mul[k]:.4f}" for k in self.factors]
        return "\n".join(lines)

    def to_frame(self, kind: str = "additive") -> pd.DataFrame:
        """The additive (changes in pressure units) or multiplicative (ratios) table."""
        kind = check_choice("kind", kind, ("additive", "multiplicative"))
        return (self.additive if kind == "additive" else self.multiplicative).copy()

    def to_dict(self) -> dict[str, Any]:
        """JSON-safe contents."""
        return json_safe({"additive": self.additive, "multiplicative": self.multiplicative,
                          "factors": list(self.factors), "pressure": self.pressure,
                          "window": list(self.window), "details": dict(self.details)})


def total_label(units: Sequence[str]) -> str:
    """The label of the all-units row: ``"total"``, or a longer label when a unit is so named.

    Examples
    --------
    >>> total_label(["A", "B"]), total_label(["total", "B"])
    ('total', 'total (all units)')
    """
    label = "total"
    while label in units:
        label = f"{label} (all units)"
    return label


def _ratio(end: float, start: float) -> float:
    """``end / start``; NaN when the start is zero (the additive effects still apply)."""
    return float(end) / float(start) if start != 0 else float("nan")


def _rows_of_year(panel: Panel, year: int, columns: list[str], units: list[str]) -> np.ndarray:
    """``(units, columns)`` values of one year (NaN where missing); a unit without a row for the
    year is an error naming it."""
    frame = panel.frame
    at = frame.index.get_level_values(1) == year
    part = frame.loc[at, columns]
    part.index = part.index.get_level_values(0)
    missing = [u for u in units if u not in part.index] if len(part) < len(units) else []
    if missing:
        raise DataError(f"unit '{missing[0]}' has no row for {year}; choose a window "
                        "with both years for every unit.")
    return part.reindex(units).to_numpy(dtype=float)


def _check_factors(values: np.ndarray, units: list[str], year: int, pressure: str,
                   factors: tuple[str, ...]) -> None:
    """Every value present, and the factors multiplying to the pressure (relative 1e-6)."""
    names = [pressure, *factors]
    for i, unit in enumerate(units):
        row = values[i]
        if np.isnan(row).any():
            raise DataError(f"unit '{unit}' lacks a value in {year} for "
                            f"{', '.join(n for n, v in zip(names, row, strict=True) if np.isnan(v))}.")
    products = values[:, 1:].prod(axis=1)
    bad = ~np.isclose(products, values[:, 0], rtol=1e-6, atol=0.0)
    if bad.any():
        i = int(np.argmax(bad))
        raise DataError(f"at unit '{units[i]}', year {year}, the product of {list(factors)} is "
                        f"{float(products[i]):g}, not {pressure} = {values[i, 0]:g}; the factors "
                        "must multiply to the pressure.")


def lmdi(panel: Panel, pressure: str, factors: Sequence[str], *,
         window: Window | str | None = None) -> LMDIResult:
    """LMDI-I decomposition of the change in ``pressure`` between the window's end years.

    ``factors`` are columns whose product equals ``pressure`` in every unit and year used (checked
    to a relative 1e-6; the error names the unit and year otherwise). Each unit is decomposed on
    its own, and the sum over units with the units as sub-categories (row ``"total"``).
    """
    factors = (factors,) if isinstance(factors, str) else tuple(factors)
    if len(factors) < 2:
        raise SpecError("factors= needs at least two columns whose product is the pressure.")
    panel.require(pressure, *factors)
    start, end = (check_window(window, panel.years) if window is not None
                  else (panel.years[0], panel.years[-1]))
    columns = [pressure, *factors]
    units = list(panel.units)
    first, last = _rows_of_year(panel, start, columns, units), _rows_of_year(panel, end, columns, units)
    for year, values in ((start, first), (end, last)):
        _check_factors(values, units, year, pressure, factors)
    starts, ends = first[:, 1:], last[:, 1:]
    # the effects of each unit on its own (one sub-category): elementwise, as lmdi_effects does
    x0 = np.where(starts == 0, ZERO_REPLACEMENT, starts).T
    xt = np.where(ends == 0, ZERO_REPLACEMENT, ends).T
    if (x0 < 0).any() or (xt < 0).any():
        raise DataError("LMDI needs non-negative factor values.")
    v0, vt = x0.prod(axis=0), xt.prod(axis=0)
    weights = log_mean(vt, v0)
    logs = np.log(xt / x0)
    unit_add = (weights * logs).T
    unit_mul = np.exp(weights / log_mean(vt, v0) * logs).T
    ends_p, starts_p = last[:, 0], first[:, 0]
    rows_add = [[a, b, b - a, *eff] for a, b, eff in zip(starts_p, ends_p, unit_add, strict=True)]
    rows_mul = [[a, b, _ratio(b, a), *eff]
                for a, b, eff in zip(starts_p, ends_p, unit_mul, strict=True)]
    # (factors, units), laid out as the per-unit rows stacked column by column
    add_total, mul_total = lmdi_effects(np.ascontiguousarray(starts.T), np.ascontiguousarray(ends.T))
    v0 = sum(r[0] for r in rows_add)
    vt = sum(r[1] for r in rows_add)
    rows_add.append([v0, vt, vt - v0, *add_total])
    rows_mul.append([v0, vt, _ratio(vt, v0), *mul_total])
    total = total_label(units)
    index = pd.Index([*units, total], name=panel.unit_name)
    add = pd.DataFrame(rows_add, index=index, columns=["start", "end", "change", *factors])
    mul = pd.DataFrame(rows_mul, index=index, columns=["start", "end", "ratio", *factors])
    return LMDIResult(additive=add, multiplicative=mul, factors=factors, pressure=pressure,
                      window=(start, end), details={"method": "LMDI-I (Ang 2005)",
                                                    "zero_replacement": ZERO_REPLACEMENT,
                                                    "total_row": total})


def kaya(panel: Panel, pressure: str, *, population: str, activity: str,
         energy: str | None = None, window: Window | str | None = None) -> LMDIResult:
    """Kaya decomposition: pressure (emissions) = population × activity per person × energy per
    activity × pressure per energy (without ``energy``: population × activity per person ×
    pressure per activity), by :func:`lmdi`.

    Examples
    --------
    >>> from evidence.demo import demo_panel
    >>> res = kaya(demo_panel(), "ghg_territorial", population="population", activity="gdp",
    ...            window=(2000, 2020))
    >>> res.factors
    ('population', 'affluence', 'emission_intensity')
    """
    work = panel.with_per_capita(activity, population, name="affluence")
    if energy is None:
        work = work.with_intensity(pressure, activity, name="emission_intensity")
        factors = [population, "affluence", "emission_intensity"]
    else:
        work = (work.with_intensity(energy, activity, name="energy_intensity")
                .with_intensity(pressure, energy, name="carbon_intensity"))
        factors = [population, "affluence", "energy_intensity", "carbon_intensity"]
    return lmdi(work, pressure, factors, window=window)
