"""Benchmark: batched cointegration math against statsmodels loops on the same data.

Run: ``python tests/benchmarks/bench_coint.py [N]``. Times the Dumitrescu–Hurlin unit Wald
statistics (ours: one batched QR for all units; reference: statsmodels OLS ``f_test`` per unit) and
the Engle–Granger-type first stage of Pedroni's test (ours: batched; reference: statsmodels OLS
per unit), and the bootstrap of Pedroni's seven statistics (ours: every bootstrap panel in one
batched pass; reference: the same functions called panel by panel, as a loop over replications
would). Prints the timings, the ratios, and checks the numbers agree. Not in the default run.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import statsmodels.api as sm

from evidence.cointegration._residual_math import pedroni_statistics, static_residuals
from evidence.cointegration._sieve import fit_sieve, sieve_draws
from evidence.cointegration.causality import unit_wald

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _timing import best_of


def main(n_units: int = 500, n_years: int = 40) -> None:
    rng = np.random.default_rng(0)
    y = rng.standard_normal((n_units, n_years))
    x = rng.standard_normal((n_units, n_years))
    lags = 2

    def wald_reference():
        out = []
        for i in range(n_units):
            z = np.column_stack([np.ones(n_years - 2), y[i, 1:-1], y[i, :-2], x[i, 1:-1], x[i, :-2]])
            out.append(2 * float(sm.OLS(y[i, 2:], z).fit().f_test(np.eye(5)[3:]).fvalue))
        return np.array(out)

    assert np.allclose(unit_wald(y, x, lags), wald_reference(), rtol=1e-8)
    ours, ref = best_of(lambda: unit_wald(y, x, lags)), best_of(wald_reference)
    print(f"Dumitrescu-Hurlin unit Wald, N={n_units}, T={n_years}: ours {ours * 1e3:.1f} ms, "
          f"statsmodels loop {ref * 1e3:.1f} ms, ratio {ref / ours:.1f}x")

    yl, xl = np.cumsum(y, axis=1), np.cumsum(x, axis=1)[:, :, None]

    def resid_reference():
        return np.array([sm.OLS(yl[i], sm.add_constant(xl[i])).fit().resid for i in range(n_units)])

    assert np.allclose(static_residuals(yl, xl, "constant")[0], resid_reference(), atol=1e-8)
    ours, ref = best_of(lambda: static_residuals(yl, xl, "constant")), best_of(resid_reference)
    print(f"Pedroni first-stage residuals, N={n_units}, T={n_years}: ours {ours * 1e3:.1f} ms, "
          f"statsmodels loop {ref * 1e3:.1f} ms, ratio {ref / ours:.1f}x")

    # the default bootstrap at the field's size: N = 20, T = 30, 199 replications
    yb, xb = yl[:20, :30], xl[:20, :30]
    model = fit_sieve(yb, xb, max_lags=2)
    ys, xs = sieve_draws(model, np.random.default_rng(1), 199)
    opts = {"trend": "constant", "lags": "aic", "max_lags": 2, "hac_lags": 3}

    def batched():
        return pedroni_statistics(ys, xs, **opts)[0]["group ADF"]

    def loop():
        return np.array([pedroni_statistics(ys[r:r + 1], xs[r:r + 1], **opts)[0]["group ADF"][0]
                         for r in range(199)])

    assert np.allclose(batched(), loop(), rtol=1e-10)
    ours, ref = best_of(batched), best_of(loop)
    print(f"Pedroni bootstrap, 199 panels of N=20, T=30: batched {ours * 1e3:.0f} ms, "
          f"panel-by-panel loop {ref * 1e3:.0f} ms, ratio {ref / ours:.1f}x")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 500)
