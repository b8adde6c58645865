"""Panel cointegration tests: tables equal the published ones, each statistic equals a plain-loop
computation (with statsmodels OLS as the regression oracle), results and errors behave."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import statsmodels.api as sm
from numpy.testing import assert_allclose
from test_coint_sim import simulate, to_panel

from evidence.cointegration import _pedroni_tables, _westerlund_tables
from evidence.cointegration.panel import (
    PEDRONI_STATISTICS,
    kao_test,
    pedroni_test,
    westerlund_test,
)
from evidence.errors import DataError, SpecError


# ----------------------------------------------------------------- published tables
def test_pedroni_table_matches_published():
    # Pedroni (1999), OBES 61(S1), Table 2 (via reference_values.md 6.2), intercepts, m = 1:
    # mu: panel v 8.62, panel rho -6.02, panel t -1.73, group rho -9.05, group t -2.03;
    # v: 60.75, 31.27, 0.93, 35.98, 0.66
    mu, v = _pedroni_tables.MOMENTS["constant"][1]
    assert mu == (8.62, -6.02, -1.73, -9.05, -2.03)
    assert v == (60.75, 31.27, 0.93, 35.98, 0.66)
    # Pedroni (1999), Table 2, intercepts and trends, m = 3 and m = 7
    assert _pedroni_tables.MOMENTS["trend"][3] == ((24.556, -17.600, -2.967, -21.116, -3.179),
                                                (198.167, 83.815, 0.686, 81.832, 0.548))
    assert _pedroni_tables.MOMENTS["trend"][7][1][0] == 348.217
    assert _pedroni_tables.MOMENTS["constant"][5] == ((22.715, -21.013, -3.241, -24.775, -3.452),
                                               (231.864, 119.546, 0.800, 98.278, 0.553))


def test_westerlund_table_matches_published():
    # Westerlund (2007), OBES 69(6), Table 1 (via reference_values.md 6.1), constant, K = 1:
    # E(Gt) -1.7776 Var 0.8071; E(Ga) -7.1423 Var 29.6336; E(Pt) -1.4476 Var 0.9885;
    # E(Pa) -4.2303 Var 19.7090
    m = _westerlund_tables.MOMENTS
    assert (m["Gt"]["constant"][0][0], m["Gt"]["constant"][1][0]) == (-1.7776, 0.8071)
    assert (m["Ga"]["constant"][0][0], m["Ga"]["constant"][1][0]) == (-7.1423, 29.6336)
    assert (m["Pt"]["constant"][0][0], m["Pt"]["constant"][1][0]) == (-1.4476, 0.9885)
    assert (m["Pa"]["constant"][0][0], m["Pa"]["constant"][1][0]) == (-4.2303, 19.7090)
    # trend, K = 6 and none, K = 3
    assert m["Pa"]["trend"][0][5] == -17.6515 and m["Ga"]["trend"][1][5] == 94.0024
    assert m["Gt"]["none"][0][2] == -1.7093 and m["Pt"]["none"][1][2] == 1.7177


# ------------------------------------------------------------------ plain-loop oracles
def _bartlett_lrv(u, band):
    n = len(u)
    total = u @ u / n
    for lag in range(1, band + 1):
        total += 2 * (1 - lag / (band + 1)) * (u[lag:] @ u[:-lag]) / n
    return total


def _pedroni_loop(y, x, lags, band):
    """Pedroni's sums unit by unit with statsmodels OLS (trend 'c', fixed ADF lags)."""
    n_units = y.shape[0]
    a = b = ed = ee = 0.0
    sig_w, s2_w, grp_rho, grp_pp, grp_adf = [], [], 0.0, 0.0, 0.0
    for i in range(n_units):
        e = sm.OLS(y[i], sm.add_constant(x[i])).fit().resid
        eta = sm.OLS(np.diff(y[i]), np.diff(x[i], axis=0)).fit().resid
        l11 = _bartlett_lrv(eta, band)
        el, de = e[:-1], np.diff(e)
        gamma = (el @ de) / (el @ el)
        u = de - gamma * el
        s2, sig2 = u @ u / len(u), _bartlett_lrv(u, band)
        lam = (sig2 - s2) / 2
        num = el @ de - len(u) * lam
        a += el @ el / l11
        b += num / l11
        sig_w.append(sig2 / l11)
        grp_rho += num / (el @ el)
        grp_pp += num / math.sqrt(sig2 * (el @ el))
        lagged = np.column_stack([de[lags - j - 1:len(de) - j - 1] for j in range(lags)])
        fit = sm.OLS(de[lags:], np.column_stack([el[lags:], lagged])).fit()
        el_p = sm.OLS(el[lags:], lagged).fit().resid
        s2_star = fit.ssr / len(el_p)
        ed += fit.params[0] * (el_p @ el_p) / l11
        ee += el_p @ el_p / l11
        s2_w.append(s2_star / l11)
        grp_adf += fit.params[0] * math.sqrt(el_p @ el_p) / math.sqrt(s2_star)
    nobs = y.shape[1] - 1
    sn = math.sqrt(n_units)
    return {"panel v": nobs ** 2 * n_units ** 1.5 / a, "panel rho": nobs * sn * b / a,
            "panel PP": b / math.sqrt(np.mean(sig_w) * a),
            "panel ADF": ed / math.sqrt(np.mean(s2_w) * ee),
            "group rho": nobs * grp_rho / sn, "group PP": grp_pp / sn, "group ADF": grp_adf / sn}


def test_pedroni_equals_loop():
    y, x = simulate(np.random.default_rng(11), 6, 40, coint=False)
    res = pedroni_test(to_panel(y, x), "y", "x1", trend="constant", lags=2, hac_lags=3,
                       inference="asymptotic")
    ref = _pedroni_loop(y, x, 2, 3)
    for name in PEDRONI_STATISTICS:
        assert_allclose(res[name].details["unstandardised"], ref[name], rtol=1e-8, err_msg=name)
    z = (ref["panel rho"] - (-6.02) * math.sqrt(6)) / math.sqrt(31.27)  # Pedroni (1999) Table 2
    assert_allclose(res["panel rho"].statistic, z, rtol=1e-8)
    assert res["panel v"].details["tail"] == "right"


def test_kao_equals_loop():
    y, x = simulate(np.random.default_rng(12), 5, 30, coint=False)
    res = kao_test(to_panel(y, x), "y", "x1", lags=1, hac_lags=2, inference="asymptotic")
    # within slope: statsmodels OLS with unit dummies
    dummies = np.kron(np.eye(5), np.ones((30, 1)))
    fe = sm.OLS(y.ravel(), np.column_stack([x.reshape(-1, 1), dummies])).fit()
    assert_allclose(res.details["slopes"]["x1"], fe.params[0], rtol=1e-9)
    e = fe.resid.reshape(5, 30)
    el, et = e[:, :-1].ravel(), e[:, 1:].ravel()
    rho = (el @ et) / (el @ el)
    s2 = np.mean((et - rho * el) ** 2)
    t_rho = (rho - 1) * math.sqrt(el @ el) / math.sqrt(s2)
    # Kao (1999) DF_rho and DF_t with constants 3, 10.2, 1.25, 1.875 (from memory; see docs)
    assert_allclose(res["DF rho"].statistic,
                    (math.sqrt(5) * 30 * (rho - 1) + 3 * math.sqrt(5)) / math.sqrt(10.2), rtol=1e-8)
    assert_allclose(res["DF t"].statistic, math.sqrt(1.25) * t_rho + math.sqrt(1.875 * 5), rtol=1e-8)
    # ADF t-ratio: pooled statsmodels OLS of Δe on e_{t-1} and Δe_{t-1}
    de = np.diff(e, axis=1)
    z = np.column_stack([e[:, 1:-1].ravel(), de[:, :-1].ravel()])
    adf = sm.OLS(de[:, 1:].ravel(), z).fit()
    assert_allclose(res["ADF"].details["t_adf"], adf.tvalues[0], rtol=1e-8)


def test_westerlund_equals_statsmodels_loop():
    y, x = simulate(np.random.default_rng(13), 5, 40, coint=True)
    res = westerlund_test(to_panel(y, x), "y", "x1", trend="constant", lags=1, leads=1,
                          inference="asymptotic")
    gt, ga, yy, ydy, ratio = [], [], 0.0, 0.0, []
    for i in range(5):
        dy, dx = np.diff(y[i]), np.diff(x[i, :, 0])
        rows = range(2, 39)  # Δy index t-1 for t = 3..39 (0-based y index t), one lag, one lead
        z = np.array([[1, y[i, t - 1], x[i, t - 1, 0], dy[t - 2], dx[t], dx[t - 1], dx[t - 2]]
                      for t in rows])
        target = np.array([dy[t - 1] for t in rows])
        fit = sm.OLS(target, z).fit()  # reference regression: statsmodels OLS
        u = fit.resid + z[:, 4:] @ fit.params[4:]
        band = int(4 * (len(rows) / 100) ** (2 / 9))
        a1 = math.sqrt(_bartlett_lrv(u - u.mean(), band) / _bartlett_lrv(target - target.mean(), band))
        gt.append(fit.tvalues[1])
        ga.append(len(rows) * fit.params[1] / a1)
        others = np.delete(z, 1, axis=1)
        y_t = sm.OLS(z[:, 1], others).fit().resid
        dy_t = sm.OLS(target, others).fit().resid
        yy += y_t @ y_t
        ydy += (y_t @ dy_t) / a1
        ratio.append(math.sqrt(fit.scale) / a1)
    alpha = ydy / yy
    assert_allclose(res["Gt"].details["unstandardised"], np.mean(gt), rtol=1e-8)
    assert_allclose(res["Ga"].details["unstandardised"], np.mean(ga), rtol=1e-8)
    assert_allclose(res["Pt"].details["unstandardised"], alpha / (np.mean(ratio) / math.sqrt(yy)),
                    rtol=1e-8)
    assert_allclose(res["Pa"].details["unstandardised"], 37 * alpha, rtol=1e-8)
    # Westerlund (2007) Table 1, constant, K = 1: E(Gt) = -1.7776, Var = 0.8071
    assert_allclose(res["Gt"].statistic, math.sqrt(5) * (np.mean(gt) + 1.7776) / math.sqrt(0.8071),
                    rtol=1e-8)


# ------------------------------------------------------------------- results, bootstrap
def test_results_shape_and_json():
    y, x = simulate(np.random.default_rng(14), 8, 40, coint=True)
    panel = to_panel(y, x)
    ped = pedroni_test(panel, "y", ["x1"], reps=19)
    assert len(ped) == 7 and ped.to_frame()["test"].iloc[0] == "Pedroni panel v"
    json.dumps(ped.to_dict())
    assert "group ADF" in ped.summary()
    assert ped["group ADF"].details["inference"] == "bootstrap"
    kao = kao_test(panel, "y", "x1", reps=19)
    assert len(kao) == 5
    # Kao's starred statistics (which allow endogenous regressors) come first
    assert [r.details["statistic"] for r in kao] == ["DF* rho", "DF* t", "ADF", "DF rho", "DF t"]
    with pytest.raises(KeyError, match="not one of"):
        kao["nope"]


def test_westerlund_bootstrap_reproducible_and_backends_agree():
    y, x = simulate(np.random.default_rng(15), 6, 36, coint=False, common=1.0)
    panel = to_panel(y, x)
    a = westerlund_test(panel, "y", "x1", inference="bootstrap", reps=19, seed=5)
    b = westerlund_test(panel, "y", "x1", inference="bootstrap", reps=19, seed=5)
    assert [r.pvalue for r in a] == [r.pvalue for r in b]
    assert a["Gt"].details["reps"] == 19 and a["Gt"].details["seed"] == 5
    assert all(0 < r.pvalue <= 1 for r in a)
    assert a["Pt"].pvalue == a["Pt"].details["bootstrap_pvalue"]
    # p-value (1 + #{G* <= G})/(B + 1): a multiple of 1/20 with 19 replications
    assert all(abs(r.pvalue * 20 - round(r.pvalue * 20)) < 1e-9 for r in a)
    # the bootstrap critical values lie in the rejecting (left) tail, ordered
    assert a["Gt"].critical_values[0.01] < a["Gt"].critical_values[0.05] < a["Gt"].critical_values[0.10]


@pytest.mark.slow
def test_westerlund_bootstrap_processes_backend():
    y, x = simulate(np.random.default_rng(15), 6, 36, coint=False, common=1.0)
    panel = to_panel(y, x)
    a = westerlund_test(panel, "y", "x1", inference="bootstrap", reps=19, seed=5)
    b = westerlund_test(panel, "y", "x1", inference="bootstrap", reps=19, seed=5,
                        executor="processes")
    assert [r.pvalue for r in a] == [r.pvalue for r in b]


def test_demo_panel_runs():
    import evidence as ev
    panel = ev.demo_panel().with_log("ghg_territorial").with_log("gdp")
    for func in (pedroni_test, kao_test, westerlund_test):
        res = func(panel, "log_ghg_territorial", "log_gdp", reps=19)
        assert all(np.isfinite(r.statistic) and 0 < r.pvalue <= 1 for r in res)
        assert "log_gdp" in res.details["drift"]


# ------------------------------------------------------------------------- bad input
def test_bad_input():
    y, x = simulate(np.random.default_rng(16), 4, 30, coint=True)
    panel = to_panel(y, x)
    frame = panel.frame.reset_index()
    frame.loc[(frame["unit"] == "u01") & (frame["year"] == 1970), "y"] = np.nan
    from evidence.panel import load_panel
    gappy = load_panel(frame, unit="unit", time="year")
    with pytest.raises(DataError, match="unit 'u01' has no value of 'y' in year 1970"):
        pedroni_test(gappy, "y", "x1")
    frame = panel.frame.reset_index()
    frame.loc[frame["unit"] == "u02", "x1"] = 3.0
    flat = load_panel(frame, unit="unit", time="year")
    with pytest.raises(DataError, match=r"column 'x1' is constant .* for unit 'u02'"):
        kao_test(flat, "y", "x1")
    with pytest.raises(DataError, match="needs at least"):
        westerlund_test(panel, "y", "x1", lags=6, leads=6)
    with pytest.raises(SpecError, match="trend='none'"):
        pedroni_test(panel, "y", "x1", trend="none")
    with pytest.raises(SpecError, match="intercepts only"):
        kao_test(panel, "y", "x1", trend="trend")
    with pytest.raises(SpecError, match="reps=-1"):
        westerlund_test(panel, "y", "x1", inference="bootstrap", reps=-1)
    with pytest.raises(SpecError, match="trend='c' is not an option"):
        westerlund_test(panel, "y", "x1", trend="c")
    with pytest.raises(DataError, match="not in the data"):
        pedroni_test(panel, "y", "gdp")


def test_leading_missing_years_are_listed():
    y, x = simulate(np.random.default_rng(17), 4, 30, coint=True)
    panel = to_panel(y, x)
    frame = panel.frame.reset_index()
    frame.loc[(frame["unit"] == "u00") & (frame["year"] < 1963), "x1"] = np.nan
    from evidence.panel import load_panel
    late = load_panel(frame, unit="unit", time="year")
    res = pedroni_test(late, "y", "x1", inference="asymptotic")
    assert res.details["years"] == "1963:1989"
    assert set(res.excluded["unit"]) == {"u00", "u01", "u02", "u03"}
