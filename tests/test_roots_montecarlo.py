"""Seeded Monte Carlo of the unit-root and dependence tests at their defaults: size under the nulls
of issue 13 (N = 20, T = 30: random walks with white-noise and AR(0.5) increments, drifting walks
with a trend, a common factor for CIPS; white noise and AR(0.5) for the stationarity tests;
independent white noise, AR(0.8) and random walks for the dependence tests) and power against one
clear alternative. The card itself (``evidence/_sizes/roots.json``, made by
``python -m evidence.roots._make_size_card``: 600-1200 panels a null process, 200 per alternative)
is checked here too, and ``docs/methods/size.md`` must print it; the fast tests use few panels,
the slow ones 300."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from evidence._montecarlo import rejection_rates
from evidence._size_card import size_card, size_note
from evidence.panel import Panel
from evidence.roots import dependence, series
from evidence.roots import panel as panel_tests
from evidence.roots._make_size_card import DEFAULTS, MARKERS, defaults_table, markdown

CARD = Path(__file__).resolve().parents[1] / "evidence" / "_sizes" / "roots.json"
# Issue 13 / the briefing: 5 % nominal must land in [3 %, 7.5 %] for defaults.
BAND = (0.03, 0.075)
# Re-simulations with 300 panels have a Monte Carlo s.e. of about 1.3 points at 5 %: the slow
# checks allow about 1.5 s.e. beyond the band.
WIDE = (0.025, 0.095)


def _unit_root(trend: str):
    def pvalues(data):
        out = {"IPS": panel_tests.ips_test(data, "y", trend=trend).pvalue,
               "Fisher P": panel_tests.fisher_test(data, "y", trend=trend).pvalue,
               "LLC": panel_tests.llc_test(data, "y", trend=trend).pvalue,
               "Breitung": panel_tests.breitung_test(data, "y", trend=trend).pvalue}
        for k, unit in enumerate(data.units[:3]):
            out[f"ADF#{k}"] = series.adf_test(data.series(unit, "y"), trend=trend).pvalue
        return out
    return pvalues


def _stationary(data):
    out = {"Hadri": panel_tests.hadri_test(data, "y").pvalue}
    for k, unit in enumerate(data.units[:3]):
        out[f"KPSS#{k}"] = series.kpss_test(data.series(unit, "y")).pvalue
    return out


def _dependence(data):
    return {"CD": dependence.pesaran_cd_test(data, "y").pvalue,
            "LM": dependence.lm_test(data, "y").pvalue,
            "BC": dependence.bias_corrected_lm_test(data, "y").pvalue}


def _cips(data):
    return {"CIPS": panel_tests.cips_test(data, "y").pvalue}


# ------------------------------------------------------------------------------ the card
def _card():
    return json.loads(CARD.read_text(encoding="utf-8"))


def test_card_defaults_hold_their_size():
    """Every default of the card lies in the band under every null process, at N = 20 and
    T = 30 and 40, and has power figures beside its sizes (issue 13)."""
    card = _card()
    assert card["family"] == "roots" and card["generated_by"].startswith("python -m")
    defaults = [e for e in card["entries"] if e["test"] in DEFAULTS
                and e["options"].startswith("inference=simulated")]
    nulls = [e for e in defaults if e["hypothesis"] == "null"]
    assert {e["n_years"] for e in nulls} == {30, 40} and {e["n_units"] for e in nulls} >= {20}
    outside = [(e["test"], e["options"], e["dgp"], e["n_years"], e["rejection"]) for e in nulls
               if not BAND[0] <= e["rejection"] <= BAND[1]]
    assert outside == []
    assert {e["test"] for e in nulls} == set(DEFAULTS)
    powered = {e["test"] for e in defaults if e["hypothesis"] == "alternative"}
    assert powered == set(DEFAULTS)
    # the processes of issue 13: with and without drift, iid and AR errors, a common factor for
    # CIPS, persistent independent series for the dependence tests
    processes = {(e["test"], e["dgp"]) for e in nulls}
    for name in ("IPS W-tbar", "LLC", "CIPS*"):
        for dgp in ("random walks, white-noise increments", "random walks, AR(0.5) increments",
                    "drifting random walks, white-noise increments",
                    "drifting random walks, AR(0.5) increments"):
            assert (name, dgp) in processes
    assert ("CIPS*", "random walks, common factor and AR(0.5) increments") in processes
    for dgp in ("independent AR(0.8)", "independent random walks"):
        assert ("Pesaran CD", dgp) in processes
    for dgp in ("AR(0.5)", "AR(0.5) around a trend"):
        assert ("Hadri (robust)", dgp) in processes


def test_size_md_prints_the_roots_card_with_power_beside_size():
    text = (CARD.parents[2] / "docs" / "methods" / "size.md").read_text(encoding="utf-8")
    assert MARKERS[0] in text and MARKERS[1] in text
    section = text.split(MARKERS[0], 1)[1].split(MARKERS[1], 1)[0]
    assert markdown(_card()).strip() in section, \
        "docs/methods/size.md is stale: run python -m evidence.roots._make_size_card --docs"
    head = next(line for line in section.splitlines() if line.startswith("| test | options"))
    assert "size T = 30" in head and "power T = 30" in head and "power T = 40" in head
    roots_md = (CARD.parents[2] / "docs" / "methods" / "roots.md").read_text(encoding="utf-8")
    assert defaults_table(_card()).strip() in roots_md, "docs/methods/roots.md is stale"


def test_every_option_on_the_card_has_power_or_says_its_size():
    """Non-default options (Fisher's other combinations and the PP path, asymptotic inference,
    the break tests) either hold the band or their results say they do not, with the figure."""
    card = _card()
    for e in card["entries"]:
        if e["hypothesis"] != "null":
            continue
        note = size_note(e["test"], e["n_units"], e["n_years"], options=e["options"])
        assert note["controlled"] == all(
            BAND[0] <= r["rejection"] <= BAND[1] for r in card["entries"]
            if r["test"] == e["test"] and r["options"] == e["options"]
            and r["n_years"] == e["n_years"] and r["hypothesis"] == "null")


def test_uncontrolled_options_say_so_with_the_measured_figure():
    rng = np.random.default_rng(5)
    panel = Panel.from_arrays({"y": np.cumsum(rng.standard_normal((30, 20)), axis=0)})
    for unit_test in ("adf", "pp"):
        for combine in ("z", "p", "pm", "l"):
            for inference in ("simulated", "asymptotic"):
                res = panel_tests.fisher_test(panel, "y", unit_test=unit_test, combine=combine,
                                              inference=inference)
                note = res.details["size"]
                assert note and note["n_years"] == 30
                said = [w for w in res.warnings if "not controlled" in w]
                if note["controlled"]:
                    assert said == []
                else:
                    assert f"{100 * note['measured']:.1f} %" in said[0]
                    assert f"{100 * note['measured']:.1f} %" in res.summary()
    asym = size_note("Fisher-ADF (Choi Pm)", 20, 30, options="inference=asymptotic; trend=constant")
    assert not asym["controlled"] and asym["measured"] > 0.075
    y = panel.series(panel.units[0], "y")
    for func in (series.za_test, series.lee_strazicich_test):
        assert func(y).details["size"]["controlled"]
        asym = func(y, inference="asymptotic")
        assert not asym.details["size"]["controlled"]
        assert f"{100 * asym.details['size']['measured']:.1f} %" in asym.summary()


def test_results_carry_the_size_they_were_measured_with():
    note = size_note("IPS W-tbar", 20, 30, options="inference=simulated; trend=constant")
    assert note["controlled"] and note["n_years"] == 30
    assert not size_card("LLC").empty
    rng = np.random.default_rng(6)
    panel = Panel.from_arrays({"y": np.cumsum(rng.standard_normal((40, 20)), axis=0)})
    for res in (panel_tests.ips_test(panel, "y"), panel_tests.llc_test(panel, "y"),
                panel_tests.breitung_test(panel, "y"), panel_tests.hadri_test(panel, "y"),
                panel_tests.cips_test(panel, "y"), panel_tests.fisher_test(panel, "y"),
                dependence.pesaran_cd_test(panel, "y"), dependence.lm_test(panel, "y"),
                dependence.scaled_lm_test(panel, "y"),
                dependence.bias_corrected_lm_test(panel, "y"),
                series.adf_test(panel.series(panel.units[0], "y"))):
        note = res.details["size"]
        assert note["n_years"] == 40, res.test
        # a default the card measured outside the band says so, with the figure (LLC at T = 40
        # on the current card; see the xfail above)
        if not note["controlled"]:
            assert f"{100 * note['measured']:.1f} %" in res.summary(), res.test


# ------------------------------------------------------------------------- fast subset
def test_default_sizes_fast_subset():
    rates = rejection_rates(_unit_root("constant"), "unit_root", 20, 30, reps=40, seed=101,
                            params={"rho": 0.5})
    for name in ("IPS", "Fisher P", "LLC", "Breitung"):
        assert rates[name]["rejection"] <= 0.15, (name, rates[name])
    assert rates["ADF"]["rejection"] <= 0.12 and rates["ADF"]["reps"] == 120
    power = rejection_rates(_unit_root("constant"), "ar", 20, 30, reps=15, seed=102,
                            params={"rho": 0.5})
    for name in ("IPS", "Fisher P", "LLC", "Breitung"):
        assert power[name]["rejection"] >= 0.8, (name, power[name])


def test_stationarity_and_dependence_sizes_fast_subset():
    # issue 13 measured Hadri (no bandwidth) at 100 % under AR(0.5) and CD on random walks at
    # 44 %: a gross failure of either shows in 40 panels (a 5 % test rejects more than 8 of 40
    # with probability below 0.1 %)
    stat = rejection_rates(_stationary, "ar", 20, 30, reps=40, seed=103, params={"rho": 0.5})
    assert stat["Hadri"]["rejection"] <= 0.2 and stat["KPSS"]["rejection"] <= 0.2, stat
    dep = rejection_rates(_dependence, "unit_root", 20, 30, reps=40, seed=104)
    assert all(rate["rejection"] <= 0.2 for rate in dep.values()), dep


# ------------------------------------------------------------------------- slow checks
@pytest.mark.slow
@pytest.mark.parametrize(("trend", "params"), [
    ("constant", {"rho": 0.0}), ("constant", {"rho": 0.5}),
    ("trend", {"rho": 0.5, "drift": 1.0})])
def test_default_sizes_unit_root(trend, params):
    rates = rejection_rates(_unit_root(trend), "unit_root", 20, 30, reps=300, seed=201,
                            params=params)
    for name, rate in rates.items():
        assert WIDE[0] <= rate["rejection"] <= WIDE[1], (name, trend, params, rate)


@pytest.mark.slow
def test_cips_holds_its_size_under_a_common_factor():
    rates = rejection_rates(_cips, "unit_root", 20, 30, reps=300, seed=202,
                            params={"rho": 0.5, "factor": 1.0})
    assert WIDE[0] <= rates["CIPS"]["rejection"] <= WIDE[1], rates


@pytest.mark.slow
@pytest.mark.parametrize("rho", [0.0, 0.5])
def test_default_sizes_stationarity(rho):
    rates = rejection_rates(_stationary, "ar", 20, 30, reps=300, seed=203, params={"rho": rho})
    for name, rate in rates.items():
        assert WIDE[0] <= rate["rejection"] <= WIDE[1], (name, rho, rate)
    power = rejection_rates(_stationary, "unit_root", 20, 30, reps=60, seed=204)
    assert power["Hadri"]["rejection"] >= 0.7, power


@pytest.mark.slow
@pytest.mark.parametrize(("dgp", "params"), [("ar", {"rho": 0.8}), ("unit_root", {"rho": 0.0})])
def test_default_sizes_dependence(dgp, params):
    # the issue measured 24 % (AR(0.8)) and 44 % (random walks) for CD on the series as given
    rates = rejection_rates(_dependence, dgp, 20, 30, reps=300, seed=205, params=params)
    for name, rate in rates.items():
        assert WIDE[0] <= rate["rejection"] <= WIDE[1], (name, dgp, rate)
    power = rejection_rates(_dependence, "unit_root", 20, 30, reps=40, seed=206,
                            params={"factor": 1.0})
    assert all(rate["rejection"] >= 0.9 for rate in power.values()), power


# ------------------------------------------------------------- the pooled nulls' calibration
def test_prepivoting_leaves_a_noise_free_plugin_unchanged():
    # When every draw's own phi-hat equals its grid value, the plug-in p-values of the draws are
    # their ranks: the calibration must return the plug-in p-value (up to one draw in R).
    from evidence.roots._panel_null import PanelNull

    rng = np.random.default_rng(4)
    reps = 999
    draws = np.sort(rng.standard_normal((2, reps)) + np.array([[0.0], [0.5]]), axis=1)
    null = PanelNull((0.0, 0.2), draws, "test", np.repeat([[0.0], [0.2]], reps, axis=1))
    for stat in (-2.0, -1.0, 0.0, 1.5):
        for phi in (0.0, 0.05, 0.2):
            plug = float(null.plugin_pvalue(stat, phi))
            assert abs(null.pvalue(stat, phi) - plug) <= 2.0 / reps


@pytest.mark.slow
def test_pooled_null_calibration_removes_the_plugin_conservatism(capsys):
    # LLC with a trend, N = 20, T = 40, independent drifting random walks with white-noise
    # increments (1000 panels, Monte Carlo s.e. 0.7 points): the plug-in reading of the pooled
    # null at the panel's noisy phi-hat rejects about 3.4 % at 5 %, the calibrated one about 5 %.
    from evidence.roots._panel_null import panel_null

    rng = np.random.default_rng(11)
    calibrated, plugin = [], []
    for _ in range(1000):
        y = np.cumsum(0.02 + 0.02 * rng.standard_normal((40, 20)), axis=0)
        res = panel_tests.llc_test(Panel.from_arrays({"y": y}, years=range(1990, 2030)), "y",
                                   trend="trend")
        d = res.details
        null = panel_null("llc", 20, 40, "trend", {"lags": "aic", "max_lags": d["max_lags"],
                                                   "hac_lags": d["hac_lags"]},
                          reps=d["reps"], seed=d["seed"])
        calibrated.append(res.pvalue)
        plugin.append(float(null.plugin_pvalue(res.statistic, d["pooled_phi"])))
    size, size_plugin = np.mean(np.array(calibrated) <= 0.05), np.mean(np.array(plugin) <= 0.05)
    with capsys.disabled():
        print(f"\nLLC trend N=20 T=40: calibrated {size:.3f}, plug-in {size_plugin:.3f}")
    assert 0.035 <= size <= 0.065
    assert size_plugin < size


def test_calibrated_critical_values_match_the_calibrated_pvalues():
    # With noisy phi-hat the critical value at level a is read at the plug-in level whose
    # calibrated p-value is a: the p-value of the 5 % critical value is 5 % (to Monte Carlo error).
    from evidence.roots._panel_null import PanelNull

    rng = np.random.default_rng(5)
    reps = 4000
    phi_hat = np.array([[0.0], [0.2]]) + 0.05 * rng.standard_normal((2, reps))
    stats = rng.standard_normal((2, reps)) + 2.0 * (phi_hat - np.array([[0.0], [0.2]]))
    order = np.argsort(stats, axis=1)
    null = PanelNull((0.0, 0.2), np.take_along_axis(stats, order, 1), "test",
                     np.take_along_axis(phi_hat, order, 1))
    for phi in (0.0, 0.1, 0.2):
        for level, cv in null.quantiles(phi, (0.01, 0.05, 0.10)).items():
            assert abs(null.pvalue(cv, phi) - level) < 0.006
