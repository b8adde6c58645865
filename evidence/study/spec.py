"""The study specification: a TOML file in the package's own schema, validated key by key.

Every error names the key, the line of the file and what is allowed. Values are data only: no
expression in the file is evaluated.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from evidence._validation import suggest
from evidence.errors import SpecError

__all__ = ["StudySpec", "PressureSpec", "read_spec", "parse_spec", "SCHEMA"]

# table -> key -> (type or tuple of types, required)
SCHEMA: dict[str, dict[str, tuple[Any, bool]]] = {
    "study": {"title": (str, False), "claim": (str, False)},
    "data": {"file": (str, True), "unit": (str, False), "time": (str, False),
             "source": (str, False), "release": (str, False)},
    "roles": {"activity": (str, True), "population": (str, False), "energy": (str, False)},
    "pressures": {"column": (str, True), "basis": (str, False), "consumption": (str, False)},
    "window": {"start": (int, True), "end": (int, True)},
    "criteria": {"alpha": (float, False), "adjust": (str, False), "episode_years": (int, False),
                 "sustained_years": (int, False), "min_window": (int, False),
                 "short_window": (int, False), "required_rate": (float, False),
                 "budgets": (dict, False), "interval": (str, False),
                 "reps": (int, False), "trend_test": (str, False)},
    "breaks": {"max_breaks": (int, False), "trim": (float, False)},
    "analyses": {"rates": (bool, False), "grade": (bool, False), "elasticity": (list, False),
                 "roots": (list, False), "dependence": (bool, False), "convergence": (list, False),
                 "decomposition": (bool, False)},
    "output": {"formats": (list, False), "figures": (bool, False), "seed": (int, False)},
}
TABLE_FORMATS = ("text", "markdown", "latex", "html", "csv", "json", "docx")


@dataclass(frozen=True)
class PressureSpec:
    """One pressure column, its accounting basis and (optionally) its consumption-basis twin."""

    column: str
    basis: str = "territorial"
    consumption: str | None = None


@dataclass(frozen=True)
class StudySpec:
    """A validated study specification (see ``docs/study.md`` for the annotated example)."""

    data_file: Path
    activity: str
    pressures: tuple[PressureSpec, ...]
    unit: str | None = None
    time: str | None = None
    source: str = ""
    release: str = ""
    title: str = "Decoupling study"
    claim: str = ""
    population: str | None = None
    energy: str | None = None
    window: tuple[int, int] | None = None
    criteria: dict[str, Any] = field(default_factory=dict)
    breaks: dict[str, Any] = field(default_factory=dict)
    analyses: dict[str, Any] = field(default_factory=dict)
    formats: tuple[str, ...] = ("markdown", "latex", "html", "csv")
    figures: bool = True
    seed: int = 20261202
    raw: dict[str, Any] = field(default_factory=dict)


def _line_of(text: str, table: str, key: str | None) -> int | None:
    """Line number of ``key`` inside ``[table]`` (or of the table header), by a plain scan."""
    current = None
    for number, line in enumerate(text.splitlines(), start=1):
        header = re.match(r"^\s*\[\[?\s*([A-Za-z0-9_.-]+)\s*\]\]?", line)
        if header:
            current = header.group(1)
            if key is None and current == table:
                return number
            continue
        if current == table and key is not None and re.match(rf"^\s*{re.escape(key)}\s*=", line):
            return number
    return None


def _where(text: str, table: str, key: str | None = None) -> str:
    line = _line_of(text, table, key)
    name = f"[{table}]" + (f" {key}" if key else "")
    return f"{name} (line {line})" if line else name


def _check_table(text: str, table: str, values: dict[str, Any]) -> None:
    allowed = SCHEMA[table]
    for key, value in values.items():
        if key not in allowed:
            raise SpecError(f"unknown key {_where(text, table, key)}.{suggest(key, allowed)} "
                            f"Allowed keys: {', '.join(sorted(allowed))}.")
        kind = allowed[key][0]
        ok = isinstance(value, kind) and not (kind in (int, float) and isinstance(value, bool))
        if kind is float and isinstance(value, int) and not isinstance(value, bool):
            ok = True
        if not ok:
            raise SpecError(f"{_where(text, table, key)} must be a {kind.__name__}, not "
                            f"{type(value).__name__} ({value!r}).")
    for key, (_, required) in allowed.items():
        if required and key not in values:
            raise SpecError(f"{_where(text, table)} needs the key '{key}'.")


def parse_spec(text: str, *, base: Path | None = None) -> StudySpec:
    """Validate the TOML text of a study specification; relative paths are from ``base``."""
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise SpecError(f"the study file is not valid TOML: {exc}") from None
    for table, values in raw.items():
        if table not in SCHEMA:
            raise SpecError(f"unknown table [{table}] (line {_line_of(text, table, None)})."
                            f"{suggest(table, SCHEMA)} Allowed: {', '.join(sorted(SCHEMA))}.")
        if table == "pressures":
            if not isinstance(values, list) or not values:
                raise SpecError("pressures must be one or more [[pressures]] tables.")
            for item in values:
                _check_table(text, table, item)
        elif not isinstance(values, dict):
            raise SpecError(f"'{table}' must be a table: write it as [{table}].")
        else:
            _check_table(text, table, values)
    for table in ("data", "roles", "pressures"):
        if table not in raw:
            raise SpecError(f"the study file needs a [{table}] table"
                            + (" ([[pressures]])." if table == "pressures" else "."))
    output = raw.get("output", {})
    formats = tuple(output.get("formats", ("markdown", "latex", "html", "csv")))
    for fmt in formats:
        if fmt not in TABLE_FORMATS:
            raise SpecError(f"{_where(text, 'output', 'formats')}: '{fmt}' is not a table format; "
                            f"use {', '.join(TABLE_FORMATS)}.")
    window = raw.get("window")
    if window is not None and window["start"] >= window["end"]:
        raise SpecError(f"{_where(text, 'window', 'start')}: start must be before end.")
    data = raw["data"]
    path = Path(data["file"])
    if not path.is_absolute() and base is not None:
        path = base / path
    pressures = tuple(PressureSpec(column=p["column"], basis=p.get("basis", "territorial"),
                                   consumption=p.get("consumption")) for p in raw["pressures"])
    for p in pressures:
        if p.basis not in ("territorial", "consumption"):
            raise SpecError(f"{_where(text, 'pressures', 'basis')}: basis '{p.basis}' is not "
                            "'territorial' or 'consumption'.")
    meta = raw.get("study", {})
    return StudySpec(
        data_file=path, activity=raw["roles"]["activity"], pressures=pressures,
        unit=data.get("unit"), time=data.get("time"), source=data.get("source", ""),
        release=data.get("release", ""), title=meta.get("title", "Decoupling study"),
        claim=meta.get("claim", ""), population=raw["roles"].get("population"),
        energy=raw["roles"].get("energy"),
        window=None if window is None else (window["start"], window["end"]),
        criteria=dict(raw.get("criteria", {})), breaks=dict(raw.get("breaks", {})),
        analyses=dict(raw.get("analyses", {})), formats=formats,
        figures=bool(output.get("figures", True)), seed=int(output.get("seed", 20261202)),
        raw=raw)


def read_spec(path: str | Path) -> StudySpec:
    """Read and validate a study file."""
    path = Path(path)
    if not path.exists():
        raise SpecError(f"study file '{path}' does not exist.")
    return parse_spec(path.read_text(encoding="utf-8"), base=path.parent)
