"""Panel elasticities: fixed effects against published Grunfeld values and linearmodels; mean groups."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from linearmodels.panel import PanelOLS
from numpy.testing import assert_allclose

import evidence as ev
from evidence import DataError, SpecError
from evidence.elasticity import decoupling_tests, elasticity, time_varying_elasticity


@pytest.fixture(scope="module")
def grunfeld() -> ev.Panel:
    """statsmodels' Grunfeld data, 10 firms (American Steel dropped), as in Baltagi."""
    data = sm.datasets.grunfeld.load_pandas().data
    data = data[data.firm != "American Steel"].copy()
    data["year"] = data["year"].astype(int)
    return ev.load_panel(data[["firm", "year", "invest", "value", "capital"]], unit="firm")


def test_grunfeld_within_matches_published(grunfeld):
    est = elasticity(grunfeld, "invest", "value", controls=["capital"], log=False,
                     cov="classical")
    # Baltagi, Econometric Analysis of Panel Data, Table 2.1 (attribution from memory), within
    # estimator; values to 7 digits from R plm 2.6.2 (shared/reference_values.md section 12.2).
    assert_allclose(est.params["value"], 0.1101238, atol=5e-7)
    assert_allclose(est.params["capital"], 0.3100653, atol=5e-7)
    assert_allclose(est.std_errors["value"], 0.0118567, atol=5e-7)
    assert_allclose(est.std_errors["capital"], 0.0173545, atol=5e-7)
    # same source: R² within 0.76676
    assert_allclose(est.details["r2_within"], 0.76676, atol=5e-6)
    assert est.nobs == 200 and est.details["units"] == 10


@pytest.mark.parametrize(("cov", "config"), [
    ("heteroskedastic", {"cov_type": "robust"}),
    ("driscoll-kraay", {"cov_type": "kernel", "kernel": "bartlett", "bandwidth": 3}),
])
@pytest.mark.parametrize("estimator", ["fe", "twfe"])
def test_covariances_equal_linearmodels(grunfeld, cov, config, estimator):
    est = elasticity(grunfeld, "invest", "value", controls=["capital"], log=False,
                     estimator=estimator, cov=cov, hac_lags=3 if cov == "driscoll-kraay" else None)
    frame = grunfeld.frame
    # Reference library: linearmodels PanelOLS called directly with the same settings.
    ref = PanelOLS(frame["invest"], frame[["value", "capital"]], entity_effects=True,
                   time_effects=(estimator == "twfe")).fit(debiased=True, **config)
    assert_allclose(est.params.to_numpy(), ref.params.to_numpy(), rtol=1e-10)
    assert_allclose(est.std_errors.to_numpy(), ref.std_errors.to_numpy(), rtol=1e-10)
    assert_allclose(est.pvalues.to_numpy(), ref.pvalues.to_numpy(), rtol=1e-8, atol=1e-300)


@pytest.mark.parametrize("cov", ["unit-cluster", "two-way-cluster"])
@pytest.mark.parametrize("estimator", ["fe", "twfe"])
def test_clustered_covariances_count_only_effects_not_nested(grunfeld, cov, estimator):
    # Our rule (docs/methods/elasticity.md): factor G/(G-1) (n-1)/(n-k) per cluster dimension,
    # k = slopes + effects not nested in the clusters (T - 1 = 19 year effects for two-way fixed
    # effects clustered by unit; none otherwise), t with G - 1 df. linearmodels counts all
    # N + T - 1 effects in two-way models and none in one-way ones (auto_df), so the reference is
    # linearmodels without counting effects (its factor G/(G-1) (n-1)/(n-k)) rescaled by hand.
    est = elasticity(grunfeld, "invest", "value", controls=["capital"], log=False,
                     estimator=estimator, cov=cov)
    frame = grunfeld.frame
    config = {"cluster_entity": True, "cluster_time": cov == "two-way-cluster", "group_debias": True}
    ref = PanelOLS(frame["invest"], frame[["value", "capital"]], entity_effects=True,
                   time_effects=(estimator == "twfe")).fit(cov_type="clustered", debiased=True,
                                                           auto_df=False, count_effects=False,
                                                           **config)
    n, k = 200, 2
    counted = 19 if (estimator == "twfe" and cov == "unit-cluster") else 0
    assert_allclose(est.std_errors.to_numpy(),
                    ref.std_errors.to_numpy() * np.sqrt((n - k) / (n - k - counted)), rtol=1e-10)
    assert est.df_resid == 9 and est.details["effects_counted"] == counted   # G = 10 firms
    assert "k = 2 slopes" in est.cov_type and "t with 9 df" in est.cov_type
    if estimator == "fe" and cov == "unit-cluster":   # nested effects: linearmodels agrees
        auto = PanelOLS(frame["invest"], frame[["value", "capital"]],
                        entity_effects=True).fit(cov_type="clustered", debiased=True, **config)
        assert_allclose(est.std_errors.to_numpy(), auto.std_errors.to_numpy(), rtol=1e-10)


def test_two_way_clusters_by_hand():
    # Two-way fixed effects on a balanced panel by double demeaning, then the Cameron, Gelbach &
    # Miller (2011) two-way clustered covariance V_unit G1/(G1-1) + V_year G2/(G2-1) - V_obs
    # n/(n-1), all times (n-1)/(n-k) with k = 1 slope (both sets of effects are nested in one of
    # the cluster dimensions); and clustered by unit only, k = 1 + (T - 1) year effects.
    frame = _tiny_panel()
    panel = ev.load_panel(frame)
    def dd(col):
        v = frame[col]
        return (v - frame.groupby("unit")[col].transform("mean")
                - frame.groupby("year")[col].transform("mean") + v.mean()).to_numpy()
    x, y = dd("x"), dd("y")
    beta = (x @ y) / (x @ x)
    e = y - x * beta
    n, k = len(y), 1
    score = pd.Series(x * e)
    g_unit = score.groupby(frame.unit.to_numpy()).sum().to_numpy()
    g_year = score.groupby(frame.year.to_numpy()).sum().to_numpy()
    meat = (g_unit @ g_unit * 4 / 3 + g_year @ g_year * 8 / 7 - (x * e) @ (x * e) * n / (n - 1))
    two_way = elasticity(panel, "y", "x", log=False, estimator="twfe", cov="two-way-cluster")
    assert_allclose(two_way.params["x"], beta, rtol=1e-10)
    assert_allclose(two_way.std_errors["x"] ** 2, meat / (x @ x) ** 2 * (n - 1) / (n - k),
                    rtol=1e-8)
    one_way = elasticity(panel, "y", "x", log=False, estimator="twfe", cov="unit-cluster")
    expected = (g_unit @ g_unit) / (x @ x) ** 2 * 4 / 3 * (n - 1) / (n - k - 7)
    assert_allclose(one_way.std_errors["x"] ** 2, expected, rtol=1e-8)
    from scipy import stats
    t = beta / one_way.std_errors["x"]
    assert_allclose(one_way.pvalues["x"], 2 * stats.t.sf(abs(t), 3), rtol=1e-10)  # G - 1 = 3


def _tiny_panel() -> pd.DataFrame:
    rng = np.random.default_rng(3)
    rows = []
    for unit in "ABCD":
        for year in range(2000, 2008):
            x = rng.normal()
            rows.append({"unit": unit, "year": year, "y": 0.5 * x + rng.normal(), "x": x})
    return pd.DataFrame(rows)


def test_driscoll_kraay_and_cluster_by_hand():
    frame = _tiny_panel()
    panel = ev.load_panel(frame)
    demeaned = frame.assign(y=frame.y - frame.groupby("unit").y.transform("mean"),
                            x=frame.x - frame.groupby("unit").x.transform("mean"))
    x, y = demeaned.x.to_numpy(), demeaned.y.to_numpy()
    beta = (x @ y) / (x @ x)
    e = y - x * beta
    n, k, effects = len(y), 1, 4
    # Driscoll & Kraay (1998): h_t = sum_i x_it e_it, Bartlett weights 1 - l/(L+1), L = 2
    h = pd.Series(x * e).groupby(frame.year.to_numpy()).sum().to_numpy()
    s = h @ h + sum(2 * (1 - lag / 3) * (h[lag:] @ h[:-lag]) for lag in (1, 2))
    dk = elasticity(panel, "y", "x", log=False, cov="driscoll-kraay", hac_lags=2)
    assert_allclose(dk.params["x"], beta, rtol=1e-12)
    # debiased scale n/(n - k - effects) (linearmodels debiased=True counts the unit effects)
    assert_allclose(dk.std_errors["x"] ** 2, s / (x @ x) ** 2 * n / (n - k - effects), rtol=1e-10)
    # clustered by unit: sum_i (sum_t x_it e_it)^2 with the small-sample factor
    # G/(G-1) (n-1)/(n-k) of Stata's xtreg, fe vce(cluster) (common practice; G = 4 clusters);
    # unit effects nested in the clusters are not counted
    g = pd.Series(x * e).groupby(frame.unit.to_numpy()).sum().to_numpy()
    cl = elasticity(panel, "y", "x", log=False, cov="unit-cluster")
    expected = (g @ g) / (x @ x) ** 2 * 4 / 3 * (n - 1) / (n - k)
    assert_allclose(cl.std_errors["x"] ** 2, expected, rtol=1e-10)
    assert cl.df_resid == 3  # t with G - 1 degrees of freedom (common practice)


def test_mean_group_equals_average_of_unit_ols(grunfeld):
    est = elasticity(grunfeld, "invest", "value", controls=["capital"], log=False, estimator="mg")
    frame = grunfeld.frame
    # Reference library: statsmodels OLS unit by unit, then the plain average (Pesaran & Smith 1995)
    slopes = np.array([sm.OLS(g["invest"], sm.add_constant(g[["value", "capital"]])).fit()
                       .params[["value", "capital"]].to_numpy() for _, g in frame.groupby(level=0)])
    assert_allclose(est.params.to_numpy(), slopes.mean(axis=0), rtol=1e-10)
    n = slopes.shape[0]
    dev = slopes - slopes.mean(axis=0)
    assert_allclose(est.cov.to_numpy(), dev.T @ dev / (n * (n - 1)), rtol=1e-10)
    assert_allclose(est.details["unit_params"].to_numpy(), slopes, rtol=1e-10)


def test_cce_mean_group_equals_augmented_unit_ols(grunfeld):
    est = elasticity(grunfeld, "invest", "value", controls=["capital"], log=False,
                     estimator="ccemg")
    frame = grunfeld.frame
    means = frame.groupby(level=1)[["invest", "value", "capital"]].mean().add_prefix("mean_")
    slopes = []
    for _, g in frame.groupby(level=0):
        regs = pd.concat([g[["value", "capital"]].droplevel(0), means], axis=1)
        fit = sm.OLS(g["invest"].droplevel(0), sm.add_constant(regs)).fit()
        slopes.append(fit.params[["value", "capital"]].to_numpy())
    # Pesaran (2006): unit OLS augmented with cross-section averages of y and x (statsmodels)
    assert_allclose(est.params.to_numpy(), np.mean(slopes, axis=0), rtol=1e-8)


def _factor_panel(seed: int, n: int = 30, t: int = 30) -> pd.DataFrame:
    """y_it = a_i + b_i x_it + g_i f_t + e_it, x_it = c_i + d_i f_t + v_it, E[b_i] = 0.5."""
    rng = np.random.default_rng(seed)
    f = np.cumsum(rng.normal(size=t)) * 0.5 + np.linspace(0, 3, t)
    rows = []
    for i in range(n):
        b_i, g_i, d_i = 0.5 + 0.1 * rng.normal(), 1 + 0.5 * rng.normal(), 1 + 0.5 * rng.normal()
        x = rng.normal() + d_i * f + rng.normal(size=t)
        y = rng.normal() + b_i * x + g_i * f + rng.normal(size=t)
        rows += [{"unit": f"u{i:02d}", "year": 2000 + s, "y": y[s], "x": x[s]} for s in range(t)]
    return pd.DataFrame(rows)


def test_cce_recovers_mean_slope_where_fixed_effects_is_biased():
    # seeded Monte Carlo: a common factor correlated with the regressor biases FE (Pesaran 2006)
    fe, cce = [], []
    for seed in range(8):
        panel = ev.load_panel(_factor_panel(seed))
        fe.append(elasticity(panel, "y", "x", log=False).params["x"])
        cce.append(elasticity(panel, "y", "x", log=False, estimator="ccemg").params["x"])
    assert abs(np.mean(cce) - 0.5) < 0.05
    assert abs(np.mean(fe) - 0.5) > 0.2


def test_amg_and_ccep_run_and_keep_unit_slopes(grunfeld):
    for estimator in ("amg", "ccep"):
        est = elasticity(grunfeld, "invest", "value", controls=["capital"], log=False,
                         estimator=estimator)
        assert np.all(np.isfinite(est.std_errors))
        assert est.details["unit_params"].shape == (10, 2)


def test_amg_recovers_mean_slope_under_common_factor():
    est = [elasticity(ev.load_panel(_factor_panel(s)), "y", "x", log=False,
                      estimator="amg").params["x"] for s in range(6)]
    assert abs(np.mean(est) - 0.5) < 0.08


def test_robust_mean_option(grunfeld):
    est = elasticity(grunfeld, "invest", "value", log=False, estimator="mg", robust_mean=True)
    slopes = est.details["unit_params"]["value"].to_numpy()
    # Reference library: statsmodels RLM (Huber) of the unit slopes on a constant
    ref = sm.RLM(slopes, np.ones((slopes.size, 1)), M=sm.robust.norms.HuberT()).fit()
    assert_allclose(est.params["value"], ref.params[0], rtol=1e-10)
    assert "Huber" in est.details["mean"]


def test_decoupling_tests_are_one_sided(grunfeld):
    est = elasticity(grunfeld, "invest", "value", log=False, cov="classical")
    relative, absolute = decoupling_tests(est)
    b, se = est.params["value"], est.std_errors["value"]
    from scipy import stats
    assert relative.statistic == pytest.approx((b - 1) / se)
    assert relative.pvalue == pytest.approx(stats.t.cdf((b - 1) / se, est.df_resid))
    assert absolute.pvalue == pytest.approx(stats.t.cdf(b / se, est.df_resid))
    assert relative.reject(0.05) and not absolute.reject(0.05)


def test_time_varying_elasticity(grunfeld):
    path = time_varying_elasticity(grunfeld, "invest", "value", width=10, log=False,
                                   cov="classical")
    assert len(path.table) == 11 and list(path.table.columns[:3]) == ["start", "end", "elasticity"]
    first = elasticity(grunfeld, "invest", "value", log=False, cov="classical",
                       window=(1935, 1944))
    assert path.table.loc[0, "elasticity"] == pytest.approx(first.params["value"])
    periods = time_varying_elasticity(grunfeld, "invest", "value", log=False,
                                      periods=[(1935, 1944), (1945, 1954)])
    assert len(periods.table) == 2
    with pytest.raises(SpecError, match="exactly one"):
        time_varying_elasticity(grunfeld, "invest", "value")


def test_bad_input(grunfeld):
    frame = grunfeld.frame.reset_index()
    frame["capital2"] = 2 * frame["capital"]
    panel = ev.load_panel(frame, unit="firm")
    with pytest.raises(DataError, match="collinear"):
        elasticity(panel, "invest", "value", controls=["capital", "capital2"], log=False)
    short = frame[~((frame.firm == "IBM") & (frame.year > 1936))]
    with pytest.raises(DataError, match="unit 'IBM' has 2 usable"):
        elasticity(ev.load_panel(short, unit="firm"), "invest", "value",
                   controls=["capital"], log=False)
    est = elasticity(ev.load_panel(short, unit="firm"), "invest", "value", controls=["capital"],
                     log=False, drop_short=True)
    assert "IBM" in set(est.details["excluded"]["unit"])
    bad = frame.copy()
    bad.loc[3, "invest"] = 0.0
    with pytest.raises(DataError, match="column 'invest' is 0 at unit 'Atlantic Refining', year 1938"):
        elasticity(ev.load_panel(bad, unit="firm"), "invest", "value")
    with pytest.raises(SpecError, match="cov="):
        elasticity(panel, "invest", "value", estimator="mg", cov="heteroskedastic")
    with pytest.raises(SpecError, match="'amg', 'ccemg'"):
        elasticity(panel, "invest", "value", estimator="gmm")


def test_residuals_are_returned(grunfeld, tmp_path):
    fe = elasticity(grunfeld, "invest", "value", controls=["capital"], log=False)
    frame = grunfeld.frame
    # within residuals: y - X b - a_i with a_i the unit mean of y - X b (hand computation)
    raw = frame["invest"] - frame[["value", "capital"]] @ fe.params.to_numpy()
    expected = raw - raw.groupby(level=0).transform("mean")
    assert_allclose(fe.resid.to_numpy(), expected.to_numpy(), atol=1e-8)
    mg = elasticity(grunfeld, "invest", "value", log=False, estimator="mg")
    g = frame.loc["IBM"]
    fit = sm.OLS(g["invest"], sm.add_constant(g["value"])).fit()
    assert_allclose(mg.resid.loc["IBM"].to_numpy(), fit.resid.to_numpy(), atol=1e-8)
    path = time_varying_elasticity(grunfeld, "invest", "value", width=8, log=False)
    assert path.plot(tmp_path / "path.png") == [tmp_path / "path.png"]
    assert (tmp_path / "path.png").stat().st_size > 1000
    assert "ElasticityPath(" in repr(path) and "Elasticity by window" in str(path)


def test_regression_table_lists_what_was_left_out(grunfeld):
    frame = grunfeld.frame.reset_index()
    frame.loc[0, "capital"] = np.nan
    est = elasticity(ev.load_panel(frame, unit="firm"), "invest", "value", controls="capital",
                     log=False)
    assert est.params.index.tolist() == ["value", "capital"]
    assert "left out: American" not in ev.regression_table([est])
    assert "Fixed effects (unit) left out: Atlantic Refining capital 1935 missing value" in (
        ev.regression_table([est]))
