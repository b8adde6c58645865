"""The four axes of the grade, computed on NumPy arrays of one unit's series (see ``grading.py``)."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy import stats

from evidence.indicators import trend_growth_batch

__all__ = ["trend_tests", "decline_runs", "subwindow_shares", "without_years", "hp_trend_slopes",
           "change_interval", "bootstrap_change_interval"]


def trend_tests(log_p: np.ndarray, log_a: np.ndarray, years: np.ndarray,
                hac_lags: int | None = None) -> dict[str, float]:
    """Trend growth of pressure, activity and intensity with one-sided p-values.

    ``p_absolute``: H0 pressure trend >= 0; ``p_relative``: H0 intensity trend >= 0 (equivalent
    to a trend elasticity ``g_P / g_A`` below 1 when activity grows). Lower-tail Student t with
    ``T − 2`` degrees of freedom and Newey–West standard errors.
    """
    data = np.column_stack([log_p, log_a, log_p - log_a])
    slopes, ses, lags = trend_growth_batch(data, years, hac_lags=hac_lags)
    df = years.size - 2
    with np.errstate(divide="ignore", invalid="ignore"):
        tvals = np.where(ses > 0, slopes / ses, np.sign(slopes) * np.inf)
    p = stats.t.cdf(tvals, df)
    return {"pressure_trend": float(slopes[0]), "pressure_trend_se": float(ses[0]),
            "activity_trend": float(slopes[1]), "activity_trend_se": float(ses[1]),
            "intensity_trend": float(slopes[2]), "intensity_trend_se": float(ses[2]),
            "p_absolute": float(p[0]), "p_relative": float(p[2]), "hac_lags": lags, "df": df}


def decline_runs(log_p: np.ndarray, log_a: np.ndarray, years: np.ndarray) -> dict[str, Any]:
    """Longest run of consecutive years in which pressure falls and activity grows.

    A year counts when ``Δ ln P_t < 0`` and ``Δ ln A_t > 0`` (changes from the year before).
    Returns the longest run (years counted), its first and last year, and the run that ends in
    the window's last year.
    """
    joint = (np.diff(log_p) < 0) & (np.diff(log_a) > 0)
    best = (0, None, None)
    run = 0
    for k, ok in enumerate(joint):
        run = run + 1 if ok else 0
        if run > best[0]:
            best = (run, int(years[k + 1 - run + 1]) if run else None, int(years[k + 1]))
    current = 0
    for ok in joint[::-1]:
        if not ok:
            break
        current += 1
    return {"longest_run": best[0], "run_start": best[1], "run_end": best[2],
            "current_run": current}


def hp_trend_slopes(log_p: np.ndarray, log_a: np.ndarray, smoothing: float) -> tuple[np.ndarray, np.ndarray]:
    """Hodrick–Prescott trend components of the two log series (statsmodels ``hpfilter``)."""
    from statsmodels.tsa.filters.hp_filter import hpfilter

    return hpfilter(log_p, lamb=smoothing)[1], hpfilter(log_a, lamb=smoothing)[1]


def _claim_holds(claim: str, res: dict[str, float], alpha: float) -> bool:
    if claim == "absolute":
        return res["p_absolute"] < alpha and res["activity_trend"] > 0
    return res["p_relative"] < alpha


def subwindow_shares(log_p: np.ndarray, log_a: np.ndarray, years: np.ndarray, *, claim: str,
                     alpha: float, min_window: int) -> tuple[float, np.ndarray]:
    """Share of all sub-windows (every start and end year, at least ``min_window`` years) in
    which the claim holds, and the start × end matrix of outcomes (1 holds, 0 not, NaN too short).
    """
    n = years.size
    matrix = np.full((n, n), np.nan)
    held = total = 0
    for i in range(n):
        for j in range(i + min_window - 1, n):
            res = trend_tests(log_p[i:j + 1], log_a[i:j + 1], years[i:j + 1])
            ok = _claim_holds(claim, res, alpha)
            matrix[i, j] = float(ok)
            held += ok
            total += 1
    return (held / total if total else math.nan), matrix


def without_years(log_p: np.ndarray, log_a: np.ndarray, drop: np.ndarray, *,
                  claim: str) -> tuple[bool | None, float]:
    """Whether the decline survives leaving out the annual changes of the years in ``drop``.

    The changes of the dropped years (e.g. recession years, in which activity fell) are left out
    and the mean annual change of the pressure (absolute claim; activity must still grow on
    average) or of the intensity (relative claim) over the other years must stay negative.
    Working on changes, not levels, removes the steps that recessions leave in the level; the
    comparison is of point estimates (a decline made only of recession years fails it), so it
    does not depend on the power of a test on fewer years. Returns the verdict (``None`` with
    fewer than 5 years left) and the mean change over the years kept.
    """
    keep = ~drop[1:]
    if keep.sum() < 5:
        return None, float("nan")
    d_p, d_a = np.diff(log_p)[keep], np.diff(log_a)[keep]
    if claim == "absolute":
        mean = float(d_p.mean())
        return bool(mean < 0 and d_a.mean() > 0), mean
    mean = float((d_p - d_a).mean())
    return bool(mean < 0), mean


def bootstrap_change_interval(log_p: np.ndarray, years: np.ndarray, alpha: float, *, reps: int,
                              seed: int) -> tuple[float, float]:
    """Moving-block bootstrap interval of the annual change ``exp(g) − 1`` (arch's bootstrap).

    Pairs (year, log pressure) are resampled in blocks of ``max(2, round(T^(1/3)))`` years and the
    trend slope refitted; the interval is the percentile interval of ``exp(g*) − 1``.
    """
    from arch.bootstrap import MovingBlockBootstrap

    block = max(2, int(round(years.size ** (1.0 / 3.0))))

    def slope(t: np.ndarray, y: np.ndarray) -> np.ndarray:
        tc = t - t.mean()
        return np.array([np.expm1(tc @ (y - y.mean()) / (tc @ tc))])

    bs = MovingBlockBootstrap(block, years.astype(float), log_p, seed=seed)
    ci = bs.conf_int(slope, reps=reps, method="percentile", size=1 - alpha)
    return float(ci[0, 0]), float(ci[1, 0])


def change_interval(slope: float, se: float, df: int, alpha: float) -> tuple[float, float, float]:
    """Annual relative change ``exp(g) − 1`` with its two-sided ``1 − alpha`` interval."""
    q = stats.t.ppf(1 - alpha / 2, df)
    return math.expm1(slope), math.expm1(slope - q * se), math.expm1(slope + q * se)
