"""Tests of cross-sectional dependence: Pesaran CD, Breusch–Pagan LM, scaled LM, bias-corrected LM.

Each test takes either a :class:`~evidence.panel.Panel` and a column, or residuals of a panel
estimate as a pandas Series (or one-column DataFrame) indexed by (unit, time). Correlations are
pairwise over the years two units share (``T_ij``); pairs sharing fewer than ``min_overlap``
years are left out and listed in ``details["excluded_pairs"]``. The average absolute
correlation, which reviewers expect beside CD, is in ``details`` of every result.

After time effects (two-way fixed effects) the residuals sum to zero across units every year,
which makes the pairwise correlations negative on average: the plain CD is then centred near
``-sqrt(T/2)`` under the null. We detect this and, by default, use the CD with random unit signs
of Juodis & Reese (2022), which stays standard normal (``random_signs``).

References
----------
pesaran2004 : Pesaran, M. H. (2004). General diagnostic tests for cross section dependence in
    panels. CESifo Working Paper 1229; published as Empirical Economics 60(1), 13–50 (2021).
pesaran2015 : Pesaran, M. H. (2015). Testing weak cross-sectional dependence in large panels.
    Econometric Reviews 34(6–10), 1089–1117.
breuschpagan1980 : Breusch, T. S. & Pagan, A. R. (1980). The Lagrange multiplier test and its
    applications to model specification in econometrics. Review of Economic Studies 47(1), 239–253.
bfk2012 : Baltagi, B. H., Feng, Q. & Kao, C. (2012). A Lagrange multiplier test for
    cross-sectional dependence in a fixed effects panel data model. J. Econometrics 170(1), 164–177.
juodisreese2022 : Juodis, A. & Reese, S. (2022). The incidental parameters problem in testing for
    remaining cross-section correlation. J. Business & Economic Statistics 40(3), 1191–1203.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from scipy import stats

from evidence._typing import DEFAULT_SEED, Seed
from evidence._validation import check_int, check_seed, check_trend
from evidence.errors import DataError, SpecError
from evidence.panel import Panel
from evidence.results import ResultProtocol, TestResult, excluded_frame
from evidence.roots._common import excluded_records
from evidence.roots._unit_batch import trend_columns

__all__ = ["pesaran_cd_test", "lm_test", "scaled_lm_test", "bias_corrected_lm_test",
           "pairwise_correlations", "Correlations", "MIN_OVERLAP"]

#: Default fewest shared years for a pair to enter (our choice; see docs/methods/roots.md).
MIN_OVERLAP = 8
NULL = "no cross-sectional correlation"
ALT = "cross-sectional correlation"


@dataclass(frozen=True, eq=False, repr=False)
class Correlations(ResultProtocol):
    """Pairwise correlations (i < j) with their overlaps, and what was left out.

    ``excluded`` lists units and years left out of the panel (unit, column, years, reason);
    ``excluded_pairs`` the pairs sharing too few years.
    """

    rho: np.ndarray
    overlap: np.ndarray
    units: tuple[str, ...]
    n_units: int
    nobs: int
    balanced: bool
    demeaned_by_time: bool
    excluded_pairs: tuple[tuple[str, str, int], ...]
    label: str
    excluded: pd.DataFrame = field(default_factory=excluded_frame)

    _repr_fields = ("n_units", "nobs", "label")

    def summary(self) -> str:
        """Pairs used, mean and mean absolute correlation, what was left out."""
        lines = [f"Pairwise correlations of {self.label}: {self.n_units} units, {self.rho.size} "
                 f"pairs, mean {np.mean(self.rho):.4f}, mean |rho| {np.mean(np.abs(self.rho)):.4f}"]
        if self.excluded_pairs:
            lines.append(f"  {len(self.excluded_pairs)} pair(s) share too few years")
        lines += [f"  left out: {r.unit} {r.years} ({r.reason})" for r in self.excluded.itertuples()]
        return "\n".join(lines)

    def to_frame(self) -> pd.DataFrame:
        """One row per pair used: the two units, their overlap and correlation."""
        iu = np.triu_indices(self.n_units, k=1)
        dropped = {(a, b) for a, b, _ in self.excluded_pairs}
        pairs = [(self.units[i], self.units[j]) for i, j in zip(*iu, strict=True)
                 if (self.units[i], self.units[j]) not in dropped]
        return pd.DataFrame({"unit_a": [a for a, _ in pairs], "unit_b": [b for _, b in pairs],
                             "overlap": self.overlap.astype(int), "correlation": self.rho})


def pairwise_correlations(u: np.ndarray, min_overlap: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Correlations of every pair of columns of ``u`` (T, N; NaN = absent) over shared rows.

    Each pair's series are centred on their means over the shared rows (pandas ``corr``).
    Returns (rho, overlap, keep) for the pairs i < j in row-major order.
    """
    m = (~np.isnan(u)).astype(float)
    counts = m.T @ m
    rho = pd.DataFrame(u).corr(min_periods=2).to_numpy()   # pairwise complete, centred on overlap
    iu = np.triu_indices(u.shape[1], k=1)
    r, c = rho[iu], counts[iu]
    keep = (c >= min_overlap) & np.isfinite(r)
    return r, c, keep


def _residual_table(data: pd.Series | pd.DataFrame, column: str | None
                    ) -> tuple[np.ndarray, tuple[str, ...]]:
    """Residuals indexed by (unit, time) as a ``(T, N)`` array (NaN where a unit has none)."""
    if isinstance(data, pd.DataFrame):
        if column is None and data.shape[1] != 1:
            raise SpecError("residuals given as a table need column= (or pass one column).")
        data = data[column] if column is not None else data.iloc[:, 0]
    if not isinstance(data.index, pd.MultiIndex) or data.index.nlevels != 2:
        raise DataError("residuals must be indexed by (unit, time), e.g. the resids of a "
                        "linearmodels panel estimate.")
    if data.index.duplicated().any():
        unit, time = data.index[data.index.duplicated()][0]
        raise DataError(f"residuals hold unit '{unit}', time {time} twice; one value each.")
    table = data.astype(float).unstack(level=0)
    return table.to_numpy(dtype=float), tuple(str(u) for u in table.columns)


def _as_wide(data: Any, column: str | None, trend: str, min_overlap: int) -> Correlations:
    excluded = excluded_frame()
    if isinstance(data, Panel):
        if column is None:
            raise SpecError("column= is needed with a Panel (the variable to test).")
        block = data.arrays(column, span="own", gaps="longest", short="exclude",
                            min_years=min_overlap, purpose="a cross-sectional dependence test",
                            require_units=2)
        wide, units, label = block.column(0), block.units, f"column '{column}'"
        excluded = block.excluded
    elif isinstance(data, (pd.Series, pd.DataFrame)):
        wide, units = _residual_table(data, column)
        label = "the residuals"
        if wide.shape[1] < 2:
            raise DataError(f"{label} has values for {wide.shape[1]} unit(s); a cross-sectional "
                            "dependence test needs at least 2.")
        for j, unit in enumerate(units):
            col = wide[~np.isnan(wide[:, j]), j]
            if col.size and np.ptp(col) == 0:
                raise DataError(f"unit '{unit}' is constant in {label}; its correlations are "
                                "undefined. Drop the unit.")
    else:
        raise DataError("pass a Panel and a column, or residuals as a pandas Series indexed by "
                        f"(unit, time); got {type(data).__name__}.")
    wide = _detrend(wide, trend)
    present = ~np.isnan(wide)
    full_rows = present.all(axis=1)
    demeaned = bool(full_rows.sum() >= 3 and np.allclose(
        np.nansum(wide[full_rows], axis=1), 0.0,
        atol=1e-8 * max(float(np.nanmax(np.abs(wide))), 1e-300) * wide.shape[1]))
    rho, overlap, keep = pairwise_correlations(wide, min_overlap)
    iu = np.triu_indices(len(units), k=1)
    excluded_pairs = tuple((units[i], units[j], int(c)) for i, j, c, k in
                           zip(iu[0], iu[1], overlap, keep, strict=True) if not k)
    if not keep.any():
        raise DataError(f"no pair of units shares {min_overlap} years in {label}; lower "
                        "min_overlap or use a longer panel.")
    return Correlations(rho[keep], overlap[keep], tuple(units), len(units), int(present.sum()),
                        bool(present.all()), demeaned, excluded_pairs, label, excluded)


def _detrend(wide: np.ndarray, trend: str) -> np.ndarray:
    if trend != "trend":
        return wide
    out = np.full_like(wide, np.nan)
    for j in range(wide.shape[1]):
        rows = ~np.isnan(wide[:, j])
        x = trend_columns(int(rows.sum()), "trend")
        beta, *_ = np.linalg.lstsq(x, wide[rows, j], rcond=None)
        out[rows, j] = wide[rows, j] - x @ beta
    return out


def _check(min_overlap: Any) -> int:
    return check_int("min_overlap", min_overlap, minimum=3)


def _details(c: Correlations, trend: str, min_overlap: int) -> dict[str, Any]:
    return {"trend": trend, "units": c.n_units, "pairs": int(c.rho.size),
            "min_overlap": min_overlap, "mean_overlap": float(c.overlap.mean()),
            "balanced": c.balanced, "mean_abs_correlation": float(np.mean(np.abs(c.rho))),
            "mean_correlation": float(np.mean(c.rho)),
            "demeaned_by_time": c.demeaned_by_time,
            "excluded_pairs": [{"unit_a": a, "unit_b": b, "overlap": o} for a, b, o in c.excluded_pairs],
            "excluded": excluded_records(c.excluded)}


def _warnings(c: Correlations) -> list[str]:
    warn = []
    if c.excluded_pairs:
        warn.append(f"{len(c.excluded_pairs)} pair(s) share too few years and are left out; see "
                    "details['excluded_pairs'].")
    if len(c.excluded):
        warn.append(f"{len(c.excluded)} item(s) left out of the panel; see details['excluded'].")
    return warn


def pesaran_cd_test(data: Panel | pd.Series | pd.DataFrame, column: str | None = None, *,
                    trend: str = "constant", min_overlap: int = MIN_OVERLAP,
                    random_signs: bool | None = None, seed: Seed = DEFAULT_SEED) -> TestResult:
    """Pesaran's CD test of cross-sectional dependence (unbalanced panels by pairwise overlap).

    Parameters
    ----------
    data : Panel or pandas.Series
        A panel (with ``column``) or residuals indexed by (unit, time).
    trend : {"constant", "trend"}
        "constant": correlations of the series as they are (each centred); "trend": of each
        unit's deviations from its own linear trend.
    min_overlap : int
        Fewest shared years for a pair to enter.
    random_signs : bool, optional
        Use the CD with random unit signs (Juodis & Reese 2022). ``None`` (default): only when
        the data are demeaned across units every year (after time effects).
    seed
        Seed of the random signs (recorded).

    Notes
    -----
    ``CD = sqrt(1/M) Σ_{i<j} sqrt(T_ij) ρ̂_ij`` over the M pairs used (``= sqrt(2T/(N(N-1)))
    Σ ρ̂_ij`` when balanced) → N(0,1). With random signs ``w_i ∈ {-1, 1}``:
    ``CD_W = sqrt(1/M) Σ sqrt(T_ij) w_i w_j ρ̂_ij``. H0: no cross-sectional correlation (weak
    dependence, Pesaran 2015); H1: cross-sectional correlation. Two-sided.

    References
    ----------
    pesaran2004; pesaran2015; juodisreese2022 (see the module docstring).
    """
    trend = check_trend(trend, ("constant", "trend"))
    min_overlap = _check(min_overlap)
    c = _as_wide(data, column, trend, min_overlap)
    use_signs = c.demeaned_by_time if random_signs is None else bool(random_signs)
    weights = np.ones(c.rho.size)
    if use_signs:
        seed = check_seed(seed)
        rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
        w = rng.choice([-1.0, 1.0], size=c.n_units)
        iu = np.triu_indices(c.n_units, k=1)
        dropped = {(a, b) for a, b, _ in c.excluded_pairs}
        ww = [w[i] * w[j] for i, j in zip(*iu, strict=True) if (c.units[i], c.units[j]) not in dropped]
        weights = np.array(ww)
    stat = float(np.sum(np.sqrt(c.overlap) * weights * c.rho) / math.sqrt(c.rho.size))
    details = _details(c, trend, min_overlap)
    details["random_signs"] = use_signs
    if use_signs:
        details["seed"] = seed if isinstance(seed, (int, np.integer)) else str(seed)
    warn = _warnings(c)
    if c.demeaned_by_time and not use_signs:
        warn.append("the data sum to zero across units every year (time effects): the plain CD "
                    "is biased towards -sqrt(T/2); use random_signs=True.")
    return TestResult(test="Pesaran CD" + (" (random signs)" if use_signs else ""),
                      statistic=stat, pvalue=float(2 * stats.norm.sf(abs(stat))),
                      critical_values={a: float(stats.norm.isf(a / 2)) for a in (0.01, 0.05, 0.10)},
                      null=NULL, alternative=ALT, nobs=c.nobs, details=details,
                      reference="pesaran2004; pesaran2015" + ("; juodisreese2022" if use_signs else ""),
                      warnings=tuple(warn))


def _time_effects_warning(c: Correlations) -> list[str]:
    return (["the data sum to zero across units every year (time effects); LM-type statistics "
             "are then biased (each correlation has mean near -1/(N-1))."]
            if c.demeaned_by_time else [])


def lm_test(data: Panel | pd.Series | pd.DataFrame, column: str | None = None, *,
            trend: str = "constant", min_overlap: int = MIN_OVERLAP) -> TestResult:
    """Breusch–Pagan LM test of cross-sectional correlation (for small N, large T).

    Notes
    -----
    ``LM = Σ_{i<j} T_ij ρ̂²_ij`` ~ χ²(M) under H0, M the number of pairs used (N(N-1)/2 when
    balanced). H0: no cross-sectional correlation; H1: some pairs correlated. Reject for large
    values. Oversized when N is large relative to T: use the scaled or bias-corrected versions.

    References
    ----------
    breuschpagan1980 (see the module docstring).
    """
    trend = check_trend(trend, ("constant", "trend"))
    c = _as_wide(data, column, trend, _check(min_overlap))
    stat = float(np.sum(c.overlap * c.rho ** 2))
    m = c.rho.size
    return TestResult(test="Breusch-Pagan LM", statistic=stat, pvalue=float(stats.chi2.sf(stat, m)),
                      critical_values={a: float(stats.chi2.isf(a, m)) for a in (0.01, 0.05, 0.10)},
                      null=NULL, alternative=ALT, nobs=c.nobs,
                      details={**_details(c, trend, min_overlap), "df": m},
                      reference="breuschpagan1980",
                      warnings=tuple(_warnings(c) + _time_effects_warning(c)))


def scaled_lm_test(data: Panel | pd.Series | pd.DataFrame, column: str | None = None, *,
                   trend: str = "constant", min_overlap: int = MIN_OVERLAP) -> TestResult:
    """Pesaran's scaled LM test: ``sqrt(1/(2M)) Σ_{i<j} (T_ij ρ̂²_ij - 1)`` → N(0,1).

    With all pairs, ``2M = N(N-1)``. H0: no cross-sectional correlation; H1: correlation.
    Reject for large values. Size distorted when N is large relative to T.

    References
    ----------
    pesaran2004 (see the module docstring).
    """
    trend = check_trend(trend, ("constant", "trend"))
    c = _as_wide(data, column, trend, _check(min_overlap))
    stat = float(np.sum(c.overlap * c.rho ** 2 - 1.0) / math.sqrt(2.0 * c.rho.size))
    return TestResult(test="Pesaran scaled LM", statistic=stat, pvalue=float(stats.norm.sf(stat)),
                      critical_values={a: float(stats.norm.isf(a)) for a in (0.01, 0.05, 0.10)},
                      null=NULL, alternative=ALT, nobs=c.nobs, details=_details(c, trend, min_overlap),
                      reference="pesaran2004",
                      warnings=tuple(_warnings(c) + _time_effects_warning(c)))


def bias_corrected_lm_test(data: Panel | pd.Series | pd.DataFrame, column: str | None = None, *,
                           trend: str = "constant", min_overlap: int = MIN_OVERLAP) -> TestResult:
    """Baltagi–Feng–Kao bias-corrected scaled LM test (balanced panels; fixed-effects residuals).

    Notes
    -----
    ``LM_BC = sqrt(1/(N(N-1))) Σ_{i<j} (T ρ̂²_ij - 1) - N / (2(T - 1))`` → N(0,1), derived for
    the residuals of a fixed-effects (within) regression. H0: no cross-sectional correlation;
    H1: correlation. Reject for large values. Not defined for unbalanced panels: the result is
    then inapplicable (NaN with the reason).

    References
    ----------
    bfk2012 (see the module docstring).
    """
    trend = check_trend(trend, ("constant", "trend"))
    c = _as_wide(data, column, trend, _check(min_overlap))
    if not c.balanced or c.excluded_pairs:
        return TestResult.inapplicable(
            "Baltagi-Feng-Kao bias-corrected LM",
            reason="the bias correction is derived for balanced panels; this panel is unbalanced "
                   "(use the scaled LM or CD test).", nobs=c.nobs, reference="bfk2012")
    nobs_t = int(c.overlap[0])
    n = c.n_units
    stat = float(np.sum(nobs_t * c.rho ** 2 - 1.0) / math.sqrt(n * (n - 1)) - n / (2.0 * (nobs_t - 1)))
    return TestResult(test="Baltagi-Feng-Kao bias-corrected LM", statistic=stat,
                      pvalue=float(stats.norm.sf(stat)),
                      critical_values={a: float(stats.norm.isf(a)) for a in (0.01, 0.05, 0.10)},
                      null=NULL, alternative=ALT, nobs=c.nobs,
                      details={**_details(c, trend, min_overlap), "periods": nobs_t},
                      reference="bfk2012", warnings=tuple(_warnings(c) + _time_effects_warning(c)))
