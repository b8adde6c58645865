"""The command line end to end: outputs, exit codes, one-line errors."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

import evidence as ev
from evidence.cli import main
from evidence.study.choice import DEFAULT_LIMIT


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
    # unit figures for the units chosen by interest (study/choice.py), every unit at a glance
    figures = list((out / "figures").glob("indexed_*.png"))
    assert 0 < len(figures) <= DEFAULT_LIMIT < len(ev.demo_panel().units)
    assert (out / "figures" / "all_units.png").exists()
    assert (out / "figures" / "grade_ghg_territorial.png").exists()
    assert "not a policy verdict" in (out / "report.html").read_text()
    text = capsys.readouterr().out
    assert "invented regions" in text and "not a policy verdict" in text
    assert "Decoupling grade" in text
    assert "Next steps" in text and f"{out}/report.html" in text


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


# ------------------------------------------------------------------- hostile input (#16)
def _one_line_exit_2(args, capsys) -> str:
    assert main(args) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err, err
    return err


def test_only_regular_files_are_read(tmp_path, capsys):
    import os

    (tmp_path / "zero.csv").symlink_to("/dev/zero")
    err = _one_line_exit_2(["inspect", str(tmp_path / "zero.csv")], capsys)
    assert "is a device; only regular files are read" in err
    os.mkfifo(tmp_path / "pipe.csv")  # reading it would block forever
    err = _one_line_exit_2(["inspect", str(tmp_path / "pipe.csv")], capsys)
    assert "is a named pipe" in err
    (tmp_path / "study.toml").symlink_to("/dev/zero")
    err = _one_line_exit_2(["study", str(tmp_path / "study.toml"), "--out", str(tmp_path / "o")],
                           capsys)
    assert "not a regular file" in err


def test_input_size_limit_can_be_raised(demo_csv, capsys, monkeypatch):
    import os

    monkeypatch.delenv("EVIDENCE_MAX_INPUT_MB", raising=False)
    err = _one_line_exit_2(["--max-input-mb", "0.01", "inspect", str(demo_csv)], capsys)
    assert "more than the limit of 0.01 MB" in err and "EVIDENCE_MAX_INPUT_MB" in err
    assert "EVIDENCE_MAX_INPUT_MB" not in os.environ  # the option lasts for one command
    monkeypatch.setenv("EVIDENCE_MAX_INPUT_MB", "0.01")
    _one_line_exit_2(["inspect", str(demo_csv)], capsys)
    assert main(["--max-input-mb", "50", "inspect", str(demo_csv), "--format", "json"]) == 0


def _workbook(path, sheet_xml: bytes | None = None) -> None:
    import zipfile

    import pandas as pd

    pd.DataFrame({"region": ["A", "A", "B", "B"], "year": [2000, 2001, 2000, 2001],
                  "gdp": [1.0, 2.0, 3.0, 4.0]}).to_excel(path, index=False)
    if sheet_xml is None:
        return
    with zipfile.ZipFile(path) as archive:
        parts = {name: archive.read(name) for name in archive.namelist()}
    parts["xl/worksheets/sheet1.xml"] = sheet_xml
    with zipfile.ZipFile(path, "w") as archive:
        for name, data in parts.items():
            archive.writestr(name, data)


def test_excel_is_read_safely(tmp_path, capsys):
    pytest.importorskip("openpyxl")
    good = tmp_path / "good.xlsx"
    _workbook(good)
    assert main(["inspect", str(good)]) == 0
    capsys.readouterr()
    (tmp_path / "corrupt.xlsx").write_bytes(b"PK\x03\x04 not really a workbook" * 10)
    err = _one_line_exit_2(["inspect", str(tmp_path / "corrupt.xlsx")], capsys)
    assert "not a valid Excel workbook" in err
    external = (b'<?xml version="1.0"?><!DOCTYPE x [<!ENTITY e SYSTEM "file:///etc/passwd">]>'
                b'<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
                b"<sheetData><row><c t=\"inlineStr\"><is><t>&e;</t></is></c></row></sheetData>"
                b"</worksheet>")
    _workbook(tmp_path / "external.xlsx", external)
    err = _one_line_exit_2(["inspect", str(tmp_path / "external.xlsx")], capsys)
    assert "declares a DTD or entities" in err
    laughs = b'<?xml version="1.0"?><!DOCTYPE x [<!ENTITY a "aaaaaaaaaa">' + b"".join(
        f'<!ENTITY {chr(98 + i)} "{("&" + chr(97 + i) + ";") * 10}">'.encode() for i in range(8)
    ) + b']><worksheet><sheetData/></worksheet>'
    _workbook(tmp_path / "bomb.xlsx", laughs)
    err = _one_line_exit_2(["inspect", str(tmp_path / "bomb.xlsx")], capsys)
    assert "declares a DTD or entities" in err


def test_a_csv_saved_with_a_byte_order_mark(tmp_path, capsys):
    (tmp_path / "bom.csv").write_bytes("\ufeffregion,year,gdp,co2\nA,2000,1,2\nA,2001,2,2\n"
                                       "B,2000,1,3\nB,2001,2,3\n".encode("utf-8"))
    assert main(["inspect", str(tmp_path / "bom.csv"), "--unit", "region"]) == 0
    assert "region" in capsys.readouterr().out


def test_terminal_output_shows_control_characters_as_escapes(tmp_path, capsys):
    (tmp_path / "esc.csv").write_text("region,year,gdp,co2\n" + "".join(
        f"{u},{y},{1 + y - 2000},{2 + (y - 2000) / 10}\n" for u in ("R\x1b[2J", "S\u202eT")
        for y in range(2000, 2012)))
    assert main(["rates", str(tmp_path / "esc.csv"), "--pressure", "co2",
                 "--activity", "gdp"]) == 0
    out = capsys.readouterr().out
    # tables turn control characters into spaces; anything else printed shows them as escapes
    assert "\x1b" not in out and "\u202e" not in out and "R [2J" in out and "S\\u202eT" in out
    err = _one_line_exit_2(["rates", str(tmp_path / "esc.csv"), "--pressure", "c\x1bo2",
                            "--activity", "gdp"], capsys)
    assert "\x1b" not in err and "c\\x1bo2" in err


def test_markdown_output_escapes_html_in_names(tmp_path, capsys):
    (tmp_path / "x.csv").write_text("region,year,gdp,co2\n" + "".join(
        f"{u},{y},{1 + y - 2000},{2 + (y - 2000) / 10}\n"
        for u in ("<script>alert(1)</script>", "[x](javascript:alert(1))") for y in range(2000, 2012)))
    target = tmp_path / "rates.md"
    assert main(["rates", str(tmp_path / "x.csv"), "--pressure", "co2", "--activity", "gdp",
                 "--format", "markdown", "--output", str(target)]) == 0
    text = target.read_text()
    assert "<script>" not in text and "&lt;script&gt;" in text and "\\[x\\]" in text


def test_output_file_is_written_whole(demo_csv, tmp_path, capsys, monkeypatch):
    import os

    target = tmp_path / "r.csv"
    target.write_text("old table\n")
    real_replace = os.replace

    def failing_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", failing_replace)
    err = _one_line_exit_2(["rates", str(demo_csv), "--pressure", "dmc", "--activity", "gdp",
                            "--format", "csv", "--output", str(target)], capsys)
    assert "No space left on device" in err
    assert target.read_text() == "old table\n" and list(tmp_path.iterdir()) == [target]
    monkeypatch.setattr(os, "replace", real_replace)
    assert main(["rates", str(demo_csv), "--pressure", "dmc", "--activity", "gdp",
                 "--format", "csv", "--output", str(target)]) == 0
    assert target.read_text().count("\n") == 31 and oct(target.stat().st_mode)[-3:] != "600"


def test_long_and_slashed_column_names_in_a_study(tmp_path, capsys):
    import pandas as pd

    long_column = "c" * 10_000
    frame = pd.DataFrame([{"region": u, "year": y, "gdp": 100.0 * 1.03 ** (y - 2000),
                           long_column: 50.0 * (0.99 + 0.01 * i) ** (y - 2000),
                           "co2/t": 20.0 * 1.01 ** (y - 2000)}
                          for i, u in enumerate(("A", "B", "C")) for y in range(2000, 2016)])
    frame.to_csv(tmp_path / "p.csv", index=False)
    (tmp_path / "s.toml").write_text(
        f'[data]\nfile = "p.csv"\nunit = "region"\n[roles]\nactivity = "gdp"\n'
        f'[[pressures]]\ncolumn = "{long_column}"\n[[pressures]]\ncolumn = "co2/t"\n'
        '[analyses]\nelasticity = ["fe"]\nconvergence = []\ndecomposition = false\n'
        '[output]\nformats = ["csv", "markdown"]\nfigures = false\n')
    assert main(["study", str(tmp_path / "s.toml"), "--out", str(tmp_path / "out")]) == 0
    names = [p.name for p in (tmp_path / "out" / "tables").iterdir()]
    assert all(len(n) < 100 for n in names) and len([n for n in names if n.startswith("rates_")]) == 4


def test_a_workbook_with_an_unsupported_compression_method(tmp_path, capsys):
    # zipfile raises NotImplementedError for a compression method it does not know (an encrypted
    # or exotic archive): the user gets one line naming the file, exit 2, no traceback.
    pytest.importorskip("openpyxl")
    path = tmp_path / "odd.xlsx"
    _workbook(path)
    data = bytearray(path.read_bytes())
    for signature, offset in ((b"PK\x03\x04", 8), (b"PK\x01\x02", 10)):   # local / central headers
        start = 0
        while (start := data.find(signature, start)) != -1:
            data[start + offset:start + offset + 2] = (99).to_bytes(2, "little")
            start += 4
    path.write_bytes(bytes(data))
    err = _one_line_exit_2(["inspect", str(path)], capsys)
    assert "cannot be read" in err and "odd.xlsx" in err
