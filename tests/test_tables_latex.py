"""Every LaTeX table the package writes compiles with pdflatex in a minimal document.

The document is ``\\documentclass{article}``, the packages the table's first line names
(``% Preamble: \\usepackage{...}``), and the table. Two passes (as a user runs LaTeX); the log
must show no error, no overfull box (the table fits the page), no float too large for the page
and no missing character. Skipped where pdflatex is absent: install it with
``apt-get install --no-install-recommends texlive-latex-base texlive-latex-recommended``.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import evidence as ev
from evidence.tables import beta_table, ekc_table, rates_table, render_frame

pytestmark = pytest.mark.skipif(
    shutil.which("pdflatex") is None,
    reason="pdflatex is not installed (apt-get install --no-install-recommends "
           "texlive-latex-base texlive-latex-recommended)")

HOSTILE = ["<script>alert(1)</script>", "$\\undefinedmacro{$", "R&D", "100%", "a_b", "#1",
           "line\nbreak", "blank\n\nline", "~^|{}", "Δ ln GDP²"]
_BAD = re.compile(r"^!|Overfull \\hbox|Float too large|Missing character|Undefined control")


def preamble(tex: str) -> list[str]:
    """The packages named on the first line of each table in ``tex``."""
    names: list[str] = []
    for line in tex.splitlines():
        if line.startswith("% Preamble:"):
            for group in re.findall(r"\\usepackage\{([^}]*)\}", line):
                names += [n for n in group.split(",") if n not in names]
    return names


def compile_latex(tex: str, tmp_path: Path, name: str = "table", passes: int = 1) -> str:
    """Compile ``tex`` in a minimal article; return the log (asserting it is clean)."""
    packages = preamble(tex)
    assert packages, "the table does not name its packages on its first line"
    doc = ("\\documentclass{article}\n" + f"\\usepackage{{{','.join(packages)}}}\n"
           + "\\begin{document}\n" + tex + "\n\\end{document}\n")
    (tmp_path / f"{name}.tex").write_text(doc, encoding="utf-8")
    for _ in range(passes):
        run = subprocess.run(["pdflatex", "-interaction=nonstopmode", "-halt-on-error",
                              f"{name}.tex"], cwd=tmp_path, capture_output=True, text=True,
                             timeout=120)
    log = (tmp_path / f"{name}.log").read_text(encoding="utf-8", errors="replace")
    bad = [line for line in log.splitlines() if _BAD.search(line)]
    assert run.returncode == 0 and not bad, "\n".join(bad) or log[-3000:]
    assert (tmp_path / f"{name}.pdf").stat().st_size > 0
    return log


@pytest.fixture(scope="module")
def small():
    panel = ev.demo_panel()
    keep = panel.units[:6]
    frame = panel.frame.reset_index()
    unit = frame.columns[0]
    return ev.load_panel(frame[frame[unit].isin(keep)], unit=unit, time=frame.columns[1])


@pytest.fixture(scope="module")
def tables(small):
    """One of each kind of LaTeX table the package writes, on a small demo panel."""
    labels = {"gdp": "GDP", "ghg_territorial": "GHG (territorial)"}
    fits = [ev.elasticity(small, "ghg_territorial", "gdp", estimator=e) for e in ("fe", "twfe", "mg")]
    logged = small.with_log("gdp", name="log_gdp")
    tests = [*ev.decoupling_tests(fits[0]), ev.pesaran_cd_test(logged, "log_gdp"),
             ev.ips_test(logged, "log_gdp", lags=1)]
    per_person = small.with_per_capita("ghg_territorial", "population", name="ghg_pc")
    grade = ev.grade(small, ["ghg_territorial"], "gdp")
    kaya = ev.kaya(small, "ghg_territorial", population="population", activity="gdp",
                   energy="energy")
    battery = ev.root_battery(logged, "log_gdp", tests=("adf", "kpss", "ips"), lags=1)
    breaks = ev.screen_breaks(small.with_log("ghg_territorial", name="log_ghg"), "log_ghg",
                              max_breaks=2)
    return {
        "regression": ev.regression_table(fits, "latex", title="Elasticity", labels=labels),
        "tests": ev.test_table(tests, "latex", title="Tests", labels=labels),
        "grade": ev.grade_table(grade, "latex", labels=labels),
        "rates": rates_table(ev.rates(small, "ghg_territorial", "gdp"), "latex", labels=labels),
        "decomposition": render_frame(kaya.to_frame("additive"), "latex", title="LMDI"),
        "roots": render_frame(battery.decision_table(), "latex", index=False, title="Roots"),
        "breaks": render_frame(breaks.table.reset_index(), "latex", index=False, title="Breaks"),
        "beta": beta_table(ev.beta_convergence(per_person, "ghg_pc"), "latex"),
        "ekc": ekc_table(ev.ekc(small, "ghg_territorial", "gdp"), "latex", labels=labels),
        "unit": ev.tables.unit_table(fits[2], "latex"),
    }


KINDS = ["regression", "tests", "grade", "rates", "decomposition", "roots", "breaks", "beta",
         "ekc", "unit"]


def test_every_table_compiles_in_one_document(tables, tmp_path):
    compile_latex("\n\\clearpage\n".join(tables[k] for k in KINDS), tmp_path)


@pytest.mark.slow
@pytest.mark.parametrize("kind", KINDS)
def test_each_table_compiles_with_its_own_preamble(tables, kind, tmp_path):
    compile_latex(tables[kind], tmp_path, kind, passes=2)


def test_hostile_names_compile(tmp_path):
    frame = pd.DataFrame({"unit": HOSTILE, "value": np.linspace(-1.5, 2.5, len(HOSTILE)),
                          "p value": np.linspace(0, 1, len(HOSTILE))})
    tex = render_frame(frame, "latex", index=False, title=" ".join(HOSTILE), notes=HOSTILE,
                       labels={"a_b": "$\\undefinedmacro{$"})
    assert "\\undefinedmacro{" not in tex.replace("\\textbackslash{}undefinedmacro\\{", "")
    compile_latex(tex, tmp_path)


def test_wide_and_long_tables_fit_the_page(tmp_path):
    rng = np.random.default_rng(1)
    wide = pd.DataFrame(rng.normal(size=(80, 15)) * 1000,
                        columns=[f"column_{i}_with_a_long_name" for i in range(15)])
    tex = render_frame(wide, "latex", title="Wide and long")
    assert "pdflscape" in preamble(tex) and "(continued)" in tex
    compile_latex(tex, tmp_path)


@pytest.mark.slow
def test_every_table_of_the_demo_study_compiles(tmp_path):
    from evidence.study.demo import run_demo

    run_demo(tmp_path / "demo")
    written = sorted((tmp_path / "demo" / "tables").glob("*.tex"))
    assert len(written) >= 10
    for path in written:
        compile_latex(path.read_text(encoding="utf-8"), tmp_path, path.stem, passes=2)


COMMANDS = {
    "converge": ["--column", "ghg_territorial", "--population", "population"],
    "elasticity": ["--pressure", "ghg_territorial", "--activity", "gdp", "--estimator",
                   "fe,twfe,ccemg", "--ekc"],
    "coint": ["--dependent", "ghg_territorial", "--regressors", "gdp", "--log", "--tests",
              "pedroni,kao", "--estimator", "dols,fmols"],
    "roots": ["--column", "gdp", "--log", "--tests", "adf,kpss,ips"],
    "breaks": ["--column", "ghg_territorial", "--per", "gdp", "--log", "--max-breaks", "2"],
    "decompose": ["--pressure", "ghg_territorial", "--population", "population", "--activity",
                  "gdp", "--energy", "energy"],
    "rates": ["--pressure", "ghg_territorial", "--activity", "gdp"],
    "grade": ["--pressure", "ghg_territorial", "--activity", "gdp"],
}


@pytest.mark.slow
@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_every_command_writes_latex_that_compiles(command, tmp_path, capsys):
    from evidence.cli import main

    data = tmp_path / "demo_panel.csv"
    data.write_text(ev.demo.demo_csv_text(), encoding="utf-8")
    assert main([command, str(data), *COMMANDS[command], "--format", "latex"]) == 0
    tex = capsys.readouterr().out
    assert tex.count("not a policy verdict") == 1  # the caution once per file
    compile_latex(tex, tmp_path, command, passes=2)
