"""Reading panel files and tables, detecting the layout, and validating cells.

Every problem becomes a :class:`~evidence.errors.DataError` that names the unit, year, column or
row concerned; every cell left out (a missing value, an unused column, an excluded unit) is written
to the audit table instead of being dropped silently.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evidence._files import check_excel, check_source
from evidence._validation import check_columns, format_years, suggest
from evidence.errors import DataError

__all__ = ["MISSING_MARKERS", "AUDIT_COLUMNS", "read_table", "to_long", "parse_values"]

#: Cell texts read as "missing" (and listed in the audit) rather than rejected as non-numeric.
MISSING_MARKERS: tuple[str, ...] = ("", "NA", "N/A", "n/a", "na", "NaN", "nan", "..", ".", "-", "null")
AUDIT_COLUMNS = ["unit", "column", "years", "count", "reason"]
#: Bytes of CSV converted at a time by the typed reader (bounds its memory).
_BLOCK_BYTES = 1 << 24
_YEAR_LABEL = re.compile(r"^\s*\d{4}\s*$")
_READERS = {".csv": "csv", ".txt": "csv", ".tsv": "tsv", ".parquet": "parquet", ".pq": "parquet",
            ".xlsx": "excel", ".xlsm": "excel", ".xls": "excel"}


def read_table(source: Any, *, sheet: str | int | None = None) -> tuple[pd.DataFrame, str]:
    """Read ``source`` (path or DataFrame) as a DataFrame of raw cells; return it with a label."""
    if isinstance(source, pd.DataFrame):
        return source.copy(), "DataFrame"
    if not isinstance(source, (str, Path)):
        raise DataError(f"cannot read a panel from a {type(source).__name__}; pass a file path "
                        "(CSV, Parquet, Excel) or a pandas DataFrame.")
    path = check_source(source)  # a regular file within the size limit
    kind = _READERS.get(path.suffix.lower())
    if kind is None:
        allowed = ", ".join(sorted(_READERS))
        raise DataError(f"file '{path}' has an unknown extension '{path.suffix}'; use one of {allowed}.")
    try:
        if kind in ("csv", "tsv"):
            sep = "\t" if kind == "tsv" else ","
            header = _csv_header(path, sep)
            frame = _read_csv_typed(path, sep, header)
            if frame is None:
                frame = pd.read_csv(path, dtype=str, keep_default_na=False, sep=sep,
                                    skipinitialspace=True, encoding="utf-8-sig")
            if len(header) == frame.shape[1]:
                frame.columns = header
        elif kind == "parquet":
            frame = _read_parquet_typed(path)
            if frame is None:
                frame = pd.read_parquet(path)
        else:
            frame = _read_excel(path, sheet)
    except ImportError as exc:
        extra = "parquet" if kind == "parquet" else "excel"
        raise DataError(f"reading '{path.name}' needs an optional library ({exc.name}); install it "
                        f"with: pip install 'decoupling-evidence[{extra}]'.") from None
    except pd.errors.EmptyDataError:
        raise DataError(f"file '{path}' is empty.") from None
    except (pd.errors.ParserError, UnicodeDecodeError, ValueError, OSError) as exc:
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise DataError(f"file '{path}' could not be read as {kind}: {first}") from None
    return frame, str(path)


def _read_excel(path: Path, sheet: str | int | None) -> pd.DataFrame:
    """A workbook read safely: checked first (no DTD or entities, no zip bomb); any failure of
    the Excel reader on a damaged file is a :class:`DataError`."""
    if path.suffix.lower() != ".xls":
        check_excel(path)
    try:
        return pd.read_excel(path, sheet_name=0 if sheet is None else sheet, dtype=object)
    except (ImportError, DataError):
        raise
    except Exception as exc:
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise DataError(f"file '{path}' could not be read as Excel: {first}") from None


def _csv_header(path: Path, sep: str) -> list[str]:
    """The header cells as written (pandas renames duplicated names, which must be caught)."""
    import csv

    with path.open(newline="", encoding="utf-8-sig") as handle:
        return next(csv.reader(handle, delimiter=sep, skipinitialspace=True), [])


def _read_csv_typed(path: Path, sep: str, header: list[str]) -> pd.DataFrame | None:
    """Read a CSV with pyarrow's streaming reader: numbers typed, every other cell as text.

    Only the missing markers become missing; a column that is not wholly numeric comes back as
    text (a categorical: each distinct text made once) and is checked cell by cell later, exactly
    as on the plain path. Blocks are converted as they are read, so memory stays near the size of
    the result. Returns ``None`` when pyarrow is not installed or the typed read fails (a column
    that turns out not to be numeric after its first block, say): the plain pandas reader then
    takes over and reports what is wrong.
    """
    try:
        import pyarrow as pa
        from pyarrow import csv as pacsv
    except ImportError:
        return None
    if not header or len(set(header)) != len(header):
        return None  # duplicated names: the plain path reports them
    try:
        reader = pacsv.open_csv(
            path,
            read_options=pacsv.ReadOptions(column_names=header, skip_rows=1, block_size=_BLOCK_BYTES),
            parse_options=pacsv.ParseOptions(delimiter=sep),
            convert_options=pacsv.ConvertOptions(null_values=list(MISSING_MARKERS),
                                                 strings_can_be_null=False,
                                                 quoted_strings_can_be_null=False))
        pieces: dict[str, list[np.ndarray]] = {name: [] for name in header}
        dictionaries: dict[str, dict[str, int]] = {}
        for batch in reader:
            for name, column in zip(header, batch.columns, strict=True):
                pieces[name].append(_arrow_piece(column, name, dictionaries, pa))
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError, OSError, UnicodeDecodeError, _NotTyped):
        return None
    return _assemble(header, pieces, dictionaries)


def _read_parquet_typed(path: Path) -> pd.DataFrame | None:
    """Read a Parquet file batch by batch as :func:`_read_csv_typed` reads a CSV: numbers as
    numbers, text as categorical codes (each distinct text made once), so that 2 million rows stay
    well under 1 GB. Returns ``None`` (the caller then uses ``pandas.read_parquet``) when pyarrow is
    missing, names repeat, the file keeps a named pandas index, or a column is of a kind the batch
    path does not take.
    """
    try:
        import pyarrow as pa
        import pyarrow.parquet as pq
    except ImportError:
        return None
    try:
        source = pq.ParquetFile(path)
        header = list(source.schema_arrow.names)
        index = (source.schema_arrow.pandas_metadata or {}).get("index_columns", [])
        if len(set(header)) != len(header) or any(isinstance(item, str) for item in index):
            return None
        pieces: dict[str, list[np.ndarray]] = {name: [] for name in header}
        dictionaries: dict[str, dict[str, int]] = {}
        for batch in source.iter_batches(batch_size=1 << 16):
            for name, column in zip(header, batch.columns, strict=True):
                pieces[name].append(_arrow_piece(column, name, dictionaries, pa))
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError, _NotTyped):
        return None
    return _assemble(header, pieces, dictionaries)


def _assemble(header: list[str], pieces: dict[str, list[np.ndarray]],
              dictionaries: dict[str, dict[str, int]]) -> pd.DataFrame:
    """One frame from the converted blocks: text columns as categoricals, numbers as arrays."""
    out: dict[str, Any] = {}
    for name in header:
        parts = pieces.pop(name)
        if name in dictionaries:
            labels = pd.Index(list(dictionaries[name]), dtype=object)
            codes = np.concatenate(parts) if parts else np.empty(0, dtype=np.int32)
            out[name] = pd.Categorical.from_codes(codes, categories=labels)
        else:
            out[name] = np.concatenate(parts) if parts else np.empty(0)
    return pd.DataFrame(out, columns=header, copy=False)


class _NotTyped(Exception):
    """A column changed kind between blocks (numbers, then text): read the plain way."""


def _arrow_piece(column: Any, name: str, dictionaries: dict[str, dict[str, int]], pa: Any) -> np.ndarray:
    kind = column.type
    numeric = pa.types.is_integer(kind) or pa.types.is_floating(kind) or pa.types.is_decimal(kind)
    if pa.types.is_null(kind):  # every cell a marker: text ("NA" as a unit name) or missing numbers?
        raise _NotTyped(name)
    if numeric:
        if name in dictionaries:
            raise _NotTyped(name)
        return column.to_numpy(zero_copy_only=False).astype(
            np.int64 if pa.types.is_integer(kind) and column.null_count == 0 else np.float64)
    mapping = dictionaries.setdefault(name, {})
    text = column if pa.types.is_string(kind) or pa.types.is_large_string(kind) else column.cast(pa.string())
    encoded = text.dictionary_encode()
    local = encoded.dictionary.to_pylist()
    remap = np.array([mapping.setdefault(label, len(mapping)) for label in local], dtype=np.int32)
    return remap[encoded.indices.to_numpy(zero_copy_only=False)] if len(local) else np.zeros(
        len(column), dtype=np.int32)


def default_names(frame: pd.DataFrame, unit: str | None, time: str | None) -> tuple[str, str]:
    """Resolve default unit and time column names (see :func:`evidence.load_panel`)."""
    names = [str(c).strip() for c in frame.columns]
    if unit is None:
        unit = "unit" if "unit" in names or not names else names[0]
    if time is None:
        time = next((n for n in ("year", "time") if n in names), "year")
    return unit, time


def _clean_names(frame: pd.DataFrame) -> pd.DataFrame:
    names = [str(c).strip() for c in frame.columns]
    seen: set[str] = set()
    for name in names:
        if name in seen:
            raise DataError(f"column '{name}' appears more than once in the header; "
                            "give each column a distinct name.")
        seen.add(name)
    out = frame.copy(deep=False)  # new labels, the same cells (read_table already copied)
    out.columns = names
    return out


def _year_columns(names: Sequence[str]) -> list[str]:
    return [n for n in names if _YEAR_LABEL.match(n)]


def detect_layout(frame: pd.DataFrame, *, time: str, layout: str) -> str:
    """Return ``"long"`` or ``"wide"`` for ``layout="auto"``; check a forced layout."""
    names = list(frame.columns)
    years = _year_columns(names)
    if layout == "auto":
        if time in names:
            return "long"
        if len(years) >= 2:
            return "wide"
        raise DataError(f"time column '{time}' is not in the data.{suggest(time, names)} "
                        f"Pass time=NAME for a long table, or give year columns (1990, 1991, ...) "
                        f"for the year-columns layout.")
    if layout == "wide" and len(years) < 2:
        raise DataError("layout='wide' needs at least two year columns named like 1990, 1991; "
                        f"found columns {', '.join(repr(n) for n in names)}.")
    return layout


def to_long(frame: pd.DataFrame, *, unit: str, time: str, variable: str, layout: str,
            notes: list[dict[str, Any]]) -> pd.DataFrame:
    """Return a long table with columns ``unit, time, <variables...>`` (cells still raw)."""
    if frame.shape[0] == 0 or frame.shape[1] == 0:
        raise DataError("the table has no rows; nothing to load.")
    frame = _clean_names(frame)
    layout = detect_layout(frame, time=time, layout=layout)
    if layout == "long":
        check_columns([unit, time], list(frame.columns))
        return frame
    check_columns([unit, variable], list(frame.columns))
    years = _year_columns(list(frame.columns))
    unused = [c for c in frame.columns if c not in years and c not in (unit, variable)]
    for name in unused:
        notes.append({"unit": "", "column": name, "years": "", "count": int(frame.shape[0]),
                      "reason": "column not used: the year-columns layout reads only year columns"})
    keys = frame[[unit, variable]].astype(str)
    dup = keys.duplicated(keep=False)
    if dup.any():
        u, v = keys[dup].iloc[0]
        raise DataError(f"unit '{u}' has more than one row for variable '{v}'; keep one row per "
                        "unit and variable in the year-columns layout.")
    if frame[variable].isna().any():
        row = int(np.flatnonzero(frame[variable].isna().to_numpy())[0]) + 1
        raise DataError(f"data row {row} has no variable name in column '{variable}'.")
    melted = frame.melt(id_vars=[unit, variable], value_vars=years, var_name=time, value_name="_v")
    melted[variable] = melted[variable].astype(str).str.strip()
    long = melted.pivot(index=[unit, time], columns=variable, values="_v").reset_index()
    long.columns.name = None
    return long


def _text_codes(values: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """Cells as codes into distinct stripped texts (missing cells, None or NaN, as "")."""
    if isinstance(values.dtype, pd.CategoricalDtype):
        codes, uniques = values.cat.codes.to_numpy(), values.cat.categories.to_numpy(dtype=object)
    else:
        codes, uniques = pd.factorize(values.astype(object), use_na_sentinel=True)
    labels = ["" if _is_missing_scalar(v) else str(v).strip() for v in uniques] + [""]
    merged, distinct = pd.factorize(np.asarray(labels, dtype=object))  # " A" and "A" are one label
    return merged[codes], np.asarray(distinct, dtype=object)


def _as_text(values: pd.Series) -> pd.Series:
    """Cells as stripped text; missing cells (None, NaN) as ""; computed once per distinct value."""
    codes, labels = _text_codes(values)
    return pd.Series(labels[codes], index=values.index, dtype=object)


def parse_units(values: pd.Series, unit: str) -> pd.Series:
    """Unit labels as stripped strings, categorical; an empty label is an error naming the row."""
    codes, labels = _text_codes(values)
    text = pd.Series(pd.Categorical.from_codes(codes, categories=pd.Index(labels, dtype=object)),
                     index=values.index)
    empty = codes == int(np.flatnonzero(labels == "")[0]) if (labels == "").any() else np.zeros(
        len(codes), dtype=bool)
    if empty.any():
        row = int(np.flatnonzero(empty)[0]) + 1
        raise DataError(f"data row {row} has no unit label in column '{unit}'; every row needs one.")
    return text


def _is_missing_scalar(value: Any) -> bool:
    try:
        return bool(pd.isna(value))
    except (TypeError, ValueError):
        return False


def parse_years(values: pd.Series, units: pd.Series, *, time: str,
                year_range: tuple[int, int]) -> pd.Series:
    """Integer years; non-integer, missing or out-of-range years raise, naming the unit."""
    if pd.api.types.is_integer_dtype(values.dtype):
        numbers = values.astype("float64")
        as_text = None
    else:
        as_text = _as_text(values)
        numbers = pd.to_numeric(as_text.where(as_text != "", None), errors="coerce")
    bad = numbers.isna() | ~np.isfinite(numbers.fillna(0)) | (numbers != np.round(numbers.fillna(0)))
    if bad.any():
        i = int(np.flatnonzero(bad.to_numpy())[0])
        shown = (as_text.iloc[i] if as_text is not None else "") or "an empty cell"
        raise DataError(f"unit '{units.iloc[i]}' has a non-integer year {shown!r} in column "
                        f"'{time}'; years must be whole numbers such as 1990.")
    years = numbers.astype("int64")
    low, high = year_range
    out = (years < low) | (years > high)
    if out.any():
        i = int(np.flatnonzero(out.to_numpy())[0])
        raise DataError(f"unit '{units.iloc[i]}' has year {years.iloc[i]} in column '{time}', "
                        f"outside the accepted range {low}:{high}; fix the year or pass "
                        "year_range=(low, high).")
    return years


def parse_values(column: pd.Series, name: str, units: pd.Series, years: pd.Series,
                 markers: Sequence[str]) -> pd.Series:
    """Numeric values; missing markers become NaN, anything else non-numeric raises."""
    if pd.api.types.is_bool_dtype(column.dtype):
        raise DataError(f"column '{name}' holds true/false values; a panel variable must be numeric.")
    if pd.api.types.is_numeric_dtype(column.dtype):
        numbers = pd.to_numeric(column, errors="coerce").astype(float)
    else:
        text = _as_text(column)
        if isinstance(column.dtype, pd.CategoricalDtype):
            is_bool = pd.Series(False, index=column.index)
        else:
            raw = column.astype(object)
            is_bool = pd.Series([isinstance(v, (bool, np.bool_)) for v in raw.to_numpy()],
                                index=raw.index)
        marker = text.isin(list(markers))
        numbers = pd.to_numeric(text.where(~marker, None), errors="coerce").astype(float)
        bad = (numbers.isna() & ~marker) | is_bool
        if bad.any():
            i = int(np.flatnonzero(bad.to_numpy())[0])
            raise DataError(f"column '{name}' has a non-numeric cell {text.iloc[i]!r} at unit "
                            f"'{units.iloc[i]}', year {years.iloc[i]}; fix the cell or mark it "
                            "missing (empty, NA or ..).")
    infinite = np.isinf(numbers.to_numpy())
    if infinite.any():
        i = int(np.flatnonzero(infinite)[0])
        raise DataError(f"column '{name}' has an infinite value at unit '{units.iloc[i]}', year "
                        f"{years.iloc[i]}; replace it with a finite number or mark it missing.")
    return numbers


def check_duplicates(units: pd.Series, years: pd.Series, *, time: str) -> None:
    """Duplicated (unit, time) pairs are an error naming the first pair and its rows."""
    codes, _ = pd.factorize(units)
    year_values = years.to_numpy(dtype=np.int64)
    key = codes.astype(np.int64) * (int(year_values.max() - year_values.min()) + 1) + (
        year_values - year_values.min())
    dup = pd.Series(key).duplicated(keep=False).to_numpy()
    if dup.any():
        keys = pd.DataFrame({"u": units.to_numpy(), "t": year_values})
        first = keys[dup].iloc[0]
        rows = np.flatnonzero(dup & (keys["u"] == first["u"]).to_numpy()
                              & (keys["t"] == first["t"]).to_numpy()) + 1
        raise DataError(f"unit '{first['u']}', {time} {first['t']} appears {len(rows)} times "
                        f"(data rows {', '.join(str(r) for r in rows[:5])}); keep one row per unit "
                        "and year, or aggregate duplicates before loading.")


def missing_notes(frame: pd.DataFrame, columns: Sequence[str]) -> list[dict[str, Any]]:
    """One audit row per (unit, column) with missing cells, listing the years."""
    notes: list[dict[str, Any]] = []
    for name in columns:
        missing = frame[name].isna()
        if not missing.any():
            continue
        for unit_label, years in frame.loc[missing].groupby(level=0, sort=True).groups.items():
            year_list = [y for _, y in years]
            notes.append({"unit": unit_label, "column": name, "years": format_years(year_list),
                          "count": len(year_list), "reason": "missing value"})
    return notes


def gap_notes(frame: pd.DataFrame) -> list[dict[str, Any]]:
    """Audit rows for years absent inside a unit's span (no row at all)."""
    keys = pd.DataFrame({"u": frame.index.get_level_values(0), "t": frame.index.get_level_values(1)})
    spans = keys.groupby("u", sort=True)["t"].agg(["min", "max", "count"])
    gappy = spans[spans["max"] - spans["min"] + 1 != spans["count"]]
    notes: list[dict[str, Any]] = []
    if gappy.empty:
        return notes
    by_unit = keys.loc[keys["u"].isin(gappy.index)].groupby("u", sort=True)["t"]
    present_sets = {u: set(t.tolist()) for u, t in by_unit}
    for unit_label, span in gappy.iterrows():
        present = present_sets[unit_label]
        absent = [y for y in range(int(span["min"]), int(span["max"]) + 1) if y not in present]
        notes.append({"unit": unit_label, "column": "", "years": format_years(absent),
                      "count": len(absent), "reason": "gap: no row for these years"})
    return notes
