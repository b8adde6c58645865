"""The command line end to end: outputs, exit codes, one-line errors."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

import evidence as ev
from evidence.cli import main


@pytest.fixture(scope="module")
def demo_csv(tmp_path_factory):
    path = tmp_path_factory.mktemp("demo") / "demo_panel.csv"
    path.write_text(ev.demo.demo_csv_text(), encoding="utf-8")
    return path


def test_demo_writes_results_folder(tmp_path, capsys):
    out = tmp_path / "results"
    assert main(["demo", "--out", str(out)]) == 0
    names = {p.name for p in out.iterdir()}
    assert {"report.html", "results.json", "manifest.json", "tables", "figures", "demo_panel.csv",
            "demo_study.toml"} <= names
    tables = {p.name for p in (out / "tables").iterdir()}
    assert {"grade.md", "grade.tex", "grade.csv", "rates_ghg_territorial.csv",
            "rates_ghg_consumption.md", "audit.md"} <= tables
    figures = list((out / "figures").glob("indexed_*.png"))
    assert len(figures) == len(ev.demo_panel().units)
    assert "not a policy verdict" in (out / "report.html").read_text()
    text = capsys.readouterr().out
    assert "invented regions" in text and "not a policy verdict" in text
    assert "Decoupling grade" in text


def test_study_command(tmp_path, capsys):
    (tmp_path / "demo_panel.csv").write_text(ev.demo.demo_csv_text())
    spec = ev.demo.demo_study_text().replace('formats = ["markdown", "latex", "html", "csv", "json"]',
                                             'formats = ["csv"]').replace("figures = true",
                                                                          "figures = false")
    (tmp_path / "s.toml").write_text(spec)
    assert main(["study", str(tmp_path / "s.toml"), "--out", str(tmp_path / "r")]) == 0
    assert (tmp_path / "r" / "tables" / "grade.csv").exists()
    (tmp_path / "bad.toml").write_text(spec.replace("[criteria]", "[criterion]"))
    assert main(["study", str(tmp_path / "bad.toml")]) == 2
    assert "unknown table [criterion]" in capsys.readouterr().err


def test_rates_prints_every_unit(demo_csv, capsys):
    assert main(["rates", str(demo_csv), "--pressure", "ghg_territorial", "--activity", "gdp"]) == 0
    out = capsys.readouterr().out
    for unit in ev.demo_panel().units:
        assert unit in out
    assert "Tapio class" in out


@pytest.mark.parametrize("fmt", ["markdown", "latex", "html", "csv", "json"])
def test_rates_formats(demo_csv, capsys, fmt):
    code = main(["rates", str(demo_csv), "--pressure", "ghg_consumption", "--activity", "gdp",
                 "--window", "2000:2020", "--format", fmt])
    assert code == 0
    out = capsys.readouterr().out
    if fmt == "json":
        assert len(json.loads(out)["rows"]) == 30


def test_rates_to_file(demo_csv, tmp_path, capsys):
    target = tmp_path / "r.csv"
    assert main(["rates", str(demo_csv), "--pressure", "dmc", "--activity", "gdp",
                 "--format", "csv", "--output", str(target)]) == 0
    assert target.read_text().count("\n") == 31


def test_inspect(demo_csv, capsys):
    assert main(["inspect", str(demo_csv)]) == 0
    out = capsys.readouterr().out
    assert "1990-2023" in out and "ghg_consumption" in out and "missing value" in out
    assert main(["inspect", str(demo_csv), "--format", "json"]) == 0
    payload = json.loads(capsys.readouterr().out)
    assert payload["facts"]["units"] == "30"


@pytest.mark.parametrize(("args", "fragment"), [
    (["rates", "{csv}", "--pressure", "ghg", "--activity", "gdp"], "Did you mean"),
    (["rates", "missing.csv", "--pressure", "a", "--activity", "b"], "does not exist"),
    (["rates", "{csv}", "--pressure", "dmc"], "Missing option '--activity'"),
    (["rates", "{csv}", "--pressure", "dmc", "--activity", "gdp", "--window", "2020:2000"],
     "start before its end"),
    (["rates", "{csv}", "--pressure", "dmc", "--activity", "gdp", "--format", "xml"], "xml"),
    (["frobnicate"], "No such command"),
])
def test_bad_input_exits_2_with_one_line(demo_csv, capsys, args, fragment):
    args = [a.replace("{csv}", str(demo_csv)) for a in args]
    assert main(args) == 2
    err = capsys.readouterr().err
    assert fragment in err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err


def test_malformed_file_exits_2(tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("region,year,gdp,co2\nA,2000,1,2\nA,2000,3,4\nB,2000,1,1\nB,2001,1,1\n")
    assert main(["rates", str(bad), "--pressure", "co2", "--activity", "gdp"]) == 2
    err = capsys.readouterr().err
    assert "unit 'A', year 2000 appears 2 times" in err


def test_debug_shows_traceback(tmp_path, capsys):
    assert main(["--debug", "rates", str(tmp_path / "x.csv"), "--pressure", "a",
                 "--activity", "b"]) == 2
    assert "Traceback" in capsys.readouterr().err


def test_internal_failure_exits_1(demo_csv, capsys, monkeypatch):
    def broken(*args, **kwargs):
        raise RuntimeError("boom")

    import evidence.cli

    monkeypatch.setattr(evidence.cli, "rates", broken)
    assert main(["rates", str(demo_csv), "--pressure", "dmc", "--activity", "gdp"]) == 1
    err = capsys.readouterr().err
    assert "internal error" in err and "boom" in err


def test_help_and_version(capsys):
    assert main(["--help"]) == 0
    assert "demo" in capsys.readouterr().out
    assert main(["--version"]) == 0
    assert ev.__version__ in capsys.readouterr().out


def test_console_script_runs_as_module(demo_csv):
    done = subprocess.run([sys.executable, "-m", "evidence.cli", "rates", str(demo_csv),
                           "--pressure", "nope", "--activity", "gdp"],
                          capture_output=True, text=True, check=False)
    assert done.returncode == 2 and done.stderr.startswith("evidence: error:")


def test_elasticity_command(demo_csv, capsys):
    code = main(["elasticity", str(demo_csv), "--pressure", "ghg_territorial", "--activity", "gdp",
                 "--estimator", "fe,twfe,mg,ccemg,amg", "--ekc", "--population", "population"])
    assert code == 0
    out = capsys.readouterr().out
    assert "Augmented mean group" in out and "CCE mean group" in out and "Lind & Mehlum (2010)" in out
    assert main(["elasticity", str(demo_csv), "--pressure", "ghg_territorial", "--activity", "gdp",
                 "--estimator", "fe", "--format", "json"]) == 0
    assert len(json.loads(capsys.readouterr().out)["tables"]) == 2
    assert main(["elasticity", str(demo_csv), "--pressure", "ghg_territorial", "--activity", "gdp",
                 "--estimator", "ols"]) == 2
    assert "estimator='ols'" in capsys.readouterr().err


def test_converge_command(demo_csv, capsys):
    assert main(["converge", str(demo_csv), "--column", "ghg_territorial", "--population",
                 "population"]) == 0
    out = capsys.readouterr().out
    assert "Phillips-Sul clubs" in out and "Stochastic convergence" in out and "Beta" in out
    assert main(["converge", str(demo_csv), "--column", "ghg_territorial", "--method", "cubs"]) == 2


def test_grade_and_decompose_commands(demo_csv, capsys):
    assert main(["grade", str(demo_csv), "--pressure", "ghg_territorial", "--activity", "gdp",
                 "--consumption", "ghg_territorial=ghg_consumption", "--window", "1995:2023",
                 "--required-rate", "0.05", "--no-breaks"]) == 0
    out = capsys.readouterr().out
    assert "Decoupling grade" in out and "basis-gap" in out
    assert main(["decompose", str(demo_csv), "--pressure", "ghg_territorial", "--population",
                 "population", "--activity", "gdp", "--energy", "energy", "--window", "2000:2020",
                 "--format", "csv"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[0].startswith("region,start,end,change,population,affluence") and "total" in lines[-1]
    assert main(["grade", str(demo_csv), "--pressure", "ghg_territorial", "--activity", "gdp",
                 "--consumption", "ghg_consumption"]) == 2


def test_study_and_demo_take_an_executor(tmp_path, capsys):
    assert main(["study", str(tmp_path / "none.toml"), "--executor", "gpu"]) == 2
    err = capsys.readouterr().err
    assert "--executor: 'gpu' is not an executor" in err and len(err.strip().splitlines()) == 1
    assert main(["demo", "--out", str(tmp_path / "d"), "--executor", "proceses"]) == 2
    assert "Did you mean 'processes'?" in capsys.readouterr().err
    assert not (tmp_path / "d").exists()
