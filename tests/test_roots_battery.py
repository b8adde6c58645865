"""The unit-root battery: its decision rule, the demo panel through the API and the CLI."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

import evidence as ev
from evidence.cli import main
from evidence.errors import SpecError
from evidence.roots.battery import PANEL_ROW, _decide, root_battery

DEMO_CSV = str(__import__("pathlib").Path(__file__).resolve().parents[1] / "demo_panel" / "demo_panel.csv")


def _rows(level: dict[str, bool | None], diff: dict[str, bool | None] | None = None):
    rows = [{"series": "level", "test": k, "reject": v} for k, v in level.items()]
    rows += [{"series": "difference", "test": k, "reject": v} for k, v in (diff or {}).items()]
    return rows


def test_decision_rule():
    # every unit-root test rejects and KPSS does not -> I(0)
    assert _decide(_rows({"adf": True, "pp": True, "kpss": False}), True)[0] == "I(0)"
    # unit root in levels (ADF does not reject, KPSS rejects) and stationary differences -> I(1)
    label, reason = _decide(_rows({"adf": False, "kpss": True}, {"adf": True, "kpss": False}), True)
    assert label == "I(1)" and "kpss reject stationarity" in reason
    # a KPSS that does not reject in levels does not block I(1); the reason says so
    label, reason = _decide(_rows({"adf": False, "kpss": False}, {"adf": True, "kpss": False}), True)
    assert label == "I(1)" and "low power" in reason
    # the tests disagree in levels -> inconclusive
    assert _decide(_rows({"adf": True, "kpss": True}), True)[0] == "inconclusive"
    assert _decide(_rows({"adf": True, "pp": False}), True)[0] == "inconclusive"
    # differences not clearly stationary -> inconclusive
    assert _decide(_rows({"adf": False, "kpss": True}, {"adf": False, "kpss": False}), True)[0] == \
        "inconclusive"
    # differences not tested
    assert _decide(_rows({"adf": False, "kpss": True}), False)[0] == "I(1) or higher"
    # a test that could not apply (reject None) is left out of the rule
    assert _decide(_rows({"adf": True, "ls": None, "kpss": False}), True)[0] == "I(0)"
    # only stationarity tests: no decision
    assert _decide(_rows({"kpss": True}), True)[0] == "inconclusive"


def test_series_battery_decides_clear_cases():
    rng = np.random.default_rng(5)
    walk = pd.Series(np.cumsum(rng.normal(size=40)), index=range(1980, 2020), name="walk")
    noise = pd.Series(rng.normal(size=40), index=range(1980, 2020), name="noise")
    assert root_battery(walk).decisions["decision"].iloc[0] == "I(1)"
    res = root_battery(noise, tests=("adf", "pp", "kpss", "dfgls"), trend="constant")
    assert res.decisions["decision"].iloc[0] == "I(0)"
    assert res.details["decision_rule"].startswith("Decision at alpha")
    assert "rule:" in res.summary()
    assert set(res.table["test"]) == {"adf", "pp", "kpss", "dfgls"}
    json.dumps(res.to_dict())
    assert "I(0): 1" in res.summary()
    with pytest.raises(SpecError, match="tests="):
        root_battery(walk, tests=("ips",))          # panel tests need a panel


def test_battery_lists_excluded_units():
    panel = ev.demo_panel()
    frame = panel.frame.reset_index()
    unit = panel.units[0]
    frame.loc[(frame.iloc[:, 0] == unit) & (frame.iloc[:, 1] == 2000), "dmc"] = np.nan
    gappy = ev.load_panel(frame, unit=panel.unit_name, time=panel.time_name)
    res = root_battery(gappy, "dmc", tests=("adf", "kpss"))
    skipped = res.excluded[res.excluded["unit"] == unit]
    assert len(skipped) == 4 and skipped["reason"].str.contains("missing in 2000").all()
    assert list(res.excluded.columns) == ["unit", "column", "years", "reason"]
    assert set(skipped["column"]) == {"dmc", "diff_dmc"}
    # the blank cells say why: n/a with the reason in notes
    row = res.decision_table().set_index("unit").loc[unit]
    assert row["adf level"] == "n/a" and "missing in 2000" in row["notes"]
    assert res.decisions.set_index("unit").loc[unit, "decision"] == "inconclusive"
    with pytest.raises(SpecError, match="tests="):
        root_battery(gappy, "dmc", tests=("adf", "nope"))
    with pytest.raises(SpecError, match="column="):
        root_battery(gappy)


def test_battery_runs_on_every_demo_column():
    panel = ev.demo_panel()
    for column in panel.columns[:2]:
        res = root_battery(panel, column, tests=("adf", "kpss", "ips", "cips"))
        assert set(res.decisions["unit"]) == set(panel.units) | {PANEL_ROW}, column
        table = res.decision_table()
        assert {"adf level", "kpss diff", "ips level", "cips diff", "decision", "reason",
                "notes"} <= set(table.columns)
        # the demo panel is unbalanced: CIPS cannot run, and its cell says why
        cips = table.set_index("unit").loc[PANEL_ROW]
        if cips["cips level"] == "n/a":
            assert "balanced" in cips["notes"]
        assert table.set_index("unit").loc[PANEL_ROW, "ips level"] != "n/a"   # IPS never blank
        json.dumps(res.to_dict())


def test_cli_battery_and_dependence(capsys):
    assert main(["roots", DEMO_CSV, "--column", "ghg_territorial", "--log", "--tests",
                 "adf,kpss,ips"]) == 0
    out = capsys.readouterr().out
    assert "Unit-root battery: ln ghg_territorial" in out and "decision" in out
    assert main(["roots", DEMO_CSV, "--column", "dmc", "--dependence", "--format", "json"]) == 0
    payload = json.loads(capsys.readouterr().out)
    assert next(r["test"] for r in payload["rows"]) == "Pesaran CD"
    assert main(["roots", DEMO_CSV, "--column", "dmc", "--tests", "adf", "--format", "csv",
                 "--no-differences"]) == 0
    csv = capsys.readouterr().out
    assert csv.splitlines()[0].startswith("unit,series,test,statistic,pvalue") and "decision" in csv
    assert main(["roots", DEMO_CSV, "--column", "energy", "--tests", "adf,kpss", "--differences",
                 "--lags", "2", "--trend", "constant", "--format", "markdown"]) == 0
    assert "| decision |" in capsys.readouterr().out
    assert main(["roots", DEMO_CSV, "--column", "nope"]) == 2
    assert "not in the data" in capsys.readouterr().err
    assert main(["roots", DEMO_CSV, "--column", "dmc", "--tests", "adf,bogus"]) == 2
    assert main(["roots", DEMO_CSV, "--column", "dmc", "--trend", "ct"]) == 2   # old codes retired
    assert main(["roots", DEMO_CSV, "--column", "dmc", "--lags", "t-stat"]) == 2


@pytest.mark.slow
def test_cli_battery_on_every_demo_column(capsys):
    for column in ev.demo_panel().columns:
        assert main(["roots", DEMO_CSV, "--column", column]) == 0, column
        assert "decision" in capsys.readouterr().out


@pytest.mark.parametrize("options", [{"tests": ("adf", "pp", "kpss"), "trend": "trend"},
                                     {"tests": ("adf", "kpss", "dfgls"), "trend": "constant",
                                      "lags": 1},
                                     {"tests": ("adf",), "trend": "none", "lags": "bic"}])
def test_batched_series_tests_equal_the_one_unit_path(monkeypatch, options):
    # The battery computes ADF, PP and KPSS for all units of a length at once; every row must
    # equal the one the one-unit functions (arch's statistics) give, on an unbalanced panel.
    from evidence.roots import battery

    rng = np.random.default_rng(8)
    years = np.arange(1990, 2022)
    frames = []
    for i in range(9):
        y = np.cumsum(0.02 + 0.03 * rng.standard_normal(years.size))
        keep = years >= (1990 + 4 * (i % 3))            # three different spans
        frames.append(pd.DataFrame({"unit": f"u{i}", "year": years[keep], "y": y[keep]}))
    panel = ev.load_panel(pd.concat(frames), unit="unit", time="year")
    batched = root_battery(panel, "y", **options)
    monkeypatch.setattr(battery, "BATCHED", ())
    plain = root_battery(panel, "y", **options)
    num = ["statistic", "pvalue", "cv"]
    np.testing.assert_allclose(batched.table[num].to_numpy(float), plain.table[num].to_numpy(float),
                               rtol=1e-8, atol=1e-10)
    other = [c for c in plain.table.columns if c not in num]
    pd.testing.assert_frame_equal(batched.table[other], plain.table[other])
    pd.testing.assert_frame_equal(batched.decisions, plain.decisions)
