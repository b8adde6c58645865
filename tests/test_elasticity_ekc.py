"""Slope homogeneity (Pesaran-Yamagata) and the EKC: turning points, Fieller, Lind-Mehlum."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose
from scipy import stats

import evidence as ev
from evidence import SpecError
from evidence.elasticity import ekc, fieller_interval, slope_homogeneity_test, u_shape_test
from evidence.elasticity.homogeneity import delta_statistics


def _blocks(rng, n, t, spread):
    blocks = []
    for _ in range(n):
        x = rng.normal(size=(t, 1))
        b = 1.0 + spread * rng.normal()
        y = rng.normal() + b * x[:, 0] + rng.normal(size=t)
        blocks.append((y, x))
    return blocks


def _naive_s_tilde(blocks):
    """Plain-loop oracle of S-tilde (Pesaran & Yamagata 2008, eq. 9 as in reference_values 13.1)."""
    def dm(a):
        return a - a.mean(axis=0)
    num_fe = sum(dm(x).T @ dm(y) for y, x in blocks)
    den_fe = sum(dm(x).T @ dm(x) for y, x in blocks)
    b_fe = np.linalg.solve(den_fe, num_fe)
    sig = [float(np.sum((dm(y) - dm(x) @ b_fe) ** 2)) / (len(y) - 1) for y, x in blocks]
    b_w = np.linalg.solve(sum(dm(x).T @ dm(x) / s for (y, x), s in zip(blocks, sig, strict=True)),
                          sum(dm(x).T @ dm(y) / s for (y, x), s in zip(blocks, sig, strict=True)))
    total = 0.0
    for (y, x), s in zip(blocks, sig, strict=True):
        b_i = np.linalg.lstsq(dm(x), dm(y), rcond=None)[0]
        total += float((b_i - b_w) @ (dm(x).T @ dm(x) / s) @ (b_i - b_w))
    return total


def test_delta_matches_naive_oracle():
    blocks = _blocks(np.random.default_rng(0), 12, 20, 0.2)
    delta, delta_adj, s_tilde = delta_statistics(blocks)
    assert_allclose(s_tilde, _naive_s_tilde(blocks), rtol=1e-10)
    n, k, t = 12, 1, 20.0
    assert_allclose(delta, np.sqrt(n) * (s_tilde / n - k) / np.sqrt(2 * k), rtol=1e-12)
    assert_allclose(delta_adj, np.sqrt(n) * (s_tilde / n - k) / np.sqrt(2 * k * (t - k - 1) / (t + 1)),
                    rtol=1e-12)


def test_delta_size_and_power():
    # seeded Monte Carlo, N=20, T=30, 300 replications; nominal 5 % (upper tail)
    rng = np.random.default_rng(11)
    crit = stats.norm.isf(0.05)
    null = np.mean([delta_statistics(_blocks(rng, 20, 30, 0.0))[1] > crit for _ in range(300)])
    alt = np.mean([delta_statistics(_blocks(rng, 20, 30, 0.3))[1] > crit for _ in range(100)])
    assert 0.02 <= null <= 0.09
    assert alt > 0.9


def test_slope_homogeneity_on_panel():
    rng = np.random.default_rng(5)
    rows = []
    for i in range(15):
        b = 0.5 + 0.4 * rng.normal()
        for year in range(1990, 2020):
            x = rng.normal() + 5
            rows.append({"unit": f"r{i}", "year": year, "x": x, "y": 1 + b * x + rng.normal()})
    res = slope_homogeneity_test(ev.load_panel(pd.DataFrame(rows)), "y", "x", log=False)
    assert res.reject(0.01)
    assert res.details["pvalue_two_sided"] == pytest.approx(2 * stats.norm.sf(abs(res.statistic)))
    plain = slope_homogeneity_test(ev.load_panel(pd.DataFrame(rows)), "y", "x", log=False,
                                   adjusted=False)
    assert plain.statistic == pytest.approx(res.details["delta"])
    # Δ and Δ_adj are increasing in S̃: one bootstrap p-value for both
    assert plain.pvalue == res.pvalue == res.details["bootstrap_pvalue"]
    asym = slope_homogeneity_test(ev.load_panel(pd.DataFrame(rows)), "y", "x", log=False,
                                  inference="asymptotic")
    assert asym.pvalue == pytest.approx(stats.norm.sf(asym.statistic))


def _homogeneity_rates(rho, spread, draws, reps, seed):
    from evidence._montecarlo import simulate
    from evidence.parallel import task_seeds
    boot, asym = [], []
    for i, task in enumerate(task_seeds(seed, draws)):
        panel = simulate("slopes", 20, 30, rng=np.random.default_rng(task), rho=rho, spread=spread)
        res = slope_homogeneity_test(panel, "y", "x", log=False, reps=reps, seed=i)
        boot.append(res.pvalue <= 0.05)
        asym.append(res.details["asymptotic_pvalue"] < 0.05)
    return np.mean(boot), np.mean(asym)


def test_slope_homogeneity_bootstrap_fast():
    # Fast subset of the size card: homogeneous slopes, AR(0.5) errors, N = 20, T = 30, 40 draws,
    # B = 49: the normal p-value rejects about 43 % (Pesaran & Yamagata's Δ assumes serially
    # uncorrelated errors); the bootstrap stays near 5 % (gross failures only at this size).
    boot, asym = _homogeneity_rates(0.5, 0.0, 40, 49, 3)
    assert boot <= 0.15 and asym >= 0.25


@pytest.mark.slow
def test_slope_homogeneity_default_size_band_and_power():
    # 300 draws, B = 99, nominal 5 %; band = the card's [3 %, 7.5 %] widened by one Monte Carlo
    # s.e. (1.3 points). Power: slopes 1 + 0.3 N(0, 1) across units, 100 draws.
    boot, asym = _homogeneity_rates(0.5, 0.0, 300, 99, 4)
    assert 0.017 <= boot <= 0.088 and asym > 0.3, (boot, asym)
    power, _ = _homogeneity_rates(0.5, 0.3, 100, 99, 5)
    assert power >= 0.75


# ---------------------------------------------------------------------------------------- EKC
def test_fieller_against_grid_search():
    b1, b2, v11, v12, v22, t = 2.0, -0.25, 0.04, -0.004, 0.0009, 1.96
    low, high = fieller_interval(b1, b2, v11, v12, v22, t)
    grid = np.linspace(0, 10, 200001)
    inside = (b1 + 2 * b2 * grid) ** 2 <= t**2 * (v11 + 4 * grid * v12 + 4 * grid**2 * v22)
    # brute-force oracle: the grid points that satisfy Fieller's inequality
    assert low == pytest.approx(grid[inside].min(), abs=1e-4)
    assert high == pytest.approx(grid[inside].max(), abs=1e-4)
    assert low < -b1 / (2 * b2) < high
    assert all(math.isnan(v) for v in fieller_interval(b1, -0.01, v11, v12, 0.01, t))


def test_u_test_hand_computation():
    res = u_shape_test(2.0, -0.25, 0.04, -0.004, 0.0009, 1.0, 7.0, df=100, nobs=120)
    # hand computation of the slopes' t-ratios at the ends (Lind & Mehlum 2010, formula from memory)
    t_low = (2.0 - 0.5 * 1.0) / math.sqrt(0.04 - 4 * 0.004 * 1.0 + 4 * 0.0009)
    t_high = (2.0 - 0.5 * 7.0) / math.sqrt(0.04 - 4 * 0.004 * 7.0 + 4 * 49 * 0.0009)
    assert res.statistic == pytest.approx(min(t_low, -t_high))
    assert res.pvalue == pytest.approx(stats.t.sf(min(t_low, -t_high), 100))


def _ekc_frame(seed: int, inverted: bool) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(20):
        a = rng.normal()
        for year in range(1990, 2020):
            x = 0.5 + 0.2 * (year - 1990) + 0.3 * rng.normal() + 0.5 * a  # log income 0.5..6.5
            curve = 3.0 * x - 0.4 * x * x if inverted else 0.5 * x
            rows.append({"unit": f"r{i}", "year": year, "gdp": np.exp(x),
                         "co2": np.exp(a + curve + 0.1 * rng.normal())})
    return pd.DataFrame(rows)


def test_ekc_recovers_turning_point_and_rejects_monotone():
    res = ekc(ev.load_panel(_ekc_frame(1, True)), "co2", "gdp", cov="heteroskedastic")
    point = res.turning_points.iloc[0]
    # planted: -3.0 / (2 * -0.4) = 3.75 (constructed in the test)
    assert point.point == pytest.approx(3.75, abs=0.1)
    assert point.fieller_lower < 3.75 < point.fieller_upper and point.inside_range
    b = res.estimate.params
    assert point.point == pytest.approx(-b.iloc[0] / (2 * b.iloc[1]))
    assert point.level == pytest.approx(math.exp(point.point))
    assert res.u_test.reject(0.01)
    assert "Wagner" in res.warnings[0]
    flat = ekc(ev.load_panel(_ekc_frame(2, False)), "co2", "gdp", cov="heteroskedastic")
    assert not flat.u_test.reject(0.05)


def test_ekc_cubic_and_per_capita():
    frame = _ekc_frame(3, True).assign(pop=10.0)
    res = ekc(ev.load_panel(frame), "co2", "gdp", population="pop", degree=3)
    assert not res.u_test.applicable
    assert res.estimate.params.index[0] == "log_gdp_per_capita"
    b1, b2, b3 = res.estimate.params.iloc[:3]
    for x in res.turning_points["point"]:
        assert b1 + 2 * b2 * x + 3 * b3 * x * x == pytest.approx(0.0, abs=1e-8)
    with pytest.raises(SpecError, match="degree"):
        ekc(ev.load_panel(frame), "co2", "gdp", degree=4)


def test_ekc_on_demo_panel_with_cce():
    res = ekc(ev.demo_panel(), "ghg_territorial", "gdp", population="population",
              estimator="ccemg")
    assert np.isfinite(res.estimate.params).all()
    assert res.to_dict()["degree"] == 2
