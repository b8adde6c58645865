"""Single-series cointegration: the wrappers equal arch and statsmodels called directly, the ARDL
bounds test reproduces the statsmodels Danish money-demand example, bad input raises clearly."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from arch.unitroot.cointegration import (
    CanonicalCointegratingReg,
    DynamicOLS,
    FullyModifiedOLS,
    engle_granger,
    phillips_ouliaris,
)
from numpy.testing import assert_allclose
from statsmodels.datasets import danish_data
from statsmodels.tsa.ardl import UECM
from statsmodels.tsa.vector_ar.vecm import coint_johansen

from evidence.cointegration.series import (
    ardl_bounds_test,
    cointegrating_regression,
    engle_granger_test,
    johansen_test,
    phillips_ouliaris_test,
)
from evidence.errors import DataError, SpecError


def _pair(n: int = 80, seed: int = 3, k: int = 1) -> tuple[pd.Series, pd.DataFrame]:
    rng = np.random.default_rng(seed)
    x = np.cumsum(rng.normal(size=(n, k)), axis=0)
    y = 0.5 + x @ np.linspace(0.8, 1.2, k) + rng.normal(size=n)
    years = range(1940, 1940 + n)
    return (pd.Series(y, index=years, name="y"),
            pd.DataFrame(x, index=years, columns=[f"x{i + 1}" for i in range(k)]))


# --------------------------------------------------------- wrappers equal the libraries
ARCH = {"none": "n", "constant": "c", "trend": "ct"}


@pytest.mark.parametrize("trend", ["none", "constant", "trend"])
@pytest.mark.parametrize("lags", ["aic", "bic", "sequential-t", 2])
def test_engle_granger_equals_arch(trend, lags):
    y, x = _pair(k=2)
    res = engle_granger_test(y, x, trend=trend, lags=lags)
    method = {"sequential-t": "t-stat"}.get(lags, lags)
    kw = {"method": method} if isinstance(lags, str) else {"lags": lags}
    ref = engle_granger(y, x, trend=ARCH[trend], **kw)  # reference: arch engle_granger
    assert_allclose(res.statistic, ref.stat, rtol=1e-12)
    assert_allclose(res.pvalue, ref.pvalue, rtol=1e-12)
    assert_allclose(res.critical_values[0.05], ref.critical_values[5], rtol=1e-12)
    assert res.details["lags"] == ref.lags


@pytest.mark.parametrize("variant", ["Zt", "Za", "Pu", "Pz"])
def test_phillips_ouliaris_equals_arch(variant):
    y, x = _pair()
    res = phillips_ouliaris_test(y, x, trend="constant", variant=variant)
    ref = phillips_ouliaris(y, x, trend="c", test_type=variant)  # reference: arch
    assert_allclose([res.statistic, res.pvalue], [ref.stat, ref.pvalue], rtol=1e-12)


@pytest.mark.parametrize(("trend", "det"), [("none", -1), ("constant", 0), ("trend", 1)])
def test_johansen_equals_statsmodels(trend, det):
    y, x = _pair(k=2)
    res = johansen_test(y, x, trend=trend, lags=2)
    ref = coint_johansen(np.column_stack([y, x]), det, 2)  # reference: statsmodels coint_johansen
    assert len(res) == 6
    assert_allclose([r.statistic for r in res.results[:3]], ref.lr1, rtol=1e-12)
    assert_allclose([r.statistic for r in res.results[3:]], ref.lr2, rtol=1e-12)
    assert_allclose(res.results[0].critical_values[0.05], ref.cvt[0, 1])
    assert math.isnan(res.results[0].pvalue)
    assert res["max-eigenvalue 0"].statistic == res.results[3].statistic


def test_ardl_bounds_danish_example():
    # statsmodels documentation example (reference_values.md section 8, library-computed):
    # UECM(lrm, 3, data[["lry","ibo","ide"]], 3, trend="c").fit().bounds_test(case=3)
    # -> F = 5.99305, p(upper) = 0.00205, p(lower) = 0.000138.
    data = danish_data.load_pandas().data
    res = ardl_bounds_test(data["lrm"], data[["lry", "ibo", "ide"]], trend="constant", lags=3,
                           case=3)
    assert_allclose(res.statistic, 5.99305, atol=1e-5)
    assert_allclose(res.pvalue, 0.00205, atol=1e-5)
    assert_allclose(res.details["lower_pvalue"], 0.000138, atol=1e-6)


def test_ardl_bounds_equals_statsmodels():
    y, x = _pair(k=2, n=70)
    res = ardl_bounds_test(y, x, trend="constant", lags=2)
    ref = UECM(y.reset_index(drop=True), 2, x.reset_index(drop=True), 2, trend="c").fit() \
        .bounds_test(3)  # reference: statsmodels UECM.bounds_test
    assert_allclose(res.statistic, ref.statistic, rtol=1e-12)
    assert_allclose(res.critical_values[0.05], ref.critical_values.loc[95.0, "upper"], rtol=1e-12)
    sel = ardl_bounds_test(y, x, lags="bic", max_lags=3)
    assert sel.details["lag_selection"] == "bic" and sel.details["lags"] >= 1


@pytest.mark.parametrize(("estimator", "cls"), [("dols", DynamicOLS), ("fmols", FullyModifiedOLS),
                                                 ("ccr", CanonicalCointegratingReg)])
def test_cointegrating_regression_equals_arch(estimator, cls):
    y, x = _pair(k=2)
    est = cointegrating_regression(y, x, estimator=estimator, trend="constant", lags=1, leads=1)
    if estimator == "dols":
        ref = cls(y, x, trend="c", lags=1, leads=1).fit(cov_type="kernel")  # reference: arch
    else:
        ref = cls(y, x, trend="c").fit()  # reference: arch
    assert_allclose(est.params.to_numpy(), ref.params.to_numpy(), rtol=1e-12)
    assert_allclose(est.std_errors.to_numpy(), ref.std_errors.to_numpy(), rtol=1e-12)
    json.dumps(est.to_dict())


# ------------------------------------------------------------------------- bad input
def test_bad_input_errors():
    y, x = _pair()
    y_gap = y.copy()
    y_gap.iloc[10] = np.nan
    with pytest.raises(DataError, match="missing at 1950 inside"):
        engle_granger_test(y_gap, x)
    with pytest.raises(DataError, match="'x1' is constant"):
        engle_granger_test(y, x * 0 + 1)
    with pytest.raises(DataError, match="at least"):
        ardl_bounds_test(y.iloc[:10], x.iloc[:10], lags=3)
    with pytest.raises(SpecError, match="trend='q'"):
        engle_granger_test(y, x, trend="q")
    with pytest.raises(SpecError, match="estimator"):
        cointegrating_regression(y, x, estimator="ols")
    with pytest.raises(DataError, match="same years"):
        engle_granger_test(y, x.iloc[:-1])
    # leading missing values are trimmed, not an error
    y_lead = y.copy()
    y_lead.iloc[:3] = np.nan
    assert engle_granger_test(y_lead, x).nobs == len(y) - 3
