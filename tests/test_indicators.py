"""Decoupling indicators against published definitions and statsmodels."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from numpy.testing import assert_allclose

import evidence as ev
from evidence import DataError, SpecError
from evidence._hac import newey_west_lags
from evidence.indicators import TAPIO_CLASSES, trend_growth, trend_growth_batch


# --------------------------------------------------------------------------- Tapio
@pytest.mark.parametrize(("activity", "pressure", "label"), [
    # Tapio (2005), Transport Policy 12(2), classification table (from memory, as reproduced in
    # shared/reference_values.md section 10); the worked numbers are computed there.
    (0.03, -0.02, "strong decoupling"),            # e = -0.667
    (0.03, 0.01, "weak decoupling"),               # e = 0.333
    (0.03, 0.03, "expansive coupling"),            # e = 1.0
    (0.03, 0.05, "expansive negative decoupling"),  # e = 1.667
    (-0.03, 0.01, "strong negative decoupling"),
    (-0.03, -0.01, "weak negative decoupling"),
    (-0.03, -0.03, "recessive coupling"),
    (-0.03, -0.05, "recessive decoupling"),
])
def test_tapio_classes(activity, pressure, label):
    assert ev.tapio_class(activity, pressure)[0] == label


def test_tapio_band_edges_and_undefined():
    # Tapio (2005) band edges 0.8 and 1.2 (from memory); we put both edges in the coupling band.
    assert ev.tapio_class(0.10, 0.08)[0] == "expansive coupling"
    assert ev.tapio_class(0.10, 0.12)[0] == "expansive coupling"
    assert ev.tapio_class(0.10, 0.0799)[0] == "weak decoupling"
    assert ev.tapio_class(0.10, 0.1201)[0] == "expansive negative decoupling"
    assert ev.tapio_class(0.0, 0.05)[0] == "undefined"
    assert ev.tapio_class(np.nan, 0.05)[0] == "undefined"
    assert len(set(TAPIO_CLASSES)) == 8


def test_tapio_vectorised():
    labels = ev.tapio_class([0.03, -0.03], [-0.02, -0.05])
    assert labels.tolist() == ["strong decoupling", "recessive decoupling"]


# ---------------------------------------------------------------------- OECD factor
def test_oecd_decoupling_factor():
    # OECD (2002) SG/SD(2002)1/FINAL: factor = 1 - (EP/DF)_end / (EP/DF)_start (formula from
    # memory, shared/reference_values.md section 10); EP 100->95, GDP 100->110 computed there.
    assert ev.decoupling_factor(100, 95, 100, 110) == pytest.approx(0.1363636, abs=1e-7)
    assert ev.decoupling_factor(100, 110, 100, 110) == pytest.approx(0.0, abs=1e-15)
    assert ev.decoupling_factor(100, 120, 100, 110) < 0


# ------------------------------------------------------------------- required rate
def test_required_rate_identity_rule_of_thumb():
    # common practice: at 3 % GDP growth, emissions -4.5 %/yr need intensity about -7.3 %/yr,
    # and -7.8 %/yr need about -10.5 %/yr.
    assert ev.required_rate(activity_growth=0.03, pressure_change=-0.045) == pytest.approx(0.073, abs=5e-4)
    assert ev.required_rate(activity_growth=0.03, pressure_change=-0.078) == pytest.approx(0.105, abs=5e-4)


def test_required_rate_exact_values():
    # shared/reference_values.md section 15 (computed there from the identity):
    # g=3 %, r=-7.6 % -> 10.291 %; g=3 %, r=0 -> 2.913 %; g=2 %, r=-5 % -> 6.863 %;
    # g=3 %, r=-10 % -> 12.621 %.
    got = ev.required_rate(np.array([0.03, 0.03, 0.02, 0.03]), np.array([-0.076, 0.0, -0.05, -0.10]))
    assert_allclose(got, [0.10291, 0.02913, 0.06863, 0.12621], atol=5e-6)
    g, r = 0.025, -0.061
    d = ev.required_rate(g, r)
    assert (1 + g) * (1 - d) == pytest.approx(1 + r, abs=1e-12)
    with pytest.raises(SpecError):
        ev.required_rate(-1.5, 0.0)


# --------------------------------------------------------------------- budget rate
def test_budget_rate_arithmetic():
    res = ev.budget_rate(current=10.0, budget=200.0, observed_rate=-0.02, base_year=2023)
    # E0 (1-r)/r = B  <=>  r = E0/(B+E0) (derivation in the docstring)
    assert res.required_rate == pytest.approx(10 / 210)
    total = sum(10.0 * (1 - res.required_rate) ** k for k in range(1, 5000))
    assert total == pytest.approx(200.0, rel=1e-9)
    # linear path to zero: area of the triangle E0 * n / 2 = B (common practice)
    assert res.years_to_zero_linear == pytest.approx(40.0)
    # brute-force oracle for the overshoot year
    cumulative, n = 0.0, 0
    while cumulative <= 200.0:
        n += 1
        cumulative += 10.0 * 0.98 ** n
    assert res.years_to_overshoot == n and res.overshoot_year == 2023 + n
    assert res.required_to_observed == pytest.approx(res.required_rate / 0.02)
    assert json.dumps(res.to_dict())
    assert "normative" in res.summary()


@pytest.mark.parametrize("observed", [0.0, 0.015, -0.001])
def test_budget_overshoot_brute_force(observed):
    res = ev.budget_rate(current=3.0, budget=100.0, observed_rate=observed)
    cumulative, n = 0.0, 0
    while cumulative <= 100.0:
        n += 1
        cumulative += 3.0 * (1 + observed) ** n
    assert res.years_to_overshoot == n


def test_budget_never_exhausted_when_decline_is_fast():
    res = ev.budget_rate(current=10.0, budget=200.0, observed_rate=-0.06)
    assert res.years_to_overshoot is None and res.overshoot_year is None
    with pytest.raises(SpecError, match="budget"):
        ev.budget_rate(current=10.0, budget=-1.0)


# ------------------------------------------------------------------- trend growth
@pytest.mark.parametrize("lags", [None, 0, 1, 5])
def test_trend_growth_matches_statsmodels_hac(lags):
    rng = np.random.default_rng(2024)
    years = np.arange(1990, 2024)
    y = 0.02 * (years - 1990) + np.cumsum(rng.normal(0, 0.02, years.size))
    slope, se, used = trend_growth(y, years, hac_lags=lags)
    # Reference library: statsmodels OLS with Newey-West HAC, small-sample correction n/(n-k).
    fit = sm.OLS(y, sm.add_constant(years.astype(float))).fit(
        cov_type="HAC", cov_kwds={"maxlags": used, "use_correction": True}, use_t=True)
    assert_allclose(slope, fit.params[1], rtol=1e-10)
    assert_allclose(se, fit.bse[1], rtol=1e-8)


def _naive_hac_slope(y, years, lags):
    """Plain-loop oracle: OLS by normal equations, Bartlett-weighted score autocovariances."""
    n = len(y)
    X = [[1.0, float(t)] for t in years]
    xtx = np.zeros((2, 2))
    xty = np.zeros(2)
    for row, value in zip(X, y, strict=True):
        for i in range(2):
            xty[i] += row[i] * value
            for j in range(2):
                xtx[i, j] += row[i] * row[j]
    inv = np.linalg.inv(xtx)
    beta = inv @ xty
    scores = [np.array(row) * (value - (beta[0] + beta[1] * row[1])) for row, value in zip(X, y, strict=True)]
    s = np.zeros((2, 2))
    for lag in range(0, lags + 1):
        weight = 1.0 if lag == 0 else 1.0 - lag / (lags + 1.0)
        for t in range(lag, n):
            term = np.outer(scores[t], scores[t - lag])
            s += weight * (term if lag == 0 else term + term.T)
    cov = inv @ s @ inv * n / (n - 2)
    return beta[1], np.sqrt(cov[1, 1])


def test_batch_trend_growth_matches_loop_oracle():
    rng = np.random.default_rng(99)
    years = np.arange(2001, 2021)
    y = rng.normal(size=(years.size, 6)).cumsum(axis=0) * 0.03 + 0.01 * (years - 2001)[:, None]
    slopes, ses, _lags = trend_growth_batch(y, years, hac_lags=2)
    for i in range(y.shape[1]):
        slope, se = _naive_hac_slope(y[:, i], years, 2)
        assert_allclose([slopes[i], ses[i]], [slope, se], rtol=1e-8)


def test_newey_west_rule():
    # Newey & West (1994) rule floor(4 (T/100)^(2/9)): T=34 -> 3, T=100 -> 4 (computed by hand).
    assert newey_west_lags(34) == 3
    assert newey_west_lags(100) == 4


# --------------------------------------------------------------------------- rates
def test_rates_table_against_direct_computation(long_frame):
    panel = ev.load_panel(long_frame)
    res = ev.rates(panel, "co2", "gdp", window=(1995, 2020))
    table = res.to_frame()
    assert list(table.index) == ["Alda", "Brenn", "Corvo"]
    sub = long_frame[(long_frame.region == "Brenn") & long_frame.year.between(1995, 2020)]
    years = sub.year.to_numpy()
    fit = sm.OLS(np.log(sub.co2.to_numpy()), sm.add_constant(years.astype(float))).fit(
        cov_type="HAC", cov_kwds={"maxlags": newey_west_lags(years.size), "use_correction": True},
        use_t=True)
    row = table.loc["Brenn"]
    assert_allclose(row.pressure_trend, fit.params[1], rtol=1e-10)
    assert_allclose(row.pressure_trend_se, fit.bse[1], rtol=1e-8)
    assert_allclose(row.pressure_trend_pvalue, fit.pvalues[1], rtol=1e-6)
    p0, p1 = sub.co2.iloc[0], sub.co2.iloc[-1]
    a0, a1 = sub.gdp.iloc[0], sub.gdp.iloc[-1]
    assert_allclose(row.pressure_cagr, (p1 / p0) ** (1 / 25) - 1)
    assert_allclose(row.tapio_elasticity, (p1 / p0 - 1) / (a1 / a0 - 1))
    assert_allclose(row.decoupling_factor, 1 - (p1 / a1) / (p0 / a0))
    assert row.start == 1995 and row.end == 2020 and row.years == 26
    assert table.loc["Alda", "tapio_class"] == "strong decoupling"
    assert table.loc["Brenn", "tapio_class"] == "weak decoupling"
    assert res.warnings and "short window" in res.warnings[0]
    assert json.dumps(res.to_dict(), allow_nan=False)


def test_rates_excludes_incomplete_units_and_says_so(long_frame):
    frame = long_frame.copy()
    frame.loc[(frame.region == "Corvo") & (frame.year == 2001), "co2"] = np.nan
    res = ev.rates(ev.load_panel(frame), "co2", "gdp", window=(1990, 2023))
    assert list(res.table.index) == ["Alda", "Brenn"]
    assert res.excluded.iloc[0].unit == "Corvo" and "2001" in res.excluded.iloc[0].reason
    assert len(res.audit) == 1
    assert "Corvo" in res.summary()


def test_rates_default_window_is_common_span(long_frame):
    frame = long_frame.copy()
    frame.loc[frame.year < 1995, "co2"] = np.nan
    res = ev.rates(ev.load_panel(frame), "co2", "gdp")
    assert res.window == (1995, 2023)


def test_rates_errors(long_frame):
    panel = ev.load_panel(long_frame)
    with pytest.raises(DataError, match="Did you mean 'co2'"):
        ev.rates(panel, "c02", "gdp")
    with pytest.raises(SpecError, match="hac_lags"):
        ev.rates(panel, "co2", "gdp", hac_lags=-1)
    frame = long_frame.copy()
    frame.loc[0, "co2"] = -1.0
    with pytest.raises(DataError, match="not positive at unit 'Alda', year 1990"):
        ev.rates(ev.load_panel(frame), "co2", "gdp")
    with pytest.raises(SpecError, match="window"):
        ev.rates(panel, "co2", "gdp", window="2000-2001-2002")
    with pytest.raises(SpecError, match="at least 3"):
        ev.rates(panel, "co2", "gdp", window=(2000, 2001))


def test_trend_pvalue_is_nan_free_for_exact_trends():
    years = np.arange(2000, 2011)
    frame = pd.DataFrame({"unit": "A", "year": years, "p": np.exp(0.01 * (years - 2000)),
                          "a": np.exp(0.02 * (years - 2000))})
    res = ev.rates(ev.load_panel(frame), "p", "a")
    row = res.table.iloc[0]
    assert row.pressure_trend == pytest.approx(0.01)
    assert row.trend_elasticity == pytest.approx(0.5)
    assert not math.isinf(row.pressure_trend_se)


def test_results_follow_the_result_protocol(long_frame):
    res = ev.rates(ev.load_panel(long_frame), "co2", "gdp")
    assert repr(res).startswith("RatesResult(") and "\n" not in repr(res)
    assert str(res) == res.summary()
    assert list(res.excluded.columns) == ["unit", "column", "years", "reason"]
    with pytest.raises(TypeError):
        res.details["years"] = 1  # frozen details
    budget = ev.budget_rate(current=10.0, budget=100.0)
    assert repr(budget).startswith("BudgetResult(") and json.dumps(budget.to_dict())
