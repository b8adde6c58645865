"""The grade on constructed series with known answers, and on the demo panel's planted truth."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.multitest import multipletests

import evidence as ev
from evidence import DataError, SpecError
from evidence.grading import Criteria, grade
from evidence.tables import grade_table

YEARS = np.arange(1991, 2021)  # 30 years


def _frame(units: dict[str, tuple[np.ndarray, np.ndarray]], cons: dict | None = None) -> pd.DataFrame:
    rows = []
    for unit, (gdp, ghg) in units.items():
        for k, year in enumerate(YEARS):
            row = {"unit": unit, "year": int(year), "gdp": gdp[k], "ghg": ghg[k]}
            if cons is not None:
                row["ghg_cons"] = cons[unit][k]
            rows.append(row)
    return pd.DataFrame(rows)


def _path(growth: np.ndarray, seed: int, sd: float = 0.004) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return 100 * np.exp(np.cumsum(growth) + rng.normal(0, sd, growth.size))


def _constant(rate: float) -> np.ndarray:
    return np.full(YEARS.size, rate)


def _known_units() -> dict[str, tuple[np.ndarray, np.ndarray]]:
    # constructed in the test: the answers are planted
    recession = np.isin(YEARS, [1995, 2002, 2009, 2015])
    gdp_rec = np.where(recession, -0.03, 0.025)
    return {
        "sustained": (_path(_constant(0.03), 1), _path(_constant(-0.02), 2)),
        "relative": (_path(_constant(0.03), 3), _path(_constant(0.012), 4)),
        "coupled": (_path(_constant(0.03), 5), _path(_constant(0.031), 6)),
        "recession_only": (_path(gdp_rec, 7), _path(np.where(recession, -0.08, 0.004), 8)),
    }


def test_each_axis_on_constructed_series():
    units = _known_units()
    cons = {u: ghg for u, (_, ghg) in units.items()}
    cons["sustained"] = _path(_constant(0.01), 9)  # territorial-only decliner
    panel = ev.load_panel(_frame(units, cons), basis={"ghg": "territorial", "ghg_cons": "consumption"})
    res = grade(panel, ["ghg"], "gdp", consumption={"ghg": "ghg_cons"},
                criteria=Criteria(required_rate=0.01))
    table = res.table.set_index("unit")
    assert table.loc["sustained", "rung"] == "target-consistent"
    assert "basis-gap" in table.loc["sustained", "flags"]
    assert table.loc["sustained", "consumption_direction"] == "relative"
    assert table.loc["sustained", "sufficiency"] == "sufficient"
    assert table.loc["relative", "rung"] == "relative"
    assert table.loc["coupled", "rung"] == "coupled"
    rec = table.loc["recession_only"]  # its whole decline is made in recession years
    assert rec["rung"] == "recession-driven" and rec["p_absolute_all_years_adj"] < 0.05
    assert rec["p_absolute_adj"] > 0.05
    assert table.loc["sustained", "longest_run"] >= 10 and table.loc["sustained", "subwindow_share"] == 1.0
    assert all("short-window" not in f for f in table["flags"])
    json.dumps(res.to_dict(), allow_nan=False)


def test_required_rate_not_met_and_budget():
    units = {"sustained": _known_units()["sustained"]}
    panel = ev.load_panel(_frame(units))
    slow = grade(panel, ["ghg"], "gdp", criteria=Criteria(required_rate=0.05))
    assert slow.table.iloc[0]["rung"] == "absolute-sustained"
    assert slow.table.iloc[0]["sufficiency"] == "insufficient"
    end = panel.series("sustained", "ghg").iloc[-1]
    budget = grade(panel, ["ghg"], "gdp", criteria=Criteria(budgets={"sustained": 1e6 * end}))
    # budget_rate identity: r = E0 / (B + E0)
    assert budget.table.iloc[0]["required_change"] == pytest.approx(-1 / (1e6 + 1))


def test_short_window_flag_and_adjustment():
    panel = ev.load_panel(_frame(_known_units()))
    res = grade(panel, ["ghg"], "gdp", window=(2001, 2020), criteria=Criteria(adjust="holm"))
    assert all("short-window" in f for f in res.table["flags"])
    raw = res.table["p_relative"].to_numpy()
    # Reference library: statsmodels multipletests with Holm's method
    np.testing.assert_allclose(res.table["p_relative_adj"], multipletests(raw, method="holm")[1])
    assert "Decoupling grade" in grade_table(res)
    assert "<script>" not in grade_table(res, "html")


def test_demo_truth_recovered_for_every_planted_class():
    panel, truth = ev.demo_panel(), ev.demo_truth()["regions"]  # planted by the generator
    full = grade(panel, ["ghg_territorial"], "gdp", latest_break=False).table.set_index("unit")
    absolute = significant = offshoring = 0
    for unit, info in truth.items():
        if info["type"] == "relative":
            assert full.loc[unit, "rung"] == "relative", unit
        elif info["type"] == "coupled":
            assert full.loc[unit, "rung"] == "coupled", unit
        elif info["type"] == "absolute":
            # the decline after the planted break: 11-20 years of noisy data per region
            row = grade(panel.select([unit]), ["ghg_territorial"], "gdp", latest_break=False,
                        window=(info["break_year"] + 1, 2023)).table.iloc[0]
            assert row["rung"].startswith("absolute"), unit
            absolute += 1
            significant += row["rung"] in ("absolute-significant", "absolute-sustained")
        else:  # offshoring: territorial falls, consumption keeps rising
            row = grade(panel.select([unit]), ["ghg_territorial"], "gdp", latest_break=False,
                        window=(info["offshoring_onset"] + 1, 2023),
                        consumption={"ghg_territorial": "ghg_consumption"}).table.iloc[0]
            assert row["rung"].startswith("absolute") and "basis-gap" in row["flags"], unit
            assert row["gap_lower"] < row["gap_trend"] < row["gap_upper"] < 0, unit
            offshoring += row["rung"] != "absolute-tentative"
    assert absolute == 9 and significant >= 7 and offshoring >= 3


def test_latest_break_found_on_demo_decoupler():
    panel = ev.demo_panel()
    res = grade(panel.select(["Aldwyr"]), ["ghg_territorial"], "gdp", window=(2000, 2023))
    planted = ev.demo_truth()["regions"]["Aldwyr"]["break_year"]
    assert abs(res.table.iloc[0]["latest_break"] - planted) <= 1
    assert "reported only" in res.records[("Aldwyr", "ghg_territorial")]["break_status"]


def test_bad_input():
    panel = ev.load_panel(_frame(_known_units()))
    with pytest.raises(DataError, match="Did you mean 'ghg'"):
        grade(panel, ["ghgg"], "gdp")
    with pytest.raises(SpecError, match="adjust"):
        Criteria(adjust="bonferroni")
    with pytest.raises(SpecError, match="required_rate"):
        Criteria(required_rate=5)


def test_bootstrap_interval_equals_arch():
    from arch.bootstrap import MovingBlockBootstrap

    units = {"sustained": _known_units()["sustained"]}
    panel = ev.load_panel(_frame(units))
    res = grade(panel, ["ghg"], "gdp", latest_break=False,
                criteria=Criteria(interval="bootstrap", reps=199, seed=7))
    row = res.table.iloc[0]
    log_p = np.log(panel.series("sustained", "ghg").to_numpy())

    def slope(t, y):
        tc = t - t.mean()
        return np.array([np.expm1(tc @ (y - y.mean()) / (tc @ tc))])

    # Reference library: arch's moving-block bootstrap, same block (round(30^(1/3)) = 3) and seed
    ref = MovingBlockBootstrap(3, YEARS.astype(float), log_p, seed=7).conf_int(
        slope, reps=199, method="percentile", size=0.95)
    assert row["observed_change_lower"] == pytest.approx(ref[0, 0])
    assert row["observed_change_upper"] == pytest.approx(ref[1, 0])
    assert row["observed_change_lower"] < row["observed_change"] < row["observed_change_upper"]


def test_unit_graded_on_its_own_longest_span_and_the_rest_listed():
    frame = _frame(_known_units())
    frame.loc[(frame.unit == "coupled") & (frame.year == 2000), "ghg"] = np.nan
    frame = frame[~((frame.unit == "relative") & (frame.year < 1996))]  # a later start
    res = grade(ev.load_panel(frame), "ghg", "gdp", latest_break=False)
    table = res.table.set_index("unit")
    assert set(table.index) == {"sustained", "relative", "recession_only", "coupled"}
    assert table.loc["coupled", "span"] == "2001-2020" and table.loc["coupled", "years"] == 20
    assert table.loc["relative", "span"] == "1996-2020"
    assert table.loc["sustained", "span"] == "1991-2020"  # the window is not cut to a common span
    assert "outside the longest complete span" in " ".join(res.excluded["reason"])
    assert table.loc["sustained", "duration"] == "sustained"
    assert "Excluded: coupled / ghg, gdp 1991-2000 (outside the longest complete span" in grade_table(res)


def test_short_spans_are_excluded_not_filled():
    frame = _frame(_known_units())
    frame = frame[~((frame.unit == "coupled") & (frame.year < 2013))]  # 8 years left
    res = grade(ev.load_panel(frame), "ghg", "gdp", latest_break=False)
    assert "coupled" not in set(res.table["unit"])
    assert "coupled" in set(res.excluded["unit"])


def test_weak_growth_is_flagged_and_never_absolute():
    rng = np.random.default_rng(5)
    gdp = 100 * np.exp(np.cumsum(0.002 + 0.01 * rng.standard_normal(YEARS.size)))
    ghg = 100 * np.exp(np.cumsum(np.full(YEARS.size, -0.01)) + rng.normal(0, 0.004, YEARS.size))
    panel = ev.load_panel(_frame({"flat": (gdp, ghg), **_known_units()}))
    row = grade(panel, "ghg", "gdp", latest_break=False).table.set_index("unit").loc["flat"]
    assert row["p_growth"] > 0.05
    assert "growth" in row["flags"] and row["rung"] not in ("absolute-significant",
                                                          "absolute-sustained", "target-consistent")


def test_every_column_names_its_test_and_size():
    res = grade(ev.load_panel(_frame(_known_units())), "ghg", "gdp", latest_break=False)
    assert "Perron & Yabu (2009)" in res.details["tests"]["direction"]
    assert res.details["size"]["n_years"] == 30 and res.details["size"]["controlled"]
    text = grade_table(res)
    assert "Perron & Yabu (2009)" in text and "Monte Carlo size at T=30" in text


def test_grade_result_protocol_and_tuple_records():
    panel = ev.load_panel(_frame(_known_units()))
    res = grade(panel, ["ghg"], "gdp", latest_break=False)
    assert ("sustained", "ghg") in res.records
    assert repr(res).startswith("GradeResult(") and str(res) == res.summary()
    assert list(res.excluded.columns) == ["unit", "column", "years", "reason"]
    assert isinstance(res.to_dict()["records"], list)
