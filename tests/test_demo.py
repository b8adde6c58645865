"""The demo panel through the public API: loads from the package, planted features visible in rates."""

from __future__ import annotations

import numpy as np

import evidence as ev

# Every expectation below is planted by the generator (demo_panel/generate.py, truth.json).


def test_demo_panel_loads_with_bases_and_audit():
    panel = ev.demo_panel()
    assert len(panel.units) == 30 and panel.years == tuple(range(1990, 2024))
    assert panel.basis("ghg_consumption") == "consumption"
    assert panel.basis("ghg_territorial") == "territorial"
    audit = panel.audit
    assert set(audit.column) == {"ghg_consumption", "material_footprint"}
    assert set(audit.years) == {"1990-1994"}


def test_truth_regions_match_panel():
    truth = ev.demo_truth()
    assert set(truth["regions"]) == set(ev.demo_panel().units)
    assert truth["recession_years"] == [2009]
    assert "last year of the old regime" in truth["break_convention"]


def test_absolute_decouplers_decline_after_their_break():
    panel, truth = ev.demo_panel(), ev.demo_truth()
    for unit, info in truth["regions"].items():
        if info["type"] != "absolute":
            continue
        res = ev.rates(panel.select([unit]), "ghg_territorial", "gdp",
                       window=(info["break_year"] + 1, 2023))
        row = res.table.loc[unit]
        assert row.pressure_trend < 0 < row.activity_trend, unit
        assert row.tapio_class == "strong decoupling", unit


def test_types_are_visible_in_trend_elasticities():
    panel, truth = ev.demo_panel(), ev.demo_truth()
    table = ev.rates(panel, "ghg_territorial", "gdp").table
    for unit, info in truth["regions"].items():
        row = table.loc[unit]
        if info["type"] == "relative":
            assert 0 < row.trend_elasticity < 0.8, unit
        elif info["type"] == "coupled":
            assert 0.8 <= row.trend_elasticity <= 1.2, unit


def test_offshoring_regions_diverge_by_basis():
    panel, truth = ev.demo_panel(), ev.demo_truth()
    territorial = ev.rates(panel, "ghg_territorial", "gdp", window=(2010, 2023)).table
    consumption = ev.rates(panel, "ghg_consumption", "gdp", window=(2010, 2023)).table
    for unit, info in truth["regions"].items():
        if info["type"] == "offshoring":
            assert territorial.loc[unit, "pressure_trend"] < 0 < consumption.loc[unit, "pressure_trend"]


def test_common_recession_year():
    panel = ev.demo_panel().with_growth("gdp")
    growth_2009 = panel.frame.xs(2009, level="year")["growth_gdp"]
    assert (growth_2009 < 0).all()
    assert np.median(panel.frame.xs(2010, level="year")["growth_gdp"]) > 0


def test_consumption_rates_default_to_the_common_span():
    res = ev.rates(ev.demo_panel(), "ghg_consumption", "gdp")
    assert res.window == (1995, 2023) and res.excluded.empty
