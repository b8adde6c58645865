"""The grade: is there evidence of decoupling, on every axis a reviewer checks?

Per unit × pressure × basis, on the unit's own longest complete span inside the window, four
axes reported separately — direction and significance, duration, robustness, sufficiency — and a
one-word rung for tables::

    coupled < relative < recession-driven < absolute-tentative < absolute-significant
            < absolute-sustained < target-consistent

with flags ``basis-gap``, ``short-window``, ``no-growth``, ``weak-growth``. The rung never
replaces the axes: every table that shows it shows them too. Every direction statement comes from
one trend test that holds its size under stationary or integrated noise (``Criteria.trend_test``,
default the size-calibrated Perron & Yabu 2009 test, :mod:`evidence.trend`); the methods, assumptions
and measured sizes are in ``docs/methods/grading.md``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import asdict, dataclass, field
from functools import partial
from itertools import chain
from typing import Any

import numpy as np
import pandas as pd

from evidence import _grading_axes as axes
from evidence._json import json_safe
from evidence._size_card import size_note
from evidence._typing import DEFAULT_SEED, Window
from evidence._validation import (
    adjust_pvalues,
    check_alpha,
    check_choice,
    check_columns,
    check_int,
    check_window,
    format_years,
)
from evidence.errors import DataError, SpecError
from evidence.indicators import budget_rate, tapio_class
from evidence.panel import Panel
from evidence.parallel import ExecutorLike, one_blas_thread, unit_progress, using_executor
from evidence.results import ResultProtocol
from evidence.trend import MIN_YEARS, TREND_TESTS, test_label, trend_batch

__all__ = ["RUNGS", "FLAGS", "Criteria", "GradeResult", "grade"]

RUNGS = ("coupled", "relative", "recession-driven", "absolute-tentative", "absolute-significant",
         "absolute-sustained", "target-consistent")
FLAGS = ("basis-gap", "short-window", "no-growth", "weak-growth")
#: Rungs that state absolute decoupling.
ABSOLUTE = ("absolute-significant", "absolute-sustained", "target-consistent")


@dataclass(frozen=True)
class Criteria:
    """The thresholds of the grade; every one is a visible, documented choice.

    ``trend_test`` is the direction test of every axis (``"perron-yabu"`` by default; see
    :mod:`evidence.trend` for the options and their measured sizes). ``episode_years`` (5) and
    ``sustained_years`` (10) follow the thresholds used in the literature (at least five years of
    decline counted as an episode in press analyses; at least ten years for sustained reductions,
    Lamb et al. 2022); ``sustained_years`` is also the length of the latest regime whose decline
    must be significant for ``absolute-sustained``. ``min_window`` is the fewest years a unit is
    graded on (its longest complete span inside the window). ``short_window`` (30) flags spans
    in which trend tests have low power. ``interval`` is how the interval of the observed annual
    change is computed: ``"test"`` (the interval of the direction test) or ``"bootstrap"``
    (moving-block bootstrap of arch, ``reps`` replications, ``seed``; stationary noise only).
    ``required_rate`` is an annual decline (0.05 = 5 % a year) or ``None``; ``budgets`` maps units
    to a remaining cumulative budget (pressure units, from the year after the span) — both
    normative choices the user states. ``subwindows=False`` skips the sub-window axis (the
    slowest part; it does not enter the rung).
    """

    alpha: float = 0.05
    adjust: str = "bh"
    trend_test: str = "perron-yabu"
    episode_years: int = 5
    sustained_years: int = 10
    min_window: int = 10
    short_window: int = 30
    smoothing: float = 6.25
    max_breaks: int = 2
    trim: float = 0.15
    required_rate: float | None = None
    budgets: Mapping[str, float] | None = None
    interval: str = "test"
    reps: int = 999
    seed: int = DEFAULT_SEED
    subwindows: bool = True

    def __post_init__(self) -> None:
        object.__setattr__(self, "interval", check_choice("interval", self.interval,
                                                          ("test", "bootstrap")))
        object.__setattr__(self, "adjust", check_choice("adjust", self.adjust, ("bh", "holm", "none")))
        object.__setattr__(self, "trend_test", check_choice("trend_test", self.trend_test,
                                                            TREND_TESTS))
        check_alpha(self.alpha)
        if not 0 < self.alpha < 0.5:
            raise SpecError(f"alpha={self.alpha!r} must be between 0 and 0.5.")
        check_int("episode_years", self.episode_years, minimum=1)
        check_int("sustained_years", self.sustained_years, minimum=max(self.episode_years, 3))
        check_int("min_window", self.min_window, minimum=MIN_YEARS)
        check_int("short_window", self.short_window, minimum=1)
        check_int("reps", self.reps, minimum=99)
        if self.required_rate is not None and not 0 < self.required_rate < 1:
            raise SpecError(f"required_rate={self.required_rate!r} must be an annual decline "
                            "between 0 and 1 (0.05 = 5 % a year).")
        if self.budgets is not None:
            object.__setattr__(self, "budgets", dict(self.budgets))


@dataclass(frozen=True, eq=False, repr=False)
class GradeResult(ResultProtocol):
    """One row per unit × pressure (``table``) and the evidence behind each (``records``, keyed
    by ``(unit, pressure)``). ``details["tests"]`` names the test behind every column and
    ``details["size"]`` its measured size at the spans graded."""

    table: pd.DataFrame
    records: Mapping[tuple[str, str], Any]
    criteria: Criteria
    window: Window
    excluded: pd.DataFrame
    audit: pd.DataFrame
    details: Mapping[str, Any] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()

    _repr_fields = ("window",)

    def to_frame(self) -> pd.DataFrame:
        """The grade table (a copy)."""
        return self.table.copy()

    def summary(self) -> str:
        """Counts of rungs per pressure, the test used and its size, and the exclusions."""
        lines = ["Decoupling grade"]
        for pressure, rows in self.table.groupby("pressure", sort=False):
            counts = rows["rung"].value_counts()
            lines.append(f"  {pressure} ({rows['basis'].iloc[0]}, window "
                         f"{self.details['windows'][pressure][0]}-"
                         f"{self.details['windows'][pressure][1]}, {len(rows)} units): "
                         + ", ".join(f"{r} {int(counts[r])}" for r in RUNGS if r in counts))
        lines.append(f"  direction test: {self.details['tests']['direction']}")
        size = self.details.get("size") or {}
        if size:
            lines.append(f"  its size at T={size.get('n_years')}: {size.get('measured', math.nan):.1%} "
                         f"at 5 % nominal (worst process: {size.get('process')}; size card)")
        lines += [f"  excluded: {r.unit} / {r.column} {r.years} ({r.reason})"
                  for r in self.excluded.itertuples()]
        lines += [f"  warning: {w}" for w in self.warnings]
        return "\n".join(lines)

    def to_dict(self) -> dict[str, Any]:
        """JSON-safe contents (table, records as a list, criteria, window, excluded, details)."""
        return json_safe({"table": self.table, "records": list(self.records.values()),
                          "criteria": asdict(self.criteria), "window": list(self.window),
                          "excluded": self.excluded, "details": dict(self.details),
                          "warnings": list(self.warnings)})


# ----------------------------------------------------------------------------- one unit
def _latest_break(log_p: np.ndarray, years: np.ndarray, crit: Criteria) -> dict[str, Any]:
    """The latest trend break of ``ln P`` (reported only): Bai–Perron global least squares with
    the number of breaks chosen by BIC — the partition and last-regime slope that
    :func:`evidence.breaks.find_breaks` gives with ``model="trend", select="bic"`` (to rounding), from its
    arithmetic alone (no tests or intervals, which the grade does not use)."""
    from evidence.breaks._batch import piecewise_fit
    from evidence.breaks._input import check_breaks
    from evidence.breaks.find import information_criteria
    from evidence.breaks.segment import optimal_partitions, ssr_tables

    status = ("reported only: the break search (Bai-Perron, BIC) is not shown to hold its size "
              "under autocorrelated noise at this length; the rung uses the test of the latest "
              f"{crit.sustained_years} years instead")
    trim = next((t for t in (crit.trim, 0.20, 0.25) if t >= crit.trim and
                 math.floor(t * years.size) >= 3), crit.trim)
    n = log_p.size
    try:
        h = check_breaks("ln P", n, 2, 0, trim, crit.max_breaks, int(years[0]), int(years[-1]))
    except (DataError, SpecError) as exc:
        return {"latest_break": None, "break_slope": math.nan, "break_years": None,
                "break_status": f"not searched: {exc}"}
    y = np.asarray(log_p, dtype=float)[None]
    ssr, breaks = optimal_partitions(ssr_tables(y, "trend", h), crit.max_breaks, h)
    bic, _ = information_criteria(ssr[0], n, 2, 0)
    m = int(np.nanargmin(bic))
    cut = breaks[0, m, :m]
    slope = float(piecewise_fit(y, cut[None], "trend")["slope"][0, -1])
    found = [int(years[b]) for b in cut]
    return {"latest_break": found[-1] if found else None, "break_slope": slope,
            "break_years": found, "break_trim": trim, "break_status": status}


def _unit_axes(log_p: np.ndarray, log_a: np.ndarray, years: np.ndarray, crit: Criteria,
               with_break: bool) -> dict[str, Any]:
    test = crit.trend_test
    rec = axes.direction_tests(log_p, log_a, test, crit.alpha)
    recession = rec.pop("recession_years_list")
    rec["recession_years"] = [int(y) for y in years[recession]]
    rec.update(axes.decline_runs(log_p, log_a, years))
    rec["smoothed_run"] = axes.smoothed_run(log_p, log_a, years, crit.smoothing)
    run = max(rec["longest_run"], rec["smoothed_run"])
    rec["duration"] = ("sustained" if run >= crit.sustained_years else
                       "episode" if run >= crit.episode_years else "none")
    rec.update(axes.latest_regime_test(log_p, log_a, test, crit.sustained_years, crit.alpha))
    rec["tapio_class"] = str(tapio_class(math.expm1(log_a[-1] - log_a[0]),
                                         math.expm1(log_p[-1] - log_p[0]))[0])
    claim = "absolute" if rec["pressure_trend"] < 0 < rec["activity_trend"] else "relative"
    rec["claim_tested"] = claim
    # the sub-window axis is added by _chunk_axes, for the units of a chunk at once
    rec["subwindow_share"], rec["subwindow_matrix"] = math.nan, np.full((years.size,) * 2, np.nan)
    trend_p, trend_a = axes.hp_trends(log_p, log_a, crit.smoothing)
    smooth_p, smooth_a = np.polyfit(years, trend_p, 1)[0], np.polyfit(years, trend_a, 1)[0]
    rec["survives_filter"] = (bool(smooth_p < 0 < smooth_a) if claim == "absolute"
                              else bool(smooth_p - smooth_a < 0))
    rec.update(_latest_break(log_p, years, crit) if with_break else
               {"latest_break": None, "break_slope": math.nan, "break_years": None,
                "break_status": "not searched (latest_break=False)"})
    low, high = rec["pressure_trend_lower"], rec["pressure_trend_upper"]
    change, low, high = (float(np.expm1(v)) for v in (rec["pressure_trend"], low, high))
    if crit.interval == "bootstrap":
        low, high = axes.bootstrap_change_interval(log_p, years, crit.alpha, reps=crit.reps,
                                                   seed=crit.seed)
    rec.update(observed_change=change, observed_change_lower=low, observed_change_upper=high,
               interval=crit.interval)
    return rec


def _required_change(unit: str, end_level: float, crit: Criteria) -> float | None:
    if crit.budgets and unit in crit.budgets:
        return -budget_rate(current=end_level, budget=crit.budgets[unit]).required_rate
    return None if crit.required_rate is None else -crit.required_rate


def _rung(rec: dict[str, Any], crit: Criteria) -> tuple[str, list[str]]:
    flags = []
    grows = rec["p_growth"] < crit.alpha
    if rec["activity_trend"] <= 0:
        flags.append("no-growth")
    elif not grows:
        flags.append("weak-growth")
    if grows and rec["p_absolute_adj"] < crit.alpha:
        rung = "absolute-significant"
        if rec["duration"] == "sustained" and rec["p_latest_regime"] < crit.alpha:
            rung = "absolute-sustained"
            if rec["sufficiency"] == "sufficient":
                rung = "target-consistent"
    elif grows and rec["p_absolute_all_years_adj"] < crit.alpha:
        rung = "recession-driven"
    elif grows and rec["pressure_trend_ex_recessions"] < 0:
        rung = "absolute-tentative"
    elif rec["p_relative_adj"] < crit.alpha:
        rung = "relative"
    else:
        rung = "coupled"
    if rec["years"] < crit.short_window:
        flags.append("short-window")
    return rung, flags


# ----------------------------------------------------------------------------- the data
def _unit_blocks(panel: Panel, columns: list[str], window: Window, crit: Criteria,
                 excluded: list[dict[str, Any]]) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Each unit's longest complete span of ``columns`` inside the window: logs and years.

    Units with fewer than ``min_window`` complete years, non-positive values or a constant
    column are excluded and listed; years outside the longest span are listed too.
    """
    try:
        arr = panel.arrays(columns, window=window, span="own", gaps="longest", short="exclude",
                           constant="exclude", min_years=crit.min_window, purpose="the grade")
    except DataError as exc:
        excluded.extend({"unit": unit, "column": ", ".join(columns),
                         "years": f"{window[0]}-{window[1]}", "reason": f"unit excluded: {exc}"}
                        for unit in panel.units)
        return {}
    excluded.extend(arr.excluded.to_dict(orient="records"))
    out = {}
    for i, unit in enumerate(arr.units):
        sl = slice(int(arr.first[i]), int(arr.last[i]) + 1)
        values, years = arr.values[sl, i, :], arr.years[sl]
        if (values <= 0).any():
            excluded.append({"unit": unit, "column": ", ".join(columns),
                             "years": format_years(years[(values <= 0).any(axis=1)]),
                             "reason": "unit excluded: non-positive values (logs needed)"})
            continue
        out[unit] = (np.log(values), years)
    return out


def grade(panel: Panel, pressures: Sequence[str] | str, activity: str, *,
          window: Window | str | None = None, criteria: Criteria | None = None,
          consumption: Mapping[str, str] | None = None, latest_break: bool = True,
          executor: ExecutorLike = "serial") -> GradeResult:
    """Grade the evidence of decoupling of each pressure from ``activity``, unit by unit.

    Parameters
    ----------
    pressures : list of str
        Pressure columns (their basis is taken from the panel, ``load_panel(basis=...)``).
    activity : str
        Activity column (real GDP).
    window : (int, int), optional
        Inclusive years (default: every year of the panel). Each unit is graded on its own
        longest complete span inside the window, of at least ``criteria.min_window`` years;
        every row states its span, and the years left out are listed in ``excluded``.
    criteria : Criteria
        Thresholds and the direction test (see :class:`Criteria`).
    consumption : mapping, optional
        ``{territorial column: consumption column}``: the trend of the gap between the two bases
        is tested and the claims on both compared over the years both exist (``basis-gap``).
    latest_break : bool
        Search the latest trend break (Bai–Perron, :func:`evidence.breaks.find_breaks`) and
        report it with its status; the rung does not depend on it.
    executor : str, executor or dask Client
        Where the units are graded, in chunks of :data:`CHUNK` units: ``"serial"`` (default),
        ``"processes"``, ``"dask"``, a scheduler address ``"tcp://host:8786"``, an executor or a
        ``dask.distributed.Client``. The result does not depend on it.

    Notes
    -----
    Direction (test ``criteria.trend_test``, one-sided, raw and adjusted p-values across the
    units graded, per pressure): absolute — the pressure trend falls with recession years (years
    in which activity fell) set apart, and activity grows significantly; relative — the intensity
    trend falls. A decline that is significant only with the recession years counted gives the
    rung ``recession-driven``. Duration: the longest run of years with falling pressure and
    growing activity, raw and on Hodrick–Prescott trends (a run on the trends breaks in any year
    raw activity falls), and a one-sided test that the pressure still falls over the latest
    ``sustained_years`` years. Robustness: the share of sub-windows in which the claim holds,
    the trends on filtered series, and the basis gap. Sufficiency: the observed annual change
    with its interval against the required change. See ``docs/methods/grading.md``.
    """
    crit = criteria or Criteria()
    pressures = [pressures] if isinstance(pressures, str) else list(pressures)
    check_columns([*pressures, activity], list(panel.columns))
    if consumption:
        check_columns(list(consumption) + list(consumption.values()), list(panel.columns))
    years = panel.years
    start, end = (check_window(window, years) if window is not None
                  else (int(years[0]), int(years[-1])))
    rows: list[dict[str, Any]] = []
    records: dict[tuple[str, str], dict[str, Any]] = {}
    excluded: list[dict[str, Any]] = []
    spans: list[int] = []
    with using_executor(executor) as runner, one_blas_thread():
        for pressure in pressures:
            blocks = _unit_blocks(panel, [pressure, activity], (start, end), crit, excluded)
            axes_of = _in_chunks(runner, partial(_chunk_axes, crit=crit, with_break=latest_break),
                                 list(blocks.values()), f"grade of {pressure}: units")
            other = (consumption or {}).get(pressure)
            gaps = (_basis_gaps(panel, pressure, other, activity, (start, end), crit, runner)
                    if other and blocks else {})
            _collect(pressure, blocks, axes_of, gaps, other, panel, crit, rows, records, spans)
    if not rows:
        raise DataError(f"no unit has at least {crit.min_window} complete years of the pressures "
                        f"and '{activity}' in {start}:{end}; choose a longer window or a smaller "
                        "min_window.")
    table = pd.DataFrame(rows)
    typical = int(np.median(spans))
    size = size_note(crit.trend_test, None, typical)
    warnings = []
    if size and not size.get("controlled", True):
        warnings.append(f"the direction test {test_label(crit.trend_test)} does not hold its size "
                        f"at T={size['n_years']}: {size['measured']:.1%} at 5 % nominal under "
                        f"{size['process']} (size card, docs/methods/size.md)")
    details = {"activity": activity, "consumption": dict(consumption or {}),
               "windows": {p: [start, end] for p in pressures},
               "tests": _test_names(crit), "size": size, "median_span": typical}
    return GradeResult(table=table, records=records, criteria=crit, window=(start, end),
                       excluded=excluded, audit=panel.audit, details=details,
                       warnings=tuple(warnings))


#: Units per task sent to the executor (large enough that a task outweighs its transfer).
CHUNK = 25


def _in_chunks(runner: Any, func: Any, items: list[Any], label: str = "grade") -> list[Any]:
    """``func`` (taking a list of items, returning a list) over ``items`` in chunks of
    :data:`CHUNK` through the executor; the results in the order of ``items``. Units done are
    reported under ``label`` (:func:`evidence.parallel.unit_progress`)."""
    tasks = [items[k:k + CHUNK] for k in range(0, len(items), CHUNK)]
    if not tasks:
        return []
    progress = unit_progress(label, [len(t) for t in tasks])
    return list(chain.from_iterable(runner.map(func, tasks, progress=progress)))


def _chunk_axes(blocks: list[tuple[np.ndarray, np.ndarray]], crit: Criteria,
                with_break: bool) -> list[dict[str, Any]]:
    """The axes of a chunk of units (one task of the executor); the sub-window axis in one batch
    per span length."""
    recs = [_unit_axes(logs[:, 0], logs[:, 1], years, crit, with_break) for logs, years in blocks]
    if crit.subwindows:
        by_length: dict[int, list[int]] = {}
        for i, (_, years) in enumerate(blocks):
            by_length.setdefault(int(years.size), []).append(i)
        for n, members in by_length.items():
            units = [(blocks[i][0][:, 0], blocks[i][0][:, 1], recs[i]["claim_tested"])
                     for i in members]
            shares = axes.subwindow_shares_batch(units, n, alpha=crit.alpha,
                                                 min_window=min(crit.min_window, n),
                                                 test=crit.trend_test)
            for i, (share, matrix) in zip(members, shares, strict=True):
                recs[i]["subwindow_share"], recs[i]["subwindow_matrix"] = share, matrix
    return recs


def _collect(pressure: str, blocks: dict[str, tuple[np.ndarray, np.ndarray]],
             axes_of: list[dict[str, Any]], gaps: dict[str, dict[str, Any]], other: str | None,
             panel: Panel, crit: Criteria, rows: list[dict[str, Any]],
             records: dict[tuple[str, str], dict[str, Any]], spans: list[int]) -> None:
    """Adjust the p-values across the units of one pressure, add the basis gaps and the rung."""
    unit_recs = []
    for (unit, (logs, unit_years)), rec in zip(blocks.items(), axes_of, strict=True):
        rec.update(unit=unit, pressure=pressure, years=int(unit_years.size),
                   span=f"{int(unit_years[0])}-{int(unit_years[-1])}",
                   basis=panel.basis(pressure) or "not stated")
        required = _required_change(unit, float(np.exp(logs[-1, 0])), crit)
        rec["required_change"] = required
        rec["sufficiency"] = ("no target" if required is None else
                              "sufficient" if rec["observed_change_upper"] <= required else
                              "borderline" if rec["observed_change"] <= required else
                              "insufficient")
        unit_recs.append(rec)
        spans.append(int(unit_years.size))
    if not unit_recs:
        return
    for key in ("p_absolute", "p_absolute_all_years", "p_relative"):
        adjusted = adjust_pvalues([r[key] for r in unit_recs], crit.adjust)
        for r, p in zip(unit_recs, adjusted, strict=True):
            r[f"{key}_adj"] = float(p)
    for rec in unit_recs:
        rec.update(gaps.get(rec["unit"], _no_gap(other)))
        rung, flags = _rung(rec, crit)
        if rec["basis_gap"]:
            flags.insert(0, "basis-gap")
        rec["rung"], rec["flags"] = rung, flags
        records[(rec["unit"], pressure)] = rec
        rows.append(_row(rec))


def _test_names(crit: Criteria) -> dict[str, str]:
    name = test_label(crit.trend_test)
    return {"direction": f"{name}, one-sided; absolute: pressure trend with recession years set "
                         f"apart, activity growth by the same test; relative: intensity trend; "
                         f"p-values adjusted across units ({crit.adjust})",
            "latest_regime": f"{name}, slope of the latest {crit.sustained_years} years",
            "basis_gap": f"{name}, two-sided, trend of ln(territorial) - ln(consumption)",
            "subwindows": f"{name} on every sub-window of at least {crit.min_window} years",
            "interval": (f"{name} interval, two-sided {1 - crit.alpha:.0%}" if crit.interval == "test"
                         else f"moving-block bootstrap (arch), {crit.reps} replications"),
            "smoothing": f"Hodrick-Prescott, lambda {crit.smoothing}"}


def _no_gap(other: str | None) -> dict[str, Any]:
    return {"consumption_direction": None if other is None else "no common span",
            "basis_gap": False, "gap_trend": math.nan, "gap_lower": math.nan,
            "gap_upper": math.nan, "p_gap": math.nan, "gap_span": None,
            "territorial_direction_common": None}


def _basis_gaps(panel: Panel, pressure: str, other: str, activity: str, window: Window,
                crit: Criteria, runner: Any) -> dict[str, dict[str, Any]]:
    """Gap between the bases per unit over the longest span in which both (and activity) exist."""
    sink: list[dict[str, Any]] = []
    blocks = _unit_blocks(panel, [pressure, other, activity], window, crit, sink)
    found = _in_chunks(runner, partial(_chunk_gaps, crit=crit), list(blocks.values()),
                       f"basis gap of {pressure}: units")
    return dict(zip(blocks, found, strict=True))


def _chunk_gaps(blocks: list[tuple[np.ndarray, np.ndarray]], crit: Criteria) -> list[dict[str, Any]]:
    """The basis gaps of a chunk of units (one task of the executor)."""
    out = []
    for logs, years in blocks:
        gap = trend_batch(logs[:, 0] - logs[:, 1], test=crit.trend_test, alternative="two-sided",
                          alpha=crit.alpha)
        terr = axes.direction_tests(logs[:, 0], logs[:, 2], crit.trend_test, crit.alpha)
        cons = axes.direction_tests(logs[:, 1], logs[:, 2], crit.trend_test, crit.alpha)
        t_claim, c_claim = axes.claim_level(terr, crit.alpha), axes.claim_level(cons, crit.alpha)
        p_gap = float(gap["pvalue"][0])
        out.append({"consumption_direction": c_claim, "territorial_direction_common": t_claim,
                    "gap_trend": float(gap["estimate"][0]), "gap_lower": float(gap["lower"][0]),
                    "gap_upper": float(gap["upper"][0]), "p_gap": p_gap,
                    "gap_span": f"{int(years[0])}-{int(years[-1])}",
                    "basis_gap": bool(p_gap < crit.alpha or t_claim != c_claim)})
    return out


def _row(rec: dict[str, Any]) -> dict[str, Any]:
    keys = ("unit", "pressure", "basis", "span", "years", "rung", "flags", "pressure_trend",
            "pressure_trend_ex_recessions", "activity_trend", "intensity_trend",
            "p_absolute", "p_absolute_adj", "p_absolute_all_years", "p_absolute_all_years_adj",
            "p_growth", "p_relative", "p_relative_adj", "recession_years", "longest_run",
            "smoothed_run", "duration", "latest_regime_slope", "p_latest_regime", "latest_break",
            "subwindow_share", "survives_filter", "consumption_direction", "gap_trend",
            "gap_lower", "gap_upper", "p_gap", "gap_span", "observed_change",
            "observed_change_lower", "observed_change_upper", "required_change", "sufficiency",
            "tapio_class")
    row = {k: rec.get(k) for k in keys}
    row["flags"] = ", ".join(rec["flags"])
    row["recession_years"] = format_years(rec["recession_years"])
    return row
