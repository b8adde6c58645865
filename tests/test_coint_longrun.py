"""Long-run estimators: MG equals the mean of statsmodels UECM unit estimates, PMG maximises its
likelihood (scipy optimiser as oracle), group means equal arch per unit, pooled DOLS/FMOLS equal a
plain loop, every estimator recovers the planted slope, bad input raises."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from arch.unitroot.cointegration import DynamicOLS, FullyModifiedOLS
from numpy.testing import assert_allclose
from scipy import optimize
from statsmodels.tsa.ardl import UECM
from test_coint_sim import simulate, to_panel

from evidence.cointegration import _ardl
from evidence.cointegration.longrun import hausman_test, long_run
from evidence.errors import DataError, SpecError


@pytest.fixture(scope="module")
def coint_panel():
    y, x = simulate(np.random.default_rng(21), 10, 50, coint=True, k=2, beta=[0.8, -0.5])
    return y, x, to_panel(y, x)


def test_mg_equals_mean_of_statsmodels_uecm(coint_panel):
    y, x, panel = coint_panel
    est = long_run(panel, "y", ["x1", "x2"], estimator="mg", lags=2)
    thetas, phis = [], []
    for i in range(10):
        exog = pd.DataFrame(x[i], columns=["x1", "x2"])
        res = UECM(pd.Series(y[i], name="y"), 2, exog, 2, trend="c").fit()  # reference: statsmodels
        phis.append(res.params["y.L1"])
        thetas.append(-res.params[["x1.L1", "x2.L1"]].to_numpy() / res.params["y.L1"])
        if i == 0:
            assert_allclose(est.details["unit_long_run"]["u00"]["x1"], thetas[0][0], rtol=1e-9)
    assert_allclose(est.params[["x1", "x2"]].to_numpy(), np.mean(thetas, axis=0), rtol=1e-9)
    assert_allclose(est.params["error-correction speed"], np.mean(phis), rtol=1e-9)
    sd = np.std(np.array(thetas)[:, 0], ddof=1) / np.sqrt(10)  # Pesaran & Smith (1995) MG s.e.
    assert_allclose(est.std_errors["x1"], sd, rtol=1e-9)


def test_pmg_maximises_concentrated_likelihood(coint_panel):
    y, x, panel = coint_panel
    est = long_run(panel, "y", ["x1", "x2"], estimator="pmg", lags=1)
    arr = _ardl.ecm_arrays(y, x, 1, 1)
    oracle = optimize.minimize(lambda th: -_ardl.concentrated_loglik(arr, th), x0=np.zeros(2),
                               method="Nelder-Mead", options={"xatol": 1e-10, "fatol": 1e-12,
                                                              "maxiter": 20000})
    assert_allclose(est.params[["x1", "x2"]].to_numpy(), oracle.x, atol=1e-5)
    assert est.details["converged"]
    assert 0 <= est.details["hausman_pvalue"] <= 1
    json.dumps(est.to_dict())


def test_hausman_formula(coint_panel):
    _, _, panel = coint_panel
    mg = long_run(panel, "y", ["x1", "x2"], estimator="mg")
    pmg = long_run(panel, "y", ["x1", "x2"], estimator="pmg")
    res = hausman_test(pmg, mg)
    d = mg.params[["x1", "x2"]] - pmg.params[["x1", "x2"]]
    v = mg.cov.loc[["x1", "x2"], ["x1", "x2"]] - pmg.cov.loc[["x1", "x2"], ["x1", "x2"]]
    assert_allclose(res.statistic, d @ np.linalg.pinv(v.to_numpy()) @ d, rtol=1e-10)
    assert_allclose(res.statistic, pmg.details["hausman_statistic"], rtol=1e-10)


@pytest.mark.parametrize("estimator", ["dols", "fmols"])
def test_group_mean_equals_arch_per_unit(coint_panel, estimator):
    y, x, panel = coint_panel
    est = long_run(panel, "y", ["x1", "x2"], estimator=estimator, pooled=False, lags=1, leads=1)
    slopes = []
    for i in range(10):
        exog = pd.DataFrame(x[i], columns=["x1", "x2"])
        if estimator == "dols":  # reference: arch DynamicOLS / FullyModifiedOLS
            res = DynamicOLS(pd.Series(y[i]), exog, trend="c", lags=1, leads=1).fit(cov_type="kernel")
        else:
            res = FullyModifiedOLS(pd.Series(y[i]), exog, trend="c").fit()
        slopes.append(res.params[["x1", "x2"]].to_numpy())
    assert_allclose(est.params.to_numpy(), np.mean(slopes, axis=0), rtol=1e-10)


def test_pooled_dols_equals_loop(coint_panel):
    y, x, panel = coint_panel
    est = long_run(panel, "y", ["x1", "x2"], estimator="dols", lags=1, leads=1)
    # plain loop: one big statsmodels OLS with unit intercepts and unit-specific Δx leads/lags
    blocks, target = [], []
    n_units, n_years = y.shape
    for i in range(n_units):
        dx = np.diff(x[i], axis=0)
        rows = range(2, n_years - 1)
        w = [[1.0] + [dx[t - 1 + s, m] for m in range(2) for s in (1, 0, -1)] for t in rows]
        blocks.append((np.array([x[i, t] for t in rows]), np.array(w)))
        target.extend(y[i, t] for t in rows)
    n_rows = len(rows)
    big = np.zeros((n_units * n_rows, 2 + n_units * 7))
    for i, (xs, w) in enumerate(blocks):
        big[i * n_rows:(i + 1) * n_rows, :2] = xs
        big[i * n_rows:(i + 1) * n_rows, 2 + i * 7:2 + (i + 1) * 7] = w
    ref = sm.OLS(np.array(target), big).fit()
    assert_allclose(est.params.to_numpy(), ref.params[:2], rtol=1e-9)


@pytest.mark.parametrize(("estimator", "pooled"), [("dols", True), ("dols", False), ("fmols", True),
                                                   ("fmols", False), ("mg", True), ("pmg", True)])
def test_recovers_planted_slope(estimator, pooled):
    # planted long-run slope 0.7, endogenous regressor, N = 20, T = 60
    y, x = simulate(np.random.default_rng(22), 20, 60, coint=True, beta=0.7, rho=0.3,
                    endogenous=0.5)
    est = long_run(to_panel(y, x), "y", "x1", estimator=estimator, pooled=pooled, lags=1)
    assert abs(est.params["x1"] - 0.7) < 0.05
    lo, hi = est.conf_int(0.001).loc["x1"]
    assert lo < 0.7 < hi


def test_bad_input():
    y, x = simulate(np.random.default_rng(23), 4, 12, coint=True)
    panel = to_panel(y, x)
    with pytest.raises(DataError, match="needs at least"):
        long_run(panel, "y", "x1", estimator="dols", lags=3, leads=3)
    frame = panel.frame.reset_index()
    frame.loc[frame["unit"] == "u03", "x1"] = 1.0
    from evidence.panel import load_panel
    with pytest.raises(DataError, match=r"column 'x1' is constant .* for unit 'u03'"):
        long_run(load_panel(frame, unit="unit", time="year"), "y", "x1", estimator="pmg")
    with pytest.raises(SpecError, match="estimator='gmm'"):
        long_run(panel, "y", "x1", estimator="gmm")
    with pytest.raises(SpecError, match="intercepts only"):
        long_run(panel, "y", "x1", estimator="pmg", trend="trend")
    with pytest.raises(SpecError, match="lags=0"):
        long_run(panel, "y", "x1", estimator="mg", lags=0)


ARCH = {"none": "n", "constant": "c", "trend": "ct"}


@pytest.mark.parametrize("trend", ["none", "constant", "trend"])
def test_one_unit_pooled_fmols_equals_arch(trend):
    # With one unit the pooled FMOLS formula is Phillips-Hansen FMOLS: arch FullyModifiedOLS,
    # same Bartlett bandwidth, coefficients and standard errors equal.
    y, x = simulate(np.random.default_rng(24), 1, 70, coint=True, k=2, beta=[0.8, -0.3],
                    endogenous=0.5)
    est = long_run(to_panel(y, x), "y", ["x1", "x2"], estimator="fmols", trend=trend, hac_lags=3)
    ref = FullyModifiedOLS(pd.Series(y[0]), pd.DataFrame(x[0], columns=["x1", "x2"]),
                           trend=ARCH[trend]).fit(bandwidth=3)  # reference: arch
    assert_allclose(est.params.to_numpy(), ref.params[["x1", "x2"]].to_numpy(), rtol=1e-10)
    assert_allclose(est.std_errors.to_numpy(), ref.std_errors[["x1", "x2"]].to_numpy(), rtol=1e-10)


@pytest.mark.parametrize("trend", ["constant", "trend"])
def test_one_unit_pooled_dols_equals_arch(trend):
    # With one unit pooled DOLS is DOLS: arch DynamicOLS with the same lags and leads. (Standard
    # errors differ by design: ours scale (x'x)^-1 by the residual long-run variance.)
    y, x = simulate(np.random.default_rng(25), 1, 70, coint=True, k=2, beta=[0.8, -0.3])
    est = long_run(to_panel(y, x), "y", ["x1", "x2"], estimator="dols", lags=2, leads=1,
                   trend=trend)
    ref = DynamicOLS(pd.Series(y[0]), pd.DataFrame(x[0], columns=["x1", "x2"]), trend=ARCH[trend],
                     lags=2, leads=1).fit()  # reference: arch
    assert_allclose(est.params.to_numpy(), ref.params[["x1", "x2"]].to_numpy(), rtol=1e-10)
