"""The axes of the grade, computed on NumPy arrays of one unit's series (see ``grading.py``).

Every direction statement uses one trend test (``Criteria.trend_test``, by default the
size-calibrated Perron–Yabu test of :mod:`evidence.trend`), so the direction, the growth of
activity, the latest regime, the sub-windows and the basis gap share one kind of inference that
holds its size whether the noise is stationary or integrated.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from evidence.trend import MIN_YEARS, trend_batch
from evidence.trend.robust import CALIBRATED

__all__ = ["recession_years", "set_apart", "recession_dummies", "direction_tests", "latest_regime_test",
           "decline_runs", "smoothed_run", "subwindow_shares", "subwindow_shares_batch", "hp_trends",
           "bootstrap_change_interval", "claim_level"]


def recession_years(log_a: np.ndarray) -> np.ndarray:
    """Boolean per year: a year of a recession episode, to be set apart.

    The years in which activity is below its earlier peak in the span (the year it falls and
    every year until it regains the peak) and the first year after each such run (the rebound).
    The first year is never one. Setting apart only the year of the fall would count the rebound
    (pressure recovering with activity) as a rising trend and bias the test against real
    declines; setting apart the rebound too leaves a level step made in a recession (the
    pressure does not come back) as the only trace, and it no longer counts.
    """
    peak = np.maximum.accumulate(log_a)
    below = np.concatenate([[False], log_a[1:] < peak[:-1]])
    after = np.concatenate([[False], below[:-1] & ~below[1:]])
    return below | after


def set_apart(log_p: np.ndarray, recession: np.ndarray) -> np.ndarray:
    """The series with the changes of recession years set to zero (for the tests that take no
    dummies: ``"hac"``, ``"hac-fixed-b"``, ``"perron-yabu-normal"``).

    ``y*_t = y_1 + sum_{s<=t, s not a recession year} Δy_s``.
    """
    changes = np.diff(log_p) * ~recession[1:]
    return log_p[0] + np.concatenate([[0.0], np.cumsum(changes)])


def recession_dummies(recession: np.ndarray) -> np.ndarray:
    """Dummies that set recessions apart: ``(T, q)``.

    For each run of recession years (an episode): an impulse for every year of it (so those
    years do not inform the trend) and a step from the year after it (the level may shift across
    the recession). A level step made in a recession, a dip and its rebound all leave the trend
    untouched; what counts is the change in the other years.
    """
    n = recession.size
    cols = []
    k = 0
    while k < n:
        if not recession[k]:
            k += 1
            continue
        end = k
        while end + 1 < n and recession[end + 1]:
            end += 1
        for year in range(k, end + 1):
            col = np.zeros(n)
            col[year] = 1.0
            cols.append(col)
        if end + 1 < n:
            cols.append((np.arange(n) > end).astype(float))
        k = end + 1
    return np.column_stack(cols) if cols else np.zeros((n, 0))


def _decline_test(log_p: np.ndarray, recession: np.ndarray, test: str, alpha: float,
                  segment: int | None = None) -> dict[str, Any]:
    """The decline test of ``log_p`` with recessions set apart (dummies, or zeroed changes)."""
    if test in CALIBRATED:
        dummies = recession_dummies(recession)
        if log_p.size - dummies.shape[1] >= (segment + 5 if segment else MIN_YEARS):
            return trend_batch(log_p, test=test, alternative="decrease", alpha=alpha,
                               segment=segment, dummies=dummies)
        return {k: np.full(1, np.nan) for k in ("estimate", "std_error", "pvalue", "lower",
                                                "upper", "statistic", "j")} | {"hac_lags": None}
    adjusted = set_apart(log_p, recession)
    if segment is not None:
        adjusted = adjusted[-min(segment, adjusted.size):]
    return trend_batch(adjusted, test=test, alternative="decrease", alpha=alpha)


def direction_tests(log_p: np.ndarray, log_a: np.ndarray, test: str,
                    alpha: float) -> dict[str, Any]:
    """The direction tests of one unit over its span, all with the same trend test.

    ``p_absolute``: H1 the pressure trend falls, with recessions set apart
    (:func:`recession_dummies`); ``p_absolute_all_years``: the same with every year counted;
    ``p_growth``: H1 activity grows; ``p_relative``: H1 intensity ``P/A`` falls (a trend
    elasticity below 1 while activity grows). Slopes are log points a year.
    """
    recession = recession_years(log_a)
    data = np.column_stack([log_p, log_a, log_p - log_a])
    down = trend_batch(data, test=test, alternative="decrease", alpha=alpha)
    apart = _decline_test(log_p, recession, test, alpha)
    return {
        "pressure_trend": float(down["estimate"][0]), "pressure_trend_se": float(down["std_error"][0]),
        "pressure_trend_lower": float(down["lower"][0]), "pressure_trend_upper": float(down["upper"][0]),
        "pressure_trend_ex_recessions": float(apart["estimate"][0]),
        "activity_trend": float(down["estimate"][1]), "activity_trend_se": float(down["std_error"][1]),
        "intensity_trend": float(down["estimate"][2]), "intensity_trend_se": float(down["std_error"][2]),
        "p_absolute": float(apart["pvalue"][0]), "p_absolute_all_years": float(down["pvalue"][0]),
        "p_growth": float(1.0 - down["pvalue"][1]), "p_relative": float(down["pvalue"][2]),
        "statistic_absolute": float(apart["statistic"][0]),
        "recession_years_list": recession, "hac_lags": down["hac_lags"],
    }


def latest_regime_test(log_p: np.ndarray, log_a: np.ndarray, test: str, segment: int,
                       alpha: float) -> dict[str, Any]:
    """One-sided test that pressure (recessions set apart) falls in the last ``segment`` years.

    With the calibrated tests and at least ``segment + 5`` years: the slope of the last segment
    in a trend with a kink at the year before it, estimated on the whole span (the earlier years
    fix the level and the noise). Otherwise the same test on the last ``segment`` years alone
    (or on the whole span when it is shorter than that).
    """
    recession = recession_years(log_a)
    n = log_p.size
    if test in CALIBRATED and n >= segment + 5 + recession_dummies(recession).shape[1]:
        res = _decline_test(log_p, recession, test, alpha, segment=segment)
        how = f"slope of the last {segment} years (kinked trend on the span)"
    else:
        part = slice(n - min(segment, n), n)
        res = _decline_test(log_p[part], recession_years(log_a[part]), test, alpha)
        how = f"trend of the last {min(segment, n)} years"
    return {"latest_regime_slope": float(res["estimate"][0]),
            "p_latest_regime": float(res["pvalue"][0]), "latest_regime_test": how}


def decline_runs(log_p: np.ndarray, log_a: np.ndarray, years: np.ndarray) -> dict[str, Any]:
    """Longest run of consecutive years in which pressure falls and activity grows.

    A year counts when ``Δ ln P_t < 0`` and ``Δ ln A_t > 0`` (changes from the year before).
    Returns the longest run (years counted), its first and last year, and the run that ends in
    the span's last year.
    """
    joint = (np.diff(log_p) < 0) & (np.diff(log_a) > 0)
    return _runs(joint, years)


def _runs(joint: np.ndarray, years: np.ndarray) -> dict[str, Any]:
    best: tuple[int, int | None, int | None] = (0, None, None)
    run = 0
    for k, ok in enumerate(joint):
        run = run + 1 if ok else 0
        if run > best[0]:
            best = (run, int(years[k + 1 - run + 1]), int(years[k + 1]))
    current = 0
    for ok in joint[::-1]:
        if not ok:
            break
        current += 1
    return {"longest_run": best[0], "run_start": best[1], "run_end": best[2],
            "current_run": current}


def hp_trends(log_p: np.ndarray, log_a: np.ndarray, smoothing: float) -> tuple[np.ndarray, np.ndarray]:
    """Hodrick–Prescott trend components of the two log series (statsmodels ``hpfilter``)."""
    from statsmodels.tsa.filters.hp_filter import hpfilter

    return hpfilter(log_p, lamb=smoothing)[1], hpfilter(log_a, lamb=smoothing)[1]


def smoothed_run(log_p: np.ndarray, log_a: np.ndarray, years: np.ndarray,
                 smoothing: float) -> int:
    """Longest run of years in which the smoothed pressure falls and the smoothed activity grows,
    broken in every year in which raw activity falls (smoothing must not carry a run through a
    recession)."""
    trend_p, trend_a = hp_trends(log_p, log_a, smoothing)
    joint = (np.diff(trend_p) < 0) & (np.diff(trend_a) > 0) & (np.diff(log_a) > 0)
    return int(_runs(joint, years)["longest_run"])


def claim_level(direction: dict[str, Any], alpha: float, adjusted: bool = False) -> str:
    """``"absolute"``, ``"relative"`` or ``"none"`` from direction tests at level ``alpha``."""
    suffix = "_adj" if adjusted else ""
    grows = direction["p_growth"] < alpha
    if grows and direction[f"p_absolute{suffix}"] < alpha:
        return "absolute"
    if direction[f"p_relative{suffix}"] < alpha:
        return "relative"
    return "none"


def subwindow_shares(log_p: np.ndarray, log_a: np.ndarray, years: np.ndarray, *, claim: str,
                     alpha: float, min_window: int, test: str) -> tuple[float, np.ndarray]:
    """Share of all sub-windows (every start and end year, at least ``min_window`` years) in
    which the claim holds under the same test, and the start × end matrix of outcomes (1 holds,
    0 not, NaN too short). One unit of :func:`subwindow_shares_batch`.
    """
    return subwindow_shares_batch([(log_p, log_a, claim)], years.size, alpha=alpha,
                                  min_window=min_window, test=test)[0]


def subwindow_shares_batch(units: list[tuple[np.ndarray, np.ndarray, str]], n: int, *,
                           alpha: float, min_window: int,
                           test: str) -> list[tuple[float, np.ndarray]]:
    """:func:`subwindow_shares` of several units of the same length ``n``: ``units`` holds each
    unit's ``(log_p, log_a, claim)``. The sub-windows of one length are tested in one batch over
    every unit (each column is tested on its own, so a unit's outcome does not depend on the
    others in the batch).
    """
    k = len(units)
    matrices = np.full((k, n, n), np.nan)
    absolute = np.array([claim == "absolute" for _, _, claim in units])
    log_a = np.column_stack([a for _, a, _ in units])                         # (n, k)
    # recession changes set to zero (the critical values of the plain trend design, so the
    # share is descriptive)
    adjusted = np.column_stack([set_apart(p, recession_years(a)) for p, a, _ in units])
    intensity = np.column_stack([p - a for p, a, _ in units])
    for length in range(min_window, n + 1):
        starts = np.arange(0, n - length + 1)
        idx = starts[None, :] + np.arange(length)[:, None]  # (length, windows)
        holds = np.zeros((starts.size, k), dtype=bool)
        if absolute.any():
            cols = np.flatnonzero(absolute)
            holds[:, cols] = ((_window_pvalues(adjusted[:, cols], idx, test, "decrease", alpha) < alpha)
                              & (_window_pvalues(log_a[:, cols], idx, test, "increase", alpha) < alpha))
        if (~absolute).any():
            cols = np.flatnonzero(~absolute)
            holds[:, cols] = _window_pvalues(intensity[:, cols], idx, test, "decrease", alpha) < alpha
        matrices[:, starts, starts + length - 1] = holds.T.astype(float)
    out = []
    for matrix in matrices:
        finite = np.isfinite(matrix)
        out.append(((float(matrix[finite].mean()) if finite.any() else math.nan), matrix))
    return out


def _window_pvalues(values: np.ndarray, idx: np.ndarray, test: str, alternative: str,
                    alpha: float) -> np.ndarray:
    """p-values of the trend test on every window ``idx`` ``(length, windows)`` of every column of
    ``values`` ``(n, c)``, as ``(windows, c)``, in one batch."""
    length, windows = idx.shape
    batch = values[idx].reshape(length, windows * values.shape[1])
    out = trend_batch(batch, test=test, alternative=alternative, alpha=alpha)["pvalue"]
    return out.reshape(windows, values.shape[1])


def _window_recessions(recession: np.ndarray, start: int, length: int) -> np.ndarray:
    part = recession[start:start + length].copy()
    part[0] = False  # the first year of a window has no change inside it
    return part


def bootstrap_change_interval(log_p: np.ndarray, years: np.ndarray, alpha: float, *, reps: int,
                              seed: Any) -> tuple[float, float]:
    """Moving-block bootstrap interval of the annual change ``exp(g) − 1`` (arch's bootstrap).

    Pairs (year, log pressure) are resampled in blocks of ``max(2, round(T^(1/3)))`` years and the
    trend slope refitted; the interval is the percentile interval of ``exp(g*) − 1``. Valid for
    stationary noise only.
    """
    from arch.bootstrap import MovingBlockBootstrap

    block = max(2, round(years.size ** (1.0 / 3.0)))

    def slope(t: np.ndarray, y: np.ndarray) -> np.ndarray:
        tc = t - t.mean()
        return np.array([np.expm1(tc @ (y - y.mean()) / (tc @ tc))])

    bs = MovingBlockBootstrap(block, years.astype(float), log_p, seed=seed)
    ci = bs.conf_int(slope, reps=reps, method="percentile", size=1 - alpha)
    return float(ci[0, 0]), float(ci[1, 0])
