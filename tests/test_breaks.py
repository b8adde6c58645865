"""Single-series breaks: published Nile values, brute-force and ruptures oracles, bad input."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pandas as pd
import pytest
import ruptures as rpt
import statsmodels.api as sm
from numpy.testing import assert_allclose
from scipy import stats
from statsmodels.stats.diagnostic import breaks_cusumolsresid

from evidence.breaks import chow_test, cusum_test, find_breaks, ols_cusum_test
from evidence.breaks.dates import argmax_cdf, argmax_quantile
from evidence.breaks.find import information_criteria
from evidence.breaks.segment import (
    min_length,
    optimal_partitions,
    regime_design,
    ssr_table_general,
    ssr_tables,
)
from evidence.breaks.tests import break_covariance, wald_equal_regimes
from evidence.errors import DataError, SpecError


@pytest.fixture(scope="module")
def nile() -> pd.Series:
    data = sm.datasets.nile.load_pandas().data
    return pd.Series(data["volume"].to_numpy(float), index=data["year"].astype(int), name="Nile")


@pytest.fixture(scope="module")
def nile_result(nile):
    # strucchange's values assume serially uncorrelated errors: the classical procedure
    # (limiting-distribution p-values, i.i.d. intervals) with BIC reproduces them.
    return find_breaks(nile, model="level", max_breaks=5, trim=0.15, select="bic",
                       inference="asymptotic")


def test_nile_default_procedure_finds_1898(nile):
    # The default (p-values conditional on the residual autocorrelation, UDmax then LWZ on the
    # innovation variance, intervals with the long-run variance) finds the same single break;
    # its interval is wider than strucchange's i.i.d. one (1895-1902) and contains it.
    res = find_breaks(nile, model="level")
    assert res.break_years == (1898,)
    assert res.tests["UDmax"].pvalue < 0.01
    row = res.intervals.iloc[0]
    assert row.lower <= 1895 and row.upper >= 1902


# --------------------------------------------------------------------------- Nile (published)
def test_nile_one_break_in_1898_with_published_means(nile_result):
    # Cobb (1978), Biometrika 65(2), 243-251; widely reproduced (e.g. Balke 1993): one shift in
    # mean after 1898. Means library-computed with R strucchange 1.5.3 (reference_values.md §2):
    # 1097.75 (1871-1898) and 61198/72 = 849.9722 (1899-1970).
    assert nile_result.n_breaks == 1
    assert nile_result.break_years == (1898,)
    means = nile_result.regimes["estimate"].to_numpy()
    assert_allclose(means, [1097.75, 61198 / 72], rtol=1e-9)


def test_nile_ssr_supf_and_partitions_match_strucchange(nile_result):
    # R strucchange 1.5.3 (reference_values.md §2): SSR no break 2 835 156.75, one break at
    # obs 28 1 597 457.194; sup-F (Fstats(Nile ~ 1), trim 0.15) 75.9298; breakpoints(Nile ~ 1):
    # m=2: 1898, 1953; m=3: 1898, 1938, 1953.
    assert_allclose(nile_result.ssr[0], 2835156.75, rtol=1e-10)
    assert_allclose(nile_result.ssr[1], 1597457.194, rtol=1e-9)
    assert_allclose(nile_result.tests["supF(1)"].statistic, 75.9298, atol=1e-4)
    assert nile_result.partitions[2] == (1898, 1953)
    assert nile_result.partitions[3] == (1898, 1938, 1953)


def test_nile_bic_reproduces_strucchange_values(nile_result):
    # strucchange 1.5.3 BIC for m = 0..5 (reference_values.md §2); its definition is
    # T ln(SSR/T) + T (ln 2 pi + 1) + 2 (m + 1) ln T (two parameters per regime for Nile ~ 1).
    t = 100
    m = np.arange(6)
    ours = t * np.log(nile_result.ssr.to_numpy() / t) + t * (np.log(2 * np.pi) + 1) + 2 * (m + 1) * np.log(t)
    assert_allclose(ours, [1318.2, 1270.1, 1276.5, 1284.7, 1291.9, 1310.8], atol=0.06)
    assert int(np.argmin(nile_result.criteria["bic"])) == 1


def test_nile_interval_matches_strucchange(nile_result):
    # confint(breakpoints(Nile ~ 1), breaks = 1), strucchange 1.5.3 (het.reg, het.err): obs 25-32,
    # i.e. 1895-1902 (reference_values.md §2).
    row = nile_result.intervals.iloc[0]
    assert (row.lower, row.break_year, row.upper) == (1895, 1898, 1902)


def test_nile_far_beyond_andrews_critical_values(nile_result):
    # Andrews (2003) corrigendum, Table 1, pi0 = 0.15, p = 1: 1 % critical value 12.16.
    assert nile_result.tests["supF(1)"].statistic > 12.16
    assert nile_result.tests["supF(1)"].pvalue < 0.001
    # Bai & Perron (1998, 2003) tables, q=1, eps=0.15, k=1, 5 %: 8.58 (reference_values.md §1.2)
    assert nile_result.tests["supF(1)"].critical_values[0.05] == pytest.approx(8.58)


def test_nile_chow_and_cusum(nile):
    # Chow F at the known break equals the sup-F at obs 28 (strucchange Fstats: 75.9298).
    chow = chow_test(nile, 1898, model="level")
    assert_allclose(chow.statistic, 75.9298, atol=1e-4)
    assert_allclose(chow.pvalue, stats.f.sf(chow.statistic, 1, 98))
    # strucchange efp(type = "OLS-CUSUM"): S0 = 2.95177 (reference_values.md §2)
    ols = ols_cusum_test(nile, model="level")
    assert_allclose(ols.statistic, 2.95177, atol=1e-5)
    # the same through statsmodels directly (reference library)
    resid = nile.to_numpy() - nile.mean()
    assert_allclose(ols.pvalue, breaks_cusumolsresid(resid, ddof=1)[1])
    rec = cusum_test(nile, model="level")
    assert rec.pvalue < 0.01


def test_cusum_band_constants():
    # Brown, Durbin & Evans (1975): band constants 0.948 (5 %), 1.143 (1 %), 0.850 (10 %).
    from evidence.breaks.stability import cusum_pvalue

    assert_allclose([cusum_pvalue(0.948), cusum_pvalue(1.143), cusum_pvalue(0.850)],
                    [0.05, 0.01, 0.10], atol=2e-4)


# --------------------------------------------------------------------------- oracles
def _brute_force(y: np.ndarray, z: np.ndarray, m: int, h: int) -> tuple[float, tuple[int, ...]]:
    """Every admissible partition with m breaks, one OLS per segment (naive oracle)."""
    t = len(y)
    best = (math.inf, ())
    for cuts in itertools.combinations(range(h - 1, t - h), m):
        bounds = [0, *[c + 1 for c in cuts], t]
        if any(b - a < h for a, b in itertools.pairwise(bounds)):
            continue
        total = 0.0
        for a, b in itertools.pairwise(bounds):
            coef, *_ = np.linalg.lstsq(z[a:b], y[a:b], rcond=None)
            total += float(np.sum((y[a:b] - z[a:b] @ coef) ** 2))
        if total < best[0]:
            best = (total, cuts)
    return best


@pytest.mark.parametrize("model", ["level", "trend"])
def test_dp_equals_brute_force(model):
    rng = np.random.default_rng(5)
    t, h = 24, 4
    y = np.cumsum(rng.normal(size=t)) + rng.normal(size=t)
    z = regime_design(model, t)
    ssr, breaks = optimal_partitions(ssr_tables(y[None], model, h), 3, h)
    for m in range(1, 4):
        total, cuts = _brute_force(y, z, m, h)
        assert_allclose(ssr[0, m], total, rtol=1e-10)
        assert tuple(breaks[0, m, :m]) == cuts


def test_segment_tables_equal_plain_loop_and_general_path():
    rng = np.random.default_rng(7)
    t, h = 30, 3
    y = rng.normal(size=t) + 0.1 * np.arange(t)
    z = regime_design("trend", t)
    fast = ssr_tables(y[None], "trend", h)[0]
    general = ssr_table_general(y, z, h)
    for i in range(t):
        for j in range(i + h - 1, t):
            coef, *_ = np.linalg.lstsq(z[i:j + 1], y[i:j + 1], rcond=None)
            naive = float(np.sum((y[i:j + 1] - z[i:j + 1] @ coef) ** 2))
            assert_allclose(fast[i, j], naive, rtol=1e-9, atol=1e-10)
            assert_allclose(general[i, j], naive, rtol=1e-9, atol=1e-10)


@pytest.mark.parametrize(("model", "cost"), [("level", "l2"), ("trend", "linear")])
def test_dp_equals_ruptures_exact_dp(model, cost):
    # ruptures Dynp (exact dynamic programming, reference library), jump=1 and min_size=h.
    rng = np.random.default_rng(11)
    t, h = 60, 9
    y = rng.normal(size=(4, t)) + np.where(np.arange(t) > 30, 1.5, 0.0)
    z = regime_design(model, t)
    ssr, breaks = optimal_partitions(ssr_tables(y, model, h), 5, h)
    for n in range(4):
        signal = y[n][:, None] if cost == "l2" else np.column_stack([y[n], z])
        algo = rpt.Dynp(model=cost, min_size=h, jump=1).fit(signal)
        for m in range(1, 6):
            bkps = algo.predict(n_bkps=m)
            assert_allclose(ssr[n, m], algo.cost.sum_of_costs(bkps), rtol=1e-8)
            assert [b - 1 for b in bkps[:-1]] == list(breaks[n, m, :m])


def test_homoskedastic_wald_equals_ssr_formula_and_statsmodels_se():
    rng = np.random.default_rng(3)
    t = 50
    y = np.r_[np.zeros(25), np.ones(25)] + rng.normal(scale=0.5, size=t)
    z = regime_design("trend", t)
    wald, coef, cov = wald_equal_regimes(y, z, None, [24], robust=False, regime_variances=False,
                                         hac_lags=0)
    ssr0 = ssr_tables(y[None], "trend", 3)[0, 0, t - 1]
    ssr1 = ssr_tables(y[None], "trend", 3)[0, 0, 24] + ssr_tables(y[None], "trend", 3)[0, 25, t - 1]
    assert_allclose(wald, (ssr0 - ssr1) / (ssr1 / t), rtol=1e-9)
    design = np.zeros((t, 4))
    design[:25, :2], design[25:, 2:] = z[:25], z[25:]
    ols = sm.OLS(y, design).fit()
    assert_allclose(coef, ols.params, rtol=1e-10)
    assert_allclose(cov * t / (t - 4), ols.cov_params(), rtol=1e-9, atol=1e-15)  # statsmodels OLS
    hac = sm.OLS(y, design).fit(cov_type="HAC", cov_kwds={"maxlags": 3, "use_correction": False})
    ours = break_covariance(design, y - design @ coef, [(0, 24), (25, 49)], robust=True,
                            regime_variances=False, hac_lags=3, prewhiten=False)
    assert_allclose(ours, hac.cov_params(), rtol=1e-9, atol=1e-15)  # statsmodels HAC (Bartlett)


def test_argmax_distribution_values():
    # Bai (1997); Bai & Perron (1998): with equal regimes the 97.5 % quantile is 11.03 and the
    # 95 % quantile 7.69.
    assert_allclose(argmax_quantile(0.975), 11.03, atol=0.01)
    assert_allclose(argmax_quantile(0.95), 7.69, atol=0.01)
    assert_allclose(argmax_cdf(-1e-12), 0.5, atol=1e-6)


def test_argmax_distribution_against_simulation():
    # Naive oracle: argmax of the two-sided drifted Brownian motion on a fine grid (seeded).
    rng = np.random.default_rng(0)
    phi, xi, dt, span, reps = 0.6, 1.5, 0.01, 30.0, 3000
    n = int(span / dt)
    drift = 0.5 * dt * np.arange(1, n + 1)
    left = np.cumsum(rng.normal(0, math.sqrt(dt), (reps, n)), 1) - drift
    right = math.sqrt(phi) * np.cumsum(rng.normal(0, math.sqrt(dt), (reps, n)), 1) - xi * drift
    path = np.concatenate([left[:, ::-1], np.zeros((reps, 1)), right], 1)
    s = (np.argmax(path, 1) - n) * dt
    assert_allclose(np.mean(s < 0), argmax_cdf(-1e-12, xi, phi), atol=0.025)
    assert_allclose(np.quantile(s, 0.9), argmax_quantile(0.9, xi, phi), atol=0.15)
    assert_allclose(np.quantile(s, 0.1), argmax_quantile(0.1, xi, phi), atol=0.4)


def test_information_criteria_formulas():
    # Bai & Perron (2003), section 5: BIC = ln(SSR/T) + p* ln T / T; LWZ with c0 = 0.299, d0 = 0.1.
    bic, lwz = information_criteria(np.array([10.0, 8.0]), 50, 2, 0)
    assert_allclose(bic, np.log(np.array([10.0, 8.0]) / 50) + np.array([2, 5]) * np.log(50) / 50)
    assert_allclose(lwz[1], np.log(8.0 / 45) + 5 / 50 * 0.299 * np.log(50) ** 2.1)


# --------------------------------------------------------------------------- options
def test_partial_structural_change_recovers_fixed_coefficient():
    rng = np.random.default_rng(21)
    t = 80
    x = rng.normal(size=t)
    y = 2.0 * x + np.where(np.arange(t) >= 40, 3.0, 0.0) + rng.normal(scale=0.3, size=t)
    res = find_breaks(y, model="level", fixed=pd.DataFrame({"x": x}), max_breaks=2,
                      years=range(1941, 2021))
    assert res.break_years == (1980,)
    assert_allclose(res.fixed_params.loc["x", "estimate"], 2.0, atol=0.1)


def test_regressors_and_robust_options_run(nile):
    # Below T = 200 the HAC / regime-variance tests are refused with the measured rejection rates
    # (they reject a true null in 28-37 % of series at T = 100, our Monte Carlo).
    with pytest.raises(SpecError, match="T=100: 28%-37%"):
        find_breaks(nile, model="level", max_breaks=2, robust=True)
    with pytest.raises(SpecError, match="refused for model='trend'"):
        find_breaks(np.arange(300.0) + np.sin(np.arange(300)), robust=True)
    rng = np.random.default_rng(4)
    long = np.r_[np.zeros(120), np.full(120, 2.0)] + rng.normal(size=240)
    res = find_breaks(long, model="level", max_breaks=2, robust=True, regime_variances=True,
                      select="sequential")
    assert res.break_years == (120,)
    assert res.tests["supF(1)"].details["robust"] is True
    assert res.details["inference"] == "asymptotic"
    assert any("T=200 they rejected" in w for w in res.warnings)
    res2 = find_breaks(nile, model="level", regressors=rng.normal(size=(100, 1)), max_breaks=2,
                       trim=0.15)  # the trimming of the published tables (shares their draws)
    assert res2.model == "level + regressors"
    assert res2.tests["supF(1)"].details["q"] == 2
    assert res2.details["inference"] == "asymptotic"
    assert any("limiting distributions" in w for w in res2.warnings)


def test_summary_to_dict_and_plot(nile_result, tmp_path):
    text = nile_result.summary()
    assert "last year of the old regime" in text and "1898" in text
    import json

    payload = json.dumps(nile_result.to_dict(), allow_nan=False)
    assert "1898" in payload
    path = tmp_path / "nile.png"
    nile_result.plot(path)
    assert path.stat().st_size > 1000


def test_sequential_and_lwz_selection(nile):
    assert find_breaks(nile, model="level", select="sequential").break_years == (1898,)
    assert find_breaks(nile, model="level", select="LWZ").break_years == (1898,)
    assert find_breaks(nile, model="level", select="sequential",
                       inference="asymptotic").break_years == (1898,)


# --------------------------------------------------------------------------- bad input
def test_bad_input_errors():
    good = np.r_[np.zeros(20), np.ones(20)] + np.tile([0.1, -0.1], 20)
    with pytest.raises(DataError, match="too few"):
        find_breaks(good[:12], years=range(2000, 2012))
    with pytest.raises(DataError, match="missing in 2005"):
        bad = good.copy()
        bad[5] = np.nan
        find_breaks(bad, years=range(2000, 2040))
    with pytest.raises(DataError, match="constant"):
        find_breaks(np.ones(40))
    with pytest.raises(SpecError, match="max_breaks=7 is impossible"):
        find_breaks(good, max_breaks=7)
    with pytest.raises(SpecError, match="trim"):
        find_breaks(good, trim=0.6)
    with pytest.raises(SpecError, match="not supported yet"):
        find_breaks(good, model="trend", regressors=np.arange(40.0))
    with pytest.raises(SpecError, match="'bic', 'lwz', 'sequential'"):
        find_breaks(good, select="aic")
    with pytest.raises(DataError, match="consecutive"):
        find_breaks(pd.Series(good, index=list(range(2000, 2020)) + list(range(2021, 2041))))


def test_leading_missing_values_are_dropped_and_recorded():
    y = pd.Series(np.r_[np.nan, np.nan, np.zeros(20), np.ones(20)] + 0.01 * np.arange(42) % 0.03,
                  index=range(1980, 2022))
    res = find_breaks(y, model="level", max_breaks=2)
    assert res.details["years"] == "1982-2021"
    assert res.break_years == (2001,)


def test_min_length_convention():
    # Bai & Perron (2003): h = floor(eps T); T = 103, eps = 0.15 gives h = 15 (reference_values §1.4).
    assert min_length(103, 0.15) == 15
    assert min_length(100, 0.15) == 15


def test_supf_k_equals_plain_formula_for_every_k(nile_result):
    # Naive oracle: Bai & Perron (1998) F_T(k) = [(SSR_0 - SSR_k)/k] / [SSR_k/(T - (k+1)q - p)]
    # with q = 1, p = 0, T = 100, from the SSR of each optimal partition.
    ssr = nile_result.ssr.to_numpy()
    for k in range(1, 6):
        expected = ((ssr[0] - ssr[k]) / k) / (ssr[k] / (100 - (k + 1)))
        assert_allclose(nile_result.tests[f"supF({k})"].statistic, expected, rtol=1e-12)
    assert_allclose(nile_result.tests["UDmax"].statistic,
                    max(nile_result.tests[f"supF({k})"].statistic for k in range(1, 6)))


def test_score_long_run_equals_a_plain_bartlett_sum():
    # Naive oracle: Bartlett sum sum_t s_t s_t' + sum_l w_l (G_l + G_l'), w_l = 1 - l/(L+1), no
    # division by T (the scale of break_covariance's middle matrix).
    from evidence.breaks.tests import score_long_run

    rng = np.random.default_rng(8)
    s = rng.normal(size=(30, 2))
    naive = s.T @ s
    for lag in range(1, 4):
        gamma = s[lag:].T @ s[:-lag]
        naive += (1 - lag / 4) * (gamma + gamma.T)
    assert_allclose(score_long_run(s, 3), naive, rtol=1e-12)


def test_break_result_protocol(nile_result):
    assert str(nile_result) == nile_result.summary()
    row = nile_result.to_frame()
    assert len(row) == 1 and row.loc[0, "break_years"] == (1898,)
    with pytest.raises(TypeError):
        nile_result.details["model"] = "trend"
