"""The panel: a long table indexed by (unit, time), validated on load, with an audit of what is left out.

``load_panel`` reads CSV, Parquet, Excel or a DataFrame in the long layout (unit, time, variables...)
or the year-columns layout (unit, variable, 1990, 1991, ...). A :class:`Panel` never changes after
it is made: derived series (logs, per capita, intensity, growth, index) return a new panel.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd

from evidence import _loading
from evidence._arrays import PanelArrays, panel_arrays
from evidence._typing import Layout, Window
from evidence._validation import check_choice, check_columns, check_window, format_years, suggest
from evidence.errors import DataError, SpecError

__all__ = ["Panel", "load_panel", "BASES", "derived_name"]

#: Accounting bases a pressure column can carry.
BASES = ("territorial", "consumption")


def derived_name(kind: str, column: str, other: str | None = None) -> str:
    """The name a derived series gets: ``log_x``, ``diff_x``, ``growth_x``, ``x_per_y``, ``x_per_capita``.

    Examples
    --------
    >>> derived_name("log", "gdp"), derived_name("per", "co2", "gdp")
    ('log_gdp', 'co2_per_gdp')
    """
    if kind == "per":
        return f"{column}_per_{other}"
    if kind == "per_capita":
        return f"{column}_per_capita"
    return f"{kind}_{column}"


class Panel:
    """A validated long panel indexed by (unit, time), sorted, one column per variable.

    Make one with :func:`load_panel`. Attributes return copies, so a caller cannot change the panel.
    """

    def __init__(self, frame: pd.DataFrame, *, audit: pd.DataFrame, meta: Mapping[str, Any]) -> None:
        self._frame = frame
        self._audit = audit.reset_index(drop=True)
        self._meta = dict(meta)

    @classmethod
    def from_arrays(cls, columns: Mapping[str, Any], *, units: Sequence[str] | None = None,
                    years: Sequence[int] | None = None, unit: str = "unit",
                    time: str = "year") -> Panel:
        """A balanced panel from arrays of shape ``(T, N)`` (years by units), e.g. for simulations.

        Units default to ``u001, u002, ...`` and years to ``1..T``. NaN marks a missing cell (and is
        audited); non-finite values other than NaN raise.

        Examples
        --------
        >>> import numpy as np
        >>> Panel.from_arrays({"y": np.arange(6.0).reshape(3, 2)}).frame.shape
        (6, 1)
        """
        arrays = {str(k): np.asarray(v, dtype=float) for k, v in columns.items()}
        if not arrays:
            raise DataError("from_arrays needs at least one column.")
        shapes = {a.shape for a in arrays.values()}
        if len(shapes) != 1 or len(next(iter(shapes))) != 2:
            raise DataError(f"from_arrays needs arrays of one shape (T, N); got {sorted(shapes)}.")
        n_years, n_units = next(iter(shapes))
        unit_names = [f"u{i + 1:03d}" for i in range(n_units)] if units is None else [str(u) for u in units]
        year_values = np.arange(1, n_years + 1) if years is None else np.asarray(years, dtype=np.int64)
        if len(unit_names) != n_units or len(set(unit_names)) != n_units or year_values.size != n_years:
            raise DataError(f"from_arrays: {n_units} distinct unit names and {n_years} years are needed.")
        if np.any(np.diff(year_values) <= 0):
            raise DataError("from_arrays: years must be increasing.")
        for name, values in arrays.items():
            if np.isinf(values).any():
                raise DataError(f"from_arrays: column '{name}' has infinite values.")
        order = np.argsort(unit_names, kind="stable")
        index = pd.MultiIndex.from_product([[unit_names[i] for i in order], year_values],
                                           names=[unit, time])
        frame = pd.DataFrame({k: v[:, order].T.ravel() for k, v in arrays.items()}, index=index)
        has_missing = any(np.isnan(v).any() for v in arrays.values())
        notes = _loading.missing_notes(frame, list(arrays)) if has_missing else []
        audit = pd.DataFrame(notes, columns=_loading.AUDIT_COLUMNS)
        return cls(frame, audit=audit, meta={"source": "arrays", "unit": unit, "time": time, "basis": {}})

    # ----------------------------------------------------------------- views
    @property
    def frame(self) -> pd.DataFrame:
        """The data, indexed by (unit, time); a copy."""
        return self._frame.copy()

    @property
    def audit(self) -> pd.DataFrame:
        """Everything not used: missing cells, gaps, excluded units or columns, and why."""
        return self._audit.copy()

    @property
    def meta(self) -> dict[str, Any]:
        """Source, unit and time column names, accounting bases of pressure columns."""
        return dict(self._meta)

    @property
    def unit_name(self) -> str:
        """Name of the unit column in the source (e.g. ``"country"``)."""
        return str(self._meta["unit"])

    @property
    def time_name(self) -> str:
        """Name of the time column in the source (e.g. ``"year"``)."""
        return str(self._meta["time"])

    @property
    def units(self) -> tuple[str, ...]:
        """Unit labels, sorted."""
        return tuple(self._frame.index.get_level_values(0).unique())

    @property
    def years(self) -> tuple[int, ...]:
        """All years present for any unit, sorted."""
        return tuple(int(y) for y in np.unique(self._frame.index.get_level_values(1)))

    @property
    def columns(self) -> tuple[str, ...]:
        """Variable names."""
        return tuple(self._frame.columns)

    @property
    def is_balanced(self) -> bool:
        """True when every unit has a row for every year and no cell is missing."""
        n_units, n_years = len(self.units), len(self.years)
        return len(self._frame) == n_units * n_years and not self._frame.isna().any().any()

    def basis(self, column: str) -> str | None:
        """The accounting basis of a pressure column (``"territorial"``/``"consumption"``) if stated."""
        return self._meta.get("basis", {}).get(column)

    def require(self, *columns: str) -> None:
        """Raise :class:`DataError` (with a suggestion) if any column is not in the panel."""
        check_columns(list(columns), list(self.columns))

    def series(self, unit: str, column: str, *, dropna: bool = False) -> pd.Series:
        """One unit's series of one column, indexed by year."""
        self.require(column)
        if unit not in self.units:
            raise DataError(f"unit '{unit}' is not in the panel."
                            f"{suggest(unit, self.units)}")
        values = self._frame.loc[unit, column].copy()
        values.index = values.index.astype(int)
        values.index.name = self.time_name
        values.name = column
        return values.dropna() if dropna else values

    def wide(self, column: str) -> pd.DataFrame:
        """One column as a table of years (rows) by units (columns)."""
        self.require(column)
        return self._frame[column].unstack(level=0).sort_index()

    def gaps(self) -> pd.DataFrame:
        """Audit rows about missing cells and absent years."""
        mask = self._audit["reason"].isin(["missing value", "gap: no row for these years"])
        return self._audit.loc[mask].reset_index(drop=True)

    def describe(self) -> pd.DataFrame:
        """Per variable: units with data, first and last year, observations, missing cells."""
        rows = []
        for name in self.columns:
            present = self._frame[name].dropna()
            years = present.index.get_level_values(1)
            rows.append({"column": name, "basis": self.basis(name) or "",
                         "units": present.index.get_level_values(0).nunique(),
                         "first_year": int(years.min()) if len(years) else None,
                         "last_year": int(years.max()) if len(years) else None,
                         "observations": int(present.size),
                         "missing": int(self._frame[name].isna().sum())})
        return pd.DataFrame(rows)

    def __repr__(self) -> str:
        years = self.years
        span = f"{years[0]}:{years[-1]}" if years else "none"
        return (f"Panel({len(self.units)} units, years {span}, {len(self._frame)} rows, "
                f"columns={list(self.columns)}, audit rows={len(self._audit)})")

    # ------------------------------------------------------------ selections
    def window(self, window: Window | str) -> Panel:
        """The rows with ``start <= time <= end`` (inclusive)."""
        start, end = check_window(window, self.years)
        times = self._frame.index.get_level_values(1)
        return self._replace(self._frame.loc[(times >= start) & (times <= end)])

    def select(self, units: Iterable[str]) -> Panel:
        """The rows of the given units (every name must exist)."""
        chosen = list(units)
        check_columns(chosen, list(self.units), what="unit")
        mask = self._frame.index.get_level_values(0).isin(chosen)
        return self._replace(self._frame.loc[mask])

    def arrays(self, columns: str | Sequence[str], *, window: Window | str | None = None,
               span: str = "common", gaps: str = "raise", short: str = "raise",
               constant: str = "raise", min_years: int = 2, require_units: int = 1,
               purpose: str = "this method") -> PanelArrays:
        """Columns as one array ``values[t, i, j]`` with years, units and what was left out.

        The package's one adapter from a panel to arrays (see ``evidence._arrays``).

        Parameters
        ----------
        columns : str or list of str
            Columns, in the order of the last axis.
        window : (start, end), optional
            Only these years (inclusive).
        span : {"common", "own"}
            ``common``: the years every kept unit covers; ``own``: each unit's span, NaN outside.
        gaps : {"raise", "exclude", "longest"}
            A missing year or cell inside a unit's span raises naming the unit and year, excludes
            the unit, or keeps the unit's longest complete run.
        short, constant : {"raise", "exclude"}
            A unit with fewer than ``min_years`` complete years, or a constant column.
        require_units : int
            Fewest units that must remain.

        Returns
        -------
        PanelArrays
            ``values`` ``(T, N, k)``, ``years``, ``units``, ``columns`` and ``excluded`` (unit,
            column, years, reason): trimmed ends, gaps, short or constant units.
        """
        cols = [columns] if isinstance(columns, str) else list(columns)
        self.require(*cols)
        source = self.window(window) if window is not None else self
        return panel_arrays(source._frame, cols, span=span, gaps=gaps, short=short, constant=constant,
                            min_years=min_years, purpose=purpose, time_name=self.time_name,
                            require_units=require_units)

    # -------------------------------------------------------- derived series
    def with_column(self, name: str, values: pd.Series) -> Panel:
        """Add (or replace) a column from a Series indexed like :attr:`frame`."""
        if not isinstance(values, pd.Series):
            raise DataError(f"with_column('{name}') needs a pandas Series indexed by (unit, time).")
        return self._with(name, values.reindex(self._frame.index))

    def with_difference(self, column: str, *, name: str | None = None) -> Panel:
        """Add ``diff_<column>``, the change from the previous year (NaN after a gap or first year)."""
        self.require(column)
        values = self._frame[column]
        times = pd.Series(self._frame.index.get_level_values(1), index=self._frame.index)
        consecutive = (times - times.groupby(level=0).shift(1)) == 1
        change = values - values.groupby(level=0).shift(1)
        return self._with(name or derived_name("diff", column), change.where(consecutive))

    def with_log(self, column: str, *, name: str | None = None) -> Panel:
        """Add ``log_<column>``; a zero or negative value raises naming unit and year."""
        self.require(column)
        values = self._frame[column]
        check_positive(values, column, self.time_name)
        return self._with(name or derived_name("log", column), np.log(values))

    def with_per_capita(self, column: str, population: str, *, name: str | None = None) -> Panel:
        """Add ``<column>_per_capita`` = column / population (population must be positive)."""
        self.require(column, population)
        check_positive(self._frame[population], population, self.time_name, purpose="a divisor")
        return self._with(name or derived_name("per_capita", column),
                          self._frame[column] / self._frame[population])

    def with_intensity(self, pressure: str, activity: str, *, name: str | None = None) -> Panel:
        """Add ``<pressure>_per_<activity>``, the intensity pressure / activity."""
        self.require(pressure, activity)
        check_positive(self._frame[activity], activity, self.time_name, purpose="a divisor")
        return self._with(name or derived_name("per", pressure, activity),
                          self._frame[pressure] / self._frame[activity])

    def with_growth(self, column: str, *, kind: str = "log", name: str | None = None) -> Panel:
        """Add the annual growth of ``column``: ``kind="log"`` (log difference) or ``"percent"``.

        Growth is set only between consecutive years; the first year of a unit, and a year after a
        gap or a missing value, get NaN.
        """
        self.require(column)
        kind = check_choice("kind", kind, ("log", "percent"))
        values = self._frame[column]
        if kind == "log":
            check_positive(values, column, self.time_name)
        previous = values.groupby(level=0).shift(1)
        times = pd.Series(self._frame.index.get_level_values(1), index=self._frame.index)
        consecutive = (times - times.groupby(level=0).shift(1)) == 1
        growth = np.log(values / previous) if kind == "log" else values / previous - 1.0
        return self._with(name or derived_name("growth", column), growth.where(consecutive))

    def with_index(self, column: str, base_year: int, *, name: str | None = None) -> Panel:
        """Add ``<column>_index<base>`` = 100 × value / value in ``base_year``, per unit."""
        self.require(column)
        if base_year not in self.years:
            raise SpecError(f"base_year={base_year} is not a year of the panel "
                            f"({self.years[0]}:{self.years[-1]}).")
        values = self._frame[column]
        base = values.xs(base_year, level=1, drop_level=True)
        lacking = [u for u in self.units if u not in base.index or pd.isna(base.get(u))]
        if lacking:
            raise DataError(f"unit '{lacking[0]}' has no value of '{column}' in base year "
                            f"{base_year}; choose another base year or drop the unit.")
        zero = base[base == 0]
        if len(zero):
            raise DataError(f"unit '{zero.index[0]}' has '{column}' = 0 in base year {base_year}; "
                            "an index needs a non-zero base.")
        units = self._frame.index.get_level_values(0)
        scaled = 100.0 * values / base.reindex(units).to_numpy()
        return self._with(name or f"{column}_index{base_year}", scaled)

    def compound_rate(self, column: str, window: Window | str | None = None) -> pd.Series:
        """Compound annual growth rate per unit over a window: ``(x_end / x_start)^(1/(end-start)) - 1``.

        A unit without a positive value in both end years gets NaN (and stays in the result).

        Examples
        --------
        >>> import pandas as pd
        >>> frame = pd.DataFrame({"unit": ["A", "A", "A"], "year": [2000, 2001, 2002],
        ...                       "gdp": [100.0, 110.0, 121.0]})
        >>> round(float(load_panel(frame).compound_rate("gdp").loc["A"]), 6)
        0.1
        """
        self.require(column)
        start, end = (check_window(window, self.years) if window is not None
                      else (self.years[0], self.years[-1]))
        wide = self.wide(column).reindex([start, end])
        first, last = wide.loc[start], wide.loc[end]
        valid = (first > 0) & (last > 0)
        rate = (last / first.where(valid)) ** (1.0 / (end - start)) - 1.0
        rate.name = f"{column}_cagr_{start}_{end}"
        return rate.reindex(list(self.units))

    # -------------------------------------------------------------- internal
    def _with(self, name: str, values: pd.Series) -> Panel:
        frame = self._frame.copy()
        frame[name] = values.astype(float)
        return Panel(frame, audit=self._audit, meta=self._meta)

    def _replace(self, frame: pd.DataFrame) -> Panel:
        if frame.empty:
            raise DataError("the selection leaves no rows.")
        return Panel(frame.copy(), audit=self._audit, meta=self._meta)


def check_positive(values: pd.Series, column: str, time_name: str, *, purpose: str = "a log") -> None:
    bad = values <= 0
    if bad.any():
        unit, year = bad[bad].index[0]
        raise DataError(f"column '{column}' is {values.loc[(unit, year)]:g} at unit '{unit}', "
                        f"{time_name} {year}; {purpose} needs positive values. Fix or remove the "
                        "cell, or mark it missing.")


def load_panel(source: Any, *, unit: str | None = None, time: str | None = None, layout: Layout = "auto",
               columns: Sequence[str] | None = None, variable: str = "variable",
               sheet: str | int | None = None, missing_values: Sequence[str] = _loading.MISSING_MARKERS,
               min_years: int = 2, drop_short: bool = False,
               year_range: tuple[int, int] = (1700, 2200),
               basis: Mapping[str, str] | None = None) -> Panel:
    """Read and validate a panel.

    Parameters
    ----------
    source : path or pandas.DataFrame
        A CSV/TSV, Parquet or Excel file, or a DataFrame.
    unit : str, optional
        Name of the unit column. Default: a column named ``unit`` if there is one, else the
        first column.
    time : str, optional
        Name of the time column. Default: ``year`` if there is one, else ``time``, else ``year``
        (which selects the year-columns layout when the header has year columns).
    layout : {"auto", "long", "wide"}
        ``long``: one row per (unit, time). ``wide``: one row per unit and variable, one column per
        year (the variable name in column ``variable``). ``auto`` picks ``long`` when the time column
        exists and ``wide`` when the header has year columns.
    columns : list of str, optional
        Variables to keep (default: all). Columns not kept are listed in the audit.
    missing_values : list of str
        Cell texts read as missing (listed in the audit); any other non-numeric text is an error.
    min_years : int
        Fewest years a unit must have. A shorter unit raises, unless ``drop_short=True`` excludes
        it (and the audit says so).
    year_range : (int, int)
        Accepted years, inclusive.
    basis : mapping, optional
        Accounting basis of pressure columns, e.g. ``{"ghg_consumption": "consumption"}``.

    Returns
    -------
    Panel

    Raises
    ------
    DataError
        Empty or unreadable file, unknown columns, duplicated (unit, time) pairs, non-numeric
        cells, non-integer or out-of-range years, units with too few years.
    """
    layout = check_choice("layout", layout, ("auto", "long", "wide"))  # type: ignore[assignment]
    if isinstance(min_years, bool) or not isinstance(min_years, int) or min_years < 1:
        raise SpecError(f"min_years={min_years!r} must be an integer of at least 1.")
    raw, label = _loading.read_table(source, sheet=sheet)
    unit, time = _loading.default_names(raw, unit, time)
    notes: list[dict[str, Any]] = []
    long = _loading.to_long(raw, unit=unit, time=time, variable=variable, layout=layout, notes=notes)
    variables = [c for c in long.columns if c not in (unit, time)]
    if columns is not None:
        chosen = [str(c) for c in columns]
        check_columns(chosen, variables)
        for name in variables:
            if name not in chosen:
                notes.append({"unit": "", "column": name, "years": "", "count": int(long.shape[0]),
                              "reason": "column not selected"})
        variables = chosen
    if not variables:
        raise DataError("the table has a unit and a time column but no variable columns.")
    units = _loading.parse_units(long[unit], unit)
    years = _loading.parse_years(long[time], units, time=time, year_range=year_range)
    _loading.check_duplicates(units, years, time=time)
    values = np.empty((len(long), len(variables)))
    for j, name in enumerate(variables):
        values[:, j] = _loading.parse_values(long[name], name, units, years, missing_values).to_numpy()
    frame = _indexed(units, years, values, variables, names=(unit, time))
    frame, excluded = _apply_min_years(frame, min_years=min_years, drop_short=drop_short, time=time)
    notes.extend(excluded)
    notes.extend(_loading.missing_notes(frame, variables))
    notes.extend(_loading.gap_notes(frame))
    audit = pd.DataFrame(notes, columns=_loading.AUDIT_COLUMNS)
    meta = {"source": label, "unit": unit, "time": time, "basis": _check_basis(basis, variables)}
    return Panel(frame, audit=audit, meta=meta)


def _indexed(units: pd.Series, years: pd.Series, values: np.ndarray, columns: Sequence[str], *,
             names: tuple[str, str]) -> pd.DataFrame:
    """The (unit, time)-indexed frame, sorted, built from codes (no second hashing of labels)."""
    if isinstance(units.dtype, pd.CategoricalDtype):
        raw_codes, used = pd.factorize(units.cat.codes.to_numpy())
        labels = units.cat.categories.to_numpy(dtype=object)[used]
    else:
        raw_codes, labels = pd.factorize(units.to_numpy(dtype=object))
        labels = np.asarray(labels, dtype=object)
    perm = np.argsort(labels.astype(str), kind="stable")  # levels in lexical order
    rank = np.empty_like(perm)
    rank[perm] = np.arange(perm.size)
    unit_codes, unit_levels = rank[raw_codes], labels[perm]
    year_codes, year_levels = pd.factorize(years.to_numpy(dtype=np.int64), sort=True)
    order = np.lexsort((year_codes, unit_codes))
    if np.any(order[1:] != order[:-1] + 1):  # files are often sorted already: no copy then
        values = values[order]
        unit_codes, year_codes = unit_codes[order], year_codes[order]
    index = pd.MultiIndex(levels=[pd.Index(np.asarray(unit_levels, dtype=object), dtype=object),
                                  pd.Index(year_levels)],
                          codes=[unit_codes, year_codes], names=list(names), verify_integrity=False)
    return pd.DataFrame(values, index=index, columns=list(columns), copy=False)


def _apply_min_years(frame: pd.DataFrame, *, min_years: int, drop_short: bool,
                     time: str) -> tuple[pd.DataFrame, list[dict[str, Any]]]:
    has_data = frame.notna().any(axis=1)
    counts = has_data.groupby(level=0).sum()
    short = counts[counts < min_years]
    if short.empty:
        return frame, []
    if not drop_short:
        name, count = short.index[0], int(short.iloc[0])
        raise DataError(f"unit '{name}' has {count} {time}(s) with data; at least {min_years} are "
                        "needed. Remove the unit, lower min_years, or pass drop_short=True to "
                        "exclude it (it will be listed in the audit).")
    notes = []
    for name, count in short.items():
        years = frame.loc[name].index
        notes.append({"unit": name, "column": "", "years": format_years(years),
                      "count": int(count),
                      "reason": f"unit excluded: {int(count)} year(s) with data, min_years={min_years}"})
    keep = ~frame.index.get_level_values(0).isin(short.index)
    if not keep.any():
        raise DataError(f"every unit has fewer than {min_years} years with data; nothing is left.")
    return frame.loc[keep], notes


def _check_basis(basis: Mapping[str, str] | None, variables: Sequence[str]) -> dict[str, str]:
    if not basis:
        return {}
    out = {}
    for column, value in basis.items():
        check_columns([column], list(variables))
        out[column] = check_choice(f"basis['{column}']", value, BASES)
    return out
