"""Screening a panel for breaks, unit by unit, and common breaks across units.

``screen_breaks`` runs the single-series procedure (homoskedastic tests, BIC/LWZ selection) on
every unit at once: SSR tables and partitions are computed for chunks of units with the same
years (bounded memory), through the executor of ``evidence.parallel``; p-values are adjusted
across units (Benjamini–Hochberg by default, or Holm). The years in which breaks fall are
counted, and a permutation test asks whether they cluster: each unit's break pattern is shifted
by a random admissible offset (keeping its number of breaks and regime lengths), and the largest
number of units breaking within ``spread`` years of one another is compared with its
permutation distribution.

``common_breaks`` sums the units' SSR tables and runs the same dynamic programme (Bai 2010): the
least-squares break years common to all units, with a pooled supF test (its null is the supF
functional with N q changing coefficients, simulated) and intervals from the pooled break size.

References
----------
bai2010 : Bai, J. (2010). Common breaks in means and variances for panel data. Journal of
    Econometrics 157(1), 78–92.
benjaminihochberg1995 : Benjamini, Y. & Hochberg, Y. (1995). Controlling the false discovery rate.
    Journal of the Royal Statistical Society B 57(1), 289–300.
holm1979 : Holm, S. (1979). A simple sequentially rejective multiple test procedure.
    Scandinavian Journal of Statistics 6(2), 65–70.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evidence._json import json_safe
from evidence._typing import DEFAULT_SEED, Seed
from evidence._validation import adjust_pvalues, check_alpha, check_choice, check_int, check_seed
from evidence.breaks import tests as bt
from evidence.breaks._input import check_model, check_trim
from evidence.breaks._simulate import null_draws
from evidence.breaks.dates import argmax_quantile
from evidence.breaks.find import SHORT_TREND_WARNING, _describe, information_criteria, regime_fit
from evidence.breaks.result import CONVENTION
from evidence.breaks.segment import MODELS, min_length, optimal_partitions, regime_design, ssr_tables
from evidence.errors import DataError, SpecError
from evidence.panel import Panel
from evidence.parallel import ExecutorLike, task_seeds, using_executor
from evidence.results import ResultProtocol, TestResult, excluded_frame, format_pvalue

__all__ = ["screen_breaks", "common_breaks", "ScreenResult", "CommonBreakResult", "ADJUSTMENTS"]

#: Multiple-testing adjustments across units (``evidence._validation.adjust_pvalues``).
ADJUSTMENTS = ("bh", "holm")
_ADJUST_NAMES = {"bh": "Benjamini-Hochberg", "holm": "Holm"}


@dataclass(frozen=True, eq=False, repr=False)
class ScreenResult(ResultProtocol):
    """Per-unit breaks of one column.

    Attributes
    ----------
    column : str
        The column screened.
    table : pandas.DataFrame
        One row per unit (index ``unit``): years, number and years of breaks, interval bounds,
        supF(1), UDmax, its p-value and the adjusted p-value.
    counts : pandas.Series
        Units with a break in each year.
    clustering : TestResult
        Permutation test of whether break years cluster across units.
    excluded : pandas.DataFrame
        Units and years left out (unit, column, years, reason).
    details, reference, warnings
        Options, sources and cautions.
    """

    column: str
    table: pd.DataFrame
    counts: pd.Series
    clustering: TestResult
    excluded: pd.DataFrame
    details: Mapping[str, Any] = field(default_factory=dict)
    reference: str = "baiperron2003; benjaminihochberg1995"
    warnings: tuple[str, ...] = ()

    def __repr__(self) -> str:
        flagged = int((self.table["n_breaks"] > 0).sum()) if len(self.table) else 0
        return (f"ScreenResult(column={self.column!r}, units={len(self.table)}, "
                f"with_breaks={flagged}, excluded={len(self.excluded)})")

    def to_frame(self) -> pd.DataFrame:
        """The per-unit table with ``unit`` as a column."""
        return self.table.reset_index()

    def summary(self) -> str:
        """Units screened, units with breaks, the most common break years, clustering, exclusions."""
        tab = self.table
        flagged = tab[tab["n_breaks"] > 0]
        lines = [f"Break screen of {self.column}: {len(tab)} unit(s), {len(flagged)} with at least "
                 f"one break ({self.details.get('model')} model, trim {self.details.get('trim')}, "
                 f"selection {self.details.get('select')})", f"  {CONVENTION}"]
        alpha = float(self.details.get("alpha", 0.05))
        adj = _ADJUST_NAMES.get(str(self.details.get("adjust")), str(self.details.get("adjust")))
        lines.append(f"  UDmax significant at {alpha:g} after {adj} adjustment: "
                     f"{int((tab['pvalue_adjusted'] < alpha).sum())} unit(s)")
        top = self.counts[self.counts > 0].sort_values(ascending=False, kind="stable").head(5)
        if len(top):
            lines.append("  most common break years: " + ", ".join(f"{y} ({n})" for y, n in top.items()))
        if self.clustering.applicable:
            lines.append(f"  clustering: {self.clustering.statistic:.0f} units within "
                         f"+-{self.clustering.details.get('spread')} year(s), permutation p "
                         f"{format_pvalue(self.clustering.pvalue)}")
        for row in flagged.itertuples():
            years = ", ".join(f"{b} ({lo}-{hi})" for b, lo, hi in zip(row.break_years, row.lower, row.upper))
            lines.append(f"    {row.Index}: {years}   p {format_pvalue(row.pvalue)}")
        if len(self.excluded):
            lines.append(f"  left out: {len(self.excluded)} row(s); see .excluded")
        lines.append(f"  reference: {self.reference}")
        lines.extend(f"  warning: {w}" for w in self.warnings)
        return "\n".join(lines)

    def to_dict(self) -> dict[str, Any]:
        """All fields as JSON-safe Python objects."""
        return json_safe({"column": self.column, "table": self.to_frame().to_dict(orient="records"),
                          "counts": {str(k): int(v) for k, v in self.counts.items()},
                          "clustering": self.clustering.to_dict(),
                          "excluded": self.excluded.to_dict(orient="records"),
                          "details": dict(self.details), "reference": self.reference,
                          "warnings": list(self.warnings)})


@dataclass(frozen=True, eq=False, repr=False)
class CommonBreakResult(ResultProtocol):
    """Common break years of a panel column, their intervals, and the pooled test."""

    column: str
    n_breaks: int
    break_years: tuple[int, ...]
    intervals: pd.DataFrame
    ssr: pd.Series
    test: TestResult
    excluded: pd.DataFrame
    details: Mapping[str, Any] = field(default_factory=dict)
    reference: str = "bai2010"
    warnings: tuple[str, ...] = ()

    _repr_fields = ("column", "n_breaks", "break_years")

    def __post_init__(self) -> None:
        super().__post_init__()
        object.__setattr__(self, "break_years", tuple(int(b) for b in self.break_years))

    def to_frame(self) -> pd.DataFrame:
        """One row per common break: break year and interval."""
        return self.intervals.copy()

    def summary(self) -> str:
        """Break years with intervals, the pooled test and what was left out."""
        lines = [f"Common breaks in {self.column}: {self.n_breaks} break(s) across "
                 f"{self.details.get('units')} unit(s) ({self.details.get('model')} model)",
                 f"  {CONVENTION}"]
        for row in self.intervals.itertuples(index=False):
            lines.append(f"  break {row.break_year}   interval {row.lower}-{row.upper}")
        lines.append(f"  {self.test.test}: {self.test.statistic:.4f}, p {format_pvalue(self.test.pvalue)}")
        if len(self.excluded):
            lines.append(f"  left out: {len(self.excluded)} row(s); see .excluded")
        lines.append(f"  reference: {self.reference}")
        lines.extend(f"  warning: {w}" for w in self.warnings)
        return "\n".join(lines)

    def to_dict(self) -> dict[str, Any]:
        """All fields as JSON-safe Python objects."""
        return json_safe({"column": self.column, "n_breaks": self.n_breaks,
                          "break_years": list(self.break_years),
                          "intervals": self.intervals.to_dict(orient="records"),
                          "ssr": {str(k): v for k, v in self.ssr.items()},
                          "test": self.test.to_dict(),
                          "excluded": self.excluded.to_dict(orient="records"),
                          "details": dict(self.details), "reference": self.reference,
                          "warnings": list(self.warnings)})


def _unit_task(task: tuple) -> list[dict[str, Any]]:
    """Partitions, tests, selection and intervals for a chunk of units with the same years."""
    units, values, years, model, h, max_breaks, select, alpha, draws, weights = task
    nobs = values.shape[1]
    q = MODELS[model]
    tables = ssr_tables(values, model, h)
    ssr, breaks = optimal_partitions(tables, max_breaks, h)
    supf = bt.supf_homoskedastic(ssr, nobs, q, 0)
    kk = weights.size
    udmax = np.nanmax(supf[:, :kk], axis=1)
    ud_draws = draws[:, :kk].max(axis=1)
    bic, lwz = information_criteria(ssr, nobs, q, 0)
    chosen = np.nanargmin(bic if select == "bic" else lwz, axis=1)
    z = regime_design(model, nobs)
    rows = []
    for n, unit in enumerate(units):
        m = int(chosen[n])
        cut = [int(b) for b in breaks[n, m, :m]]
        fit = regime_fit(values[n], z, None, cut, robust=False, regime_variances=False, hac_lags=0)
        intervals, _ = _describe(values[n], z, None, cut, fit, years, ["const", "trend"][:q],
                                 False, 0, alpha)
        rows.append({"unit": unit, "first_year": int(years[0]), "last_year": int(years[-1]),
                     "n_breaks": m, "break_years": tuple(int(years[b]) for b in cut),
                     "lower": tuple(int(v) for v in intervals["lower"]),
                     "upper": tuple(int(v) for v in intervals["upper"]),
                     "supf_1": float(supf[n, 0]), "udmax": float(udmax[n]),
                     "pvalue": bt.tail_pvalue(float(udmax[n]), ud_draws)})
    return rows


def _series_of(panel: Panel, column: str) -> tuple[dict[tuple[int, int], list], list[dict[str, Any]]]:
    """Units grouped by their span of years, through ``Panel.arrays`` (gaps and constants excluded)."""
    block = panel.arrays(column, span="own", gaps="exclude", short="exclude", constant="exclude",
                         min_years=2, require_units=0, purpose="screen_breaks")
    excluded = block.excluded.to_dict(orient="records")
    values = block.column(0)
    groups: dict[tuple[int, int], list] = {}
    for i, unit in enumerate(block.units):
        lo, hi = int(block.first[i]), int(block.last[i])
        groups.setdefault((int(block.years[lo]), int(block.years[hi])), []).append(
            (unit, values[lo:hi + 1, i]))
    return groups, excluded


def screen_breaks(panel: Panel, column: str, *, model: str = "trend", max_breaks: int = 5,
                  trim: float = 0.15, select: str = "bic", alpha: float = 0.05, adjust: str = "bh",
                  spread: int = 1, reps: int = 999, seed: Seed = DEFAULT_SEED,
                  executor: ExecutorLike = "serial", chunk: int = 250,
                  progress: Callable[[int, int], None] | None = None) -> ScreenResult:
    """Find breaks in ``column`` for every unit of ``panel`` (one row per unit).

    Units too short for ``trim`` and ``max_breaks``, with missing values inside their series or
    constant, are left out and listed in ``excluded``. ``pvalue`` is the UDmax p-value (no break
    vs 1..max_breaks), ``pvalue_adjusted`` its Benjamini–Hochberg (``adjust="bh"``) or Holm
    (``"holm"``) adjustment across the screened units. ``spread``, ``reps`` and ``seed`` set the
    clustering permutation test. ``executor`` runs chunks of ``chunk`` units (``"serial"``,
    ``"processes"``, ``"dask"``, a scheduler address or a running Client, never closed here);
    the output does not depend on it. Break years are the last year of the old regime.
    """
    panel.require(column)
    model = check_model(model)
    trim = check_trim(trim)
    select = check_choice("select", select, ("bic", "lwz"))
    adjust = check_choice("adjust", adjust, ADJUSTMENTS)
    chunk = check_int("chunk", chunk, minimum=1)
    max_breaks = check_int("max_breaks", max_breaks, minimum=1)
    spread = check_int("spread", spread, minimum=0)
    reps = check_int("reps", reps, minimum=1)
    seed = check_seed(seed)
    q = MODELS[model]
    groups, excluded = _series_of(panel, column)
    design = "trend" if model == "trend" else "level"
    draws = null_draws(q, trim, design=design)
    tasks = []
    for (first, last), members in sorted(groups.items()):
        nobs = last - first + 1
        h = min_length(nobs, trim)
        if h < q + 1 or (max_breaks + 1) * h > nobs:
            for unit, _ in members:
                excluded.append({"unit": unit, "column": column, "years": f"{first}-{last}",
                                 "reason": f"unit excluded: {nobs} years too few for trim={trim} "
                                           f"and max_breaks={max_breaks}"})
            continue
        kk = min(max_breaks, draws.shape[1])
        weights = bt.wdmax_weights(q, trim, draws, kk, use_table=design == "level")
        years = np.arange(first, last + 1)
        for start in range(0, len(members), chunk):
            part = members[start:start + chunk]
            tasks.append(([u for u, _ in part], np.vstack([v for _, v in part]), years, model, h,
                          max_breaks, select, alpha, draws, weights))
    excluded_table = excluded_frame(sorted(excluded, key=lambda r: str(r["unit"])))
    if not tasks:
        raise DataError(f"no unit of '{column}' can be screened; see the reasons: "
                        + "; ".join(f"{a['unit']}: {a['reason']}" for a in excluded[:5]))
    with using_executor(executor) as runner:
        parts = runner.map(_unit_task, tasks, progress=progress)
        executor_name = getattr(runner, "name", "custom")
    rows = [r for part in parts for r in part]
    table = pd.DataFrame(rows).set_index("unit").sort_index()
    table["pvalue_adjusted"] = adjust_pvalues(table["pvalue"].to_numpy(), adjust)
    counts, clustering = _clustering(table, spread=spread, reps=reps, seed=seed, trim=trim)
    shortest = int((table["last_year"] - table["first_year"]).min()) + 1
    warnings = [SHORT_TREND_WARNING.format(nobs=shortest)] if design == "trend" and shortest < 60 else []
    details = {"model": model, "trim": trim, "max_breaks": max_breaks, "select": select,
               "alpha": alpha, "adjust": adjust, "convention": CONVENTION,
               "executor": executor_name, "seed": seed if isinstance(seed, int) else None,
               "pvalue": f"UDmax, simulated limiting distribution ({design} design)"}
    return ScreenResult(column=column, table=table, counts=counts, clustering=clustering,
                        excluded=excluded_table, details=details, warnings=tuple(warnings))


def _clustering(table: pd.DataFrame, *, spread: int, reps: int, seed: Seed,
                trim: float) -> tuple[pd.Series, TestResult]:
    """Units breaking per year, and the random-shift permutation test of clustering."""
    all_years = range(int(table["first_year"].min()), int(table["last_year"].max()) + 1)
    counts = pd.Series(0, index=pd.Index(list(all_years), name="year"), name="units_with_break")
    for years in table["break_years"]:
        for y in years:
            counts.loc[y] += 1
    with_breaks = table[table["n_breaks"] > 0]
    if len(with_breaks) < 2:
        return counts, TestResult.inapplicable("break clustering",
                                               reason="fewer than two units have a break")

    def statistic(patterns: list[np.ndarray]) -> int:
        grid = np.zeros(len(counts), dtype=int)
        for pat in patterns:
            hit = np.zeros(len(counts), dtype=bool)
            for b in pat:
                hit[max(b - spread, 0):b + spread + 1] = True
            grid += hit
        return int(grid.max())

    base = int(counts.index[0])
    patterns, ranges = [], []
    for row in with_breaks.itertuples():
        pat = np.asarray(row.break_years) - base
        h = min_length(row.last_year - row.first_year + 1, trim)
        lo = (row.first_year - base + h - 1) - pat[0]
        hi = (row.last_year - base - h) - pat[-1]
        patterns.append(pat)
        ranges.append((lo, hi))
    observed = statistic(patterns)
    rng = np.random.default_rng(task_seeds(seed, 1)[0])
    null = np.empty(reps, dtype=int)
    for r in range(reps):
        shifted = [pat + rng.integers(lo, hi + 1) for pat, (lo, hi) in zip(patterns, ranges)]
        null[r] = statistic(shifted)
    pvalue = (1 + np.sum(null >= observed)) / (reps + 1)
    return counts, TestResult(
        test="break clustering", statistic=observed, pvalue=pvalue,
        null="break years are placed independently across units",
        alternative="breaks cluster in particular years", nobs=len(with_breaks),
        details={"spread": spread, "reps": reps, "seed": seed if isinstance(seed, int) else None,
                 "statistic": f"largest number of units with a break within +-{spread} years"},
        reference="common practice (random-shift permutation)")


def common_breaks(panel: Panel, column: str, *, model: str = "level", max_breaks: int = 3,
                  trim: float = 0.15, alpha: float = 0.05) -> CommonBreakResult:
    """Least-squares break years common to every unit (Bai 2010), with a pooled test.

    Units with missing values in the panel's years are skipped (audited). The number of breaks
    is chosen by the pooled BIC; the pooled statistic ``sum_i (SSR0_i - SSRk_i) / sigma_i^2 / k``
    is evaluated at the common partition (a lower bound of its supremum, so the test is
    conservative) and referred to its simulated null: the supF(k) functional with ``N q``
    changing coefficients (level model), or the pooled trend statistic of N independent series
    (trend model); 1000 replications on a grid of 200 with two-grid extrapolation.
    """
    panel.require(column)
    model = check_model(model)
    trim = check_trim(trim)
    max_breaks = check_int("max_breaks", max_breaks, minimum=1)
    alpha = check_alpha(alpha)
    block = panel.arrays(column, span="own", gaps="exclude", short="exclude", constant="exclude",
                         min_years=2, require_units=0, purpose="common_breaks")
    excluded = block.excluded.to_dict(orient="records")
    full = (block.first == 0) & (block.last == block.years.size - 1)
    for i in np.flatnonzero(~full):
        span = f"{block.years[block.first[i]]}-{block.years[block.last[i]]}"
        excluded.append({"unit": block.units[i], "column": column, "years": span,
                         "reason": "unit excluded: does not cover every year of the panel "
                                   f"({block.years[0]}-{block.years[-1]})"})
    if full.sum() < 2:
        raise DataError(f"common_breaks needs at least two units of '{column}' with values in every "
                        f"year {block.years[0]}-{block.years[-1]}; {int(full.sum())} have them.")
    values = block.column(0)[:, full].T
    years = block.years.astype(int)
    n_units, nobs = values.shape
    q = MODELS[model]
    h = min_length(nobs, trim)
    if h < q + 1 or (max_breaks + 1) * h > nobs:
        raise SpecError(f"max_breaks={max_breaks} and trim={trim} do not fit {nobs} years.")
    tables = ssr_tables(values, model, h)
    ssr_units, _ = optimal_partitions(tables, 0, h)
    total_ssr, total_breaks = optimal_partitions(tables.sum(0)[None], max_breaks, h)
    bic, _ = information_criteria(total_ssr[0], n_units * nobs, n_units * q, 0)
    m = int(np.argmin(bic))
    if model == "level":
        draws = null_draws(n_units * q, trim, reps=1000, grid=200)
    else:
        draws = null_draws(q, trim, design="trend", units=n_units, reps=1000, grid=200)
    z = regime_design(model, nobs)
    if m == 0:
        m_test = 1
    else:
        m_test = m
    cut = [int(b) for b in total_breaks[0, m_test, :m_test]]
    num, pooled = 0.0, []
    for n in range(n_units):
        fit = regime_fit(values[n], z, None, cut, robust=False, regime_variances=False, hac_lags=0)
        ssr_k = float(fit["resid"] @ fit["resid"])
        sigma2 = ssr_k / (nobs - (m_test + 1) * q)
        num += (ssr_units[n, 0] - ssr_k) / sigma2
        pooled.append((fit["coef"], sigma2))
    stat = num / m_test
    pvalue = bt.tail_pvalue(stat, draws[:, m_test - 1]) if m_test <= draws.shape[1] else float("nan")
    test = TestResult(test=f"pooled supF({m_test})", statistic=stat, pvalue=pvalue,
                      critical_values=bt.simulated_critical_values(draws[:, m_test - 1]),
                      null="no common break", alternative=f"{m_test} common break(s)",
                      nobs=n_units * nobs, details={"units": n_units, "q": q, "trim": trim},
                      reference="bai2010; baiperron1998")
    rows = []
    for i, b in enumerate(cut[:m]):
        size = sum(float(np.sum((c[(i + 1) * q:(i + 2) * q] - c[i * q:(i + 1) * q]) ** 2)) / s
                   for c, s in pooled)
        half = argmax_quantile(1 - alpha / 2) / size
        rows.append({"break_year": int(years[b]),
                     "lower": int(years[max(b - int(np.ceil(half)), 0)]),
                     "upper": int(years[min(b + int(np.ceil(half)), nobs - 1)])})
    return CommonBreakResult(
        column=column, n_breaks=m, break_years=tuple(int(years[b]) for b in cut[:m]),
        intervals=pd.DataFrame(rows, columns=["break_year", "lower", "upper"]),
        ssr=pd.Series(total_ssr[0], index=pd.RangeIndex(max_breaks + 1, name="m"), name="ssr"),
        test=test, excluded=excluded_frame(sorted(excluded, key=lambda r: str(r["unit"]))),
        details={"model": model, "trim": trim, "units": n_units, "convention": CONVENTION,
                 "interval": "pooled break size, equal moments across regimes (Bai 2010)"})
