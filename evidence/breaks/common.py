"""Break years common to every unit of a panel (Bai 2010), with a pooled test.

``common_breaks`` sums the units' SSR tables and runs the same dynamic programme: the
least-squares break years common to all units, with a pooled supF test (its null is the supF
functional with N q changing coefficients, simulated) and intervals from the pooled break size.

References
----------
bai2010 : Bai, J. (2010). Common breaks in means and variances for panel data. Journal of
    Econometrics 157(1), 78–92.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from evidence._validation import check_alpha, check_int
from evidence.breaks import tests as bt
from evidence.breaks._input import check_model, check_trim
from evidence.breaks._simulate import null_draws
from evidence.breaks.dates import argmax_quantile
from evidence.breaks.find import information_criteria, regime_fit
from evidence.breaks.result import CONVENTION, CommonBreakResult
from evidence.breaks.segment import MODELS, min_length, optimal_partitions, regime_design, ssr_tables
from evidence.errors import DataError, SpecError
from evidence.panel import Panel
from evidence.results import TestResult, excluded_frame

__all__ = ["common_breaks"]


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
    for i in np.flatnonzero(~full).tolist():
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
    m_test = 1 if m == 0 else m
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
