"""Panel unit-root tests: published tables, formulas on known inputs, plain-loop oracles, arch as a
reference library, unbalanced panels and bad input."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from arch.unitroot import ADF, KPSS
from numpy.testing import assert_allclose
from scipy import stats

from evidence.errors import DataError, SpecError
from evidence.panel import load_panel
from evidence.roots import _cips_tables, _ips_tables
from evidence.roots._cips import cadf_tstats, simulate_cips, table_critical_values
from evidence.roots._common import ARCH_TREND
from evidence.roots._panel_math import adf_tstats, combine_pvalues, ips_moments
from evidence.roots.panel import (
    breitung_test,
    cips_test,
    fisher_test,
    hadri_test,
    ips_test,
    llc_test,
)


def make_panel(values: np.ndarray, start: int = 1990, name: str = "x"):
    t, n = values.shape
    rows = [{"unit": f"u{j:02d}", "year": start + i, name: values[i, j]}
            for j in range(n) for i in range(t)]
    return load_panel(pd.DataFrame(rows), unit="unit", time="year")


def walks(t: int = 30, n: int = 8, seed: int = 1) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.cumsum(rng.standard_normal((t, n)), axis=0) + rng.normal(size=n)


# ------------------------------------------------------------------------ IPS
@pytest.mark.parametrize(("trend", "p", "t", "mean", "var"), [
    # Im, Pesaran & Shin (2003), Table 3 (as shipped in plm; shared/reference_values.md 3.1)
    ("constant", 0, 10, -1.504, 1.069),
    ("constant", 4, 100, -1.495, 0.771),
    ("constant", 5, 20, -1.313, 1.171),
    ("trend", 8, 25, -1.761, 1.208),
    ("trend", 3, 50, -2.137, 0.688),
    ("trend", 0, 30, -2.172, 0.690),
])
def test_ips_moments_equal_published_table(trend, p, t, mean, var):
    m, v, outside = ips_moments(np.array([p]), np.array([t]), trend)
    assert (m[0], v[0]) == (mean, var) and not outside


def test_ips_moments_interpolate_and_refuse_untabulated_cells():
    # halfway between T=25 and T=30, p=1, intercept: (-1.514 + -1.519)/2 and (0.861 + 0.831)/2
    m, v, _ = ips_moments(np.array([1]), np.array([27.5]), "constant")
    assert_allclose([m[0], v[0]], [-1.5165, 0.846], atol=1e-12)
    m, _, _ = ips_moments(np.array([6]), np.array([15]), "constant")   # not tabulated in Table 3
    assert math.isnan(m[0])


def test_ips_w_by_hand_from_arch_unit_statistics():
    y = walks(34, 10, seed=2)
    res = ips_test(make_panel(y), "x", lags="aic", max_lags=4, inference="asymptotic")
    t, p, n = [], [], []
    for j in range(10):
        a = ADF(y[:, j], trend="c", max_lags=4, method="aic")   # arch, reference library
        t.append(a.stat)
        p.append(a.lags)
        n.append(a.nobs)
    grid = np.array(_ips_tables.IPS_T, dtype=float)
    e = [np.interp(n_i, grid, _ips_tables.IPS_MEAN["constant"][p_i]) for p_i, n_i in zip(p, n, strict=True)]
    v = [np.interp(n_i, grid, _ips_tables.IPS_VAR["constant"][p_i]) for p_i, n_i in zip(p, n, strict=True)]
    w = math.sqrt(10) * (np.mean(t) - np.mean(e)) / math.sqrt(np.mean(v))
    assert_allclose(res.statistic, w, rtol=1e-12)
    assert_allclose(res.pvalue, stats.norm.cdf(w), rtol=1e-12)
    assert res.details["lags"] == p


def test_ips_accepts_unbalanced_panels():
    y = walks(34, 6, seed=3)
    y[:5, 0] = np.nan          # unit u00 starts five years late
    y[-3:, 1] = np.nan         # unit u01 ends three years early
    res = ips_test(make_panel(y), "x", lags=1)
    assert res.applicable and res.details["balanced"] is False
    assert res.details["regression_obs"][:2] == [34 - 5 - 2, 34 - 3 - 2]
    assert_allclose(res.details["unit_tstats"]["u00"], ADF(y[5:, 0], lags=1).stat, rtol=1e-6)


def test_adf_batch_equals_arch_fixed_lags():
    y = walks(40, 5, seed=4)
    for trend, code in (("none", "n"), ("constant", "c"), ("trend", "ct")):
        ours = adf_tstats(y, trend, 2)
        ref = [ADF(y[:, j], trend=code, lags=2).stat for j in range(5)]  # arch
        assert_allclose(ours, ref, rtol=1e-10)


# --------------------------------------------------------------------- Fisher
def test_fisher_formulas_on_known_pvalues():
    p = np.array([0.01, 0.20, 0.50, 0.04, 0.90])
    got = combine_pvalues(p)
    n = p.size
    # Maddala & Wu (1999): P = -2 sum ln p ~ chi2(2N); also scipy.stats.combine_pvalues("fisher")
    ref = stats.combine_pvalues(p, method="fisher")
    assert_allclose(got["p"], [ref.statistic, ref.pvalue], rtol=1e-12)
    # Choi (2001): Z = sum Phi^-1(p)/sqrt(N); scipy's Stouffer uses Phi^-1(1 - p), the negative
    ref = stats.combine_pvalues(p, method="stouffer")
    assert_allclose(got["z"][0], -ref.statistic, rtol=1e-12)
    assert_allclose(got["z"][1], ref.pvalue, rtol=1e-12)
    # Choi (2001): Pm = (P - 2N) / (2 sqrt N); L* = sqrt(k) sum ln(p/(1-p)), k = 3(5N+4)/(pi^2 N(5N+2))
    chi = -2 * np.log(p).sum()
    assert_allclose(got["pm"][0], (chi - 2 * n) / (2 * math.sqrt(n)), rtol=1e-12)
    k = 3 * (5 * n + 4) / (math.pi ** 2 * n * (5 * n + 2))
    logit = math.sqrt(k) * np.log(p / (1 - p)).sum()
    assert_allclose(got["l"], [logit, stats.t.cdf(logit, 5 * n + 4)], rtol=1e-12)


def test_fisher_test_combines_arch_pvalues():
    y = walks(30, 7, seed=5)
    res = fisher_test(make_panel(y), "x", combine="p", lags=1, inference="asymptotic")
    pvals = [ADF(y[:, j], lags=1).pvalue for j in range(7)]   # arch, reference library
    assert_allclose(res.statistic, -2 * np.log(pvals).sum(), rtol=1e-10)
    assert set(res.details["combinations"]) == {"p", "z", "pm", "l"}
    pp = fisher_test(make_panel(y), "x", unit_test="pp", hac_lags=None)
    assert pp.details["unit_test"] == "pp" and pp.applicable
    y[:4, 3] = np.nan                                         # unbalanced: u03 starts late
    late = fisher_test(make_panel(y), "x", combine="p", lags=1, inference="asymptotic")
    assert late.details["balanced"] is False
    assert_allclose(late.details["unit_pvalues"]["u03"], ADF(y[4:, 3], lags=1).pvalue, atol=1e-6)


# ------------------------------------------------------------------------ LLC
def _llc_loop(y: np.ndarray, p: int, bandwidth: int) -> float:
    """LLC (2002) steps 1-3 with plain loops and statsmodels OLS (intercept case)."""
    t_len, n = y.shape
    e_all, v_all, ratios = [], [], []
    for i in range(n):
        dy = np.diff(y[:, i])
        rows = range(p + 1, t_len)                  # 0-based index of y_t
        lhs = np.array([dy[t - 1] for t in rows])
        aux = np.array([[1.0] + [dy[t - 1 - k] for k in range(1, p + 1)] for t in rows])
        lev = np.array([y[t - 1, i] for t in rows])
        e = sm.OLS(lhs, aux).fit().resid
        v = sm.OLS(lev, aux).fit().resid
        delta = sm.OLS(e, v).fit().params[0]
        sig = math.sqrt(np.mean((e - delta * v) ** 2))
        e_all.append(e / sig)
        v_all.append(v / sig)
        lrv = sum(d * d for d in dy) / (t_len - 1)
        for lag in range(1, bandwidth + 1):
            lrv += (2 * (1 - lag / (bandwidth + 1))
                    * sum(dy[t] * dy[t - lag] for t in range(lag, t_len - 1)) / (t_len - 1))
        ratios.append(math.sqrt(lrv) / sig)
    e, v = np.concatenate(e_all), np.concatenate(v_all)
    fit = sm.OLS(e, v).fit()
    t_tilde = t_len - p - 1
    sig2 = np.sum(fit.resid ** 2) / (n * t_tilde)
    std = math.sqrt(sig2 / (v @ v))
    t_delta = fit.params[0] / std
    table = np.array(_ips_tables.LLC)
    # LLC (2002), Table 2, intercept columns (plm's copy; shared/reference_values.md 3.2)
    mu = np.interp(t_tilde, table[:, 0], table[:, 3])
    sd = np.interp(t_tilde, table[:, 0], table[:, 4])
    return (t_delta - n * t_tilde * np.mean(ratios) / sig2 * std * mu) / sd


def test_llc_equals_plain_loop():
    y = walks(40, 6, seed=6)
    res = llc_test(make_panel(y), "x", lags=1, hac_lags=5, inference="asymptotic")
    assert_allclose(res.statistic, _llc_loop(y, 1, 5), rtol=1e-9)
    # LLC (2002) Table 2, T~=25, intercept: mu* = -0.554, sigma* = 0.919 (also from memory)
    table = np.array(_ips_tables.LLC)
    assert tuple(table[0, [0, 3, 4]]) == (25.0, -0.554, 0.919)


def test_llc_default_bandwidth_and_balance():
    y = walks(34, 5, seed=7)
    res = llc_test(make_panel(y), "x", lags=0)
    assert res.details["hac_lags"] == round(3.21 * 34 ** (1 / 3))   # LLC (2002), K = 3.21 T^(1/3)
    y[:3, 2] = np.nan
    with pytest.raises(DataError, match="balanced panel, but unit 'u02'"):
        llc_test(make_panel(y), "x", lags=0)


# ------------------------------------------------------------------- Breitung
def _breitung_loop(y: np.ndarray, trend: str) -> float:
    t_len, n = y.shape
    num = den = 0.0
    for i in range(n):
        dy = [y[t, i] - y[t - 1, i] for t in range(1, t_len)]
        if trend == "constant":
            sig2 = sum(d * d for d in dy) / len(dy)
            for t in range(1, t_len):
                lag = y[t - 1, i] - y[0, i]
                num += dy[t - 1] * lag / sig2
                den += lag * lag / sig2
        else:
            mean = sum(dy) / len(dy)
            sig2 = sum((d - mean) ** 2 for d in dy) / len(dy)
            for t in range(1, t_len - 1):             # 0-based t; Δy_t = dy[t-1]
                later = dy[t:]
                s = math.sqrt((t_len - 1 - t) / (t_len - t))
                dstar = s * (dy[t - 1] - sum(later) / len(later))
                lag = y[t - 1, i] - y[0, i] - (t - 1) / (t_len - 1) * (y[-1, i] - y[0, i])
                num += dstar * lag / sig2
                den += lag * lag / sig2
    return num / math.sqrt(den)


@pytest.mark.parametrize("trend", ["constant", "trend"])
def test_breitung_equals_plain_loop(trend):
    y = walks(25, 5, seed=8)
    assert_allclose(breitung_test(make_panel(y), "x", trend=trend, lags=0).statistic,
                    _breitung_loop(y, trend), rtol=1e-10)


# ---------------------------------------------------------------------- Hadri
@pytest.mark.parametrize("lags", [0, 3])
@pytest.mark.parametrize("trend", ["constant", "trend"])
def test_hadri_robust_is_mean_of_arch_kpss(trend, lags):
    rng = np.random.default_rng(9)
    y = rng.standard_normal((30, 6)) + rng.normal(size=6)
    res = hadri_test(make_panel(y), "x", trend=trend, hac_lags=lags, inference="asymptotic")
    # each unit's LM is its KPSS statistic (arch, reference library, same bandwidth)
    kpss = [KPSS(y[:, j], trend=ARCH_TREND[trend], lags=lags).stat for j in range(6)]
    assert_allclose(list(res.details["unit_lm"].values()), kpss, rtol=1e-5)
    # Hadri (2000), eq. (14)/(22): xi = 1/6, zeta^2 = 1/45 (constant); 1/15, 11/6300 (trend)
    xi, z2 = (1 / 6, 1 / 45) if trend == "constant" else (1 / 15, 11 / 6300)
    assert_allclose(res.statistic, math.sqrt(6) * (np.mean(kpss) - xi) / math.sqrt(z2), rtol=1e-5)
    plain = hadri_test(make_panel(y), "x", trend=trend, hac_lags=lags, robust=False,
                       inference="asymptotic")
    assert plain.test == "Hadri" and plain.statistic != res.statistic


# ----------------------------------------------------------------------- CIPS
def test_cips_tables_equal_published_values():
    # Pesaran (2007), Table II (plm critvals.cips = Stata xtcips; shared/reference_values.md 4)
    assert table_critical_values(20, 20, "constant", False)[0.05] == -2.21  # Case II, T=20, N=20
    assert table_critical_values(30, 50, "trend", False)[0.05] == -2.65     # Case III, T=50, N=30
    assert table_critical_values(30, 30, "trend", False)[0.05] == -2.66     # Case III, T=30, N=30
    assert table_critical_values(10, 10, "constant", True)[0.05] == -2.47   # truncated, Case II
    assert table_critical_values(10, 10, "constant", False)[0.01] == -2.97
    assert table_critical_values(200, 200, "none", False)[0.10] == -1.43    # Case I
    assert table_critical_values(12, 20, "constant", False) is None
    # truncation bounds (Pesaran 2007, section 4): Case II K1 = 6.19, K2 = 2.61
    assert _cips_tables.TRUNCATION["constant"] == (6.19, 2.61)


def test_cadf_equals_plain_ols_loop():
    y = walks(25, 5, seed=10)
    ybar = y.mean(axis=1)
    for trend, lags in (("constant", 0), ("trend", 1), ("none", 2)):
        ours = cadf_tstats(y, trend, lags)
        ref = []
        for i in range(5):
            rows, lhs = [], []
            for t in range(lags + 1, 25):
                row = [y[t - 1, i], ybar[t - 1], ybar[t] - ybar[t - 1]]
                for j in range(1, lags + 1):
                    row += [ybar[t - j] - ybar[t - j - 1], y[t - j, i] - y[t - j - 1, i]]
                row += {"none": [], "constant": [1.0], "trend": [1.0, t]}[trend]
                rows.append(row)
                lhs.append(y[t, i] - y[t - 1, i])
            ref.append(sm.OLS(np.array(lhs), np.array(rows)).fit().tvalues[0])
        assert_allclose(ours, ref, rtol=1e-9)


def test_cips_simulated_quantiles_small(tmp_path, monkeypatch):
    monkeypatch.setenv("EVIDENCE_CACHE_DIR", str(tmp_path))
    draws = simulate_cips(10, 10, trend="constant", truncate=False, reps=2000, seed=1)
    # Pesaran (2007), Table II(b), T=10, N=10, 5 % = -2.52; 2000 draws: MC s.e. about 0.02
    assert np.quantile(draws, 0.05) == pytest.approx(-2.52, abs=0.07)
    again = simulate_cips(10, 10, trend="constant", truncate=False, reps=2000, seed=1)
    assert_allclose(draws, again)                     # served from the cache, identical
    assert len(list(tmp_path.glob("cips-null-*.npz"))) == 1


@pytest.mark.slow
@pytest.mark.parametrize(("n", "t", "trend", "trunc"), [
    (10, 10, "constant", False), (20, 20, "trend", False), (30, 50, "trend", False),
    (10, 10, "constant", True), (15, 30, "none", False)])
def test_cips_simulated_critical_values_match_table_ii(n, t, trend, trunc, tmp_path, monkeypatch):
    monkeypatch.setenv("EVIDENCE_CACHE_DIR", str(tmp_path))
    draws = simulate_cips(n, t, trend=trend, truncate=trunc, reps=20000, seed=7)
    table = table_critical_values(n, t, trend, trunc)   # Pesaran (2007), Table II
    for level in (0.01, 0.05, 0.10):
        # 20000 draws: MC s.e. of the quantile about 0.01 (0.02 at 1 %); the table has 2 decimals
        assert np.quantile(draws, level) == pytest.approx(table[level], abs=0.045)


def test_cips_test_on_a_tabulated_panel(tmp_path, monkeypatch):
    monkeypatch.setenv("EVIDENCE_CACHE_DIR", str(tmp_path))
    y = walks(20, 20, seed=11)
    res = cips_test(make_panel(y), "x", truncate=False, lags=0, reps=500, seed=3,
                    inference="asymptotic")
    assert res.critical_values[0.05] == -2.21 and "Table II" in res.details["critical_values_source"]
    assert_allclose(res.statistic, np.mean(cadf_tstats(y, "constant", 0)), rtol=1e-12)
    trunc = cips_test(make_panel(y), "x", lags=1, reps=500, seed=3, inference="asymptotic")
    assert "simulated" in trunc.details["critical_values_source"] and trunc.details["seed"] == 3
    with pytest.raises(SpecError, match="reps"):
        cips_test(make_panel(y), "x", reps=10)


# ------------------------------------------------------------------ bad input
def test_bad_panels_raise_errors_naming_the_unit():
    y = walks(30, 5, seed=12)
    const = y.copy()
    const[:, 3] = 2.5
    for func in (ips_test, llc_test, fisher_test, breitung_test, hadri_test, cips_test):
        with pytest.raises(DataError, match=r"constant.*unit 'u03'"):
            func(make_panel(const), "x")
    short = y.copy()
    short[:24, 1] = np.nan            # u01 has 6 years: too short for 4 lags
    with pytest.raises(DataError, match="unit 'u01' has 6 complete"):
        ips_test(make_panel(short), "x", lags=4)
    gap = y.copy()
    gap[10, 4] = np.nan
    with pytest.raises(DataError, match=r"unit 'u04' has no (row|value).* 2000"):
        ips_test(make_panel(gap), "x")
    frame = pd.DataFrame({"unit": np.repeat(["a", "b"], 30), "year": np.tile(range(1990, 2020), 2),
                          "x": np.nan, "z": np.arange(60.0)})
    with pytest.raises(DataError, match=r"0 unit.*usable data for x"):
        ips_test(load_panel(frame), "x")
    with pytest.raises(DataError, match="not in the data"):
        ips_test(make_panel(y), "nope")
    with pytest.raises(SpecError, match="trend"):
        ips_test(make_panel(y), "x", trend="none")
    with pytest.raises(SpecError, match="combine"):
        fisher_test(make_panel(y), "x", combine="max")


def test_units_without_values_are_excluded_and_listed():
    y = walks(30, 5, seed=13)
    y[:, 2] = np.nan
    frame = pd.DataFrame({"unit": np.repeat([f"u{j:02d}" for j in range(5)], 30),
                          "year": np.tile(np.arange(1990, 2020), 5), "x": y.T.ravel(),
                          "z": 1.0})   # u02 has other data, but no value of x
    res = ips_test(load_panel(frame, unit="unit", time="year"), "x", lags=0)
    assert res.details["excluded"] == [{"unit": "u02", "column": "x", "years": "",
                                        "reason": "unit excluded: no year with every column present"}]
    assert res.details["units"] == 4 and any("left out" in w for w in res.warnings)


def test_cips_simulation_same_draws_on_every_backend(monkeypatch):
    monkeypatch.setenv("EVIDENCE_CACHE_DIR", "off")
    serial = simulate_cips(10, 15, reps=600, seed=5)
    assert_allclose(simulate_cips(10, 15, reps=600, seed=5, executor="processes"), serial)


@pytest.mark.slow
def test_cips_simulation_same_draws_on_dask(monkeypatch):
    monkeypatch.setenv("EVIDENCE_CACHE_DIR", "off")
    serial = simulate_cips(10, 15, reps=600, seed=5)
    assert_allclose(simulate_cips(10, 15, reps=600, seed=5, executor="dask"), serial)
