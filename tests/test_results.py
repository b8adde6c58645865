"""TestResult and Estimate: frozen, printable, JSON-safe."""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from numpy.testing import assert_allclose

from evidence import Estimate, TestResult


def test_test_result_is_frozen_and_json_safe():
    res = TestResult("Demo test", 1.5, 0.0123, {0.05: 1.96, 0.01: 2.58}, null="no effect",
                     alternative="effect", nobs=40, details={"lags": 2, "trend": "c"},
                     reference="key2000", warnings=("small T",))
    with pytest.raises(dataclasses.FrozenInstanceError):
        res.statistic = 2.0  # type: ignore[misc]
    with pytest.raises(TypeError):
        res.details["lags"] = 3  # type: ignore[index]
    payload = res.to_dict()
    assert json.loads(json.dumps(payload, allow_nan=False)) == payload
    assert payload["critical_values"] == {"0.01": 2.58, "0.05": 1.96}
    assert "p-value 0.0123" in res.summary()
    assert "warning: small T" in res.summary()
    assert repr(res).startswith("TestResult(test='Demo test'")
    row = res.to_frame()
    assert row.shape[0] == 1 and row.loc[0, "cv_5"] == 1.96


def test_inapplicable_result_keeps_the_reason():
    res = TestResult.inapplicable("CIPS", reason="T=8 is below the minimum for this variant")
    assert math.isnan(res.statistic) and math.isnan(res.pvalue)
    assert not res.applicable
    assert res.reject() is None
    assert res.to_dict()["statistic"] is None  # NaN is not JSON
    assert "T=8" in res.summary()


def test_estimate_matches_statsmodels_inference():
    # Reference library: statsmodels OLS p-values and intervals with Student t.
    rng = np.random.default_rng(7)
    x = rng.normal(size=60)
    y = 1.0 + 0.5 * x + rng.normal(size=60)
    fit = sm.OLS(y, sm.add_constant(x)).fit()
    names = ["const", "x"]
    est = Estimate("OLS", "y", pd.Series(fit.params, index=names), fit.bse,
                   fit.cov_params(), "unadjusted", nobs=60, df_resid=fit.df_resid)
    assert_allclose(est.pvalues.to_numpy(), fit.pvalues, rtol=1e-10)
    assert_allclose(est.conf_int().to_numpy(), fit.conf_int(), rtol=1e-10)
    assert_allclose(est.tstats.to_numpy(), fit.tvalues, rtol=1e-10)
    payload = est.to_dict()
    assert json.loads(json.dumps(payload, allow_nan=False))["params"]["x"] == pytest.approx(fit.params[1])
    assert "OLS: y" in est.summary()


def test_estimate_normal_reference_when_no_df():
    est = Estimate("MG", "y", pd.Series({"b": 1.96}), [1.0], [[1.0]], "mean group", nobs=10)
    # two-sided normal p-value at 1.96 (scipy.stats.norm) is 0.05 to 4 decimals
    assert est.pvalues["b"] == pytest.approx(0.04999579, abs=1e-7)
