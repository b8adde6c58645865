"""Formatting of :class:`~evidence.indicators.RatesResult` and of panel audits for people."""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import pandas as pd

from evidence.indicators import RatesResult
from evidence.tables._cells import Number
from evidence.tables._names import display_name, relabel
from evidence.tables._render import Table, finish_notes, render, render_frame
from evidence.tables.regression import check_table_options

__all__ = ["rates_table", "audit_table"]

# (column of RatesResult.table, head, percent)
_COLUMNS = (
    ("activity_trend", "activity %/yr", True),
    ("pressure_trend", "pressure %/yr", True),
    ("pressure_trend_se", "s.e.", True),
    ("intensity_trend", "intensity %/yr", True),
    ("intensity_trend_se", "s.e.", True),
    ("tapio_elasticity", "Tapio e", False),
    ("tapio_class", "Tapio class", False),
    ("decoupling_factor", "OECD factor", False),
)


def rates_table(result: RatesResult, fmt: str = "text", *, notes: Sequence[str] = (),
                labels: Mapping[str, str] | None = None, label: str | None = None,
                caution: bool = True, fit: str = "auto", title: str = "") -> str:
    """The per-unit rates as a table; CSV and JSON carry every column at full precision.

    ``labels``, ``label``, ``caution`` and ``fit`` as in :func:`~evidence.tables.regression_table`.
    """
    fmt, _, labels, label, fit = check_table_options(fmt, 2, labels, label, fit)
    all_notes = [*notes, *_notes(result, labels)]
    caption = title or _title(result, labels)
    if fmt in ("csv", "json"):
        return render_frame(result.table, fmt, title=caption, notes=all_notes, labels=labels,
                            caution=caution)
    tab = result.table
    rows = []
    for unit, row in tab.iterrows():
        cells = [labels.get(str(unit), str(unit))]
        for column, _, percent in _COLUMNS:
            value = row[column]
            if isinstance(value, str):
                cells.append(value)
            elif pd.isna(value):
                cells.append("")
            else:
                cells.append(Number(100.0 * float(value) if percent else float(value), 2))
        rows.append(cells)
    header = [str(tab.index.name or "unit")] + [head for _, head, _ in _COLUMNS]
    table = Table(header=header, rows=rows,
                  numeric=[False] + [column != "tapio_class" for column, _, _ in _COLUMNS],
                  title=relabel(caption, labels), notes=finish_notes(all_notes, caution, labels),
                  label=label, fit=fit)
    return render(table, fmt)


def _title(result: RatesResult, labels: Mapping[str, str]) -> str:
    return (f"Decoupling rates: {display_name(result.pressure, labels)} against "
            f"{display_name(result.activity, labels)}, {result.window[0]}–{result.window[1]}")


def _notes(result: RatesResult, labels: Mapping[str, str]) -> list[str]:
    lags = ("floor(4 (T/100)^(2/9))" if result.hac_lags is None else str(result.hac_lags))
    notes = [f"Trend: OLS slope of the log on the year, in % a year (log points × 100); s.e. "
             f"Newey–West, Bartlett kernel, lags {lags}. Tapio (2005) elasticity and class and OECD "
             f"(2002) decoupling factor from the window's end points. Basis of "
             f"{display_name(result.pressure, labels)}: {result.details.get('basis', 'not stated')}."]
    notes += [f"Excluded: {row.unit} ({row.reason})." for row in result.excluded.itertuples()]
    notes += [f"Warning: {w}" for w in result.warnings]
    n_audit = len(result.audit)
    if n_audit:
        notes.append(f"The panel's audit lists {n_audit} item(s) not used (missing cells, gaps, "
                     "excluded units); see the audit table.")
    return notes


def audit_table(audit: pd.DataFrame, fmt: str = "text", *, notes: Sequence[str] = (),
                labels: Mapping[str, str] | None = None, label: str | None = None,
                caution: bool = False, fit: str = "auto") -> str:
    """The audit of a panel (everything not used, and why)."""
    title = "Audit: data not used, and why"
    if audit.empty:
        return render_frame(pd.DataFrame({"note": ["nothing left out"]}), fmt, title=title,
                            index=False, notes=notes, labels=labels, label=label, caution=caution,
                            fit=fit)
    return render_frame(audit, fmt, title=title, index=False, notes=notes, labels=labels,
                        label=label, caution=caution, fit=fit)
