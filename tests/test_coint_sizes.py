"""The size card of the cointegration, causality and slope-homogeneity tests (evidence/_sizes/):
the defaults hold their size in the simulations, every test has a power figure, and every
result carries the card's note — with a warning in its summary where its p-value is not
calibrated. The card itself is made by ``python -m evidence.cointegration._make_sizes`` (hours);
these checks only read it."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from evidence._montecarlo import simulate
from evidence._size_card import CONTROLLED, size_card
from evidence.cointegration import dumitrescu_hurlin_test, kao_test, pedroni_test, westerlund_test
from evidence.cointegration._make_sizes import markdown
from evidence.elasticity import slope_homogeneity_test

ROOT = Path(__file__).resolve().parents[1]
FAMILIES = {"cointegration": ("Pedroni", "Kao", "Westerlund", "Dumitrescu-Hurlin"),
            "elasticity": ("Pesaran-Yamagata",)}


@pytest.mark.parametrize("family", FAMILIES)
def test_card_files(family):
    data = json.loads((ROOT / "evidence" / "_sizes" / f"{family}.json").read_text(encoding="utf-8"))
    assert data["generated_by"] == "python -m evidence.cointegration._make_sizes"
    tests = {e["test"] for e in data["entries"]}
    for prefix in FAMILIES[family]:
        assert any(t.startswith(prefix) for t in tests), prefix
    for entry in data["entries"]:
        assert {"test", "options", "dgp", "hypothesis", "n_units", "n_years", "rejection",
                "mc_se", "reps"} <= set(entry)
    assert {30, 40} <= {e["n_years"] for e in data["entries"]}


def test_defaults_hold_their_size_on_the_card():
    # issue 13: every default within [3 %, 7.5 %] at 5 % nominal, N = 20, T = 30 and 40
    card = size_card()
    mine = card[card["family"].isin(list(FAMILIES)) & (card["options"] == "inference=bootstrap")]
    null = mine[mine["hypothesis"] == "null"]
    low, high = CONTROLLED
    # A cell fails when its whole Monte Carlo interval (±2 s.e., about ±2.2 points at 400 panels)
    # lies outside the band: with 160 cells a true 5 % lands outside [3, 7.5] at face value in
    # about 7 of them by chance. The cells outside at face value are listed in size.md.
    outside = null[(null["rejection"] + 2 * null["mc_se"] < low)
                   | (null["rejection"] - 2 * null["mc_se"] > high)]
    assert len(null) >= 100
    assert outside.empty, outside[["test", "dgp", "n_years", "rejection"]].to_string()
    # and the defaults are centred on 5 %: the mean over all cells within half a point
    assert abs(null["rejection"].mean() - 0.05) < 0.005


def test_every_test_has_power_beside_its_size():
    card = size_card()
    mine = card[card["family"].isin(list(FAMILIES))]
    for test in set(mine["test"]):
        alt = mine[(mine["test"] == test) & (mine["hypothesis"] == "alternative")]
        assert len(alt) >= 2, test
        assert alt["rejection"].median() > 0.3, (test, alt["rejection"].tolist())


def test_size_md_prints_the_card():
    text = (ROOT / "docs" / "methods" / "size.md").read_text(encoding="utf-8")
    for family in FAMILIES:
        assert markdown(family) in text, f"docs/methods/size.md is stale for {family}"


def test_results_carry_the_size_note_and_say_when_uncalibrated():
    panel = simulate("walks", 20, 30, rng=np.random.default_rng(1), drift=1.0)
    boot = pedroni_test(panel, "y", "x", reps=19)
    note = boot["group ADF"].details["size"]
    assert note["n_units"] == 20 and note["n_years"] == 30 and note["controlled"]
    assert not any("not calibrated" in w for w in boot["group ADF"].warnings)
    asym = pedroni_test(panel, "y", "x", inference="asymptotic")
    adf = asym["group ADF"]
    assert not adf.details["size"]["controlled"]
    assert any("asymptotic p-value not calibrated" in w for w in adf.warnings)
    assert "not calibrated" in adf.summary() and "drift" in adf.summary()
    for func in (kao_test, westerlund_test):
        res = func(panel, "y", "x", inference="asymptotic")
        assert all("size" in r.details for r in res)
    dh = dumitrescu_hurlin_test(simulate("granger", 20, 30, rng=np.random.default_rng(2)), "y", "x",
                                inference="asymptotic")
    assert "not calibrated" in dh.summary()
    py = slope_homogeneity_test(simulate("slopes", 20, 30, rng=np.random.default_rng(3)), "y", "x",
                                log=False, reps=19)
    assert py.details["size"]["controlled"]
