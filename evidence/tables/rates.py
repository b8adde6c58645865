"""Formatting of :class:`~evidence.indicators.RatesResult` and of panel audits for people."""

from __future__ import annotations

from collections.abc import Sequence

import pandas as pd

from evidence._cautions import CAUTION
from evidence.indicators import RatesResult
from evidence.tables._render import render_frame

__all__ = ["rates_table", "audit_table"]

_PERCENT_COLUMNS = {
    "activity_trend": "activity %/yr",
    "pressure_trend": "pressure %/yr",
    "pressure_trend_se": "s.e.",
    "intensity_trend": "intensity %/yr",
    "intensity_trend_se": "s.e. ",
}


def rates_table(result: RatesResult, fmt: str = "text", *, notes: Sequence[str] = ()) -> str:
    """The per-unit rates as a table; CSV and JSON carry every column at full precision."""
    all_notes = [*notes, *_notes(result)]
    if fmt.lower() in ("csv", "json"):
        return render_frame(result.table, fmt, title=_title(result), notes=all_notes)
    shown = pd.DataFrame(index=result.table.index)
    for column, label in _PERCENT_COLUMNS.items():
        shown[label] = 100.0 * result.table[column]
    shown["Tapio e"] = result.table["tapio_elasticity"]
    shown["Tapio class"] = result.table["tapio_class"]
    shown["OECD factor"] = result.table["decoupling_factor"]
    return render_frame(shown, fmt, title=_title(result), notes=all_notes, digits=2)


def _title(result: RatesResult) -> str:
    return (f"Decoupling rates: {result.pressure} against {result.activity}, "
            f"{result.window[0]}-{result.window[1]}")


def _notes(result: RatesResult) -> list[str]:
    lags = ("floor(4 (T/100)^(2/9))" if result.hac_lags is None else str(result.hac_lags))
    notes = [f"Trend: OLS slope of the log on the year, in % a year (log points x 100); s.e. "
             f"Newey-West, Bartlett kernel, lags {lags}. Tapio (2005) elasticity and class and OECD "
             f"(2002) decoupling factor from the window's end points. Basis of "
             f"{result.pressure}: {result.details.get('basis', 'not stated')}."]
    notes += [f"Excluded: {row.unit} ({row.reason})." for row in result.excluded.itertuples()]
    notes += [f"Warning: {w}" for w in result.warnings]
    n_audit = len(result.audit)
    if n_audit:
        notes.append(f"The panel's audit lists {n_audit} item(s) not used (missing cells, gaps, "
                     "excluded units); see the audit table.")
    notes.append(CAUTION)
    return notes


def audit_table(audit: pd.DataFrame, fmt: str = "text", *, notes: Sequence[str] = ()) -> str:
    """The audit of a panel (everything not used, and why)."""
    title = "Audit: data not used, and why"
    if audit.empty:
        return render_frame(pd.DataFrame({"note": ["nothing left out"]}), fmt, title=title,
                            index=False, notes=notes)
    return render_frame(audit, fmt, title=title, index=False, notes=notes)
