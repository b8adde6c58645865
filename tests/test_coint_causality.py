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
    res = dumitrescu_hurlin_test(to_panel(y, x), "y", "x1", lags=2)
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
    res = dumitrescu_hurlin_test(to_panel(y, x), "y", "x1", lags=2)  # T = 11, not above 5 + 6
    assert math.isnan(res.details["z_bar_tilde"])
    assert res.statistic == res.details["z_bar"]
    assert "not above" in res.warnings[0]


def test_size_and_power_small():
    rng = np.random.default_rng(33)
    null_rej, alt_rej = [], []
    for _ in range(60):
        y, x = _var_panel(rng, 10, 40, causal=0.0)
        null_rej.append(dumitrescu_hurlin_test(to_panel(y, x), "y", "x1").pvalue < 0.05)
        y, x = _var_panel(rng, 10, 40, causal=0.3)
        alt_rej.append(dumitrescu_hurlin_test(to_panel(y, x), "y", "x1").pvalue < 0.05)
    assert np.mean(null_rej) <= 0.15  # nominal 5 %; 60 draws
    assert np.mean(alt_rej) >= 0.8


@pytest.mark.slow
def test_size_and_power_large():
    rng = np.random.default_rng(34)
    null_rej, alt_rej = [], []
    for _ in range(400):
        y, x = _var_panel(rng, 20, 40, causal=0.0)
        null_rej.append(dumitrescu_hurlin_test(to_panel(y, x), "y", "x1").pvalue < 0.05)
        y, x = _var_panel(rng, 20, 40, causal=0.25)
        alt_rej.append(dumitrescu_hurlin_test(to_panel(y, x), "y", "x1").pvalue < 0.05)
    # observed when written: size 0.0875 (the N(0,1) approximation of a mean of 20 skewed Wald
    # statistics over-rejects a little at N = 20, T = 40), power 0.94
    assert 0.025 <= np.mean(null_rej) <= 0.10
    assert np.mean(alt_rej) >= 0.85


def test_bootstrap_reproducible():
    rng = np.random.default_rng(35)
    y, x = _var_panel(rng, 8, 30, causal=0.0, common=1.5)
    panel = to_panel(y, x)
    a = dumitrescu_hurlin_test(panel, "y", "x1", inference="bootstrap", reps=29, seed=3)
    b = dumitrescu_hurlin_test(panel, "y", "x1", inference="bootstrap", reps=29, seed=3)
    assert a.pvalue == b.pvalue == a.details["bootstrap_pvalue"]
    assert a.details["seed"] == 3 and 0 < a.pvalue <= 1


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
    # Common shocks (loading 2) on y and on x: the asymptotic Z-bar tilde over-rejects (0.17 when
    # written); the period-resampling bootstrap holds the size (0.03 when written). 100 draws,
    # B = 49, N = 10, T = 30, nominal 5 %.
    rng = np.random.default_rng(8)
    asym, boot = [], []
    for r in range(100):
        y, x = _var_panel(rng, 10, 30, causal=0.0, common=2.0)
        res = dumitrescu_hurlin_test(to_panel(y, x), "y", "x1", inference="bootstrap", reps=49,
                                     seed=r)
        asym.append(res.details["z_bar_tilde_pvalue"] < 0.05)
        boot.append(res.pvalue < 0.05)
    assert np.mean(boot) <= 0.10
    assert np.mean(asym) > np.mean(boot)
