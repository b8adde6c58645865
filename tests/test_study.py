"""Study files: parsing with clear errors, the runner's outputs, reproducibility, escaping."""

from __future__ import annotations

import json
from dataclasses import replace
from html.parser import HTMLParser

import pandas as pd
import pytest

import evidence as ev
from evidence import SpecError
from evidence.study import parse_spec, read_spec, run_study

MINIMAL = """
[data]
file = "panel.csv"
unit = "region"

[roles]
activity = "gdp"

[[pressures]]
column = "co2"
"""


def _panel_csv(tmp_path, names=("Alda", "Brenn", "Corvo", "Dunmere")):
    import numpy as np
    rng = np.random.default_rng(1)
    rows = []
    for i, unit in enumerate(names):
        for year in range(1991, 2021):
            t = year - 1991
            rows.append({"region": unit, "year": year, "gdp": 100 * np.exp(0.03 * t + 0.01 * rng.normal()),
                         "co2": 50 * np.exp((-0.01 + 0.01 * i) * t + 0.01 * rng.normal()),
                         "population": 10.0 + i})
    pd.DataFrame(rows).to_csv(tmp_path / "panel.csv", index=False)


def test_minimal_spec_defaults(tmp_path):
    spec = parse_spec(MINIMAL, base=tmp_path)
    assert spec.data_file == tmp_path / "panel.csv"
    assert spec.pressures[0].column == "co2" and spec.pressures[0].basis == "territorial"
    assert spec.formats == ("markdown", "latex", "html", "csv")


@pytest.mark.parametrize(("extra", "fragment"), [
    ("[windw]\nstart = 1\n", "unknown table [windw] (line"),
    ("[window]\nstart = 2000\nend = 1990\n", "start must be before end"),
    ("[window]\nstart = 2000\n", "needs the key 'end'"),
    ("[criteria]\nalpah = 0.1\n", "unknown key [criteria] alpah (line"),
    ("[criteria]\nalpha = \"five\"\n", "must be a number, not str"),
    ("[output]\nformats = [\"pdf\"]\n", "formats (line 12): 'pdf' is not an option"),
    ("[breaks]\nmax_breaks = true\n", "must be an integer, not bool"),
])
def test_malformed_specs(extra, fragment):
    with pytest.raises(SpecError) as info:
        parse_spec(MINIMAL + extra)
    assert fragment in str(info.value)


def test_missing_tables_and_bad_toml(tmp_path):
    with pytest.raises(SpecError, match=r"needs a \[roles\] table"):
        parse_spec('[data]\nfile = "x.csv"\n[[pressures]]\ncolumn = "a"\n')
    with pytest.raises(SpecError, match="not valid TOML"):
        parse_spec("[data\nfile=")
    with pytest.raises(SpecError, match="does not exist"):
        read_spec(tmp_path / "none.toml")


def test_unknown_key_names_line():
    text = MINIMAL + "\n[criteria]\nalpha = 0.05\nsustained = 10\n"
    with pytest.raises(SpecError, match=r"line 14.*Did you mean 'sustained_years'"):
        parse_spec(text)


class _Checker(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.stack, self.scripts = [], 0

    def handle_starttag(self, tag, attrs):  # noqa: ANN001
        if tag == "script":
            self.scripts += 1
        if tag not in ("meta", "img", "br"):
            self.stack.append(tag)

    def handle_endtag(self, tag):  # noqa: ANN001
        assert self.stack and self.stack[-1] == tag, (self.stack[-3:], tag)
        self.stack.pop()


def test_runner_outputs_are_reproducible_and_safe(tmp_path):
    _panel_csv(tmp_path, names=("Alda", "<script>alert(1)</script>", "R&D_%", "Dunmere"))
    spec_text = MINIMAL + ('\n[roles.extra]\n' if False else "") + """
[study]
title = "Test study"
[output]
formats = ["latex", "html", "csv", "json"]
figures = false
"""
    spec_text = spec_text.replace('activity = "gdp"', 'activity = "gdp"\npopulation = "population"')
    (tmp_path / "study.toml").write_text(spec_text)
    first = run_study(tmp_path / "study.toml", tmp_path / "one")
    second = run_study(tmp_path / "study.toml", tmp_path / "two")
    one = (tmp_path / "one" / "results.json").read_text()
    assert one == (tmp_path / "two" / "results.json").read_text()
    manifest = json.loads((tmp_path / "one" / "manifest.json").read_text())
    assert set(manifest) >= {"versions", "input", "spec", "seeds", "started", "run_seconds"}
    report = (tmp_path / "one" / "report.html").read_text()
    checker = _Checker()
    checker.feed(report)
    assert checker.scripts == 0 and checker.stack == []
    assert "&lt;script&gt;" in report and "not a policy verdict" in report
    latex = (tmp_path / "one" / "tables" / "grade.tex").read_text()
    assert r"R\&D\_\%" in latex and latex.count("\\begin{") == latex.count("\\end{")
    assert first.grade is not None and len(first.grade.table) == 4
    assert second.results["not_run"] == {} or "roots" not in second.results["not_run"]


def test_demo_study_runs(tmp_path):
    result = ev.run_demo(tmp_path / "demo")
    study = result["study"]
    assert (tmp_path / "demo" / "report.html").exists()
    assert (tmp_path / "demo" / "tables" / "grade.tex").exists()
    assert any(p.suffix == ".svg" for p in study.files)
    assert study.results["not_run"] == {}
    truth = ev.demo_truth()["regions"]
    table = study.grade.table.set_index("unit")
    for unit, info in truth.items():  # planted by the generator
        if info["type"] == "relative":
            assert table.loc[unit, "rung"] == "relative"


def test_word_tables(tmp_path):
    docx = pytest.importorskip("docx")
    _panel_csv(tmp_path)
    (tmp_path / "study.toml").write_text(MINIMAL + '\n[output]\nformats = ["docx"]\nfigures = false\n'
                                         '[analyses]\nelasticity = ["fe"]\nconvergence = []\n'
                                         'decomposition = false\n')
    run_study(tmp_path / "study.toml", tmp_path / "out")
    document = docx.Document(str(tmp_path / "out" / "tables" / "grade.docx"))
    table = document.tables[0]
    assert table.cell(0, 0).text == "unit" and table.cell(1, 0).text == "Alda"
    html = (tmp_path / "out" / "report.html").read_text()
    assert "Decoupling grade" in html


def test_steps_registry_matches_the_schema_and_writes_nothing(tmp_path):
    from evidence.study.spec import SCHEMA
    from evidence.study.steps import STEPS

    assert set(STEPS) == set(SCHEMA["analyses"])
    _panel_csv(tmp_path)
    spec = parse_spec(MINIMAL.replace('activity = "gdp"', 'activity = "gdp"\npopulation = "population"'),
                      base=tmp_path)
    panel = ev.load_panel(tmp_path / "panel.csv", unit="region")
    before = set(tmp_path.rglob("*"))
    output = STEPS["rates"](panel, spec)
    assert set(tmp_path.rglob("*")) == before  # a step computes; the runner writes
    assert [t.name for t in output.tables] == ["rates_co2"]
    assert "co2" in output.results["rates"]
    assert "Alda" in output.tables[0].render("markdown")
    with pytest.raises(ev.SpecError):
        STEPS["grade"](panel, replace(spec, criteria={"alpha": 2.0}))


LIGHT = """
[output]
formats = ["csv"]
figures = false
[analyses]
elasticity = ["fe"]
convergence = []
decomposition = false
"""


def test_study_result_protocol_and_executor_option(tmp_path):
    from evidence.parallel import SerialExecutor

    _panel_csv(tmp_path)
    (tmp_path / "study.toml").write_text(MINIMAL + LIGHT + '[run]\nexecutor = "Serial"\n')
    spec = read_spec(tmp_path / "study.toml")
    assert spec.executor == "serial"
    executor = SerialExecutor()
    res = run_study(spec, tmp_path / "out", executor=executor)
    assert repr(res).startswith("StudyResult(folder=") and "\n" not in repr(res)
    assert str(res) == res.summary() and "Wrote" in res.summary()
    assert res.steps == ("grade", "rates", "elasticity")
    assert res.to_frame()["status"].tolist() == ["run", "run", "run"]
    payload = res.to_dict()
    assert json.loads(json.dumps(payload)) == payload and "grade" not in payload
    manifest = json.loads((tmp_path / "out" / "manifest.json").read_text())
    assert manifest["executor"] == "serial"
    for bad in ('"gpu"', '"proceses"'):
        with pytest.raises(SpecError, match=r"\[run\] executor \(line \d+\).*not an executor"):
            parse_spec(MINIMAL + f"[run]\nexecutor = {bad}\n")
    assert parse_spec(MINIMAL + '[run]\nexecutor = "tcp://10.0.0.1:8786"\n').executor == \
        "tcp://10.0.0.1:8786"


def test_study_reuses_a_callers_dask_client(tmp_path):
    distributed = pytest.importorskip("dask.distributed")
    _panel_csv(tmp_path)
    (tmp_path / "study.toml").write_text(MINIMAL + LIGHT)
    with distributed.Client(processes=False, n_workers=1, threads_per_worker=1,
                            dashboard_address=None) as client:
        res = run_study(tmp_path / "study.toml", tmp_path / "out", executor=client)
        assert client.status == "running"  # the study never closes a caller's client
    serial = run_study(tmp_path / "study.toml", tmp_path / "serial")
    assert res.results == serial.results
