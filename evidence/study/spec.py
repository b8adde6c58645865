"""The study specification: a TOML file in the package's own schema, validated before any work.

Every key is checked for its type *and* its value (ranges, choices with suggestions), and the
columns, units and years it names are checked against the data once it is loaded — before any
analysis runs. Every error names the key, its line in the file and what is allowed. Values are
data only: no expression in the file is evaluated.
"""

from __future__ import annotations

import math
import re
import stat
import tomllib
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from evidence._typing import ADJUSTMENTS, DEFAULT_SEED
from evidence._validation import check_choice, check_columns, check_int, check_number, check_window, suggest
from evidence.elasticity import ESTIMATORS
from evidence.errors import DataError, EvidenceError, SpecError
from evidence.parallel import BACKENDS
from evidence.roots.battery import PANEL_TESTS, SERIES_TESTS

__all__ = ["StudySpec", "PressureSpec", "read_spec", "parse_spec", "check_executor",
           "check_against_data", "SCHEMA", "ANALYSIS_DEFAULTS", "TABLE_FORMATS",
           "CONVERGENCE_METHODS", "COINTEGRATION_TESTS", "BREAK_SERIES", "UNIT_FIGURES",
           "MAX_SPEC_BYTES"]

TABLE_FORMATS = ("text", "markdown", "latex", "html", "csv", "json", "docx")
#: Address schemes of a Dask scheduler (``executor = "tcp://host:8786"``).
SCHEDULER_SCHEMES = ("tcp://", "tls://", "inproc://", "ucx://")
#: The convergence analyses a study can run.
CONVERGENCE_METHODS = ("beta", "sigma", "stochastic", "clubs")
#: The panel cointegration tests a study can run.
COINTEGRATION_TESTS = ("pedroni", "kao", "westerlund")
#: The series a break screen can test: the log intensity and the log pressure.
BREAK_SERIES = ("intensity", "pressure")
#: Which units get their own figures: those chosen by interest, or every unit.
UNIT_FIGURES = ("chosen", "all")
#: What runs when ``[analyses]`` does not say: on/off, or the methods of an analysis.
ANALYSIS_DEFAULTS: dict[str, Any] = {
    "rates": True, "grade": True, "breaks": True, "elasticity": ["fe", "ccemg"], "ekc": False,
    "roots": [], "dependence": False, "cointegration": [],
    "convergence": ["beta", "sigma", "clubs"], "decomposition": True}
#: A study file larger than this is not a study file.
MAX_SPEC_BYTES = 1 << 20
#: Years a window may name (a sanity bound; the window must also overlap the data).
_YEARS = (-10_000, 10_000)
#: Keys renamed in the one vocabulary: old name -> new name.
_RENAMED = {"bootstrap_reps": "reps"}

Check = Callable[[Any, str], Any]


# ----------------------------------------------------------------------------- value checks
def _fail(where: str, message: str) -> SpecError:
    return SpecError(f"{where}: {message}")


def _text(value: Any, where: str) -> str:
    if "\x00" in value:
        raise _fail(where, "contains a NUL character.")
    return value


def _name(value: Any, where: str) -> str:
    if not value.strip():
        raise _fail(where, "is empty; give a column name.")
    return _text(value, where)


def _int(low: int | None, high: int | None) -> Check:
    def check(value: Any, where: str) -> int:
        try:
            return int(check_int("value", value, minimum=low, maximum=high))
        except SpecError as exc:
            raise _fail(where, str(exc).replace("value=", "", 1)) from None
    return check


def _number(low: float, high: float, *, inclusive: bool = False, hint: str = "") -> Check:
    def check(value: Any, where: str) -> float:
        try:
            return check_number("value", value, low=low, high=high, inclusive=inclusive, hint=hint)
        except SpecError as exc:
            raise _fail(where, str(exc).replace("value=", "", 1)) from None
    return check


def _choice(options: tuple[str, ...]) -> Check:
    def check(value: Any, where: str) -> str:
        try:
            return check_choice("value", value, options)
        except SpecError:
            raise _fail(where, f"{value!r} is not an option;{suggest(value, options)} use one of "
                               f"{', '.join(repr(o) for o in options)}.") from None
    return check


def _choices(options: tuple[str, ...]) -> Check:
    one = _choice(options)

    def check(value: Any, where: str) -> list[str]:
        out = []
        for item in value:
            if not isinstance(item, str):
                raise _fail(where, f"{item!r} is not a name; list names such as "
                                   f"{', '.join(repr(o) for o in options[:3])}.")
            name = one(item, where)
            if name in out:
                raise _fail(where, f"{item!r} is listed twice.")
            out.append(name)
        return out
    return check


def _labels(value: Any, where: str) -> dict[str, str]:
    if not all(isinstance(k, str) and k and isinstance(v, str) and v for k, v in value.items()):
        raise _fail(where, 'must map names to the text tables show, e.g. {log_gdp = "ln GDP"}.')
    return dict(value)


def _names(value: Any, where: str) -> list[str]:
    if not all(isinstance(v, str) and v.strip() for v in value):
        raise _fail(where, 'must list unit names as text, e.g. ["Aldwyr", "Vellmark"].')
    return [_text(v, where) for v in dict.fromkeys(value)]


def _budgets(value: Any, where: str) -> dict[str, float]:
    out = {}
    for unit, budget in value.items():
        if isinstance(budget, bool) or not isinstance(budget, (int, float)) or not (
                math.isfinite(budget) and budget > 0):
            raise _fail(where, f"the budget of '{unit}' is {budget!r}; give a positive number "
                               "(a remaining cumulative budget in the pressure's units).")
        out[str(unit)] = float(budget)
    return out


@dataclass(frozen=True)
class Key:
    """One key of the schema: its TOML type, whether it is required, and its value check."""

    kind: Any
    required: bool = False
    check: Check | None = None


# table -> key -> Key
SCHEMA: dict[str, dict[str, Key]] = {
    "study": {"title": Key(str, check=_text), "claim": Key(str, check=_text)},
    "data": {"file": Key(str, True, _name), "unit": Key(str, check=_name),
             "time": Key(str, check=_name), "source": Key(str, check=_text),
             "release": Key(str, check=_text)},
    "roles": {"activity": Key(str, True, _name), "population": Key(str, check=_name),
              "energy": Key(str, check=_name)},
    "pressures": {"column": Key(str, True, _name),
                  "basis": Key(str, check=_choice(("territorial", "consumption"))),
                  "consumption": Key(str, check=_name)},
    "window": {"start": Key(int, True, _int(*_YEARS)), "end": Key(int, True, _int(*_YEARS))},
    "criteria": {"alpha": Key(float, check=_number(0.0, 0.5, hint=", e.g. 0.05")),
                 "adjust": Key(str, check=_choice(ADJUSTMENTS)),
                 "episode_years": Key(int, check=_int(1, 1000)),
                 "sustained_years": Key(int, check=_int(1, 1000)),
                 "min_window": Key(int, check=_int(5, 1000)),
                 "short_window": Key(int, check=_int(2, 1000)),
                 "required_rate": Key(float, check=_number(0.0, 1.0, hint=" (0.05 = 5 % a year)")),
                 "budgets": Key(dict, check=_budgets),
                 "interval": Key(str, check=_choice(("test", "bootstrap"))),
                 "reps": Key(int, check=_int(99, 1_000_000)),  # bootstrap replications
                 "trend_test": Key(str, check=_choice(("perron-yabu", "dan-j", "ps-j",
                                                       "perron-yabu-normal", "hac-fixed-b",
                                                       "hac")))},
    "breaks": {"max_breaks": Key(int, check=_int(1, 10)),
               "trim": Key(float, check=_number(0.0, 0.5, hint=", e.g. 0.15")),
               "series": Key(list, check=_choices(BREAK_SERIES))},
    "analyses": {"rates": Key(bool), "grade": Key(bool), "breaks": Key(bool),
                 "elasticity": Key(list, check=_choices(ESTIMATORS)), "ekc": Key(bool),
                 "roots": Key(list, check=_choices(SERIES_TESTS + PANEL_TESTS)),
                 "dependence": Key(bool),
                 "cointegration": Key(list, check=_choices(COINTEGRATION_TESTS)),
                 "convergence": Key(list, check=_choices(CONVERGENCE_METHODS)),
                 "decomposition": Key(bool)},
    "output": {"formats": Key(list, check=_choices(TABLE_FORMATS)), "figures": Key(bool),
               "unit_figures": Key(str, check=_choice(UNIT_FIGURES)),
               "figure_units": Key(list, check=_names),
               "labels": Key(dict, check=_labels),
               "seed": Key(int, check=_int(0, 2**63 - 1))},
    "run": {"executor": Key(str, check=lambda v, w: check_executor(v, w))},
}


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
    unit_figures: str = "chosen"
    figure_units: tuple[str, ...] = ()
    labels: dict[str, str] = field(default_factory=dict)
    seed: int = DEFAULT_SEED
    executor: Any = "serial"
    raw: dict[str, Any] = field(default_factory=dict)
    text: str = field(default="", repr=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "analyses", {**ANALYSIS_DEFAULTS, **self.analyses})

    @property
    def pressure_columns(self) -> tuple[str, ...]:
        """The pressure columns, in the order of the file."""
        return tuple(p.column for p in self.pressures)

    @property
    def consumption(self) -> dict[str, str]:
        """``{pressure column: its consumption-basis column}`` where the file names one."""
        return {p.column: p.consumption for p in self.pressures if p.consumption}

    @property
    def unit_words(self) -> tuple[str, str]:
        """What a unit is called in sentences, singular and plural (from ``[data] unit`` when
        it is a plain word, e.g. ``("region", "regions")``; else ``("unit", "units")``)."""
        word = (self.unit or "").strip().lower()
        if not re.fullmatch(r"[a-z]{3,30}", word) or word in ("unit", "units", "id", "name"):
            return ("unit", "units")
        if word.endswith("y") and word[-2] not in "aeiou":
            return (word, word[:-1] + "ies")
        if word.endswith(("s", "x", "ch", "sh")):
            return (word, word + "es")
        return (word, word + "s")

    def where(self, table: str, key: str | None = None) -> str:
        """``[table] key (line n)`` for messages (the line when the spec came from a file)."""
        return _where(self.text, table, key)


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


def _check_table(text: str, table: str, values: dict[str, Any]) -> dict[str, Any]:
    """Types and values of one table; returns the values as checked (choices canonical)."""
    allowed = SCHEMA[table]
    out = {}
    for key, value in values.items():
        where = _where(text, table, key)
        if key not in allowed:
            renamed = (f" It is now called '{_RENAMED[key]}'." if key in _RENAMED
                       else suggest(key, allowed))
            raise SpecError(f"unknown key {where}.{renamed} Allowed keys: "
                            f"{', '.join(sorted(allowed))}.")
        spec = allowed[key]
        kind = spec.kind
        ok = isinstance(value, kind) and not (kind in (int, float) and isinstance(value, bool))
        if kind is float and isinstance(value, int) and not isinstance(value, bool):
            ok = True
        if not ok:
            shown = {"str": "text", "int": "an integer", "float": "a number", "bool": "true or false",
                     "dict": "a table", "list": "a list"}[kind.__name__]
            raise SpecError(f"{where} must be {shown}, not {type(value).__name__} ({value!r}).")
        out[key] = spec.check(value, where) if spec.check else value
    for key, spec in allowed.items():
        if spec.required and key not in values:
            raise SpecError(f"{_where(text, table)} needs the key '{key}'.")
    return out


def parse_spec(text: str, *, base: Path | None = None) -> StudySpec:
    """Validate the TOML text of a study specification; relative paths are from ``base``."""
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise SpecError(f"the study file is not valid TOML: {exc}") from None
    checked: dict[str, Any] = {}
    for table, values in raw.items():
        if table not in SCHEMA:
            raise SpecError(f"unknown table [{table}] (line {_line_of(text, table, None)})."
                            f"{suggest(table, SCHEMA)} Allowed: {', '.join(sorted(SCHEMA))}.")
        if table == "pressures":
            if not isinstance(values, list) or not values or not all(
                    isinstance(v, dict) for v in values):
                raise SpecError("pressures must be one or more [[pressures]] tables.")
            checked[table] = [_check_table(text, table, item) for item in values]
        elif not isinstance(values, dict):
            raise SpecError(f"'{table}' must be a table: write it as [{table}].")
        else:
            checked[table] = _check_table(text, table, values)
    for table in ("data", "roles", "pressures"):
        if table not in checked:
            raise SpecError(f"the study file needs a [{table}] table"
                            + (" ([[pressures]])." if table == "pressures" else "."))
    return _build(text, raw, checked, base)


def _build(text: str, raw: dict[str, Any], checked: dict[str, Any], base: Path | None) -> StudySpec:
    output = checked.get("output", {})
    formats = tuple(output.get("formats", ("markdown", "latex", "html", "csv")))
    window = checked.get("window")
    if window is not None and window["start"] >= window["end"]:
        raise SpecError(f"{_where(text, 'window', 'start')}: start must be before end.")
    criteria = dict(checked.get("criteria", {}))
    episode, sustained = criteria.get("episode_years", 5), criteria.get("sustained_years", 10)
    if episode > sustained:
        raise SpecError(f"{_where(text, 'criteria', 'episode_years')}: episode_years "
                        f"({episode}) must not exceed sustained_years ({sustained}).")
    data = checked["data"]
    path = Path(data["file"])
    if not path.is_absolute() and base is not None:
        path = base / path
    pressures = tuple(PressureSpec(column=p["column"], basis=p.get("basis", "territorial"),
                                   consumption=p.get("consumption")) for p in checked["pressures"])
    columns = [p.column for p in pressures]
    if len(set(columns)) < len(columns):
        raise SpecError(f"{_where(text, 'pressures', 'column')}: a pressure column is listed "
                        "twice.")
    meta, roles = checked.get("study", {}), checked["roles"]
    return StudySpec(
        data_file=path, activity=roles["activity"], pressures=pressures,
        unit=data.get("unit"), time=data.get("time"), source=data.get("source", ""),
        release=data.get("release", ""), title=meta.get("title", "Decoupling study"),
        claim=meta.get("claim", ""), population=roles.get("population"),
        energy=roles.get("energy"),
        window=None if window is None else (window["start"], window["end"]),
        criteria=criteria, breaks=dict(checked.get("breaks", {})),
        analyses=dict(checked.get("analyses", {})), formats=formats,
        figures=bool(output.get("figures", True)), labels=dict(output.get("labels", {})),
        unit_figures=output.get("unit_figures", "chosen"),
        figure_units=tuple(output.get("figure_units", ())),
        seed=int(output.get("seed", DEFAULT_SEED)),
        executor=checked.get("run", {}).get("executor", "serial"), raw=raw, text=text)


def check_executor(value: str, where: str = "executor") -> str:
    """An executor named in a study file or on the command line: a name or a scheduler address."""
    text = value.strip()
    if text.startswith(SCHEDULER_SCHEMES):
        return text
    try:
        return check_choice("executor", text, BACKENDS)
    except SpecError:
        raise SpecError(f"{where}: {value!r} is not an executor;{suggest(text, BACKENDS)} use "
                        f"{', '.join(BACKENDS)} or a Dask scheduler address (tcp://host:8786)."
                        ) from None


def check_against_data(spec: StudySpec, columns: tuple[str, ...], units: tuple[str, ...],
                       years: tuple[int, ...]) -> None:
    """The columns, units and years the spec names exist in the loaded data (before any work)."""
    named = [("roles", "activity", spec.activity), ("roles", "population", spec.population),
             ("roles", "energy", spec.energy)]
    named += [("pressures", "column", p.column) for p in spec.pressures]
    named += [("pressures", "consumption", p.consumption) for p in spec.pressures]
    for table, key, column in named:
        if column is None:
            continue
        try:
            check_columns([column], list(columns))
        except DataError as exc:
            raise DataError(f"{spec.where(table, key)}: {exc}") from None
    for unit in spec.figure_units:
        if unit not in units:
            raise SpecError(f"{spec.where('output', 'figure_units')}: '{unit}' is not a unit of "
                            f"the data.{suggest(unit, units)}")
    for unit in (spec.criteria.get("budgets") or {}):
        if unit not in units:
            raise SpecError(f"{spec.where('criteria', 'budgets')}: '{unit}' is not a unit of the "
                            f"data.{suggest(unit, units)}")
    if spec.window is not None:
        try:
            check_window(spec.window, list(years))
        except EvidenceError as exc:
            raise SpecError(f"{spec.where('window', 'start')}: {exc}") from None


def read_spec(path: str | Path) -> StudySpec:
    """Read and validate a study file (UTF-8 TOML, a regular file of at most 1 MB)."""
    path = Path(path)
    try:
        info = path.stat()
    except FileNotFoundError:
        raise SpecError(f"study file '{path}' does not exist.") from None
    except OSError as exc:
        raise SpecError(f"study file '{path}' cannot be read: {exc.strerror}.") from None
    if not stat.S_ISREG(info.st_mode):
        raise SpecError(f"study file '{path}' is not a regular file (a folder, device or pipe); "
                        "pass a TOML file.")
    if info.st_size > MAX_SPEC_BYTES:
        raise SpecError(f"study file '{path}' has {info.st_size} bytes; a study file is at most "
                        f"{MAX_SPEC_BYTES} bytes of TOML.")
    try:
        text = path.read_bytes().decode("utf-8")
    except UnicodeDecodeError as exc:
        raise SpecError(f"study file '{path}' is not UTF-8 text (byte {exc.start}); save it as "
                        "UTF-8.") from None
    except OSError as exc:
        raise SpecError(f"study file '{path}' cannot be read: {exc.strerror}.") from None
    return parse_spec(text.removeprefix("\ufeff"), base=path.parent)
