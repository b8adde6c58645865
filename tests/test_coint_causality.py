"""Dumitrescu–Hurlin: unit Wald statistics equal statsmodels OLS Wald tests, Z-bar and Z-bar tilde
follow the published formulas, size and power on a simulated heterogeneous VAR panel, bootstrap."""

from __future__ import annotations

import math

import numpy as np
import pytest
import statsmodels.api as sm
from numpy.testing import assert_allclose
from test_coint_sim import to_panel

from evidence.cointegration.causality import dumitrescu_hurlin_test
from evidence.errors import DataError, SpecError


def _var_panel(rng, n_units, n_years, *, causal: float, common: float = 0.0):
    """Heterogeneous stationary VAR(1): y_t = a_i y_t-1 + b_i x_t-1 + e; x_t = c_i x_t-1 + v.

    ``common`` loads one common shock on every y and another on every x (cross-section dependence).
    """
    a = rng.uniform(0.0, 0.6, n_units)
    b = causal * rng.uniform(0.5, 1.0, n_units)
    c = rng.uniform(0.0, 0.6, n_units)
    y = np.zeros((n_units, n_years + 20))
    x = np.zeros_like(y)
    f = rng.standard_normal(n_years + 20)
    g = rng.standard_normal(n_years + 20)
    for t in range(1, n_years + 20):
        x[:, t] = c * x[:, t - 1] + rng.standard_normal(n_units) + common * g[t]
        y[:, t] = a * y[:, t - 1] + b * x[:, t - 1] + rng.standard_normal(n_units) + common * f[t]
    return y[:, 20:], x[:, 20:]


def test_unit_wald_and_z_formulas_equal_statsmodels():
    rng = np.random.default_rng(31)
    y, x = _var_panel(rng, 6, 30, causal=0.3)
    res = dumitrescu_hurlin_test(to_panel(y, x), "y", "x1", lags=2, inference="asymptotic")
    walds = []
    for i in range(6):
        z = np.column_stack([np.ones(28), y[i, 1:29], y[i, 0:28], x[i, 1:29], x[i, 0:28]])
        fit = sm.OLS(y[i, 2:], z).fit()  # reference: statsmodels OLS Wald (F x K)
        walds.append(2 * float(fit.f_test(np.eye(5)[3:]).fvalue))
    w = list(res.details["unit_wald"].values())
    assert_allclose(w, walds, rtol=1e-8)
    w_bar, n, k, t = np.mean(walds), 6, 2, 30  # T = periods; regressions use T - K
    # Dumitrescu & Hurlin (2012), eqs. for Z-bar and Z-bar tilde (as in the docstring)
    assert_allclose(res.details["z_bar"], math.sqrt(n / (2 * k)) * (w_bar - k), rtol=1e-10)
    z_tilde = (math.sqrt(n / (2 * k) * (t - 3 * k - 5) / (t - 2 * k - 3))
               * ((t - 3 * k - 3) / (t - 3 * k - 1) * w_bar - k))
    assert_allclose(res.statistic, z_tilde, rtol=1e-10)


def test_small_t_falls_back_to_z_bar():
    rng = np.random.default_rng(32)
    y, x = _var_panel(rng, 5, 11, causal=0.0)
    res = dumitrescu_hurlin_test(to_panel(y, x), "y", "x1", lags=2, reps=19)  # T = 11 <= 5 + 6
    assert math.isnan(res.details["z_bar_tilde"])
    assert res.statistic == res.details["z_bar"]
    assert "not above" in res.warnings[0]


def test_size_and_power_small():
    # Fast subset of the size card (docs/methods/size.md): N = 10, T = 30, 40 draws, B = 49,
    # nominal 5 %. Only gross failures are caught here (the asymptotic Z-bar tilde rejects about
    # 18 % on such panels); the slow test below and the card measure the size properly.
    rng = np.random.default_rng(33)
    null_rej, alt_rej = [], []
    for r in range(40):
        y, x = _var_panel(rng, 10, 30, causal=0.0)
        null_rej.append(dumitrescu_hurlin_test(to_panel(y, x), "y", "x1", reps=49, seed=r).pvalue
                        <= 0.05)
        y, x = _var_panel(rng, 10, 30, causal=0.5)
        alt_rej.append(dumitrescu_hurlin_test(to_panel(y, x), "y", "x1", reps=49, seed=r).pvalue
                       <= 0.05)
    assert np.mean(null_rej) <= 0.15
    assert np.mean(alt_rej) >= 0.8


@pytest.mark.slow
def test_default_size_band_and_power():
    # The default (bootstrap) at N = 20, T = 30 on persistent series without causality
    # (evidence._montecarlo "granger", rho = 0.7): 300 draws, B = 99, nominal 5 %. The band
    # [2.5 %, 8.5 %] is the size card's [3 %, 7.5 %] widened by about one Monte Carlo s.e.
    # (1.3 points); the card itself uses 500 draws and B = 199.
    from evidence._montecarlo import simulate
    from evidence.parallel import task_seeds
    null, alt, asym = [], [], []
    for i, task in enumerate(task_seeds(34, 300)):
        panel = simulate("granger", 20, 30, rng=np.random.default_rng(task), rho=0.7)
        res = dumitrescu_hurlin_test(panel, "y", "x", reps=99, seed=i)
        null.append(res.pvalue <= 0.05)
        asym.append(res.details["z_bar_tilde_pvalue"] < 0.05)
    for i, task in enumerate(task_seeds(35, 100)):
        panel = simulate("granger", 20, 30, rng=np.random.default_rng(task), rho=0.7, effect=0.3)
        alt.append(dumitrescu_hurlin_test(panel, "y", "x", reps=99, seed=i).pvalue <= 0.05)
    assert 0.025 <= np.mean(null) <= 0.085, np.mean(null)
    assert np.mean(asym) > 0.12            # the asymptotic p-value the default replaces
    assert np.mean(alt) >= 0.8


def test_bootstrap_reproducible():
    rng = np.random.default_rng(35)
    y, x = _var_panel(rng, 8, 30, causal=0.0, common=1.5)
    panel = to_panel(y, x)
    a = dumitrescu_hurlin_test(panel, "y", "x1", reps=29, seed=3)
    b = dumitrescu_hurlin_test(panel, "y", "x1", reps=29, seed=3)
    assert a.pvalue == b.pvalue == a.details["bootstrap_pvalue"]
    assert a.details["seed"] == 3 and 0 < a.pvalue <= 1 and a.details["inference"] == "bootstrap"
    asym = dumitrescu_hurlin_test(panel, "y", "x1", inference="asymptotic")
    assert asym.pvalue == asym.details["z_bar_tilde_pvalue"] and asym.statistic == a.statistic
    assert a.critical_values[0.01] > a.critical_values[0.05] > a.critical_values[0.10]


def test_bad_input():
    rng = np.random.default_rng(36)
    y, x = _var_panel(rng, 4, 8, causal=0.0)
    panel = to_panel(y, x)
    with pytest.raises(DataError, match="needs at least"):
        dumitrescu_hurlin_test(panel, "y", "x1", lags=3)
    with pytest.raises(SpecError, match="lags=0"):
        dumitrescu_hurlin_test(panel, "y", "x1", lags=0)
    with pytest.raises(SpecError, match="one column"):
        dumitrescu_hurlin_test(panel, "y", ["x1", "x1"])


@pytest.mark.slow
def test_bootstrap_size_under_cross_section_dependence():
    # Common shocks (loading 2) on y and on x, N = 10, T = 30, 150 draws, B = 49, nominal 5 %:
    # the asymptotic Z-bar tilde over-rejects; the bootstrap keeps the common shocks and holds.
    rng = np.random.default_rng(8)
    asym, boot = [], []
    for r in range(150):
        y, x = _var_panel(rng, 10, 30, causal=0.0, common=2.0)
        res = dumitrescu_hurlin_test(to_panel(y, x), "y", "x1", reps=49, seed=r)
        asym.append(res.details["z_bar_tilde_pvalue"] < 0.05)
        boot.append(res.pvalue <= 0.05)
    assert 0.01 <= np.mean(boot) <= 0.10, np.mean(boot)
    assert np.mean(asym) > np.mean(boot)
