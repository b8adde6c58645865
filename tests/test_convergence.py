"""Beta, sigma, gamma and club convergence against hand computations, statsmodels and simulations."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from numpy.testing import assert_allclose
from scipy import stats

import evidence as ev
from evidence import DataError, SpecError
from evidence.convergence import (
    beta_convergence,
    carree_klomp_tests,
    club_convergence,
    gamma_convergence,
    log_t_test,
    sigma_convergence,
    speed_of_convergence,
)
from evidence.convergence.clubs import log_t_statistic
from evidence.convergence.sigma import dispersion, kendall_concordance
from evidence.indicators import newey_west_lags


# ------------------------------------------------------------------------------------ beta
def test_speed_and_half_life_hand_computation():
    # shared/reference_values.md section 14 (computed there): b = -0.015, T = 25 ->
    # beta = -ln(1 - 0.375)/25 = 0.018800, half-life 36.869 years
    speed, speed_se, half, half_se = speed_of_convergence(-0.015, 0.005, 25)
    assert speed == pytest.approx(0.018800, abs=5e-7)
    assert half == pytest.approx(36.869, abs=5e-4)
    # delta method: se(beta) = se(b)/(1 + bT); se(h) = ln2 se(beta)/beta^2
    assert speed_se == pytest.approx(0.005 / 0.625)
    assert half_se == pytest.approx(math.log(2) * (0.005 / 0.625) / speed**2)
    # Barro & Sala-i-Martin benchmark (from memory): beta = 2 % -> half-life ln 2/0.02 = 34.657
    b = (math.exp(-0.02 * 20) - 1) / 20
    assert speed_of_convergence(b, 0.001, 20)[2] == pytest.approx(34.657359, abs=1e-5)
    assert math.isnan(speed_of_convergence(-0.05, 0.01, 25)[0])  # 1 + bT <= 0


def _convergent_frame(seed: int = 0, n: int = 40) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(n):
        level = rng.normal(2.0, 0.5)
        for year in range(1990, 2021):
            rows.append({"unit": f"u{i:02d}", "year": year, "pop": 10.0,
                         "y": math.exp(2.0 + (level - 2.0) * math.exp(-0.05 * (year - 1990))
                                       + 0.02 * rng.normal())})
    return pd.DataFrame(rows)


def test_beta_regression_equals_statsmodels():
    frame = _convergent_frame()
    res = beta_convergence(ev.load_panel(frame), "y", window=(1990, 2020))
    wide = frame.pivot(index="unit", columns="year", values="y")
    g = (np.log(wide[2020]) - np.log(wide[1990])) / 30
    # Reference library: statsmodels OLS with HC1, Student t
    fit = sm.OLS(g, sm.add_constant(np.log(wide[1990]))).fit(cov_type="HC1", use_t=True)
    assert_allclose(res.estimate.params.to_numpy(), fit.params.to_numpy(), rtol=1e-10)
    assert_allclose(res.estimate.std_errors.to_numpy(), fit.bse.to_numpy(), rtol=1e-10)
    assert res.test.reject(0.01)
    # the planted speed is 0.05 a year (noise-free convergence exp(-0.05 t))
    assert res.speed == pytest.approx(0.05, abs=0.01)


def test_beta_panel_form_and_options():
    panel = ev.load_panel(_convergent_frame())
    res = beta_convergence(panel, "y", form="panel", span=5)
    assert res.estimate.details["periods"] == 6 and res.test.reject(0.01)
    with pytest.raises(SpecError, match="form"):
        beta_convergence(panel, "y", form="club")
    with pytest.raises(SpecError, match="controls"):
        beta_convergence(panel, "y", form="panel", controls=["pop"])


# ----------------------------------------------------------------------------------- sigma
def test_dispersion_equals_numpy():
    rng = np.random.default_rng(1)
    values = np.exp(rng.normal(size=(5, 7)))
    assert_allclose(dispersion(values), np.std(np.log(values), axis=1))
    assert_allclose(dispersion(values, measure="cv"), np.std(values, axis=1) / np.mean(values, axis=1))
    w = np.ones_like(values)
    assert_allclose(dispersion(values, measure="weighted_sd_log", weights=w), dispersion(values))


def test_sigma_trend_equals_statsmodels_hac():
    frame = _convergent_frame(2)
    res = sigma_convergence(ev.load_panel(frame), "y")
    wide = frame.pivot(index="year", columns="unit", values="y")
    path = np.log(wide).std(axis=1, ddof=0).to_numpy()
    assert_allclose(res.path.to_numpy(), path, rtol=1e-12)
    years = wide.index.to_numpy(dtype=float)
    # Reference library: statsmodels OLS, Newey-West HAC with the same lags and n/(n-k) correction
    fit = sm.OLS(path, sm.add_constant(years)).fit(
        cov_type="HAC", cov_kwds={"maxlags": newey_west_lags(years.size), "use_correction": True},
        use_t=True)
    assert res.trend_test.statistic == pytest.approx(fit.tvalues[1], rel=1e-8)
    assert res.trend_test.pvalue == pytest.approx(fit.pvalues[1] / 2, rel=1e-6)
    assert res.trend_test.reject(0.01)


def test_carree_klomp_formulas():
    rng = np.random.default_rng(3)
    first = np.exp(rng.normal(size=50))
    last = np.exp(0.7 * np.log(first) + 0.3 * rng.normal(size=50))
    t2, t3 = carree_klomp_tests(first, last)
    x, y = np.log(first), np.log(last)
    v1, vt, c = np.var(x), np.var(y), np.cov(x, y, ddof=0)[0, 1]
    # Carree & Klomp (1997) T2 (formula from memory, shared/reference_values.md section 14)
    assert t2.statistic == pytest.approx((50 - 2.5) * np.log(1 + (v1 - vt) ** 2 / (4 * (v1 * vt - c**2))))
    beta = np.polyfit(x, y, 1)[0]
    assert t3.statistic == pytest.approx(np.sqrt(50) * (v1 / vt - 1) / (2 * np.sqrt(1 - beta**2)))


def test_carree_klomp_size_and_power():
    # seeded Monte Carlo: bivariate normal logs, N = 60, correlation 0.8, 1000 replications
    rng = np.random.default_rng(4)
    cov = np.array([[1.0, 0.8], [0.8, 1.0]])
    rej2 = rej3 = 0
    for _ in range(1000):
        draw = rng.multivariate_normal([0, 0], cov, size=60)
        t2, t3 = carree_klomp_tests(np.exp(draw[:, 0]), np.exp(draw[:, 1]))
        rej2 += t2.pvalue < 0.05
        rej3 += t3.pvalue < 0.05
    assert 0.03 <= rej2 / 1000 <= 0.075 and 0.03 <= rej3 / 1000 <= 0.075
    shrink = np.array([[1.0, 0.6], [0.6, 0.5]])
    power = np.mean([carree_klomp_tests(*np.exp(rng.multivariate_normal([0, 0], shrink, 60).T))[1]
                     .pvalue < 0.05 for _ in range(200)])
    assert power > 0.8


def test_sigma_weighted_and_errors():
    frame = _convergent_frame(5)
    panel = ev.load_panel(frame)
    res = sigma_convergence(panel, "y", measure="weighted_sd_log", weights="pop")
    assert_allclose(res.path.to_numpy(), sigma_convergence(panel, "y").path.to_numpy())
    with pytest.raises(SpecError, match="weights"):
        sigma_convergence(panel, "y", measure="weighted_sd_log")
    frame.loc[0, "y"] = np.nan
    excl = sigma_convergence(ev.load_panel(frame), "y")
    assert list(excl.excluded.unit) == ["u00"] and excl.details["units"] == 39


# ----------------------------------------------------------------------------------- gamma
def test_kendall_index_equals_spearman_relation():
    rng = np.random.default_rng(6)
    a, b = rng.normal(size=25), rng.normal(size=25)
    # for two rankings Kendall's W = (1 + Spearman rho)/2 (scipy.stats.spearmanr)
    assert kendall_concordance(a, b) == pytest.approx((1 + stats.spearmanr(a, b)[0]) / 2)
    assert kendall_concordance(a, a) == pytest.approx(1.0)


def test_gamma_convergence_path():
    res = gamma_convergence(ev.load_panel(_convergent_frame(7)), "y")
    assert res.path.iloc[0] == pytest.approx(1.0)
    assert res.test.statistic == pytest.approx(2 * 39 * res.path.iloc[-1])


# ------------------------------------------------------------------------------ Phillips-Sul
def _naive_log_t(x: np.ndarray, trim: float) -> float:
    """Oracle: the same regression with statsmodels OLS and Newey-West HAC (use_correction)."""
    h = x / x.mean(axis=1, keepdims=True)
    big_h = ((h - 1) ** 2).mean(axis=1)
    first = max(int(np.floor(trim * x.shape[0])), 2)
    t = np.arange(first, x.shape[0] + 1)
    y = np.log(big_h[0] / big_h[first - 1:]) - 2 * np.log(np.log(t))
    fit = sm.OLS(y, sm.add_constant(np.log(t))).fit(
        cov_type="HAC", cov_kwds={"maxlags": newey_west_lags(t.size), "use_correction": True})
    return float(fit.tvalues[1])


def _ps_panel(seed: int, clubs: tuple[float, ...], n_per: int = 10, t: int = 40) -> np.ndarray:
    """Phillips & Sul (2007) nonlinear factor model: log y_it = delta_it mu_t, with
    delta_it = delta_c + sigma_i xi_it / (log(t+1) t^alpha), alpha = 0.3 (transitions decay)."""
    rng = np.random.default_rng(seed)
    mu = 2.0 + 0.02 * np.arange(1, t + 1)
    cols = []
    for delta in clubs:
        for _ in range(n_per):
            s = np.arange(1, t + 1)
            dev = rng.normal(0.3, 0.1) + 0.02 * rng.normal(size=t)
            cols.append((delta + dev / (np.log(s + 1) * s**0.3)) * mu)
    return np.column_stack(cols)


def test_log_t_statistic_matches_statsmodels_oracle():
    x = _ps_panel(0, (1.0, 1.4))
    assert log_t_statistic(x, trim=0.3)[0] == pytest.approx(_naive_log_t(x, 0.3), rel=1e-8)


def _frame_from(x: np.ndarray) -> pd.DataFrame:
    rows = [{"unit": f"u{j:02d}", "year": 1981 + i, "y": math.exp(x[i, j])}
            for j in range(x.shape[1]) for i in range(x.shape[0])]
    return pd.DataFrame(rows)


def test_log_t_does_not_reject_a_convergent_panel():
    # Phillips & Sul (2007): r = 0.3 and the one-sided 5 % critical value -1.65
    res = log_t_test(ev.load_panel(_frame_from(_ps_panel(1, (1.0,), n_per=20))), "y")
    assert res.statistic > -1.65 and not res.reject(0.05)


def test_clubs_recovered_from_factor_model():
    x = _ps_panel(2, (1.0, 1.5), n_per=10)
    res = club_convergence(ev.load_panel(_frame_from(x)), "y")
    assert res.overall.statistic < -1.65  # Phillips & Sul (2007) rule: reject at -1.65
    assert sorted(sorted(c) for c in res.clubs) == [[f"u{j:02d}" for j in range(10)],
                                                    [f"u{j:02d}" for j in range(10, 20)]]
    assert all(t.statistic > -1.65 for t in res.tests)


def test_demo_panel_clubs_recovered(tmp_path):
    panel = ev.demo_panel().with_per_capita("ghg_territorial", "population")
    res = club_convergence(panel, "ghg_territorial_per_capita")
    truth = ev.demo_truth()  # planted by the generator
    assert sorted(sorted(c) for c in res.clubs) == sorted(sorted(v) for v in truth["clubs"].values())
    assert res.divergent == ()
    assert set(res.membership().club) == {1, 2, 3}
    res.plot(tmp_path / "clubs.png")
    assert (tmp_path / "clubs.png").stat().st_size > 1000


def test_club_errors():
    frame = _frame_from(_ps_panel(3, (1.0,)))
    frame.loc[5, "y"] = np.nan
    with pytest.raises(DataError, match="balanced window"):
        club_convergence(ev.load_panel(frame), "y")
    with pytest.raises(SpecError, match="trim"):
        log_t_test(ev.load_panel(_frame_from(_ps_panel(3, (1.0,)))), "y", trim=0.7)
    small = _frame_from(_ps_panel(3, (1.0,))).assign(y=0.5)
    with pytest.raises(DataError, match="not positive"):
        log_t_test(ev.load_panel(small), "y", smoothing=None)


# ------------------------------------------------------------------------------ stochastic
def _relative_frame(seed: int, rho: float, n: int = 8, t: int = 60) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    common = np.cumsum(rng.normal(0, 0.02, t))  # a shared stochastic trend (cancels in relatives)
    rows = []
    for i in range(n):
        r = np.zeros(t)
        for k in range(1, t):
            r[k] = rho * r[k - 1] + rng.normal(0, 0.05)
        for k in range(t):
            rows.append({"unit": f"u{i}", "year": 1960 + k, "y": math.exp(2 + common[k] + r[k])})
    return pd.DataFrame(rows)


def test_relative_series_by_hand():
    from evidence.convergence import relative_series

    frame = _relative_frame(0, 0.5)
    work = relative_series(ev.load_panel(frame), "y")
    wide = frame.pivot(index="year", columns="unit", values="y")
    expected = np.log(wide.div(wide.mean(axis=1), axis=0))
    got = work.wide("relative_y")
    assert_allclose(got.to_numpy(), expected.to_numpy(), rtol=1e-12)


def test_stochastic_convergence_verdicts():
    from evidence.convergence import stochastic_convergence

    stationary = stochastic_convergence(ev.load_panel(_relative_frame(1, 0.3)), "y",
                                        panel_tests=("ips",))
    walk = stochastic_convergence(ev.load_panel(_relative_frame(2, 1.0)), "y", panel_tests=("ips",))
    conv = (stationary.table["verdict"] == "converging").mean()
    not_conv = (walk.table["verdict"] == "not converging").mean()
    assert conv >= 0.6 and not_conv >= 0.6
    assert stationary.table.set_index("unit").loc["(panel)", "verdict"] == "converging"
    # the summary counts units only; the panel tests' row is reported on its own line
    n_units = len(stationary.table) - 1
    head, panel_line = stationary.summary().splitlines()[:2]
    assert f"{n_units} units" in head
    assert sum(int(part.rsplit(" ", 1)[1]) for part in head.split(": ", 1)[1].split(", ")) == n_units
    assert panel_line.startswith("  panel tests: converging")


# ------------------------------------------------------------------------- result protocol
def test_convergence_results_follow_the_protocol(tmp_path):
    import json

    from evidence.results import EXCLUDED_COLUMNS

    frame = _convergent_frame(3)
    frame.loc[0, "y"] = np.nan
    panel = ev.load_panel(frame)
    results = [beta_convergence(panel, "y"), sigma_convergence(panel, "y"),
               gamma_convergence(panel, "y"),
               club_convergence(ev.load_panel(_frame_from(_ps_panel(2, (1.0, 1.5), n_per=6))), "y")]
    for res in results:
        assert "\n" not in repr(res) and repr(res).startswith(type(res).__name__ + "(")
        assert str(res) == res.summary() and res._repr_html_().startswith("<pre>")
        payload = res.to_dict()
        assert json.loads(json.dumps(payload, allow_nan=False)) == payload
        assert isinstance(res.to_frame(), pd.DataFrame) and len(res.to_frame()) >= 1
        if hasattr(res, "excluded"):
            assert list(res.excluded.columns) == list(EXCLUDED_COLUMNS)
        if hasattr(res, "details"):
            with pytest.raises(TypeError):
                res.details["x"] = 1  # frozen
    beta, sigma = results[0], results[1]
    # the unit with a missing first-year value is left out, named with its column and years
    assert beta.excluded.iloc[0].tolist() == ["u00", "y", "1990, 2020", "missing value in 1990 or 2020"]
    assert sigma.excluded.iloc[0][["unit", "column", "years"]].tolist() == ["u00", "y", "1990"]
    assert list(results[3].to_frame().columns) == ["club", "units", "log_t", "b", "pvalue"]
    written = results[3].plot(tmp_path / "clubs")
    assert [p.suffix for p in written] == [".png", ".svg"]
    import matplotlib.pyplot as plt

    assert plt.get_fignums() == []  # the figure helper closes what it saves
