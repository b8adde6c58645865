"""Benchmark: batch trend growth with Newey–West s.e. against a statsmodels loop, same data.

Run: ``python tests/benchmarks/bench_trend_growth.py [N]``. Prints both timings and the ratio;
also checks that the numbers agree. Not part of the default test run.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import statsmodels.api as sm

from evidence._hac import newey_west_lags
from evidence.indicators import trend_growth_batch

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _timing import best_of


def main(n_series: int = 2000, n_years: int = 34) -> None:
    rng = np.random.default_rng(0)
    years = np.arange(1990, 1990 + n_years)
    y = 0.01 * (years - 1990)[:, None] + rng.normal(0, 0.02, (n_years, n_series)).cumsum(axis=0)
    lags = newey_west_lags(n_years)
    x = sm.add_constant(years.astype(float))

    def reference():
        return np.array([sm.OLS(y[:, i], x).fit(cov_type="HAC", cov_kwds={
            "maxlags": lags, "use_correction": True}).bse[1] for i in range(n_series)])

    def ours():
        return trend_growth_batch(y, years, hac_lags=lags)[1]

    np.testing.assert_allclose(ours(), reference(), rtol=1e-8)
    t_ref, t_ours = best_of(reference, 1), best_of(ours, 5)
    print(f"trend growth + Newey-West s.e., {n_series} series x {n_years} years")
    print(f"  statsmodels OLS loop : {t_ref * 1e3:9.1f} ms")
    print(f"  evidence batch       : {t_ours * 1e3:9.1f} ms")
    print(f"  ratio (reference / ours): {t_ref / t_ours:.0f}x")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 2000)


def robust(n_series: int = 2000, n_years: int = 30) -> None:
    """The calibrated Perron-Yabu pieces in one batch against a statsmodels loop (GLS branch)."""
    from evidence.trend import _stats

    rng = np.random.default_rng(1)
    y = rng.normal(0, 0.02, (n_years, n_series)).cumsum(axis=0)
    t = np.arange(n_years, dtype=float) - (n_years - 1) / 2.0

    def ours():
        return _stats.perron_yabu_parts(y)["t_gls"]

    alpha = _stats.perron_yabu_parts(y)["alpha"]

    def reference():
        out = []
        for i in range(n_series):
            a = alpha[i]
            ys = np.r_[y[0, i], y[1:, i] - a * y[:-1, i]]
            xs = np.column_stack([np.r_[1.0, np.full(n_years - 1, 1 - a)],
                                  np.r_[t[0], t[1:] - a * t[:-1]]])
            out.append(sm.OLS(ys, xs).fit().tvalues[1])
        return np.array(out)

    np.testing.assert_allclose(ours(), reference(), rtol=1e-8)
    t_ref, t_ours = best_of(reference, 1), best_of(ours, 3)
    print(f"quasi-GLS trend t (Perron-Yabu), {n_series} series x {n_years} years")
    print(f"  statsmodels OLS loop : {t_ref * 1e3:9.1f} ms")
    print(f"  evidence batch       : {t_ours * 1e3:9.1f} ms")
    print(f"  ratio (reference / ours): {t_ref / t_ours:.0f}x")


if __name__ == "__main__":
    robust()
