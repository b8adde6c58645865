"""Cross-sectional dependence tests on the Grunfeld data, against linearmodels and a plain loop."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from linearmodels import PanelOLS
from numpy.testing import assert_allclose
from scipy import stats
from statsmodels.datasets import grunfeld

from evidence.errors import DataError, SpecError
from evidence.panel import load_panel
from evidence.roots.dependence import (
    bias_corrected_lm_test,
    lm_test,
    pesaran_cd_test,
    scaled_lm_test,
)


@pytest.fixture(scope="module")
def grunfeld10() -> pd.DataFrame:
    """The 10-firm Grunfeld panel (statsmodels' first 10 firms = plm/Baltagi; reference_values 12.1)."""
    df = grunfeld.load_pandas().data
    df["year"] = df["year"].astype(int)
    df = df[df["firm"] != "American Steel"]
    return df.set_index(["firm", "year"])


@pytest.fixture(scope="module")
def fe_fit(grunfeld10):
    return PanelOLS(grunfeld10["invest"], grunfeld10[["value", "capital"]],
                    entity_effects=True).fit()


def _loop(resid: pd.Series) -> dict[str, float]:
    """CD, LM, scaled LM and bias-corrected LM by hand from the residual correlation matrix."""
    wide = resid.unstack(level=0).to_numpy()
    t, n = wide.shape
    rho = np.corrcoef(wide, rowvar=False)
    cd = lm = scaled = 0.0
    for i in range(n):
        for j in range(i + 1, n):
            cd += rho[i, j]
            lm += t * rho[i, j] ** 2
            scaled += t * rho[i, j] ** 2 - 1
    return {"cd": math.sqrt(2 * t / (n * (n - 1))) * cd, "lm": lm,
            "scaled": scaled / math.sqrt(n * (n - 1)),
            "bc": scaled / math.sqrt(n * (n - 1)) - n / (2 * (t - 1)),
            "mean_abs": float(np.mean(np.abs(rho[np.triu_indices(n, 1)])))}


def test_grunfeld_fixed_effects_residuals(fe_fit):
    # the FE slopes of reference_values.md 12.2 (plm 2.6.2 and linearmodels): 0.1101238, 0.3100653
    assert_allclose(fe_fit.params.to_numpy(), [0.1101238, 0.3100653], atol=5e-7)
    resid = fe_fit.resids
    hand = _loop(resid)
    # prewhiten=False: the residuals as given, as linearmodels and plm compute CD (issue 13 made
    # prewhitening the default; these numbers are unchanged with it switched off)
    cd = pesaran_cd_test(resid, prewhiten=False)
    # reference library: linearmodels' Pesaran CD of the same one-way FE model
    assert_allclose(cd.statistic, fe_fit.pesaran_cd.stat, rtol=1e-10)
    assert_allclose(cd.statistic, hand["cd"], rtol=1e-10)
    assert_allclose(cd.pvalue, 2 * stats.norm.sf(abs(hand["cd"])), rtol=1e-10)
    assert_allclose(cd.details["mean_abs_correlation"], hand["mean_abs"], rtol=1e-10)
    lm = lm_test(resid, prewhiten=False)
    assert_allclose(lm.statistic, hand["lm"], rtol=1e-10)
    assert lm.details["df"] == 45
    assert_allclose(lm.pvalue, stats.chi2.sf(hand["lm"], 45), rtol=1e-10)
    assert_allclose(scaled_lm_test(resid, prewhiten=False).statistic, hand["scaled"], rtol=1e-10)
    assert_allclose(bias_corrected_lm_test(resid, prewhiten=False).statistic, hand["bc"], rtol=1e-10)


def test_grunfeld_raw_investment_cd_matches_published(grunfeld10):
    # reference_values.md section 5: CD of the raw series 'inv' (plm pcdtest, 10 firms) = 22.921588
    # (the series as given: prewhiten=False, unchanged by issue 13)
    res = pesaran_cd_test(grunfeld10["invest"], prewhiten=False)
    assert_allclose(res.statistic, 22.921588, atol=1e-6)
    panel = load_panel(grunfeld10.reset_index(), unit="firm", time="year")
    assert_allclose(pesaran_cd_test(panel, "invest", prewhiten=False).statistic, 22.921588, atol=1e-6)
    # investment is persistent: the unfiltered CD says so
    assert any("persistent" in w for w in res.warnings)


def test_unbalanced_cd_uses_pairwise_overlap(grunfeld10):
    df = grunfeld10.drop(index=[("General Motors", y) for y in range(1935, 1940)]
                         + [("IBM", y) for y in range(1950, 1955)])
    fit = PanelOLS(df["invest"], df[["value", "capital"]], entity_effects=True).fit()
    res = pesaran_cd_test(fit.resids, min_overlap=3, prewhiten=False)
    assert_allclose(res.statistic, fit.pesaran_cd.stat, rtol=1e-10)   # linearmodels, pairwise
    assert res.details["balanced"] is False
    assert bias_corrected_lm_test(fit.resids, prewhiten=False).applicable is False
    # General Motors (1940-54) and IBM (1935-49) share 10 years: excluded with min_overlap=12
    strict = pesaran_cd_test(fit.resids, min_overlap=12, prewhiten=False)
    assert strict.details["excluded_pairs"] == [{"unit_a": "General Motors", "unit_b": "IBM",
                                                 "overlap": 10}]
    assert strict.details["pairs"] == 44 and strict.warnings


def test_two_way_fixed_effects_residuals(grunfeld10):
    fit = PanelOLS(grunfeld10["invest"], grunfeld10[["value", "capital"]], entity_effects=True,
                   time_effects=True).fit()
    assert "not applicable" in str(fit.pesaran_cd)      # linearmodels refuses this model
    res = pesaran_cd_test(fit.resids, seed=11, prewhiten=False)
    assert res.details["demeaned_by_time"] is True and res.details["random_signs"] is True
    # the random-sign CD by hand: w_i = +-1 drawn from the recorded seed
    wide = fit.resids.unstack(level=0).to_numpy()
    n, t = wide.shape[1], wide.shape[0]
    w = np.random.default_rng(11).choice([-1.0, 1.0], size=n)
    rho = np.corrcoef(wide, rowvar=False)
    total = sum(w[i] * w[j] * rho[i, j] for i in range(n) for j in range(i + 1, n))
    assert_allclose(res.statistic, math.sqrt(2 * t / (n * (n - 1))) * total, rtol=1e-10)
    plain = pesaran_cd_test(fit.resids, random_signs=False, prewhiten=False)
    assert any("time effects" in w for w in plain.warnings)
    assert any("time effects" in w for w in lm_test(fit.resids, prewhiten=False).warnings)


def test_panel_column_with_trend_is_detrended_per_unit(grunfeld10):
    panel = load_panel(grunfeld10.reset_index(), unit="firm", time="year")
    wide = grunfeld10["invest"].unstack(level=0)
    t = np.arange(len(wide), dtype=float)
    x = np.column_stack([np.ones_like(t), t])
    resid = wide - x @ np.linalg.lstsq(x, wide.to_numpy(), rcond=None)[0]
    long = resid.stack().reorder_levels([1, 0]).sort_index()
    assert_allclose(pesaran_cd_test(panel, "invest", trend="trend", prewhiten=False).statistic,
                    pesaran_cd_test(long, prewhiten=False).statistic, rtol=1e-10)


def test_bad_input():
    idx = pd.MultiIndex.from_product([["a"], range(2000, 2010)])
    with pytest.raises(DataError, match="at least 2"):
        pesaran_cd_test(pd.Series(np.arange(10.0), index=idx))
    with pytest.raises(DataError, match=r"indexed by \(unit, time\)"):
        pesaran_cd_test(pd.Series(np.arange(10.0)))
    idx = pd.MultiIndex.from_product([["a", "b"], range(2000, 2010)])
    values = np.r_[np.ones(10), np.arange(10.0)]
    with pytest.raises(DataError, match="unit 'a' is constant"):
        lm_test(pd.Series(values, index=idx))
    with pytest.raises(SpecError, match="min_overlap"):
        pesaran_cd_test(pd.Series(np.arange(20.0), index=idx), min_overlap=1)
    dup = pd.Series(np.arange(3.0), index=pd.MultiIndex.from_tuples([("a", 1), ("a", 1), ("b", 1)]))
    with pytest.raises(DataError, match="twice"):
        pesaran_cd_test(dup)
    with pytest.raises(DataError, match="no pair"):
        pesaran_cd_test(pd.Series(np.random.default_rng(0).normal(size=20), index=idx),
                        min_overlap=11, prewhiten=False)


def _adf_residuals_loop(y: np.ndarray, lags: int, start: int) -> np.ndarray:
    """The prewhitening filter by hand (statsmodels OLS): ADF regression with a constant, on the
    rows of y_t from index ``start`` on."""
    t_len = y.size
    dy = np.diff(y)
    rows, lhs = [], []
    for t in range(start, t_len):           # 0-based index of y_t
        rows.append([1.0, y[t - 1]] + [dy[t - 1 - k] for k in range(1, lags + 1)])
        lhs.append(dy[t - 1])
    import statsmodels.api as sm

    return sm.OLS(np.array(lhs), np.array(rows)).fit().resid


def test_prewhitened_statistics_equal_a_plain_loop():
    from evidence.panel import Panel
    from evidence.roots._prewhiten import ar_residuals

    rng = np.random.default_rng(5)
    y = np.cumsum(rng.standard_normal((30, 6)), axis=0)
    resid, orders = ar_residuals(y, "constant")
    top = 2                                  # floor(4 (30/100)^(1/4)) = 2: the common sample
    for j in range(6):
        # the selected order is fitted on the common sample of the largest order (rows 3..29)
        assert_allclose(resid[top + 1:, j], _adf_residuals_loop(y[:, j], int(orders[j]), top + 1),
                        rtol=1e-8)
    panel = Panel.from_arrays({"y": y})
    res = pesaran_cd_test(panel, "y")
    rho = np.corrcoef(resid[top + 1:], rowvar=False)
    iu = np.triu_indices(6, 1)
    assert_allclose(res.statistic, np.sqrt(2 * 27 / 30) * rho[iu].sum(), rtol=1e-10)
    assert res.details["prewhiten"] is True and res.details["inference"] == "simulated"
    lm = lm_test(panel, "y")
    assert_allclose(lm.statistic, 27 * np.sum(rho[iu] ** 2), rtol=1e-10)


def test_dependence_null_statistics_equal_a_loop():
    from evidence.roots._prewhiten import dependence_statistics

    rng = np.random.default_rng(6)
    u = rng.standard_normal((3, 25, 5))
    out = dependence_statistics(u)
    for r in range(3):
        rho = np.corrcoef(u[r], rowvar=False)[np.triu_indices(5, 1)]
        cd = np.sqrt(2 * 25 / 20) * rho.sum()
        slm = np.sum(25 * rho ** 2 - 1) / np.sqrt(20)
        assert_allclose(out[:, r], [cd, 25 * np.sum(rho ** 2), slm, slm - 5 / 48], rtol=1e-10)
