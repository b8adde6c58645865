"""The bootstrap machinery of the panel tests: bias correction against the textbook formulas,
residual resampling, the sieve null model, batched statistics against per-panel loops, p-values,
and reproducibility whatever the executor."""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm
from numpy.testing import assert_allclose
from statsmodels.tsa.api import VAR
from test_coint_sim import simulate, to_panel

from evidence._resample import (
    bias_corrected,
    cd_statistics,
    common_shocks,
    deflate_common,
    pooled_var,
    resample_residuals,
    split_common,
)
from evidence.cointegration._inference import bootstrap_pvalue, run_bootstrap
from evidence.cointegration._residual_math import (
    kao_raw,
    kao_statistics,
    pedroni_raw,
    pedroni_statistics,
    select_adf_lags,
    static_residuals,
)
from evidence.cointegration._sieve import drifts, fit_sieve, sieve_draws, var_drift_tstats
from evidence.cointegration._westerlund import westerlund_raw, westerlund_statistics
from evidence.cointegration.panel import pedroni_test


# ----------------------------------------------------------------------- bias correction
def test_bias_correction_equals_textbook_formulas():
    # AR(1) with an intercept: E[a_hat] - a = -(1 + 3a)/T (Kendall 1954; Marriott & Pope 1954 —
    # from memory), which Pope's (1990) VAR formula gives for one variable; the within estimator of
    # a panel AR(1) with unit effects: -(1 + a)/T for large N (Nickell 1981 — from memory).
    a, t = 0.42, 29
    blocks = np.full((1, 1, 1, 1), a)
    sigma = np.array([[[1.7]]])
    assert_allclose(bias_corrected(blocks, sigma, t)[0, 0, 0, 0], a + (1 + 3 * a) / t, rtol=1e-12)
    assert_allclose(bias_corrected(blocks, sigma, t, pooled=True)[0, 0, 0, 0], a + (1 + a) / t,
                    rtol=1e-12)


def test_pooled_correction_removes_the_nickell_bias_by_simulation():
    # N = 200 units, T = 30, AR(0.5) with unit means: the within estimate is about 0.45; corrected,
    # it is within 0.01 of 0.5 (seeded; 20 panels).
    rng = np.random.default_rng(1)
    raw, fixed = [], []
    for _ in range(20):
        e = rng.standard_normal((200, 80))
        u = np.zeros_like(e)
        for s in range(1, 80):
            u[:, s] = 0.5 * u[:, s - 1] + e[:, s]
        w = (rng.standard_normal(200)[:, None] + u[:, 50:])[:, :, None]
        _, blocks, resid = pooled_var(w, 1, 1)
        sigma = np.einsum("nsi,nsj->ij", resid, resid)[None] / resid[:, :, 0].size
        raw.append(blocks[0, 0, 0])
        fixed.append(bias_corrected(blocks[None], sigma, resid.shape[1], pooled=True)[0, 0, 0, 0])
    assert np.mean(raw) < 0.47
    assert abs(np.mean(fixed) - 0.5) < 0.01


def test_pooled_var_equals_statsmodels_with_unit_dummies():
    rng = np.random.default_rng(2)
    w = rng.standard_normal((5, 30, 2)).cumsum(axis=1) * 0.1 + rng.standard_normal((5, 30, 2))
    intercept, blocks, resid = pooled_var(w, 1, 1)
    y = w[:, 1:, 0].ravel()
    lagged = w[:, :-1, :].reshape(-1, 2)
    dummies = np.kron(np.eye(5), np.ones((29, 1)))
    fit = sm.OLS(y, np.column_stack([lagged, dummies])).fit()  # reference: statsmodels OLS
    assert_allclose(blocks[0, 0], fit.params[:2], rtol=1e-10)
    assert_allclose(intercept[:, 0], fit.params[2:], rtol=1e-10)
    assert_allclose(resid[:, :, 0].ravel(), fit.resid, atol=1e-10)


# --------------------------------------------------------------------------- resampling
def test_split_common_equals_unit_regressions_on_cross_section_means():
    rng = np.random.default_rng(3)
    resid = rng.standard_normal((6, 25, 2)) + rng.standard_normal((1, 25, 2))
    common, loadings, own = split_common(resid)
    assert_allclose(common, resid.mean(axis=0))
    fit = sm.OLS(resid[2, :, 1], common).fit()  # reference: statsmodels OLS, no constant
    assert_allclose(loadings[2, 1], fit.params, rtol=1e-10)
    assert_allclose(own[2, :, 1], fit.resid, atol=1e-12)


def test_cd_statistic_equals_a_loop_over_pairs():
    # Pesaran (2004): CD = sqrt(2T/(N(N-1))) Σ_{i<j} ρ_ij, ρ the pairwise correlation (numpy corrcoef)
    rng = np.random.default_rng(3)
    resid = rng.standard_normal((7, 30, 2)) + 0.6 * rng.standard_normal((1, 30, 2))
    for v in range(2):
        rho = np.corrcoef(resid[:, :, v])
        total = sum(rho[i, j] for i in range(7) for j in range(i + 1, 7))
        assert_allclose(cd_statistics(resid)[v], np.sqrt(2 * 30 / (7 * 6)) * total, rtol=1e-12)
    assert common_shocks(resid)


def test_resampling_keeps_common_shocks_common_and_own_shocks_apart():
    rng = np.random.default_rng(4)
    shared = rng.standard_normal((1, 40, 1)) * np.ones((8, 1, 1))   # every unit the same shock
    draws = resample_residuals(shared, np.random.default_rng(5), 3, 50)
    assert_allclose(draws, np.broadcast_to(draws[:, :1], draws.shape), atol=1e-12)
    # 20 independent units: a bootstrap that draws whole periods hands every pair its sample
    # correlation (about ±0.15 with 25 periods). Without significant CD the units draw their own
    # periods (no correlation at all); forced to split, pairs share only the weak common part,
    # which is the mean of the own shocks and deflated away (correlations near 0, half as spread)
    own = rng.standard_normal((20, 25, 1))
    pairs = np.triu_indices(20, 1)
    sample = np.corrcoef(own[:, :, 0])[pairs]
    assert np.mean(np.abs(sample)) > 0.12
    assert not common_shocks(own)
    draws = resample_residuals(own, np.random.default_rng(6), 400, 25)[..., 0]
    boot = np.corrcoef(np.moveaxis(draws, 1, 0).reshape(20, -1))[pairs]
    assert abs(np.mean(boot)) < 0.01 and np.mean(np.abs(boot)) < 0.03
    draws = resample_residuals(own, np.random.default_rng(6), 400, 25, common=True)[..., 0]
    boot = np.corrcoef(np.moveaxis(draws, 1, 0).reshape(20, -1))[pairs]
    assert abs(np.mean(boot)) < 0.02
    assert np.mean(np.abs(boot - np.mean(boot))) < np.mean(np.abs(sample)) / 2
    # the variables of one unit share a period: identical columns stay identical
    twin = np.repeat(rng.standard_normal((3, 20, 1)), 2, axis=2)
    draws = resample_residuals(twin, np.random.default_rng(7), 5, 20)
    assert_allclose(draws[..., 0], draws[..., 1], atol=1e-12)


def test_deflated_common_shocks_keep_each_units_variance_and_the_true_covariance():
    # units load on one common shock (variance 1) and own shocks (variance 1), N = 10, S = 400:
    # the cross-section mean has covariance 1 + 1/N; deflated, about 1, and every unit's
    # bootstrap variance Λ_i² var(f~) + var(η~_i) equals its sample variance
    rng = np.random.default_rng(12)
    load = rng.uniform(0.5, 1.5, 10)
    resid = load[:, None, None] * rng.standard_normal((1, 400, 1)) + rng.standard_normal((10, 400, 1))
    resid -= resid.mean(axis=1, keepdims=True)
    common, loadings, own = split_common(resid)
    deflated, scaled = deflate_common(common, loadings, own)
    mean_load = load.mean()
    assert abs(np.var(common) - (mean_load ** 2 + 0.1)) < 0.15
    assert abs(np.var(deflated) - mean_load ** 2) < 0.15
    total = loadings[:, 0, 0] ** 2 * np.mean(deflated[:, 0] ** 2) + np.mean(scaled[..., 0] ** 2, axis=1)
    assert_allclose(total, np.mean(resid[..., 0] ** 2, axis=1), rtol=1e-10)


# ---------------------------------------------------------------------------- sieve model
def _ar_differences(seed: int, n_units: int, n_periods: int, rho: float, *, burn: int) -> np.ndarray:
    """Seeded AR(rho) differences of y and x: (2, N, n_periods), the first ``burn`` dropped."""
    e = np.random.default_rng(seed).standard_normal((2, n_units, burn + n_periods))
    w = np.zeros_like(e)
    for s in range(1, burn + n_periods):
        w[:, :, s] = rho * w[:, :, s - 1] + e[:, :, s]
    return w[:, :, burn:]


def test_drift_decision_is_panel_wide():
    # Binomial(20, 0.05): 5 or more units with |t| > 1.96 happen with probability 0.26 %
    t = np.zeros((20, 2))
    t[:4, 0] = 3.0
    t[:, 1] = 2.5
    assert drifts(t).tolist() == [False, True]
    # a mean drift whose t-ratio exceeds 1.96 counts even when few units show it on their own
    assert drifts(t, np.array([2.1, 0.0])).tolist() == [True, True]
    assert drifts(t, np.array([-1.9, 0.0])).tolist() == [False, True]


def test_drift_tstats_without_lags_equal_statsmodels_constant_only_regressions():
    # with no VAR lags, a unit's t-ratio is the OLS t of its w on a constant, and the panel's the
    # OLS t of the cross-section average of w on a constant (statsmodels OLS), variances over S
    # rather than S - 1 (hence the factor sqrt(S / (S - 1)))
    rng = np.random.default_rng(24)
    w = 0.3 + rng.standard_normal((15, 28, 2)) + rng.standard_normal((1, 28, 2))
    mean = w.mean(axis=1)
    unit_t, mean_t, _ = var_drift_tstats(mean, w - mean[:, None, :], np.broadcast_to(np.eye(2), (15, 2, 2)))
    factor = np.sqrt(28 / 27)
    ones = np.ones(28)
    assert_allclose(unit_t[4, 1], sm.OLS(w[4, :, 1], ones).fit().tvalues[0] * factor, rtol=1e-10)
    assert_allclose(mean_t[0], sm.OLS(w[:, :, 0].mean(axis=0), ones).fit().tvalues[0] * factor,
                    rtol=1e-10)


def test_sieve_finds_a_common_drift_hidden_by_persistent_noise():
    # x drifts by 1 per period in every unit, AR(0.8) differences with unit shocks, N = 20, T = 30:
    # each unit's t-ratio is about 1, the panel's mean drift is clear (seeded panel)
    w = _ar_differences(23, 20, 30, 0.8, burn=20)
    y, x = w[0].cumsum(axis=1), (1.0 + w[1]).cumsum(axis=1)[:, :, None]
    model = fit_sieve(y, x, max_lags=2)
    assert np.all(model.mean[:, 1] > 0) and np.all(model.mean[:, 0] == 0)


def test_sieve_null_model():
    rng = np.random.default_rng(8)
    dy = rng.standard_normal((20, 39))
    dx = 1.0 + rng.standard_normal((20, 39))
    y = np.concatenate([np.zeros((20, 1)), dy.cumsum(axis=1)], axis=1)
    x = np.concatenate([np.zeros((20, 1)), dx.cumsum(axis=1)], axis=1)[:, :, None]
    model = fit_sieve(y, x, max_lags=2)
    assert model.order.max() == 0                       # iid differences: no lags
    assert np.all(model.mean[:, 0] == 0) and np.all(model.mean[:, 1] > 0.4)   # x drifts, y not
    ys, xs = sieve_draws(model, np.random.default_rng(9), 7)
    assert ys.shape == (7, 20, 40) and xs.shape == (7, 20, 40, 1)
    assert_allclose(ys[:, :, 0], np.broadcast_to(y[:, 0], (7, 20)))
    slope = np.diff(xs[..., 0], axis=2).mean()
    assert abs(slope - dx.mean()) < 0.1


def test_sieve_order_is_not_vetoed_by_one_units_explosive_fit():
    # AR(0.8) differences, N = 40, T = 25: a unit's own VAR(1) estimate may have a root near one;
    # the order is chosen on the summed AIC of every unit all the same (seeded panel; an order of
    # 0 here left the bootstrap without the persistence and Kao's bootstrap rejected 34-40 % at
    # 5 % nominal, our seeded check of 300 panels)
    w = _ar_differences(29, 40, 25, 0.8, burn=20)
    y, x = w[0].cumsum(axis=1), w[1].cumsum(axis=1)[:, :, None]
    unit_roots = []
    for i in range(40):
        fit = VAR(np.column_stack([np.diff(y[i]), np.diff(x[i, :, 0])])).fit(1)
        unit_roots.append(np.abs(np.linalg.eigvals(fit.coefs[0])).max())
    assert max(unit_roots) > 0.97                      # the case: one unit's fit is explosive
    model = fit_sieve(y, x, max_lags=2)
    assert model.order.max() == 1
    assert_allclose(np.diagonal(model.lags[0, 0]), 0.8, atol=0.1)   # s.d. 0.03 over panels


def test_sieve_order_minimises_the_summed_unit_aic_of_statsmodels():
    # the score of an order is the sum over units of statsmodels' VAR AIC on the common sample
    # (statsmodels.tsa.api.VAR(...).fit(p).aic), the first max_lags differences held back
    w = _ar_differences(22, 12, 40, 0.5, burn=0)
    y, x = w[0].cumsum(axis=1), w[1].cumsum(axis=1)[:, :, None]
    diffs = np.stack([np.diff(y, axis=1), np.diff(x[:, :, 0], axis=1)], axis=2)
    totals = [sum(VAR(diffs[i, 2 - p:]).fit(p, trend="c").aic for i in range(12)) for p in range(3)]
    assert fit_sieve(y, x, max_lags=2).order.max() == int(np.argmin(totals))


# ------------------------------------------------------------ batched statistics = loops
def test_batched_statistics_equal_one_panel_at_a_time():
    rng = np.random.default_rng(10)
    panels = [simulate(rng, 6, 35, coint=False) for _ in range(3)]
    ys = np.stack([p[0] for p in panels])
    xs = np.stack([p[1] for p in panels])
    ped, _ = pedroni_statistics(ys, xs, trend="constant", lags="aic", max_lags=2, hac_lags=3)
    kao = kao_statistics(ys, xs, lags="bic", max_lags=2, hac_lags=3)
    wes, p_i, q_i = westerlund_statistics(ys, xs, "aic", 0, max_lags=2, max_leads=0,
                                          trend="constant")
    for r, (y, x) in enumerate(panels):
        e, _ = static_residuals(y, x, "constant")
        one = pedroni_raw(e, np.diff(y, axis=1), np.diff(x, axis=1), select_adf_lags(e, 2, "aic"),
                          trend="constant", hac_lags=3)
        assert_allclose([ped[k][r] for k in ("panel v", "group ADF")],
                        [one["panel v"], one["group ADF"]], rtol=1e-10)
        single = kao_raw(y, x, int(kao["adf_lags"][r]), hac_lags=3)
        assert_allclose(kao["t_adf"][r], single["t_adf"], rtol=1e-10)
        raw = westerlund_raw(y, x, p_i[r], q_i[r], "constant")
        assert_allclose([wes[k][r] for k in ("Gt", "Pa")], [raw["Gt"], raw["Pa"]], rtol=1e-10)


# ----------------------------------------------------------------------- p-values, executors
def test_bootstrap_pvalue():
    draws = np.array([-3.0, -2.0, -1.0, 0.0, np.nan])
    assert bootstrap_pvalue(-2.0, draws, "left") == (3 / 5, 4)
    assert bootstrap_pvalue(-2.0, draws, "right") == (4 / 5, 4)


def _draw(spec, rng, reps):
    return {"u": rng.standard_normal(reps) + spec}


def test_bootstrap_draws_do_not_depend_on_chunking_order():
    a = run_bootstrap(_draw, 0.0, reps=120, seed=3)
    b = run_bootstrap(_draw, 0.0, reps=120, seed=3)
    assert a["u"].shape == (120,)
    assert_allclose(a["u"], b["u"])


@pytest.mark.slow
def test_serial_and_process_executors_agree():
    y, x = simulate(np.random.default_rng(11), 8, 30, coint=False)
    panel = to_panel(y, x)
    a = pedroni_test(panel, "y", "x1", reps=60, seed=4)
    b = pedroni_test(panel, "y", "x1", reps=60, seed=4, executor="processes")
    assert [r.pvalue for r in a] == [r.pvalue for r in b]


def test_drifts_are_shrunk_towards_the_panel_mean_only_as_far_as_their_noise():
    # Empirical Bayes: equal true drifts estimated with noise collapse to their mean; drifts that
    # differ by far more than their noise are kept.
    from evidence.cointegration._sieve import shrunk_drifts

    rng = np.random.default_rng(3)
    noise = np.full((40, 1), 0.01 ** 2)
    same = 0.02 + 0.01 * rng.standard_normal((40, 1))
    shrunk = shrunk_drifts(same, noise)
    assert np.std(shrunk) < 0.5 * np.std(same)
    assert abs(shrunk.mean() - same.mean()) < 1e-12
    apart = np.linspace(-0.2, 0.2, 40)[:, None] + 0.01 * rng.standard_normal((40, 1))
    np.testing.assert_allclose(shrunk_drifts(apart, noise), apart, atol=0.002)
