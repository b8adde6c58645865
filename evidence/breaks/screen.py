"""Screening a panel for breaks: every unit at once, one tidy table out.

``screen_breaks`` runs the single-series procedure of :func:`evidence.breaks.find_breaks` (same
tests, selection and intervals, :func:`evidence.breaks._core.describe`) on arrays: units with the
same years are stacked into ``(N, T)`` blocks, cut into chunks of ``chunk`` units (bounded
memory) and run through the executor. Nothing per unit is built in pandas: the chunks return
arrays and one table is assembled at the end; ``ScreenResult.unit(name)`` builds the full
``BreakResult`` of a unit only when asked. p-values are adjusted across units
(Benjamini–Hochberg by default, or Holm). The years in which breaks fall are counted, and a
permutation test asks whether they cluster: each unit's break pattern is shifted by a random
admissible offset (keeping its number of breaks and regime lengths), and the largest number of
units breaking within ``spread`` years of one another is compared with its permutation
distribution.

References
----------
benjaminihochberg1995 : Benjamini, Y. & Hochberg, Y. (1995). Controlling the false discovery rate.
    Journal of the Royal Statistical Society B 57(1), 289–300.
holm1979 : Holm, S. (1979). A simple sequentially rejective multiple test procedure.
    Scandinavian Journal of Statistics 6(2), 65–70.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import pandas as pd

from evidence._typing import DEFAULT_SEED, Seed
from evidence._validation import adjust_pvalues, check_alpha, check_choice, check_int, check_seed
from evidence.breaks._calibrate import COVERED
from evidence.breaks._core import INFERENCES, SELECTIONS, Spec, describe
from evidence.breaks._input import check_model, check_trim
from evidence.breaks.find import ASYMPTOTIC_WARNING, SHORT_TREND_WARNING, make_spec, size_details
from evidence.breaks.result import CONVENTION, ScreenResult
from evidence.breaks.segment import MODELS, min_length
from evidence.errors import DataError, SpecError
from evidence.panel import Panel
from evidence.parallel import ExecutorLike, task_seeds, using_executor
from evidence.results import TestResult, excluded_frame

__all__ = ["screen_breaks", "ScreenResult", "ADJUSTMENTS"]

#: Multiple-testing adjustments across units (``evidence._validation.adjust_pvalues``).
ADJUSTMENTS = ("bh", "holm")


def _chunk_task(task: tuple[np.ndarray, Spec]) -> dict[str, np.ndarray]:
    """The per-unit numbers of one chunk, as arrays (no pandas, no per-unit objects)."""
    values, spec = task
    out = describe(values, spec)
    return {"n_breaks": out["n_breaks"], "supf_1": out["supf"][:, 0], "udmax": out["udmax"],
            "pvalue": out["p_udmax"], "ar1": out["ar1"], "covered": out["covered"],
            "unit": out["unit"], "index": out["index"], "lower": out["lower"],
            "upper": out["upper"], "partitions": out["breaks"].astype(np.int16)}


def _tuples(flat: np.ndarray, counts: np.ndarray) -> list[tuple[int, ...]]:
    """Split a flat array into one tuple of ints per unit."""
    values, out, start = flat.tolist(), [], 0
    for count in counts.tolist():
        out.append(tuple(values[start:start + count]))
        start += count
    return out


def screen_breaks(panel: Panel, column: str, *, model: str = "trend", max_breaks: int = 3,
                  trim: float = 0.20, select: str = "udmax-lwz", alpha: float = 0.05,
                  inference: str = "simulated", adjust: str = "bh", spread: int = 1,
                  reps: int = 999, seed: Seed = DEFAULT_SEED, executor: ExecutorLike = "serial",
                  chunk: int = 1000, progress: Callable[[int, int], None] | None = None
                  ) -> ScreenResult:
    """Find breaks in ``column`` for every unit of ``panel`` (one row per unit).

    The procedure, options and numbers are those of :func:`evidence.breaks.find_breaks` on each
    unit's own span (``select``, ``alpha``, ``inference`` as there; ``ScreenResult.unit(name)``
    gives a unit's full result). Units too short for ``trim`` and ``max_breaks``, with missing
    values inside their series or constant, are left out and listed in ``excluded``. ``pvalue``
    is the UDmax p-value (no break vs 1..max_breaks), ``pvalue_adjusted`` its
    Benjamini–Hochberg (``adjust="bh"``) or Holm (``"holm"``) adjustment across the screened
    units; ``ar1`` is the residual AR(1) coefficient of the selected fit and ``ar1_covered``
    whether the p-values are calibrated for it. ``spread``, ``reps`` and ``seed`` set the
    clustering permutation test. ``executor`` runs chunks of ``chunk`` units (``"serial"``,
    ``"processes"``, ``"dask"``, a scheduler address or a running Client, never closed here);
    the output does not depend on it. Break years are the last year of the old regime.
    """
    panel.require(column)
    model = check_model(model)
    trim = check_trim(trim)
    select = check_choice("select", select, SELECTIONS)
    inference = check_choice("inference", inference, INFERENCES)
    adjust = check_choice("adjust", adjust, ADJUSTMENTS)
    alpha = check_alpha(alpha)
    if alpha >= 0.5:
        raise SpecError(f"alpha={alpha!r} must be below 0.5, e.g. 0.05.")
    chunk = check_int("chunk", chunk, minimum=1)
    max_breaks = check_int("max_breaks", max_breaks, minimum=1)
    spread = check_int("spread", spread, minimum=0)
    reps = check_int("reps", reps, minimum=1)
    seed = check_seed(seed)
    q = MODELS[model]
    block = panel.arrays(column, span="own", gaps="exclude", short="exclude", constant="exclude",
                         min_years=2, require_units=0, purpose="screen_breaks")
    excluded = block.excluded.to_dict(orient="records")
    data = block.column(0)
    spans: dict[tuple[int, int], list[int]] = {}
    for i in range(block.n_units):
        spans.setdefault((int(block.first[i]), int(block.last[i])), []).append(i)
    groups, tasks = [], []
    with using_executor(executor) as runner:
        executor_name = getattr(runner, "name", "custom")
        for (lo, hi), members in sorted(spans.items()):
            nobs = hi - lo + 1
            h = min_length(nobs, trim)
            first, last = int(block.years[lo]), int(block.years[hi])
            if h < q + 1 or (max_breaks + 1) * h > nobs:
                excluded += [{"unit": block.units[i], "column": column, "years": f"{first}-{last}",
                              "reason": f"unit excluded: {nobs} years too few for trim={trim} and "
                                        f"max_breaks={max_breaks}"} for i in members]
                continue
            spec = make_spec(model, nobs, h, max_breaks, trim, select, alpha, inference, runner)
            values = np.ascontiguousarray(data[lo:hi + 1, members].T)
            for start in range(0, len(members), chunk):
                groups.append((np.asarray(members[start:start + chunk]), first, last))
                tasks.append((values[start:start + chunk], spec))
        if not tasks:
            raise DataError(f"no unit of '{column}' can be screened; see the reasons: "
                            + "; ".join(f"{a['unit']}: {a['reason']}" for a in excluded[:5]))
        parts = runner.map(_chunk_task, tasks, progress=progress)
    table = _table(block, groups, parts)
    partitions = _partition_arrays(block, groups, parts)
    table["pvalue_adjusted"] = adjust_pvalues(table["pvalue"].to_numpy(), adjust)
    counts, clustering = _clustering(table, spread=spread, reps=reps, seed=seed, trim=trim)
    shortest = int((table["last_year"] - table["first_year"]).min()) + 1
    warnings = []
    if inference == "asymptotic" and model == "trend" and shortest < 60:
        warnings.append(SHORT_TREND_WARNING.format(nobs=shortest))
    elif inference == "asymptotic":
        warnings.append(ASYMPTOTIC_WARNING)
    outside = int((~table["ar1_covered"]).sum())
    if inference == "simulated" and outside:
        warnings.append(f"{outside} unit(s) have a residual AR(1) coefficient above {COVERED}, the "
                        "largest value for which the p-values are calibrated (column ar1_covered); "
                        "their tests may over-reject.")
    common_t = int((table["last_year"] - table["first_year"] + 1).mode().iloc[0])
    details = {"model": model, "trim": trim, "max_breaks": max_breaks, "select": select,
               "alpha": alpha, "inference": inference, "adjust": adjust, "convention": CONVENTION,
               "executor": executor_name, "seed": seed if isinstance(seed, int) else None,
               "pvalue": f"UDmax, {inference} null at each unit's own length",
               "size": size_details(inference, model, trim, max_breaks, common_t)}
    series = {block.units[i]: pd.Series(data[lo_:hi_ + 1, i],
                                        index=pd.Index(block.years[lo_:hi_ + 1], name="year"),
                                        name=block.units[i])
              for i, lo_, hi_ in zip(range(block.n_units), block.first, block.last, strict=True)
              if block.units[i] in table.index} if len(table) <= 5000 else _LazySeries(block, data)
    return ScreenResult(column=column, table=table, counts=counts, clustering=clustering,
                        excluded=excluded_frame(sorted(excluded, key=lambda r: str(r["unit"]))),
                        details=details, warnings=tuple(warnings), _series=series,
                        _partitions=partitions)


class _LazySeries:
    """A unit's series on request, without building one pandas object per unit up front."""

    def __init__(self, block: Any, data: np.ndarray) -> None:
        self._block, self._data = block, data
        self._pos = {u: i for i, u in enumerate(block.units)}

    def __contains__(self, name: object) -> bool:
        return name in self._pos

    def __getitem__(self, name: str) -> pd.Series:
        i = self._pos[name]
        lo, hi = int(self._block.first[i]), int(self._block.last[i])
        return pd.Series(self._data[lo:hi + 1, i],
                         index=pd.Index(self._block.years[lo:hi + 1], name="year"), name=name)


def _table(block: Any, groups: list[tuple[np.ndarray, int, int]],
           parts: list[dict[str, np.ndarray]]) -> pd.DataFrame:
    """One frame from the chunks' arrays (one row per unit, sorted by unit)."""
    cols: dict[str, list[np.ndarray]] = {k: [] for k in ("unit", "first_year", "last_year",
                                                         "n_breaks", "supf_1", "udmax", "pvalue",
                                                         "ar1", "ar1_covered")}
    break_years, lower, upper = [], [], []
    for (members, first, last), part in zip(groups, parts, strict=True):
        n = members.size
        years = np.arange(first, last + 1)
        cols["unit"].append(np.asarray(block.units, dtype=object)[members])
        cols["first_year"].append(np.full(n, first))
        cols["last_year"].append(np.full(n, last))
        for key in ("n_breaks", "supf_1", "udmax", "pvalue", "ar1"):
            cols[key].append(part[key])
        cols["ar1_covered"].append(part["covered"])
        counts = np.bincount(part["unit"], minlength=n)
        break_years += _tuples(years[part["index"]], counts)
        lower += _tuples(years[part["lower"]], counts)
        upper += _tuples(years[part["upper"]], counts)
    frame = pd.DataFrame({k: np.concatenate(v) for k, v in cols.items()})
    frame.insert(4, "break_years", pd.Series(break_years, dtype=object))
    frame.insert(5, "lower", pd.Series(lower, dtype=object))
    frame.insert(6, "upper", pd.Series(upper, dtype=object))
    frame["n_breaks"] = frame["n_breaks"].astype(np.int64)
    frame["ar1_covered"] = frame["ar1_covered"].astype(bool)
    return frame.set_index("unit").sort_index()


def _partition_arrays(block: Any, groups: list[tuple[np.ndarray, int, int]],
                      parts: list[dict[str, np.ndarray]]) -> dict[str, Any]:
    """The optimal partitions of every unit for m = 0..max_breaks (0-based indices and first
    years), in the order of the table's rows."""
    units = np.concatenate([np.asarray(block.units, dtype=object)[g[0]] for g in groups])
    first = np.concatenate([np.full(g[0].size, g[1]) for g in groups])
    breaks = np.concatenate([p["partitions"] for p in parts])
    order = np.argsort(units.astype(str), kind="stable")
    return {"units": units[order], "first": first[order], "breaks": breaks[order]}


def _clustering(table: pd.DataFrame, *, spread: int, reps: int, seed: Seed,
                trim: float) -> tuple[pd.Series, TestResult]:
    """Units breaking per year, and the random-shift permutation test of clustering (vectorised)."""
    first_all, last_all = int(table["first_year"].min()), int(table["last_year"].max())
    n_years = last_all - first_all + 1
    flat = np.fromiter((b for years in table["break_years"] for b in years), dtype=np.int64)
    counts = pd.Series(np.bincount(flat - first_all, minlength=n_years) if flat.size
                       else np.zeros(n_years, dtype=np.int64),
                       index=pd.Index(range(first_all, last_all + 1), name="year"),
                       name="units_with_break")
    n_all = table["n_breaks"].to_numpy()
    if int(np.sum(n_all > 0)) < 2:
        return counts, TestResult.inapplicable("break clustering",
                                               reason="fewer than two units have a break")
    # each unit's years hit by its pattern (breaks +- spread, relative to the grid) and the
    # admissible shifts that keep its first and last regime at least h years long
    has = n_all > 0
    n_b = n_all[has]
    n_with, k_max = n_b.size, int(n_b.max())
    starts = np.cumsum(n_b) - n_b
    pattern = np.full((n_with, k_max), -10**6, dtype=np.int64)
    within = np.arange(flat.size) - np.repeat(starts, n_b)
    pattern[np.repeat(np.arange(n_with), n_b), within] = flat - first_all
    hits = (pattern[:, :, None] + np.arange(-spread, spread + 1)[None, None, :]).reshape(n_with, -1)
    hits.sort(axis=1)
    unique = np.ones_like(hits, dtype=bool)
    unique[:, 1:] = hits[:, 1:] != hits[:, :-1]
    unique &= hits > -10**5
    hit_unit_a = np.nonzero(unique)[0]
    hit_pos_a = hits[unique]
    first_w = table["first_year"].to_numpy()[has]
    last_w = table["last_year"].to_numpy()[has]
    h_w = np.floor(trim * (last_w - first_w + 1) + 1e-9).astype(np.int64)
    lo_a = (first_w - first_all + h_w - 1) - (flat[starts] - first_all)
    hi_a = (last_w - first_all - h_w) - (flat[starts + n_b - 1] - first_all)

    def statistic(shifts: np.ndarray) -> np.ndarray:
        """Largest count over the grid for each row of shifts ``(R, units)``."""
        rows = shifts.shape[0]
        pos = np.clip(hit_pos_a[None, :] + shifts[:, hit_unit_a], -1, n_years) + 1
        pos += (np.arange(rows) * (n_years + 2))[:, None]
        grid = np.bincount(pos.ravel(), minlength=rows * (n_years + 2)).reshape(rows, -1)
        return grid[:, 1:-1].max(axis=1)

    observed = int(statistic(np.zeros((1, lo_a.size), dtype=np.int64))[0])
    rng = np.random.default_rng(task_seeds(seed, 1)[0])
    null = np.empty(reps, dtype=np.int64)
    for start in range(0, reps, 100):
        r = min(100, reps - start)
        shifts = rng.integers(lo_a[None, :], hi_a[None, :] + 1, size=(r, lo_a.size))
        null[start:start + r] = statistic(shifts)
    pvalue = (1 + np.sum(null >= observed)) / (reps + 1)
    return counts, TestResult(
        test="break clustering", statistic=observed, pvalue=pvalue,
        null="break years are placed independently across units",
        alternative="breaks cluster in particular years", nobs=n_with,
        details={"spread": spread, "reps": reps, "seed": seed if isinstance(seed, int) else None,
                 "statistic": f"largest number of units with a break within +-{spread} years"},
        reference="common practice (random-shift permutation)")
