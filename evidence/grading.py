"""The grade: is there evidence of decoupling, on every axis a reviewer checks?

Per unit × pressure × basis × window, four axes reported separately — direction and significance,
duration, robustness, sufficiency — and a one-word rung for tables:
``coupled < relative < absolute-tentative < absolute-significant < absolute-sustained <
target-consistent``, with flags ``basis-gap``, ``recession``, ``short-window``, ``no-growth``.
The rung never replaces the axes: every table that shows it shows them too.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evidence import _grading_axes as axes
from evidence._json import json_safe
from evidence._typing import Window
from evidence._validation import (adjust_pvalues, check_choice, check_columns, check_window,
                                  format_years)
from evidence.errors import DataError, SpecError
from evidence.indicators import budget_rate, common_window, tapio_class
from evidence.panel import Panel
from evidence.results import ResultProtocol

__all__ = ["RUNGS", "FLAGS", "Criteria", "GradeResult", "grade"]

RUNGS = ("coupled", "relative", "absolute-tentative", "absolute-significant",
         "absolute-sustained", "target-consistent")
FLAGS = ("basis-gap", "recession", "short-window", "no-growth")


@dataclass(frozen=True)
class Criteria:
    """The thresholds of the grade; every one is a visible, documented choice.

    ``episode_years`` (5) and ``sustained_years`` (10) follow the thresholds used in the
    literature (at least five years of decline counted as an episode in press analyses; at least
    ten years for sustained reductions, Lamb et al. 2022). ``short_window`` (30) flags windows in
    which unit-root and trend tests have low power. ``interval`` is how the interval of the
    observed annual change is computed: ``"hac"`` (Newey–West, Student t) or ``"bootstrap"``
    (moving-block bootstrap of arch, ``bootstrap_reps`` replications, ``seed``). ``required_rate`` is an annual decline (0.05
    = 5 % a year) or ``None``; ``budgets`` maps units to a remaining cumulative budget (pressure
    units, from the year after the window) — both normative choices the user states.
    """

    alpha: float = 0.05
    adjust: str = "bh"
    episode_years: int = 5
    sustained_years: int = 10
    min_window: int = 10
    short_window: int = 30
    smoothing: float = 6.25
    max_breaks: int = 2
    trim: float = 0.15
    required_rate: float | None = None
    budgets: Mapping[str, float] | None = None
    interval: str = "hac"
    bootstrap_reps: int = 999
    seed: int = 20261202

    def __post_init__(self) -> None:
        object.__setattr__(self, "interval", check_choice("interval", self.interval,
                                                          ("hac", "bootstrap")))
        object.__setattr__(self, "adjust", check_choice("adjust", self.adjust, ("bh", "holm", "none")))
        if not 0 < self.alpha < 0.5:
            raise SpecError(f"alpha={self.alpha!r} must be between 0 and 0.5.")
        if not 1 <= self.episode_years <= self.sustained_years:
            raise SpecError("episode_years must be at least 1 and at most sustained_years.")
        if self.min_window < 5:
            raise SpecError(f"min_window={self.min_window!r} must be at least 5 years.")
        if self.required_rate is not None and not 0 < self.required_rate < 1:
            raise SpecError(f"required_rate={self.required_rate!r} must be an annual decline "
                            "between 0 and 1 (0.05 = 5 % a year).")
        if self.budgets is not None:
            object.__setattr__(self, "budgets", dict(self.budgets))


@dataclass(frozen=True, eq=False, repr=False)
class GradeResult(ResultProtocol):
    """One row per unit × pressure (``table``) and the evidence behind each (``records``, keyed
    by ``(unit, pressure)``)."""

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
        """Counts of rungs per pressure, and the exclusions."""
        lines = ["Decoupling grade"]
        for pressure, rows in self.table.groupby("pressure", sort=False):
            counts = rows["rung"].value_counts()
            lines.append(f"  {pressure} ({rows['basis'].iloc[0]}, {rows['window'].iloc[0]}): " + ", ".join(
                f"{r} {int(counts[r])}" for r in RUNGS if r in counts))
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


def _latest_break(log_p: np.ndarray, years: np.ndarray, crit: Criteria) -> dict[str, Any]:
    from evidence.breaks import find_breaks

    # regimes of at least 3 years, with a trimming from the standard set (0.15, 0.20, 0.25)
    trim = next((t for t in (crit.trim, 0.20, 0.25) if t >= crit.trim and
                 math.floor(t * years.size) >= 3), crit.trim)
    try:
        res = find_breaks(pd.Series(log_p, index=years), model="trend",
                          max_breaks=crit.max_breaks, trim=trim, select="bic")
    except (DataError, SpecError) as exc:
        return {"latest_break": None, "latest_regime_slope": math.nan,
                "break_note": str(exc), "break_years": None}
    slopes = res.regimes.xs("trend", level="term")["estimate"].to_numpy()
    return {"latest_break": res.break_years[-1] if res.break_years else None,
            "latest_regime_slope": float(slopes[-1]) if slopes.size else math.nan,
            "break_years": list(res.break_years), "break_trim": trim}


def _unit_axes(log_p: np.ndarray, log_a: np.ndarray, years: np.ndarray, crit: Criteria,
               with_breaks: bool) -> dict[str, Any]:
    rec = axes.trend_tests(log_p, log_a, years)
    rec.update(axes.decline_runs(log_p, log_a, years))
    rec["tapio_class"] = str(tapio_class(math.expm1(log_a[-1] - log_a[0]),
                                         math.expm1(log_p[-1] - log_p[0]))[0])
    claim = "absolute" if rec["pressure_trend"] < 0 and rec["activity_trend"] > 0 else "relative"
    rec["claim_tested"] = claim
    share, matrix = axes.subwindow_shares(log_p, log_a, years, claim=claim, alpha=crit.alpha,
                                          min_window=min(crit.min_window, years.size))
    rec["subwindow_share"], rec["subwindow_matrix"] = share, matrix
    recession = np.concatenate([[False], np.diff(log_a) < 0])
    rec["recession_years"] = [int(y) for y in years[recession]]
    survives, kept_mean = (axes.without_years(log_p, log_a, recession, claim=claim)
                           if recession.any() else (True, float(np.mean(np.diff(log_p)))))
    rec["survives_recession"], rec["mean_change_without_recessions"] = survives, kept_mean
    trend_p, trend_a = axes.hp_trend_slopes(log_p, log_a, crit.smoothing)
    smooth = axes.trend_tests(trend_p, trend_a, years)
    rec["survives_filter"] = bool(smooth["pressure_trend"] < 0 < smooth["activity_trend"]) \
        if claim == "absolute" else bool(smooth["intensity_trend"] < 0)
    rec["smoothed_run"] = axes.decline_runs(trend_p, trend_a, years)["longest_run"]
    run = max(rec["longest_run"], rec["smoothed_run"])
    rec["duration"] = ("sustained" if run >= crit.sustained_years else
                       "episode" if run >= crit.episode_years else "none")
    rec.update(_latest_break(log_p, years, crit) if with_breaks else
               {"latest_break": None, "latest_regime_slope": math.nan})
    change, low, high = axes.change_interval(rec["pressure_trend"], rec["pressure_trend_se"],
                                             rec["df"], crit.alpha)
    if crit.interval == "bootstrap":
        low, high = axes.bootstrap_change_interval(log_p, years, crit.alpha,
                                                   reps=crit.bootstrap_reps, seed=crit.seed)
    rec.update(observed_change=change, observed_change_lower=low, observed_change_upper=high,
               interval=crit.interval)
    return rec


def _required_change(unit: str, end_level: float, crit: Criteria) -> float | None:
    if crit.budgets and unit in crit.budgets:
        return -budget_rate(current=end_level, budget=crit.budgets[unit]).required_rate
    return None if crit.required_rate is None else -crit.required_rate


def _rung(rec: dict[str, Any], crit: Criteria) -> tuple[str, list[str]]:
    flags = []
    grows = rec["activity_trend"] > 0
    if not grows:
        flags.append("no-growth")
    absolute = grows and rec["p_absolute_adj"] < crit.alpha
    if absolute:
        rung = "absolute-significant"
        declining = (rec["latest_regime_slope"] < 0) if not math.isnan(rec["latest_regime_slope"]) \
            else rec["pressure_trend"] < 0
        if rec["duration"] == "sustained" and declining:
            rung = "absolute-sustained"
            if rec["sufficiency"] == "sufficient":
                rung = "target-consistent"
    elif grows and rec["pressure_trend"] < 0:
        rung = "absolute-tentative"
    elif rec["p_relative_adj"] < crit.alpha:
        rung = "relative"
    else:
        rung = "coupled"
    if rung != "coupled" and rec["survives_recession"] is False:
        flags.append("recession")
    if rec["years"] < crit.short_window:
        flags.append("short-window")
    return rung, flags


def _blocks(panel: Panel, pressure: str, activity: str, start: int, end: int,
            excluded: list[dict[str, Any]]) -> dict[str, tuple[np.ndarray, np.ndarray, np.ndarray]]:
    """Log pressure, log activity and years per unit with complete data in ``start:end``."""
    try:
        arr = panel.arrays([pressure, activity], window=(start, end), span="own", gaps="exclude",
                           short="exclude", constant="exclude", purpose="the grade")
    except DataError as exc:
        excluded.extend({"unit": unit, "column": f"{pressure}, {activity}",
                         "years": f"{start}-{end}", "reason": f"unit excluded: {exc}"}
                        for unit in panel.units)
        return {}
    excluded.extend(arr.excluded.to_dict(orient="records"))
    out = {}
    for i, unit in enumerate(arr.units):
        series = arr.values[arr.first[i]:arr.last[i] + 1, i, :]
        years = arr.years[arr.first[i]:arr.last[i] + 1]
        if years[0] != start or years[-1] != end:
            missing = [y for y in range(start, end + 1) if y < years[0] or y > years[-1]]
            excluded.append({"unit": unit, "column": f"{pressure}, {activity}",
                             "years": format_years(missing),
                             "reason": f"unit excluded: no value in {format_years(missing)}"})
            continue
        if (series <= 0).any():
            excluded.append({"unit": unit, "column": f"{pressure}, {activity}",
                             "years": format_years(years[(series <= 0).any(axis=1)]),
                             "reason": "unit excluded: non-positive values (logs needed)"})
            continue
        out[unit] = (np.log(series[:, 0]), np.log(series[:, 1]), years)
    return out


def grade(panel: Panel, pressures: Sequence[str], activity: str, *,
          window: Window | str | None = None, criteria: Criteria | None = None,
          consumption: Mapping[str, str] | None = None, latest_break: bool = True) -> GradeResult:
    """Grade the evidence of decoupling of each pressure from ``activity``, unit by unit.

    Parameters
    ----------
    pressures : list of str
        Pressure columns (their basis is taken from the panel, ``load_panel(basis=...)``).
    activity : str
        Activity column (real GDP).
    window : (int, int), optional
        Inclusive years (default, per pressure: the longest span in which every unit has the
        pressure and the activity).
    criteria : Criteria
        Thresholds (see :class:`Criteria`).
    consumption : mapping, optional
        ``{territorial column: consumption column}``: the same claim is checked on the
        consumption basis over the years both exist; ``basis-gap`` flags a difference.
    latest_break : bool
        Run the break search for the latest trend break (slower on large panels).

    Notes
    -----
    Direction: trend growth by OLS on the year with Newey–West errors; H0 pressure trend >= 0
    (absolute) and H0 intensity trend >= 0 (relative, i.e. trend elasticity below 1), one-sided,
    with raw and adjusted (Benjamini–Hochberg or Holm across units, per pressure) p-values.
    Duration: the longest run of years with falling pressure and growing activity, raw and on
    Hodrick–Prescott trends; the latest trend break (Bai–Perron) and the slope of the last
    regime. Robustness: the share of sub-windows in which the claim holds, the claim without
    recession years (activity falling), on the filtered trends, and on the consumption basis.
    Sufficiency: the observed annual change with its interval against the required change.
    """
    crit = criteria or Criteria()
    pressures = [pressures] if isinstance(pressures, str) else list(pressures)
    check_columns([*pressures, activity], list(panel.columns))
    if consumption:
        check_columns(list(consumption) + list(consumption.values()), list(panel.columns))
    fixed = check_window(window, panel.years) if window is not None else None
    rows, records, excluded, windows = [], {}, [], {}
    for pressure in pressures:
        start, end = fixed or common_window(panel, (pressure, activity))
        windows[pressure] = (start, end)
        unit_recs = []
        for unit, block in _blocks(panel, pressure, activity, start, end, excluded).items():
            rec = _unit_axes(*block, crit, latest_break)
            rec.update(unit=unit, pressure=pressure, years=int(block[2].size),
                       basis=panel.basis(pressure) or "not stated")
            required = _required_change(unit, float(np.exp(block[0][-1])), crit)
            rec["required_change"] = required
            rec["sufficiency"] = ("no target" if required is None else
                                  "sufficient" if rec["observed_change_upper"] <= required else
                                  "borderline" if rec["observed_change"] <= required else
                                  "insufficient")
            unit_recs.append(rec)
        if not unit_recs:
            continue
        for key in ("p_absolute", "p_relative"):
            adjusted = adjust_pvalues([r[key] for r in unit_recs], crit.adjust)
            for r, p in zip(unit_recs, adjusted):
                r[f"{key}_adj"] = float(p)
        for rec in unit_recs:
            _basis_check(panel, rec, consumption, activity, start, end, crit)
            rung, flags = _rung(rec, crit)
            if rec.get("basis_gap"):
                flags.insert(0, "basis-gap")
            rec["rung"], rec["flags"] = rung, flags
            records[(rec["unit"], pressure)] = rec
            rows.append(_row(rec, start, end))
    if not rows:
        raise DataError("no unit has complete data for the pressures in the window.")
    table = pd.DataFrame(rows)
    first = windows[pressures[0]]
    return GradeResult(table=table, records=records, criteria=crit, window=first,
                       excluded=excluded, audit=panel.audit, details={"activity": activity,
                                                   "consumption": dict(consumption or {}),
                                                   "windows": {k: list(v) for k, v in windows.items()}})


def _basis_check(panel: Panel, rec: dict[str, Any], consumption: Mapping[str, str] | None,
                 activity: str, start: int, end: int, crit: Criteria) -> None:
    other = (consumption or {}).get(rec["pressure"])
    rec["consumption_direction"], rec["basis_gap"] = None, False
    if other is None:
        return
    series = panel.series(rec["unit"], other).loc[start:end].dropna()
    if series.size < crit.min_window:
        rec["consumption_direction"] = "too few years"
        return
    sink: list[dict[str, Any]] = []
    blocks = _blocks(panel.select([rec["unit"]]), other, activity, int(series.index[0]),
                     int(series.index[-1]), sink)
    if rec["unit"] not in blocks:
        rec["consumption_direction"] = sink[-1]["reason"] if sink else "no complete span"
        return
    block = blocks[rec["unit"]]
    res = axes.trend_tests(*block)
    direction = ("absolute" if res["p_absolute"] < crit.alpha and res["activity_trend"] > 0 else
                 "relative" if res["p_relative"] < crit.alpha else "none")
    rec["consumption_direction"] = direction
    rec["consumption_window"] = [int(block[2][0]), int(block[2][-1])]
    territorial = ("absolute" if rec["p_absolute"] < crit.alpha and rec["activity_trend"] > 0 else
                   "relative" if rec["p_relative"] < crit.alpha else "none")
    rec["basis_gap"] = territorial != direction


def _row(rec: dict[str, Any], start: int, end: int) -> dict[str, Any]:
    return {"unit": rec["unit"], "pressure": rec["pressure"], "basis": rec["basis"],
            "window": f"{start}-{end}", "rung": rec["rung"], "flags": ", ".join(rec["flags"]),
            "pressure_trend": rec["pressure_trend"], "activity_trend": rec["activity_trend"],
            "p_absolute": rec["p_absolute"], "p_absolute_adj": rec["p_absolute_adj"],
            "p_relative": rec["p_relative"], "p_relative_adj": rec["p_relative_adj"],
            "longest_run": rec["longest_run"], "smoothed_run": rec["smoothed_run"],
            "duration": rec["duration"],
            "latest_break": rec["latest_break"], "latest_regime_slope": rec["latest_regime_slope"],
            "subwindow_share": rec["subwindow_share"],
            "survives_recession": rec["survives_recession"],
            "survives_filter": rec["survives_filter"],
            "consumption_direction": rec["consumption_direction"],
            "observed_change": rec["observed_change"],
            "observed_change_lower": rec["observed_change_lower"],
            "observed_change_upper": rec["observed_change_upper"],
            "required_change": rec["required_change"], "sufficiency": rec["sufficiency"],
            "tapio_class": rec["tapio_class"]}
