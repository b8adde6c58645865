"""Studies at scale: the grade and a whole study give the same numbers on every executor.

The units are sent to the executor in chunks (``evidence.grading.CHUNK``); here the chunks are
made small so that a panel of a few units is split over several tasks and workers.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from evidence import grading
from evidence.grading import Criteria, grade
from evidence.panel import load_panel
from evidence.study import run_study


def _frame(n_units: int = 8, n_years: int = 24, seed: int = 7) -> pd.DataFrame:
    """Seeded panel: GDP growing 1-3 % a year with one recession; emissions with a trend of
    their own per unit (test scaffolding only)."""
    rng = np.random.default_rng(seed)
    years = np.arange(1996, 1996 + n_years)
    rows = []
    for i in range(n_units):
        g = rng.uniform(0.01, 0.03)
        slope = rng.uniform(-0.04, 0.01)
        noise = rng.normal(0.0, 0.01, (3, n_years)).cumsum(axis=1) * 0.5
        dip = np.where(years == 2009, -0.03, 0.0)
        for k, year in enumerate(years):
            t = year - years[0]
            rows.append({"county": f"county {i:02d}", "year": int(year),
                         "gdp": 100.0 * np.exp(g * t + dip[k] + noise[0, k]),
                         "population": 10.0 * np.exp(0.004 * t),
                         "ghg": 50.0 * np.exp((g + slope) * t + noise[1, k]),
                         "ghg_cons": 55.0 * np.exp((g + slope + 0.004) * t + noise[2, k])})
    return pd.DataFrame(rows)


@pytest.fixture
def small_chunks(monkeypatch):
    monkeypatch.setattr(grading, "CHUNK", 3)


def test_grade_is_the_same_in_chunks_on_processes(small_chunks):
    panel = load_panel(_frame(n_units=7), unit="county", time="year")
    crit = Criteria(min_window=10)
    serial = grade(panel, "ghg", "gdp", consumption={"ghg": "ghg_cons"}, criteria=crit,
                   latest_break=False)
    parallel = grade(panel, "ghg", "gdp", consumption={"ghg": "ghg_cons"}, criteria=crit,
                     latest_break=False, executor="processes")
    pd.testing.assert_frame_equal(serial.table, parallel.table)
    assert serial.to_dict() == parallel.to_dict()


STUDY = """
[study]
title = "Scale test"

[data]
file = "panel.csv"
unit = "county"

[roles]
activity = "gdp"
population = "population"

[[pressures]]
column = "ghg"
consumption = "ghg_cons"

[criteria]
min_window = 10

[analyses]
rates = true
grade = true
elasticity = ["fe", "mg"]
roots = []
dependence = false
convergence = ["beta", "sigma"]
decomposition = false

[output]
formats = ["csv", "json"]
figures = false
"""


@pytest.mark.slow
def test_study_on_a_local_dask_cluster_gives_identical_results(tmp_path, small_chunks):
    distributed = pytest.importorskip("dask.distributed")
    _frame(n_units=8).to_csv(tmp_path / "panel.csv", index=False)
    (tmp_path / "study.toml").write_text(STUDY)
    run_study(tmp_path / "study.toml", tmp_path / "serial")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, host="127.0.0.1",
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        run_study(tmp_path / "study.toml", tmp_path / "dask", executor=client)
    serial = (tmp_path / "serial" / "results.json").read_bytes()
    assert serial == (tmp_path / "dask" / "results.json").read_bytes()
    assert b'"grade"' in serial


def test_study_profile_prints_steps_and_hot_spots(tmp_path):
    from click.testing import CliRunner

    from evidence.cli import cli

    _frame(n_units=4).to_csv(tmp_path / "panel.csv", index=False)
    text = STUDY.replace('elasticity = ["fe", "mg"]', "elasticity = []").replace(
        'convergence = ["beta", "sigma"]', "convergence = []").replace("grade = true", "grade = false")
    (tmp_path / "study.toml").write_text(text)
    result = CliRunner().invoke(cli, ["study", str(tmp_path / "study.toml"), "--out",
                                      str(tmp_path / "out"), "--profile"])
    assert result.exit_code == 0, result.output
    err = result.stderr if hasattr(result, "stderr") else result.output
    assert "Profile (cProfile" in err and "rates" in err and "hot spots" in err


def test_long_tables_are_cut_in_the_report_and_complete_in_their_files():
    from evidence.study._long import shorten_rows
    from evidence.tables import render_frame

    frame = pd.DataFrame({"unit": [f"county {i:03d}" for i in range(120)], "value": range(120)})
    html = render_frame(frame, "html", index=False, title="Long")
    cut = shorten_rows(html, ["tables/long.html", "tables/long.csv"], limit=50)
    assert cut.count("<tr>") == 1 + 50 + 1  # head, rows shown, the note
    assert "county 049" in cut and "county 050" not in cut
    assert "70 more rows (of 120)" in cut and "tables/long.csv" in cut
    assert cut.count("<table>") == cut.count("</table>") == 1
    short = render_frame(frame.head(10), "html", index=False)
    assert shorten_rows(short, ["tables/x.csv"]) == short
