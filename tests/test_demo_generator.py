"""Tests of the bundled demo panel generator (``evidence._demo.generate``).

The feature checks below verify our own planted design: every expected
pattern was planted by the generator (see ``demo_panel/truth.json``); none of
them is an empirical claim about any real place.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from evidence._demo import generate as gen
from statsmodels.tsa.filters.hp_filter import hpfilter

DEMO_DIR = Path(gen.__file__).resolve().parent
COLUMNS = ["region", "year", "gdp", "population", "energy", "ghg_territorial",
           "ghg_consumption", "dmc", "material_footprint"]
PS_CRITICAL = -1.65  # Phillips & Sul (2007): one-sided 5 % critical value


@pytest.fixture(scope="module")
def generated() -> tuple[pd.DataFrame, dict]:
    return gen.generate()


@pytest.fixture(scope="module")
def panel(generated) -> pd.DataFrame:
    return generated[0]


@pytest.fixture(scope="module")
def truth(generated) -> dict:
    return generated[1]


def wide(panel: pd.DataFrame, column: str) -> pd.DataFrame:
    """Regions in rows, years in columns."""
    return panel.pivot(index="region", columns="year", values=column)


def ols_slope(years: np.ndarray, y: np.ndarray) -> float:
    """Plain numpy OLS slope of ``y`` on ``years`` (with intercept)."""
    x = np.column_stack([np.ones(years.size), years.astype(float)])
    return float(np.linalg.lstsq(x, y, rcond=None)[0][1])


def window_slope(panel: pd.DataFrame, column: str, region: str,
                 first: int, last: int = 2023) -> float:
    """OLS slope of the log of ``column`` on year over ``first .. last``."""
    rows = panel[(panel.region == region) & panel.year.between(first, last)]
    return ols_slope(rows.year.to_numpy(), np.log(rows[column].to_numpy()))


def log_ghg_per_capita(panel: pd.DataFrame) -> pd.DataFrame:
    """Log territorial GHG per person (t CO2e), regions x years."""
    return np.log(wide(panel, "ghg_territorial") / wide(panel, "population"))


def regions_of(truth: dict, kind: str) -> list[str]:
    return sorted(r for r, f in truth["regions"].items() if f["type"] == kind)


def fitted_break(years: np.ndarray, y: np.ndarray) -> int:
    """Least-squares kink year: slope changes from ``k + 1`` on."""
    best, best_ssr = -1, np.inf
    for k in range(int(years[0]) + 5, int(years[-1]) - 4):
        x = np.column_stack([np.ones(years.size), years - years[0],
                             np.maximum(years - k, 0)])
        ssr = np.sum((y - x @ np.linalg.lstsq(x, y, rcond=None)[0]) ** 2)
        if ssr < best_ssr:
            best, best_ssr = k, ssr
    return best


def log_t_statistic(logs: pd.DataFrame) -> float:
    """Phillips & Sul (2007) log-t convergence statistic, r = 0.3.

    HP-filter (lambda = 400) each series, relative transition
    h_it = x_it / mean_i x_it, H_t = mean_i (h_it - 1)^2, regress
    log(H_1 / H_t) - 2 log(log t) on a constant and log t over
    t = floor(0.3 T) + 1 .. T with a Newey-West HAC t-statistic.
    """
    trend = np.vstack([hpfilter(row, lamb=400)[1] for row in logs.to_numpy()])
    h = trend / trend.mean(axis=0)
    big_h = ((h - 1.0) ** 2).mean(axis=0)
    n_t = big_h.size
    t = np.arange(math.floor(0.3 * n_t) + 1, n_t + 1)
    y = np.log(big_h[0] / big_h[t - 1]) - 2.0 * np.log(np.log(t))
    x = sm.add_constant(np.log(t))
    lags = math.floor(4 * (n_t / 100) ** (2 / 9))
    fit = sm.OLS(y, x).fit(cov_type="HAC", cov_kwds={"maxlags": lags})
    return float(fit.tvalues[1])


# --- determinism -------------------------------------------------------------

def test_generate_is_deterministic(panel):
    again, truth_again = gen.generate()
    pd.testing.assert_frame_equal(panel, again)
    assert truth_again == gen.generate()[1]


def test_other_seed_differs(panel):
    other, _ = gen.generate(seed=7)
    assert not np.allclose(other.gdp, panel.gdp)


def test_write_is_byte_reproducible_and_shipped_files_are_fresh(tmp_path):
    first = gen.write(tmp_path / "a")
    second = gen.write(tmp_path / "b")
    for path_a, path_b in zip(first, second, strict=True):
        assert path_a.read_bytes() == path_b.read_bytes()
        shipped = DEMO_DIR / path_a.name
        assert shipped.read_bytes() == path_a.read_bytes(), (
            f"{shipped.name} is stale: run python demo_panel/generate.py")


def test_shipped_csv_reads_back_as_generated(panel):
    shipped = pd.read_csv(DEMO_DIR / "demo_panel.csv")
    pd.testing.assert_frame_equal(shipped, panel, check_dtype=False)


def test_truth_json_matches_generated(truth):
    text = (DEMO_DIR / "truth.json").read_text(encoding="utf-8")
    assert json.loads(text) == truth
    assert text.endswith("}\n")


# --- schema -------------------------------------------------------------------

def test_schema(panel):
    assert list(panel.columns) == COLUMNS
    assert pd.api.types.is_string_dtype(panel.region)
    assert panel.year.dtype == np.int64
    for column in COLUMNS[2:]:
        assert panel[column].dtype == np.float64
    assert panel.region.nunique() == 30
    assert sorted(panel.year.unique()) == list(range(1990, 2024))
    assert len(panel) == 30 * 34
    assert not panel.duplicated(["region", "year"]).any()


def test_missing_cells_and_positivity(panel):
    # planted by the generator: consumption-based series start in 1995
    consumption = ["ghg_consumption", "material_footprint"]
    early = panel.year < 1995
    assert panel.loc[early, consumption].isna().all().all()
    assert panel.loc[~early, consumption].notna().all().all()
    others = [c for c in COLUMNS[2:] if c not in consumption]
    assert panel[others].notna().all().all()
    assert (panel[COLUMNS[2:]].fillna(1.0) > 0).all().all()


def test_truth_layout(truth, panel):
    assert truth["seed"] == gen.DEFAULT_SEED
    assert truth["years"] == [1990, 2023]
    assert truth["recession_years"] == [2009]
    assert truth["consumption_basis_starts"] == 1995
    assert "last year of the old regime" in truth["break_convention"]
    assert set(truth["regions"]) == set(panel.region)
    counts = {k: len(regions_of(truth, k)) for k in
              ("absolute", "relative", "coupled", "offshoring")}
    assert counts == {"absolute": 9, "relative": 8, "coupled": 8, "offshoring": 5}
    members = sorted(r for club in truth["clubs"].values() for r in club)
    assert members == sorted(truth["regions"])
    for name in regions_of(truth, "absolute"):
        assert 2003 <= truth["regions"][name]["break_year"] <= 2012
    assert truth["divergent"] == []


# --- planted decoupling types (planted by the generator) ---------------------

def test_absolute_decouplers(panel, truth):
    # planted by the generator: territorial GHG falls after the break, GDP grows
    for name in regions_of(truth, "absolute"):
        start = truth["regions"][name]["break_year"] + 1
        assert window_slope(panel, "ghg_territorial", name, start) < 0, name
        assert window_slope(panel, "gdp", name, start) > 0, name


def test_absolute_break_year_is_recovered(panel, truth):
    # planted by the generator: one kink in log(ghg_territorial / gdp)
    intensity = np.log(wide(panel, "ghg_territorial") / wide(panel, "gdp"))
    years = intensity.columns.to_numpy()
    for name in regions_of(truth, "absolute"):
        facts = truth["regions"][name]
        found = fitted_break(years, intensity.loc[name].to_numpy())
        assert abs(found - facts["break_year"]) <= 1, name
        before = ols_slope(years[years <= facts["break_year"]],
                           intensity.loc[name][years <= facts["break_year"]])
        after = ols_slope(years[years > facts["break_year"]],
                          intensity.loc[name][years > facts["break_year"]])
        assert before - after > 0.02, name


def test_relative_decouplers(panel, truth):
    # planted by the generator: GHG grows, clearly slower than GDP
    for name in regions_of(truth, "relative"):
        ghg = window_slope(panel, "ghg_territorial", name, 1990)
        gdp = window_slope(panel, "gdp", name, 1990)
        assert 0 < ghg < gdp, name
        assert 0.2 < ghg / gdp < 0.7, name


def test_coupled(panel, truth):
    # planted by the generator: GHG grows about as fast as GDP
    for name in regions_of(truth, "coupled"):
        ratio = (window_slope(panel, "ghg_territorial", name, 1990)
                 / window_slope(panel, "gdp", name, 1990))
        assert 0.8 < ratio < 1.2, name


def test_offshoring(panel, truth):
    # planted by the generator: territorial falls, consumption-based rises
    for name in regions_of(truth, "offshoring"):
        start = truth["regions"][name]["offshoring_onset"] + 1
        assert window_slope(panel, "ghg_territorial", name, start) < 0, name
        assert window_slope(panel, "ghg_consumption", name, start) > 0, name
        assert window_slope(panel, "gdp", name, start) > 0, name


def test_recession_year(panel):
    # planted by the generator: GDP falls in 2009 everywhere, GHG falls more
    growth_gdp = np.log(wide(panel, "gdp")).diff(axis=1)[2009]
    growth_ghg = np.log(wide(panel, "ghg_territorial")).diff(axis=1)[2009]
    assert (growth_gdp < 0).all()
    assert -0.06 < growth_gdp.median() < -0.015
    assert growth_ghg.mean() < growth_gdp.mean()
    assert (growth_ghg < growth_gdp).mean() >= 0.9


def test_footprint_exceeds_dmc_in_high_club(panel, truth):
    # planted by the generator: high-club regions import raw materials
    late = panel[panel.year >= 1995]
    for name in truth["clubs"]["1"]:
        rows = late[late.region == name]
        assert (rows.material_footprint > rows.dmc).all(), name


# --- planted convergence clubs (planted by the generator) --------------------

def test_clubs_shrink_within_and_stay_apart(panel, truth):
    # planted by the generator: within-club dispersion decays, clubs stay apart
    logs = log_ghg_per_capita(panel)
    means, sds = [], []
    for club in sorted(truth["clubs"], key=int):
        members = logs.loc[truth["clubs"][club]]
        assert members[2023].var() < members[1995].var() / 3, club
        means.append(members[2023].mean())
        sds.append(members[2023].std())
    assert means == sorted(means, reverse=True)
    assert min(-np.diff(means)) > 5 * max(sds)


def test_phillips_sul_log_t(panel, truth):
    # Phillips & Sul (2007), r = 0.3 and one-sided 5 % critical value -1.65:
    # convergence is not rejected within each planted club but rejected overall.
    logs = log_ghg_per_capita(panel)
    assert logs.shape[1] == 34
    for club, members in truth["clubs"].items():
        assert log_t_statistic(logs.loc[members]) > PS_CRITICAL, club
    assert log_t_statistic(logs) < PS_CRITICAL
