"""Single-series unit-root tests: the wrappers against arch, the Lee–Strazicich statistic against
a plain loop and a simulation, the Zivot–Andrews break year against a direct regression."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from arch.unitroot import ADF, DFGLS, KPSS, PhillipsPerron, ZivotAndrews
from numpy.testing import assert_allclose

from evidence.errors import DataError, SpecError
from evidence.roots import _lee_strazicich_tables as ls_tables
from evidence.roots._common import ARCH_TREND
from evidence.roots._lm_breaks import break_grid, lm_search, lm_statistics
from evidence.roots.series import (
    adf_test,
    dfgls_test,
    kpss_test,
    lee_strazicich_test,
    pp_test,
    za_test,
)


def _walk(n: int = 60, seed: int = 7) -> pd.Series:
    rng = np.random.default_rng(seed)
    return pd.Series(np.cumsum(rng.normal(size=n)), index=range(1964, 1964 + n), name="x")


def _ar1(n: int = 60, phi: float = 0.5, seed: int = 8) -> np.ndarray:
    rng = np.random.default_rng(seed)
    e = rng.normal(size=n)
    out = np.empty(n)
    out[0] = e[0]
    for t in range(1, n):
        out[t] = phi * out[t - 1] + e[t]
    return out


# ------------------------------------------------------------- wrappers agree with arch
@pytest.mark.parametrize("trend", ["none", "constant", "trend"])
@pytest.mark.parametrize("lags", ["aic", "bic", "sequential-t", 0, 3])
def test_adf_equals_arch(trend, lags):
    y = _walk()
    ours = adf_test(y, trend=trend, lags=lags, max_lags=6, inference="asymptotic")
    # reference library: arch.unitroot.ADF called directly with the same options (arch's name of
    # the sequential-t rule is "t-stat"); inference="asymptotic" keeps arch's MacKinnon p-value
    method = {"sequential-t": "t-stat"}.get(lags, lags) if isinstance(lags, str) else "aic"
    ref = ADF(y.to_numpy(), trend=ARCH_TREND[trend], lags=lags if isinstance(lags, int) else None,
              max_lags=6, method=method)
    assert_allclose([ours.statistic, ours.pvalue], [ref.stat, ref.pvalue], rtol=1e-12)
    assert ours.details["lags"] == ref.lags and ours.nobs == ref.nobs
    assert_allclose(ours.critical_values[0.05], ref.critical_values["5%"], rtol=1e-12)
    # the estimation sample: the dependent variable starts lags + 1 years after the first year
    assert ours.details["sample"] == f"{1964 + ref.lags + 1}:2023"


@pytest.mark.parametrize("trend", ["none", "constant", "trend"])
def test_pp_equals_arch(trend):
    y = _walk()
    for hac_lags, arch_lags in ((None, 4), (4, 4), (2, 2)):
        # default bandwidth: floor(4 (60/100)^(2/9)) = 3 (Newey & West 1994) -- checked below
        ours = pp_test(y, trend=trend, hac_lags=hac_lags, inference="asymptotic")
        expected = 3 if hac_lags is None else arch_lags
        ref = PhillipsPerron(y.to_numpy(), trend=ARCH_TREND[trend], lags=expected)  # arch
        assert_allclose([ours.statistic, ours.pvalue], [ref.stat, ref.pvalue], rtol=1e-12)
        assert ours.details["hac_lags"] == ref.lags and ours.nobs == ref.nobs


@pytest.mark.parametrize("trend", ["constant", "trend"])
def test_kpss_equals_arch(trend):
    y = _ar1()
    ours = kpss_test(y, trend=trend, hac_lags=3, inference="asymptotic")
    ref = KPSS(y, trend=ARCH_TREND[trend], lags=3)  # arch, reference library
    assert_allclose([ours.statistic, ours.pvalue], [ref.stat, ref.pvalue], rtol=1e-12)
    auto = kpss_test(y, trend=trend)
    # the default bandwidth is the package's Newey-West rule, floor(4 (60/100)^(2/9)) = 3
    assert auto.details["hac_lags"] == 3
    assert_allclose(auto.statistic, KPSS(y, trend=ARCH_TREND[trend], lags=3).stat, rtol=1e-12)
    assert "stationary" in ours.null


@pytest.mark.parametrize("trend", ["constant", "trend"])
def test_dfgls_equals_arch(trend):
    y = _walk()
    ours = dfgls_test(y, trend=trend, lags="bic", max_lags=5, inference="asymptotic")
    ref = DFGLS(y.to_numpy(), trend=ARCH_TREND[trend], max_lags=5, method="bic")  # arch
    assert_allclose([ours.statistic, ours.pvalue], [ref.stat, ref.pvalue], rtol=1e-12)
    assert ours.details["lags"] == ref.lags


@pytest.mark.parametrize(("model", "arch_trend", "offset"), [("level", "c", 1), ("trend", "t", 2),
                                                             ("both", "ct", 1)])
def test_za_equals_arch_and_break_year_is_last_old_year(model, arch_trend, offset):
    rng = np.random.default_rng(3)
    values = np.cumsum(rng.normal(size=60))
    values[35:] += 5.0
    y = pd.Series(values, index=range(1960, 2020))
    # inference="asymptotic" gives arch's p-value too (the default simulates it for T)
    ours = za_test(y, model=model, lags=2, inference="asymptotic")
    ref = ZivotAndrews(values, lags=2, trend=arch_trend)  # arch, reference library
    assert_allclose([ours.statistic, ours.pvalue], [ref.stat, ref.pvalue], rtol=1e-12)
    # Independent regression (statsmodels OLS) with our convention: the break year b is the last
    # year of the old regime, DU_t = 1(t > b), DT_t = (t - b) 1(t > b). Its t-ratio at b must
    # equal arch's minimum, which pins down the mapping of arch's index to our year.
    b = ours.details["arch_index"] - offset
    assert ours.details["break_year"] == 1960 + b
    dy = np.diff(values)
    rows, lhs = [], []
    for t in range(3, 60):
        det = [1.0, t]
        if model in ("level", "both"):
            det.append(float(t > b))
        if model in ("trend", "both"):
            det.append(float(t - b) if t > b else 0.0)
        rows.append([*det, values[t - 1], dy[t - 2], dy[t - 3]])
        lhs.append(dy[t - 1])
    fit = sm.OLS(np.array(lhs), np.array(rows)).fit()
    assert_allclose(fit.tvalues[len(rows[0]) - 3], ours.statistic, rtol=1e-9)


def test_results_are_json_safe_and_state_the_sample():
    res = adf_test(_walk(), lags=2)
    payload = json.loads(json.dumps(res.to_dict()))
    assert payload["details"]["lags"] == 2 and payload["details"]["sample"] == "1967:2023"
    assert res.to_frame().shape[0] == 1


# ------------------------------------------------------------------- Lee–Strazicich
def _ls_oracle(y: np.ndarray, dates: list[int], model: str, k: int) -> float:
    """Plain loops and statsmodels OLS: the LM t-ratio at fixed break dates (1-based last years)."""
    n = y.size
    z = []
    for t in range(1, n + 1):
        row = [1.0, float(t)]
        for b in dates:
            row.append(1.0 if t > b else 0.0)
            if model == "both":
                row.append(float(t - b) if t > b else 0.0)
        z.append(row)
    z = np.array(z)
    dy = np.diff(y)
    dz = np.diff(z, axis=0)[:, 1:]
    delta = sm.OLS(dy, dz).fit().params
    psi = y[0] - z[0, 1:] @ delta
    s = np.array([y[t] - psi - z[t, 1:] @ delta for t in range(n)])
    ds = np.diff(s)
    rows, lhs = [], []
    for t in range(k + 1, n):                    # 0-based index of y_t; needs ΔS_{t-k}
        row = list(dz[t - 1]) + [s[t - 1]] + [ds[t - 1 - i] for i in range(1, k + 1)]
        rows.append(row)
        lhs.append(dy[t - 1])
    x = np.array(rows)
    keep = np.any(x != 0, axis=0)                # an impulse outside the sample drops out
    fit = sm.OLS(np.array(lhs), x[:, keep]).fit()
    return float(fit.tvalues[int(np.sum(keep[:dz.shape[1]]))])


@pytest.mark.parametrize(("model", "dates", "k"), [("level", [20], 0), ("level", [12, 30], 2),
                                                    ("both", [25], 1), ("both", [15, 33], 3)])
def test_lee_strazicich_statistic_equals_plain_loop(model, dates, k):
    y = _walk(50, seed=11).to_numpy()
    ours, _ = lm_statistics(y, np.array([dates]), model, k)
    assert_allclose(ours[0], _ls_oracle(y, dates, model, k), rtol=1e-9)


def test_lee_strazicich_search_is_the_minimum_over_the_grid():
    y = _walk(40, seed=12).to_numpy()
    dates = break_grid(40, 1, 0.1)
    stat, best, _k, all_stats = lm_search(y, dates, "level", 1, 1)
    loop = [_ls_oracle(y, [int(d[0])], "level", 1) for d in dates]
    assert_allclose(all_stats, loop, rtol=1e-9)
    assert stat == pytest.approx(min(loop)) and int(best[0]) == int(dates[np.argmin(loop)][0])
    res = lee_strazicich_test(pd.Series(y, index=range(1980, 2020)), lags=1,
                              inference="asymptotic")   # the T = 100 tables, no p-value
    assert res.details["n_breaks"] == 1
    assert res.details["break_years"] == [1980 + int(best[0]) - 1]
    assert math.isnan(res.pvalue) and res.statistic == pytest.approx(stat)


def test_lee_strazicich_critical_values_shipped():
    # Lee & Strazicich (2004), Table 1, crash model, T=100 (from memory): -4.239, -3.566, -3.211
    cv, _ = ls_tables.lookup("level", (0.5,))
    assert cv == {0.01: -4.239, 0.05: -3.566, 0.10: -3.211}
    # Lee & Strazicich (2003), Table 2, crash model, two breaks (from memory): -4.545, -3.842, -3.504
    cv, _ = ls_tables.lookup("level", (0.3, 0.6))
    assert cv[0.05] == -3.842
    # Lee & Strazicich (2004), Table 1, break model, lambda=0.2 (from memory) 5 %: -4.47;
    # lambda=0.8 reads the row of 0.2 by symmetry.
    assert ls_tables.lookup("both", (0.8,))[0][0.05] == -4.47
    # Lee & Strazicich (2003), Table 2, break model, (0.4, 0.6) (from memory) 5 %: -5.67
    assert ls_tables.lookup("both", (0.38, 0.62))[0][0.05] == -5.67


def _crash_quantile(reps: int, seed: int) -> float:
    rng = np.random.default_rng(seed)
    dates = break_grid(100, 1, 0.1)
    draws = [np.nanmin(lm_statistics(np.cumsum(rng.standard_normal(100)), dates, "level", 0)[0])
             for _ in range(reps)]
    return float(np.quantile(draws, 0.05))


def test_lee_strazicich_crash_quantile_small_simulation():
    # a quick version of the slow check below (300 replications: Monte Carlo error about 0.05)
    assert _crash_quantile(300, 5) == pytest.approx(ls_tables.CRASH_ONE[1], abs=0.25)


@pytest.mark.slow
def test_lee_strazicich_crash_5pct_value_near_simulated_quantile():
    # Lee & Strazicich (2004), Table 1 (from memory): crash model, T=100, 5 % = -3.566. Our
    # simulated 5 % quantile with 4000 replications (seed 2024) is about -3.51 (Monte Carlo
    # s.e. about 0.015); the 0.06 gap is beyond simulation error, so the tolerance is that of a
    # remembered value, not of the paper's precision.
    assert _crash_quantile(4000, 2024) == pytest.approx(-3.566, abs=0.1)


def test_lee_strazicich_rejects_a_stationary_series_with_a_level_break():
    y = _ar1(80, phi=0.3, seed=4)
    y[40:] += 4.0
    res = lee_strazicich_test(pd.Series(y, index=range(1940, 2020)), lags=0)
    assert res.statistic < res.critical_values[0.01]
    assert abs(res.details["break_years"][0] - 1979) <= 1


# ----------------------------------------------------------------------- bad input
def test_bad_series_raise_clear_errors():
    y = _walk(40)
    gap = y.copy()
    gap.iloc[10] = np.nan
    with pytest.raises(DataError, match="missing in 1974"):
        adf_test(gap)
    with pytest.raises(DataError, match="constant"):
        adf_test(pd.Series(np.ones(30)))
    with pytest.raises(DataError, match="needs at least"):
        adf_test(y.iloc[:6], lags=4)
    with pytest.raises(SpecError, match="'aic', 'bic', 'sequential-t'"):
        adf_test(y, lags="hqic")
    with pytest.raises(SpecError, match="trend"):
        kpss_test(y, trend="none")
    with pytest.raises(SpecError, match="trend"):
        adf_test(y, trend="c")                      # the old codes are gone
    with pytest.raises(SpecError, match="model"):
        za_test(y, model="crash")
    with pytest.raises(SpecError, match="n_breaks"):
        lee_strazicich_test(y, n_breaks=3)
    with pytest.raises(SpecError, match="hac_lags"):
        pp_test(y, hac_lags=-1)
    with pytest.raises(DataError, match="no values"):
        adf_test(pd.Series([np.nan] * 10))


def test_outer_missing_values_are_trimmed():
    y = _walk(40)
    padded = pd.concat([pd.Series([np.nan, np.nan], index=[1962, 1963]), y])
    assert adf_test(padded, lags=1).statistic == pytest.approx(adf_test(y, lags=1).statistic)
    assert adf_test(padded, lags=1).details["series_span"] == "1964:2003"


# ------------------------------------------------- batch statistics used by the simulations
@pytest.mark.parametrize("trend", ["none", "constant", "trend"])
def test_batch_unit_statistics_equal_arch(trend):
    """The vectorised statistics behind the simulated p-values are arch's, series by series."""
    from evidence.roots._unit_batch import adf_select, dfgls_select, kpss_eta, pp_tau

    rng = np.random.default_rng(17)
    y = np.cumsum(rng.standard_normal((31, 60)), axis=0)
    y[:, ::2] = 0.5 * rng.standard_normal((31, 30)) + 0.4 * y[:, ::2]
    code = ARCH_TREND[trend]
    for method, arch_method in (("aic", "aic"), ("bic", "bic"), ("sequential-t", "t-stat")):
        t, lags, nobs = adf_select(y, trend, 3, method)
        ref = [ADF(y[:, j], trend=code, max_lags=3, method=arch_method) for j in range(60)]  # arch
        assert lags.tolist() == [r.lags for r in ref] and nobs.tolist() == [r.nobs for r in ref]
        assert_allclose(t, [r.stat for r in ref], rtol=1e-9)
    assert_allclose(pp_tau(y, trend, 3), [PhillipsPerron(y[:, j], trend=code, lags=3).stat
                                          for j in range(60)], rtol=1e-9)
    if trend != "none":
        assert_allclose(kpss_eta(y, trend, 2), [KPSS(y[:, j], trend=code, lags=2).stat
                                                for j in range(60)], rtol=1e-7)
        t, lags, _ = dfgls_select(y, trend, None, 3, "aic")
        ref = [DFGLS(y[:, j], trend=code, max_lags=3, method="aic") for j in range(60)]
        assert lags.tolist() == [r.lags for r in ref]
        assert_allclose(t, [r.stat for r in ref], rtol=1e-8)
