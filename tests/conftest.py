"""Shared fixtures: small panels built in the test, never invented 'check values'."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest


@pytest.fixture
def long_frame() -> pd.DataFrame:
    """Three units, 1990-2023, seeded noise around known trends (test scaffolding only)."""
    rng = np.random.default_rng(12345)
    rows = []
    trends = {"Alda": (0.03, -0.01), "Brenn": (0.02, 0.01), "Corvo": (0.025, 0.025)}
    for unit, (g_act, g_pres) in trends.items():
        for year in range(1990, 2024):
            t = year - 1990
            rows.append({"region": unit, "year": year,
                         "gdp": 100 * np.exp(g_act * t + rng.normal(0, 0.01)),
                         "co2": 50 * np.exp(g_pres * t + rng.normal(0, 0.01)),
                         "pop": 10 * np.exp(0.005 * t)})
    return pd.DataFrame(rows)


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory):
    """The demo written once per test session (``evidence demo``'s own call): shared by the
    study and report tests, which only read it."""
    import evidence as ev

    folder = tmp_path_factory.mktemp("demo-run") / "evidence-demo"
    return ev.run_demo(folder)
