"""Benchmark: the vectorised unit-root and dependence statistics against reference loops.

Run: ``python tests/benchmarks/bench_roots.py``. For each statistic: the reference (arch, a
statsmodels OLS loop, pandas), ours, and the ratio; the numbers are checked to agree first. Not
part of the default test run.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd
import statsmodels.api as sm
from arch.unitroot import ADF

from evidence.roots._cips import cadf_tstats
from evidence.roots._lm_breaks import break_grid, lm_statistics
from evidence.roots._panel_math import adf_tstats
from evidence.roots.dependence import pesaran_cd_test

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _timing import best_of


def _report(name: str, ref_name: str, t_ref: float, t_ours: float) -> None:
    print(name)
    print(f"  {ref_name:<28}: {t_ref * 1e3:9.1f} ms")
    print(f"  {'evidence (vectorised)':<28}: {t_ours * 1e3:9.1f} ms")
    print(f"  ratio (reference / ours): {t_ref / t_ours:.1f}x")


def bench_adf(n: int = 2000, t: int = 34) -> None:
    y = np.cumsum(np.random.default_rng(0).standard_normal((t, n)), axis=0)
    ref = lambda: np.array([ADF(y[:, i], trend="c", lags=2).stat for i in range(n)])  # noqa: E731
    ours = lambda: adf_tstats(y, "constant", 2)  # noqa: E731
    np.testing.assert_allclose(ours(), ref(), rtol=1e-9)
    _report(f"ADF t-statistics, {n} series x {t} years, 2 lags", "arch ADF loop",
            best_of(ref, 1), best_of(ours))


def bench_adf_lag_search(n: int = 500, t: int = 30) -> None:
    """The engine of the simulated tables: ADF with AIC lags up to 2, vectorised, against arch."""
    from evidence.roots._unit_batch import adf_select

    y = np.cumsum(np.random.default_rng(4).standard_normal((t, n)), axis=0)
    ref = lambda: np.array([ADF(y[:, i], trend="c", max_lags=2, method="aic").stat  # noqa: E731
                            for i in range(n)])
    ours = lambda: adf_select(y, "constant", 2, "aic")[0]  # noqa: E731
    np.testing.assert_allclose(ours(), ref(), rtol=1e-9)
    _report(f"ADF with AIC lags (max 2), {n} series x {t} years", "arch ADF loop",
            best_of(ref, 1), best_of(ours))


def bench_cadf(n: int = 200, t: int = 34) -> None:
    y = np.cumsum(np.random.default_rng(1).standard_normal((t, n)), axis=0)
    ybar = y.mean(axis=1)

    def ref():
        out = []
        for i in range(n):
            rows = np.column_stack([y[1:-1, i], ybar[1:-1], np.diff(ybar)[1:], np.diff(ybar)[:-1],
                                    np.diff(y[:, i])[:-1], np.ones(t - 2)])
            out.append(sm.OLS(np.diff(y[:, i])[1:], rows).fit().tvalues[0])
        return np.array(out)

    ours = lambda: cadf_tstats(y, "constant", 1)  # noqa: E731
    np.testing.assert_allclose(ours(), ref(), rtol=1e-9)
    _report(f"CADF t-statistics, {n} units x {t} years, 1 lag", "statsmodels OLS loop",
            best_of(ref, 1), best_of(ours))


def bench_cd(n: int = 100, t: int = 34) -> None:
    u = np.random.default_rng(2).standard_normal((t, n))
    u[:5, : n // 3] = np.nan                       # unbalanced: a third of the units start late
    resid = pd.DataFrame(u, columns=[f"u{i:03d}" for i in range(n)]).stack().swaplevel().sort_index()

    def ref():                                     # a plain loop over pairs with numpy
        total, pairs = 0.0, 0
        for i in range(n):
            for j in range(i + 1, n):
                both = ~np.isnan(u[:, i]) & ~np.isnan(u[:, j])
                total += np.sqrt(both.sum()) * np.corrcoef(u[both, i], u[both, j])[0, 1]
                pairs += 1
        return total / np.sqrt(pairs)

    ours = lambda: pesaran_cd_test(resid, prewhiten=False).statistic  # noqa: E731
    np.testing.assert_allclose(ours(), ref(), rtol=1e-9)
    _report(f"Pesaran CD, {n} units x {t} years, unbalanced", "numpy loop over pairs",
            best_of(ref, 1), best_of(ours))


def bench_lee_strazicich(t: int = 60) -> None:
    y = np.cumsum(np.random.default_rng(3).standard_normal(t))
    dates = break_grid(t, 2, 0.1)

    def ref():
        out = []
        for d in dates:
            z = np.column_stack([np.ones(t), np.arange(1, t + 1)] +
                                [(np.arange(1, t + 1) > b).astype(float) for b in d])
            dz = np.diff(z, axis=0)[:, 1:]
            delta = sm.OLS(np.diff(y), dz).fit().params
            s = y - (y[0] - z[0, 1:] @ delta) - z[:, 1:] @ delta
            x = np.column_stack([dz[1:], s[1:-1], np.diff(s)[:-1]])
            keep = np.any(x != 0, axis=0)
            fit = sm.OLS(np.diff(y)[1:], x[:, keep]).fit()
            out.append(fit.tvalues[int(keep[:dz.shape[1]].sum())])
        return np.array(out)

    ours = lambda: lm_statistics(y, dates, "level", 1)[0]  # noqa: E731
    np.testing.assert_allclose(ours(), ref(), rtol=1e-8)
    _report(f"Lee-Strazicich grid, two breaks, T={t} ({len(dates)} date pairs, 1 lag)",
            "statsmodels OLS loop", best_of(ref, 1), best_of(ours))


if __name__ == "__main__":
    bench_adf()
    bench_adf_lag_search()
    bench_cadf()
    bench_cd()
    bench_lee_strazicich()
