"""LMDI-I against worked examples and its exactness properties (Ang 2005)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose

import evidence as ev
from evidence import DataError
from evidence.decomposition import kaya, lmdi, lmdi_effects, log_mean


def test_worked_example_single_unit_kaya():
    # shared/reference_values.md section 11, worked example A (computed there from Ang's formulas):
    # P 100 -> 110, Y/P 10 -> 12, E/Y 0.50 -> 0.40, E 500 -> 528
    add, mul = lmdi_effects(np.array([[100.0], [10.0], [0.5]]), np.array([[110.0], [12.0], [0.4]]))
    assert_allclose(add, [48.977315, 93.690101, -114.667417], atol=1e-6)
    assert add.sum() == pytest.approx(28.0, abs=1e-9)
    assert_allclose(mul, [1.1, 1.2, 0.8], rtol=1e-9)


def test_worked_example_two_sectors():
    # shared/reference_values.md section 11, worked example B: E = Q S_i I_i
    start = np.array([[200.0, 200.0], [0.6, 0.4], [2.0, 0.5]])
    end = np.array([[240.0, 240.0], [0.5, 0.5], [1.8, 0.45]])
    add, mul = lmdi_effects(start, end)
    assert_allclose(add, [50.036277, -31.121167, -28.915110], atol=1e-6)
    assert add.sum() == pytest.approx(-10.0, abs=1e-9)
    assert_allclose(mul, [1.199578, 0.892990, 0.900183], atol=1e-6)
    assert np.prod(mul) == pytest.approx(270 / 280, rel=1e-12)
    # Ang (2005) link between the two forms: dV_k / ln D_k = L(V^T, V^0) for every factor
    assert_allclose(add / np.log(mul), log_mean(270.0, 280.0), rtol=1e-9)


def test_log_mean_limits():
    assert log_mean(3.0, 3.0) == 3.0
    assert log_mean(np.e, 1.0) == pytest.approx(np.e - 1)


def test_panel_kaya_is_exact_on_demo():
    panel = ev.demo_panel()
    res = kaya(panel, "ghg_territorial", population="population", activity="gdp", energy="energy",
               window=(2000, 2020))
    add = res.to_frame("additive")
    mul = res.to_frame("multiplicative")
    factors = list(res.factors)
    # Ang (2005) properties: perfect decomposition, no residual
    assert_allclose(add[factors].sum(axis=1), add["change"], rtol=1e-9)
    assert_allclose(mul[factors].prod(axis=1), mul["ratio"], rtol=1e-9)
    assert add.index[-1] == "total"
    assert add.loc["total", "change"] == pytest.approx(add["change"].iloc[:-1].sum())


def test_factors_must_multiply_to_pressure():
    frame = pd.DataFrame({"unit": ["A", "A"], "year": [2000, 2001], "e": [10.0, 12.0],
                          "a": [2.0, 3.0], "b": [5.0, 5.0]})
    with pytest.raises(DataError, match="unit 'A', year 2001"):
        lmdi(ev.load_panel(frame), "e", ["a", "b"])
    ok = frame.assign(e=frame.a * frame.b)
    res = lmdi(ev.load_panel(ok), "e", ["a", "b"])
    assert res.additive.loc["A", "b"] == pytest.approx(0.0)


def test_zero_start_gives_nan_ratio_without_warning():
    import warnings

    frame = pd.DataFrame({"unit": ["A", "A", "B", "B"], "year": [2000, 2001, 2000, 2001],
                          "e": [0.0, 6.0, 10.0, 12.0], "a": [0.0, 2.0, 2.0, 3.0],
                          "b": [3.0, 3.0, 5.0, 4.0]})
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        res = lmdi(ev.load_panel(frame), "e", ["a", "b"])
    assert np.isnan(res.multiplicative.loc["A", "ratio"])
    assert res.additive.loc["total", "change"] == pytest.approx(8.0)


def test_lmdi_result_follows_the_protocol():
    import json

    res = kaya(ev.demo_panel(), "ghg_territorial", population="population", activity="gdp",
               window=(2000, 2020))
    assert repr(res).startswith("LMDIResult(pressure='ghg_territorial', window=(2000, 2020)")
    assert str(res) == res.summary() and "emission_intensity" in res.summary()
    payload = res.to_dict()
    assert json.loads(json.dumps(payload, allow_nan=False)) == payload
    with pytest.raises(TypeError):
        res.details["method"] = "x"  # frozen
    with pytest.raises(ev.SpecError, match="kind"):
        res.to_frame("ratio")
