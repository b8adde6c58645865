"""The executor interface: same results, in task order, whichever backend runs them."""

from __future__ import annotations

import numpy as np
import pytest

from evidence import SpecError
from evidence._cache import cache_key, load_cached, save_cached
from evidence.parallel import DaskExecutor, get_executor, run_tasks, task_seeds


def _draw(seed: np.random.SeedSequence) -> float:
    return float(np.random.default_rng(seed).normal(size=100).sum())


def test_serial_and_processes_agree():
    seeds = task_seeds(123, 8)
    serial = run_tasks(_draw, seeds)
    pooled = run_tasks(_draw, seeds, backend="processes", jobs=2)
    assert serial == pooled
    assert serial == run_tasks(_draw, task_seeds(123, 8))  # reproducible from the int seed


def test_dask_local_cluster_agrees():
    pytest.importorskip("dask.distributed")
    seeds = task_seeds(7, 6)
    with DaskExecutor(jobs=2, processes=False) as executor:
        got = executor.map(_draw, seeds)
    assert got == run_tasks(_draw, seeds)


def test_progress_and_options():
    seen = []
    run_tasks(_draw, task_seeds(1, 3), progress=lambda done, total: seen.append((done, total)))
    assert seen == [(1, 3), (2, 3), (3, 3)]
    with pytest.raises(SpecError, match="'dask', 'processes', 'serial'"):
        get_executor("threads")
    with pytest.raises(SpecError, match="jobs"):
        get_executor("processes", jobs=0)
    with pytest.raises(SpecError, match="scheduler"):
        get_executor("serial", scheduler="tcp://x:1")
    with pytest.raises(SpecError, match="seed"):
        task_seeds("abc", 2)  # type: ignore[arg-type]


def test_cache_round_trip(tmp_path, monkeypatch):
    monkeypatch.setenv("EVIDENCE_CACHE_DIR", str(tmp_path))
    params = {"q": 1, "trim": 0.15, "reps": 100}
    assert load_cached("demo", params) is None
    save_cached("demo", params, {"values": np.arange(5.0)})
    got = load_cached("demo", params)
    assert got is not None and np.array_equal(got["values"], np.arange(5.0))
    assert cache_key("demo", params) == cache_key("demo", dict(reversed(params.items())))
    monkeypatch.setenv("EVIDENCE_CACHE_DIR", "off")
    assert load_cached("demo", params) is None


def test_grade_reports_units_done_to_a_listener():
    # Long per-unit steps report units done / total to whoever listens (the command line draws
    # it with the rate and the time left); with no listener nothing is reported.
    import evidence as ev
    from evidence.parallel import reporting, unit_progress

    panel = ev.demo_panel()
    calls = []
    with reporting(lambda label, done, total: calls.append((label, done, total))):
        res = ev.grade(panel, ["ghg_territorial"], "gdp", latest_break=False)
    mine = [c for c in calls if c[0].startswith("grade of ghg_territorial")]
    assert mine[0][1] == 0 and mine[-1][1] == mine[-1][2] == len(res.table)
    assert [c[1] for c in mine] == sorted(c[1] for c in mine)
    assert unit_progress("nobody listens", [3, 4]) is None


def test_progress_bar_shows_units_rate_and_time_left():
    from evidence._commands._common import _Progress

    bar = _Progress("study: analyses")
    try:
        bar.units("grade: units", 0, 50)
        bar.units("grade: units", 25, 50)
        task = bar._bar.tasks[-1]
        assert task.completed == 25 and "/s" in task.description and "left" in task.description
        bar.units("grade: units", 50, 50)
        assert len(bar._bar.tasks) == 1
    finally:
        bar.close()
