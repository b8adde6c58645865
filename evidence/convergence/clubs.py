"""Phillips & Sul (2007) log t convergence test, club clustering, and club merging (2009).

References
----------
phillipssul2007 : Phillips, P. C. B. & Sul, D. (2007). Transition modeling and econometric
    convergence tests. Econometrica 75(6), 1771–1855.
phillipssul2009 : Phillips, P. C. B. & Sul, D. (2009). Economic transition and growth. Journal of
    Applied Econometrics 24(7), 1153–1185.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from scipy import stats

from evidence._figures import finish_figure, pyplot
from evidence._json import json_safe
from evidence._typing import Window
from evidence._validation import check_window
from evidence.errors import DataError, SpecError
from evidence.indicators import trend_growth_batch
from evidence.panel import Panel
from evidence.results import ResultProtocol, TestResult

__all__ = ["ClubResult", "log_t_statistic", "log_t_test", "club_convergence", "hp_trends"]

CRITICAL = -1.65  # one-sided 5 % critical value of the log t test (Phillips & Sul 2007)


def hp_trends(values: np.ndarray, smoothing: float) -> np.ndarray:
    """Hodrick–Prescott trend of each column of ``values`` (years × units), statsmodels' filter."""
    from statsmodels.tsa.filters.hp_filter import hpfilter

    return np.column_stack([hpfilter(values[:, j], lamb=smoothing)[1]
                            for j in range(values.shape[1])])


def log_t_statistic(x: np.ndarray, *, trim: float = 0.3) -> tuple[float, float, int]:
    """The log t regression on a (years × units) array of positive (filtered) values.

    ``h_it = x_it / mean_i x_it``, ``H_t = mean_i (h_it − 1)²``; OLS of
    ``ln(H_1/H_t) − 2 ln(ln t)`` on a constant and ``ln t`` for ``t = max([rT], 2), ..., T``;
    Newey–West (Bartlett) standard error with ``floor(4 (n/100)^(2/9))`` lags and the factor
    ``n/(n − 2)`` (:func:`evidence.indicators.trend_growth_batch`). Returns ``(t_b, b, n)``.
    """
    n_years = x.shape[0]
    h = x / x.mean(axis=1, keepdims=True)
    big_h = ((h - 1.0) ** 2).mean(axis=1)
    first = max(math.floor(trim * n_years), 2)
    t = np.arange(first, n_years + 1, dtype=float)
    if not (big_h[0] > 0 and np.all(big_h[first - 1:] > 0)):
        # identical units in a year: the regression is undefined, and such a group is not
        # accepted as converging by the test (t is NaN, never above the critical value)
        return math.nan, math.nan, t.size
    y = np.log(big_h[0] / big_h[first - 1:]) - 2.0 * np.log(np.log(t))
    slopes, ses, _ = trend_growth_batch(y[:, None], np.log(t))
    b, se, n = float(slopes[0]), float(ses[0]), t.size
    return (b / se if se > 0 else math.nan), b, n


def _prepare(panel: Panel, column: str, window: Window | str | None, smoothing: float | None,
             log: bool) -> tuple[np.ndarray, list[str], np.ndarray]:
    panel.require(column)
    start, end = (check_window(window, panel.years) if window is not None
                  else (panel.years[0], panel.years[-1]))
    years = np.arange(start, end + 1)
    wide = panel.wide(column).reindex(years).reindex(columns=list(panel.units))
    missing = wide.isna().any()
    if missing.any():
        unit = missing[missing].index[0]
        raise DataError(f"unit '{unit}' has missing values of '{column}' in {start}:{end}; the "
                        "log t test needs a balanced window. Choose a window or drop the unit.")
    values = wide.to_numpy(dtype=float)
    if log:
        if (values <= 0).any():
            row, col = np.argwhere(values <= 0)[0]
            raise DataError(f"column '{column}' is not positive at unit '{wide.columns[col]}', "
                            f"year {years[row]}; the log needs positive values.")
        values = np.log(values)
    if smoothing:
        values = hp_trends(values, smoothing)
    bad = values <= 0
    if bad.any():
        row, col = np.argwhere(bad)[0]
        raise DataError(f"'{column}' (after filtering) is not positive at unit "
                        f"'{wide.columns[col]}', year {years[row]}; the relative transition path "
                        "needs positive values (use logs of values above 1, e.g. a smaller unit "
                        "of measure).")
    same = np.ptp(values, axis=1) == 0
    if same.any():
        raise DataError(f"every unit has the same (filtered) '{column}' in {years[same][0]}; the "
                        "log t test needs the units to differ.")
    if years.size < 10:
        raise DataError(f"the window {start}:{end} has {years.size} years; the log t test needs "
                        "at least 10.")
    return values, list(wide.columns), years


def _as_test(t_b: float, b: float, n: int, units: Sequence[str], trim: float) -> TestResult:
    return TestResult(test="Phillips-Sul log t", statistic=t_b, pvalue=float(stats.norm.cdf(t_b)),
                      critical_values={0.05: CRITICAL, 0.01: float(stats.norm.ppf(0.01)),
                                       0.10: float(stats.norm.ppf(0.10))},
                      null="convergence (b >= 0)", alternative="no convergence (b < 0)", nobs=n,
                      details={"b": b, "speed": b / 2, "units": len(units), "trim": trim},
                      reference="phillipssul2007")


def log_t_test(panel: Panel, column: str, *, trim: float = 0.3, smoothing: float | None = 400.0,
               log: bool = True, window: Window | str | None = None) -> TestResult:
    """Phillips–Sul log t test of convergence of all units.

    H0: convergence (``b >= 0``). H1: no convergence. Reject at 5 % when ``t_b < −1.65``
    (one-sided; the p-value is the lower normal tail). The test runs on ``ln(column)`` when
    ``log=True`` (e.g. log per-capita emissions, which must then be positive: a level above 1 in
    the unit of measure); ``smoothing`` is the Hodrick–Prescott parameter applied to each series
    first (400 for annual data; ``None`` for none); ``trim`` the share of the first years
    discarded (``r = 0.3``). ``b/2`` estimates the speed of convergence.
    """
    _check_trim(trim)
    values, units, _ = _prepare(panel, column, window, smoothing, log)
    return _as_test(*log_t_statistic(values, trim=trim), units, trim)


def _check_trim(trim: float) -> None:
    if not 0 < trim < 0.5:
        raise SpecError(f"trim={trim!r} must be between 0 and 0.5 (Phillips & Sul use 0.3).")


@dataclass(frozen=True, eq=False, repr=False)
class ClubResult(ResultProtocol):
    """Convergence clubs: membership, each club's log t test, merges, and transition paths.

    Attributes
    ----------
    clubs : tuple of tuple of str
        The units of each club, club 1 first (highest last-year values).
    divergent : tuple of str
        Units that belong to no club.
    tests : tuple of TestResult
        The log t test of each club.
    overall : TestResult
        The log t test of all units.
    merges : pandas.DataFrame
        Each merge tried (clubs, log t, merged).
    transition : pandas.DataFrame
        Relative transition paths (unit / club mean), one column per unit in a club.
    details : mapping
        ``trim``, ``smoothing``, ``sieve``, ``log``, ``critical_value``, ``window``.
    """

    clubs: tuple[tuple[str, ...], ...]
    divergent: tuple[str, ...]
    tests: tuple[TestResult, ...]
    overall: TestResult
    merges: pd.DataFrame
    transition: pd.DataFrame
    details: Mapping[str, Any] = field(default_factory=dict)

    def __repr__(self) -> str:
        return (f"ClubResult(clubs={len(self.clubs)}, sizes={tuple(len(c) for c in self.clubs)}, "
                f"divergent={len(self.divergent)}, overall_log_t={self.overall.statistic:.3f})")

    def membership(self) -> pd.DataFrame:
        """One row per unit: its club (0 for divergent units)."""
        rows = [{"unit": u, "club": i} for i, club in enumerate(self.clubs, start=1) for u in club]
        rows += [{"unit": u, "club": 0} for u in self.divergent]
        return pd.DataFrame(rows).set_index("unit")

    def to_frame(self) -> pd.DataFrame:
        """One row per club: its size, log t statistic, ``b`` and p-value."""
        return pd.DataFrame(
            [{"club": i, "units": len(c), "log_t": t.statistic, "b": t.details["b"],
              "pvalue": t.pvalue}
             for i, (c, t) in enumerate(zip(self.clubs, self.tests, strict=True), start=1)],
            columns=["club", "units", "log_t", "b", "pvalue"])

    def summary(self) -> str:
        """Clubs with their members and log t statistics."""
        lines = [f"Phillips-Sul clubs: overall log t {self.overall.statistic:.3f} "
                 f"({'rejects' if self.overall.statistic < CRITICAL else 'does not reject'} "
                 f"convergence of all units at 5 %)"]
        for i, (club, test) in enumerate(zip(self.clubs, self.tests, strict=True), start=1):
            lines.append(f"  club {i} ({len(club)} units, log t {test.statistic:.3f}, "
                         f"b {test.details['b']:.3f}): {', '.join(club)}")
        if self.divergent:
            lines.append(f"  divergent: {', '.join(self.divergent)}")
        return "\n".join(lines)

    def to_dict(self) -> dict[str, Any]:
        """JSON-safe contents."""
        return json_safe({"clubs": [list(c) for c in self.clubs], "divergent": list(self.divergent),
                          "tests": [t.to_dict() for t in self.tests],
                          "overall": self.overall.to_dict(), "merges": self.merges,
                          "details": dict(self.details)})

    def plot(self, path: str | Path | None = None) -> Any:
        """Relative transition paths (unit / club mean), one panel per club.

        With ``path`` the figure is written (and closed) and the paths written are returned;
        without, the open figure is returned.
        """
        plt = pyplot()
        k = max(len(self.clubs), 1)
        fig, axes = plt.subplots(1, k, figsize=(3.2 * k, 3.0), dpi=100, squeeze=False)
        # With no club there is one empty axis and nothing to draw.
        for ax, club, i in zip(axes[0], self.clubs, range(1, k + 1), strict=False):
            ax.plot(self.transition.index, self.transition[list(club)], linewidth=0.8)
            ax.axhline(1.0, color="0.5", linewidth=0.8)
            ax.set_title(f"club {i}")
        fig.tight_layout()
        return finish_figure(fig, path)


def _t(values: np.ndarray, idx: Sequence[int], trim: float) -> float:
    return log_t_statistic(values[:, list(idx)], trim=trim)[0]


def _find_club(values: np.ndarray, order: list[int], trim: float, sieve: float) -> list[int] | None:
    """Core group by the first converging pair and the largest t_k, then the sieve (PS 2007, 4.3)."""
    start = None
    for i in range(len(order) - 1):
        if _t(values, order[i:i + 2], trim) > CRITICAL:
            start = i
            break
    if start is None:
        return None
    best_k, best_t = 2, -math.inf
    for k in range(2, len(order) - start + 1):
        t_k = _t(values, order[start:start + k], trim)
        if t_k <= CRITICAL:
            break
        if t_k > best_t:
            best_k, best_t = k, t_k
    core = order[start:start + best_k]
    threshold = sieve
    while True:
        candidates = [j for j in order if j not in core
                      and _t(values, [*core, j], trim) > threshold]
        club = sorted(core + candidates, key=order.index)
        if not candidates or _t(values, club, trim) > CRITICAL:
            return club
        threshold += 0.05  # raise the sieve until the club as a whole converges


def club_convergence(panel: Panel, column: str, *, trim: float = 0.3,
                     smoothing: float | None = 400.0, sieve: float = 0.0, merge: bool = True,
                     log: bool = True, window: Window | str | None = None) -> ClubResult:
    """Phillips–Sul club clustering of ``column`` (e.g. per-capita emissions; logged by default).

    Algorithm (Phillips & Sul 2007, section 4.3): (1) order units by their last-year (filtered)
    value; (2) core group: from the first pair whose log t exceeds −1.65, add units in order while
    ``t_k > −1.65`` and keep the size with the largest ``t_k``; (3) sieve: add each other unit whose
    log t with the core exceeds ``sieve`` (``c* = 0``), raising the threshold if the resulting club
    fails the test; (4) repeat on the units left; if they converge as a group they form the last
    club, and units that cannot form a core are divergent. With ``merge=True`` adjacent clubs whose
    union passes the test are merged (Phillips & Sul 2009), in order.
    """
    _check_trim(trim)
    values, units, years = _prepare(panel, column, window, smoothing, log)
    overall = _as_test(*log_t_statistic(values, trim=trim), units, trim)
    remaining = list(np.argsort(-values[-1], kind="stable"))
    clubs: list[list[int]] = []
    divergent: list[int] = []
    while remaining:
        if len(remaining) >= 2 and _t(values, remaining, trim) > CRITICAL:
            clubs.append(remaining)
            break
        club = _find_club(values, remaining, trim, sieve) if len(remaining) >= 2 else None
        if club is None:
            divergent = remaining
            break
        clubs.append(club)
        remaining = [j for j in remaining if j not in club]
    merges = []
    if merge:
        i = 0
        while i < len(clubs) - 1:
            t_merge = _t(values, clubs[i] + clubs[i + 1], trim)
            merges.append({"clubs": f"{i + 1}+{i + 2}", "log_t": t_merge,
                           "merged": t_merge > CRITICAL})
            if t_merge > CRITICAL:
                clubs[i] = clubs[i] + clubs.pop(i + 1)
            else:
                i += 1
    names = [tuple(units[j] for j in club) for club in clubs]
    tests = tuple(_as_test(*log_t_statistic(values[:, club], trim=trim), name, trim)
                  for club, name in zip(clubs, names, strict=True))
    transition = pd.DataFrame(index=pd.Index(years, name=panel.time_name))
    for club in clubs:
        block = values[:, club]
        for j, col in zip(club, (block / block.mean(axis=1, keepdims=True)).T, strict=True):
            transition[units[j]] = col
    return ClubResult(clubs=tuple(names), divergent=tuple(units[j] for j in divergent),
                      tests=tests, overall=overall,
                      merges=pd.DataFrame(merges, columns=["clubs", "log_t", "merged"]),
                      transition=transition,
                      details={"trim": trim, "smoothing": smoothing, "sieve": sieve, "log": log,
                               "critical_value": CRITICAL, "window": [int(years[0]), int(years[-1])]})
