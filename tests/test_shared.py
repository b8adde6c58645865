"""Shared machinery: the long-run covariance, the panel-to-array adapter, the result protocol,
option checks and the Monte Carlo harness."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from arch.covariance.kernel import Bartlett
from numpy.testing import assert_allclose

import evidence as ev
from evidence._arrays import clean_series
from evidence._hac import default_max_lags, long_run_cov, long_run_variance, newey_west_lags
from evidence._montecarlo import rejection_rate, simulate
from evidence._validation import adjust_pvalues, check_int, check_lags, check_seed, check_trend
from evidence.errors import DataError, SpecError
from evidence.results import EXCLUDED_COLUMNS, TestGroupResult, TestResult


@pytest.fixture()
def scores():
    rng = np.random.default_rng(7)
    e = rng.standard_normal((40, 3))
    return e + 0.6 * np.vstack([np.zeros((1, 3)), e[:-1]])


@pytest.mark.parametrize("demean", [False, True])
@pytest.mark.parametrize("lags", [0, 1, 3, 8])
def test_long_run_cov_equals_arch_bartlett(scores, demean, lags):
    # Reference: arch.covariance.kernel.Bartlett with an integer bandwidth (arch's one_sided is
    # the transpose of ours, see the module docstring).
    ref = Bartlett(scores, bandwidth=lags, force_int=True, center=demean).cov
    ours = long_run_cov(scores, lags, demean=demean)
    assert_allclose(ours.long_run, ref.long_run, atol=1e-12)
    assert_allclose(ours.short_run, ref.short_run, atol=1e-12)
    assert_allclose(ours.one_sided, np.asarray(ref.one_sided).T, atol=1e-12)


def test_long_run_cov_batches_equal_a_loop(scores):
    batch = np.stack([scores, 2 * scores, scores[::-1]])
    out = long_run_cov(batch, 3).long_run
    for b in range(3):
        assert_allclose(out[b], long_run_cov(batch[b], 3).long_run, atol=1e-12)
    lrv = long_run_variance(scores, 3)
    assert_allclose(lrv, np.diag(long_run_cov(scores, 3).long_run), atol=1e-12)


def test_prewhitened_long_run_cov_by_hand(scores):
    # Naive oracle: VAR(1) by least squares, Bartlett on its residuals, recoloured (Andrews &
    # Monahan 1992, eq. 2.6).
    a = np.linalg.lstsq(scores[:-1], scores[1:], rcond=None)[0]
    v = scores[1:] - scores[:-1] @ a
    inner = Bartlett(v, bandwidth=2, force_int=True, center=False).cov.long_run
    recolour = np.linalg.inv(np.eye(3) - a.T)
    assert_allclose(long_run_cov(scores, 2, prewhiten=True).long_run,
                    recolour @ inner @ recolour.T, atol=1e-10)


def test_lag_rules():
    # Newey & West (1994): floor(4 (T/100)^(2/9)); Schwert (1989): floor(4 (T/100)^(1/4)).
    assert [newey_west_lags(t) for t in (25, 30, 60, 100, 500)] == [2, 3, 3, 4, 5]
    assert [default_max_lags(t) for t in (25, 30, 60, 100, 500)] == [2, 2, 3, 4, 5]


def _gappy_panel():
    frame = ev.demo_panel().frame
    frame.loc[("Aldwyr", 1995), "gdp"] = np.nan
    frame.loc[("Aldwyr", 1990), "ghg_territorial"] = np.nan
    return ev.load_panel(frame.reset_index())


def test_arrays_balanced_demo_equals_wide():
    panel = ev.demo_panel()
    block = panel.arrays(["ghg_territorial", "gdp"])
    assert block.values.shape == (len(panel.years), len(panel.units), 2)
    assert_allclose(block.column("gdp"), panel.wide("gdp").to_numpy())
    assert block.excluded.empty and list(block.excluded.columns) == list(EXCLUDED_COLUMNS)


def test_arrays_gap_rules_list_what_they_leave_out():
    panel = _gappy_panel()
    with pytest.raises(DataError, match=r"Aldwyr.*gdp.*1995"):
        panel.arrays(["ghg_territorial", "gdp"])
    dropped = panel.arrays(["ghg_territorial", "gdp"], gaps="exclude", span="own")
    assert "Aldwyr" not in dropped.units
    assert set(dropped.excluded["unit"]) == {"Aldwyr"}
    longest = panel.arrays(["ghg_territorial", "gdp"], gaps="longest", span="own")
    i = longest.units.index("Aldwyr")
    assert longest.years[longest.first[i]] == 1996
    assert np.isnan(longest.values[: longest.first[i], i]).all()
    reasons = " ".join(longest.excluded["reason"])
    assert "longest complete span 1996:2023" in reasons and "start or end" in reasons
    common = panel.arrays(["ghg_territorial", "gdp"], gaps="longest", span="common")
    assert common.years[0] == 1996 and common.balanced


def test_arrays_short_and_constant_units():
    frame = ev.demo_panel().frame
    frame.loc["Aldwyr", "gdp"] = 5.0
    panel = ev.load_panel(frame.reset_index())
    with pytest.raises(DataError, match=r"constant.*Aldwyr"):
        panel.arrays(["gdp"])
    assert "Aldwyr" not in panel.arrays(["gdp"], constant="exclude").units
    with pytest.raises(DataError, match="needs at least 40"):
        ev.demo_panel().arrays("gdp", min_years=40)
    # every unit left out (a ratio of a column to itself): a DataError naming the reason, not a
    # numpy error (found by the study-file fuzz)
    frame["gdp"] = 5.0
    with pytest.raises(DataError, match=r"0 unit\(s\) have usable data for gdp.*'gdp' is constant"):
        ev.load_panel(frame.reset_index()).arrays(["gdp"], span="own", constant="exclude")


def test_clean_series_numbers_years_from_one_and_refuses_bad_input():
    data = clean_series(np.array([np.nan, 1.0, 2.0, 4.0]), min_obs=3, purpose="a test")
    assert data.years.tolist() == [2, 3, 4]
    with pytest.raises(DataError, match="missing in 3"):
        clean_series(np.array([1.0, 2.0, np.nan, 4.0, 5.0]), min_obs=3, purpose="a test")
    with pytest.raises(DataError, match="constant"):
        clean_series(pd.Series([2.0] * 5, index=range(2000, 2005)), min_obs=3, purpose="a test")
    with pytest.raises(DataError, match="consecutive"):
        clean_series(pd.Series([1.0, 2.0, 3.0], index=[2000, 2001, 2003]), min_obs=2, purpose="a test")


def test_from_arrays_and_with_difference():
    panel = ev.Panel.from_arrays({"y": np.arange(8.0).reshape(4, 2) ** 2}, units=["b", "a"],
                                 years=range(2000, 2004))
    assert panel.units == ("a", "b")
    diff = panel.with_difference("y").series("b", "diff_y")
    assert np.isnan(diff.iloc[0]) and diff.iloc[1] == 4.0 - 0.0  # unit b is the first column: 0, 4, 16, 36


def test_result_protocol():
    res = TestResult("demo", 1.5, 0.2, details={"lags": 2})
    assert str(res) == res.summary()
    assert "<pre>" in res._repr_html_()
    with pytest.raises(TypeError):
        res.details["lags"] = 3  # type: ignore[index]
    group = TestGroupResult("family", (res, TestResult("other", 2.0, 0.01)),
                            excluded=[{"unit": "A", "reason": "r"}])
    assert list(group.excluded.columns) == list(EXCLUDED_COLUMNS)
    assert group.to_frame().shape[0] == 2
    json.dumps(group.to_dict())


def test_option_checks():
    assert check_trend("Constant") == "constant"
    with pytest.raises(SpecError, match="Did you mean 'constant'"):
        check_trend("constnt")
    assert check_lags("BIC") == "bic" and check_lags(2) == 2
    with pytest.raises(SpecError, match="non-negative integer"):
        check_lags(-1)
    with pytest.raises(SpecError, match="at least 1"):
        check_int("max_breaks", 0, minimum=1)
    assert isinstance(check_seed(None), int)
    with pytest.raises(SpecError):
        check_seed(-1)
    # statsmodels.stats.multitest.multipletests, Holm on (0.01, 0.04): (0.02, 0.04).
    assert_allclose(adjust_pvalues([0.01, 0.04, np.nan], "holm")[:2], [0.02, 0.04])


def test_rejection_rate_is_reproducible_and_sensible():
    def pvalue_of(panel):
        y = panel.wide("y").to_numpy()
        from scipy import stats
        return stats.ttest_1samp(y[-1] - y[0], 0.0).pvalue

    first = rejection_rate(pvalue_of, "random_walks", 10, 20, reps=200, seed=3)
    again = rejection_rate(pvalue_of, "random_walks", 10, 20, reps=200, seed=3)
    assert first == again
    assert 0.01 < first["rejection"] < 0.11  # a t-test of a symmetric null: about 5 %
    assert simulate("trend_ar", 3, 10, rng=np.random.default_rng(0)).years[0] == 1990
