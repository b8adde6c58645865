"""Panel screening, common breaks, executors and the command line."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose
from statsmodels.stats.multitest import multipletests

import evidence as ev
from evidence.breaks import common_breaks, find_breaks, screen_breaks
from evidence.breaks.segment import min_length, optimal_partitions, ssr_tables
from evidence.cli import main
from evidence.errors import DataError
from evidence.panel import load_panel


@pytest.fixture(scope="module")
def demo():
    panel = ev.demo_panel().with_intensity("ghg_territorial", "gdp", name="intensity")
    return panel.with_log("intensity", name="log_intensity")


@pytest.fixture(scope="module")
def demo_screen(demo):
    return screen_breaks(demo, "log_intensity", max_breaks=3)


def test_planted_breaks_recovered_within_intervals(demo_screen):
    # Planted truth of the invented demo scenario (ev.demo_truth()): absolute decouplers have a kink
    # in log(ghg_territorial/gdp) after break_year. Each must be found, its interval containing it.
    truth = ev.demo_truth()["regions"]
    early = []
    for unit, info in truth.items():
        if info["type"] != "absolute":
            continue
        row = demo_screen.table.loc[unit]
        hits = [(b, lo, hi) for b, lo, hi in zip(row.break_years, row.lower, row.upper, strict=True)
                if lo <= info["break_year"] <= hi]
        assert hits, (unit, info["break_year"], row.break_years, row.lower, row.upper)
        if hits[0][0] == info["break_year"] - 1:
            early.append(unit)
    # the 2009 recession dip pulls several estimates one year early (reported, not widened)
    assert len(early) <= 6


def test_screen_matches_find_breaks_per_unit(demo, demo_screen):
    # Naive oracle: the single-series function, unit by unit.
    for unit in ("Aldwyr", "Belvaron", "Pellacor"):
        single = find_breaks(demo.series(unit, "log_intensity"), model="trend", max_breaks=3)
        row = demo_screen.table.loc[unit]
        assert row.break_years == single.break_years
        assert tuple(single.intervals["lower"]) == row.lower
        assert_allclose(row.pvalue, single.tests["UDmax"].pvalue)


def test_adjusted_pvalues(demo_screen):
    p = demo_screen.table["pvalue"].to_numpy()
    # statsmodels multipletests (reference library) and a plain Benjamini-Hochberg loop
    assert_allclose(demo_screen.table["pvalue_adjusted"], multipletests(p, method="fdr_bh")[1])
    order = np.argsort(p)
    n = len(p)
    naive = np.empty(n)
    running = 1.0
    for rank in range(n, 0, -1):
        running = min(running, p[order[rank - 1]] * n / rank)
        naive[order[rank - 1]] = running
    assert_allclose(demo_screen.table["pvalue_adjusted"], naive)


def test_left_out_units_are_listed():
    rng = np.random.default_rng(4)
    rows = []
    for unit, years in (("Full", range(1990, 2024)), ("Short", range(2015, 2024)),
                        ("Gappy", range(1990, 2024)), ("Flat", range(1990, 2024))):
        for year in years:
            value = rng.normal() + (year > 2005)
            if unit == "Gappy" and year == 2000:
                value = np.nan
            if unit == "Flat":
                value = 1.0
            rows.append({"unit": unit, "year": year, "x": value})
    panel = load_panel(pd.DataFrame(rows), unit="unit", time="year")
    res = screen_breaks(panel, "x", model="level", max_breaks=2)
    assert list(res.table.index) == ["Full"]
    assert list(res.excluded.columns) == ["unit", "column", "years", "reason"]
    reasons = dict(zip(res.excluded["unit"], res.excluded["reason"], strict=True))
    assert "2000" in reasons["Gappy"] and "constant" in reasons["Flat"]
    assert "too few" in reasons["Short"]
    with pytest.raises(DataError, match="no unit"):
        screen_breaks(panel.select(["Short"]), "x", model="level")


def test_executors_give_identical_output(demo):
    small = demo.select(list(demo.units[:6]))
    serial = screen_breaks(small, "log_intensity", max_breaks=2, chunk=2)
    procs = screen_breaks(small, "log_intensity", max_breaks=2, chunk=2, executor="processes")
    pd.testing.assert_frame_equal(serial.table, procs.table)


@pytest.mark.slow
def test_dask_executor_gives_identical_output(demo):
    serial = screen_breaks(demo, "log_intensity", max_breaks=3, chunk=7)
    dask = screen_breaks(demo, "log_intensity", max_breaks=3, chunk=7, executor="dask")
    pd.testing.assert_frame_equal(serial.table, dask.table)


def test_clustering_test_detects_common_years_and_not_random_ones():
    rng = np.random.default_rng(9)
    years = np.arange(1980, 2020)

    def panel_with(breaks):
        rows = []
        for i, b in enumerate(breaks):
            y = rng.normal(scale=0.3, size=years.size) + 2.0 * (years > b)
            rows += [{"unit": f"u{i:02d}", "year": int(t), "x": float(v)}
                     for t, v in zip(years, y, strict=True)]
        return load_panel(pd.DataFrame(rows), unit="unit", time="year")

    common = screen_breaks(panel_with([2000] * 12), "x", model="level", max_breaks=1, reps=199)
    assert common.counts.loc[2000] >= 10 and common.clustering.pvalue < 0.05
    spread = screen_breaks(panel_with(rng.integers(1988, 2012, size=12)), "x", model="level",
                           max_breaks=1, reps=199)
    assert spread.clustering.pvalue > 0.01


def test_common_breaks_sum_of_tables_and_recovery():
    rng = np.random.default_rng(12)
    years = np.arange(1970, 2020)
    rows = []
    values = []
    for i in range(8):
        y = rng.normal(scale=1.0, size=years.size) + 1.5 * (years > 1994)
        values.append(y)
        rows += [{"unit": f"u{i}", "year": int(t), "x": float(v)} for t, v in zip(years, y, strict=True)]
    panel = load_panel(pd.DataFrame(rows), unit="unit", time="year")
    res = common_breaks(panel, "x", model="level", max_breaks=2)
    assert res.break_years == (1994,)
    assert res.intervals.iloc[0].lower <= 1994 <= res.intervals.iloc[0].upper
    assert res.test.pvalue < 0.01
    # naive oracle: loop over units, add their SSR tables, run the DP
    h = min_length(years.size, 0.15)
    total = sum(ssr_tables(np.asarray(v)[None], "level", h)[0] for v in values)
    ssr, _ = optimal_partitions(total[None], 2, h)
    assert_allclose(res.ssr.to_numpy(), ssr[0], rtol=1e-10)


def test_cli_prints_the_per_unit_table(tmp_path, capsys):
    csv = tmp_path / "demo.csv"
    ev.demo_panel().frame.reset_index().to_csv(csv, index=False)
    code = main(["breaks", str(csv), "--column", "ghg_territorial", "--per", "gdp", "--log",
                 "--max-breaks", "3"])
    out = capsys.readouterr().out
    assert code == 0
    assert "Structural breaks in log(ghg_territorial/gdp)" in out
    assert "last year of the old regime" in out and "Aldwyr" in out
    assert "residual AR(1)" in out and "calibrated" in out
    code = main(["breaks", str(csv), "--column", "ghg_territorial", "--per", "gdp", "--log",
                 "--max-breaks", "3", "--format", "json"])
    payload = json.loads(capsys.readouterr().out)
    assert payload["rows"][0]["unit"] == "Aldwyr"
    assert main(["breaks", str(csv), "--column", "nope"]) == 2
    assert main(["breaks", str(csv), "--column", "gdp", "--trim", "0.7"]) == 2


def test_results_follow_the_protocol(demo_screen):
    # one-line repr, str == summary, JSON-safe to_dict, a tidy to_frame, frozen details
    assert "\n" not in repr(demo_screen) and repr(demo_screen).startswith("ScreenResult(")
    assert str(demo_screen) == demo_screen.summary()
    assert "last year of the old regime" in demo_screen.summary()
    payload = json.loads(json.dumps(demo_screen.to_dict(), allow_nan=False))
    assert payload["column"] == "log_intensity" and len(payload["table"]) == len(demo_screen.table)
    assert "unit" in demo_screen.to_frame().columns
    with pytest.raises(TypeError):
        demo_screen.details["model"] = "level"
    assert "<pre>" in demo_screen._repr_html_()


def test_common_break_result_follows_the_protocol(demo):
    res = common_breaks(demo.select(list(demo.units[:5])), "log_intensity", model="trend",
                        max_breaks=1)
    assert "\n" not in repr(res) and str(res) == res.summary()
    json.dumps(res.to_dict(), allow_nan=False)
    assert list(res.to_frame().columns) == ["break_year", "lower", "upper"]
    assert list(res.excluded.columns) == ["unit", "column", "years", "reason"]


def test_partitions_unit_results_and_residual_autocorrelation(demo, demo_screen):
    # The screen keeps every unit's optimal partition for each m (as find_breaks does) and builds
    # a unit's full result only on request, equal to its row.
    single = find_breaks(demo.series("Kestmoor", "log_intensity"), max_breaks=3)
    for m in range(4):
        assert demo_screen.partitions(m).loc["Kestmoor"] == single.partitions[m]
    unit = demo_screen.unit("Kestmoor")
    row = demo_screen.table.loc["Kestmoor"]
    assert unit.break_years == row.break_years and tuple(unit.intervals["upper"]) == row.upper
    assert_allclose(unit.details["resid_ar1"], row.ar1)
    assert bool(unit.details["ar1_covered"]) == bool(row.ar1_covered)
    assert demo_screen.table["ar1_covered"].dtype == bool
    with pytest.raises(KeyError):
        demo_screen.unit("Nowhere")


def test_screen_of_many_units_is_one_table():
    # arrays in, one tidy frame out: 2000 simulated units in one call, one row each
    rng = np.random.default_rng(8)
    y = rng.normal(size=(30, 2000)).cumsum(axis=0) * 0.1 + np.arange(30)[:, None] * 0.05
    res = screen_breaks(ev.Panel.from_arrays({"y": y}, years=range(1994, 2024)), "y", reps=99)
    assert len(res.table) == 2000 and res.table.index.is_unique
    assert set(res.table.columns) >= {"n_breaks", "break_years", "lower", "upper", "pvalue",
                                      "pvalue_adjusted", "ar1", "ar1_covered"}
    flagged = res.table[res.table["n_breaks"] > 0]
    assert all(len(b) == n for b, n in zip(flagged["break_years"], flagged["n_breaks"], strict=True))
