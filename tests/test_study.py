"""Study files: parsing with clear errors, the runner's outputs, reproducibility, escaping."""

from __future__ import annotations

import json
import re
from dataclasses import replace
from html.parser import HTMLParser
from pathlib import Path

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

    def handle_starttag(self, tag, attrs):
        if tag == "script":
            self.scripts += 1
        if tag not in ("meta", "img", "br"):
            self.stack.append(tag)

    def handle_endtag(self, tag):
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


def test_demo_study_runs(demo_run):
    result = demo_run
    study = result["study"]
    folder = Path(result["folder"])
    assert (folder / "report.html").exists()
    assert (folder / "tables" / "grade.tex").exists()
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
    assert res.steps == ("grade", "rates", "breaks", "elasticity")
    assert res.to_frame()["status"].tolist() == ["run", "run", "run", "run"]
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


# ------------------------------------------------------------------ strict study files (#16)
@pytest.mark.parametrize(("extra", "fragment"), [
    ("[criteria]\nalpha = 5.0\n", "[criteria] alpha (line 12): 5.0 must be a number between 0 and 0.5"),
    ('[criteria]\nadjust = "foo"\n', "[criteria] adjust (line 12): 'foo' is not an option"),
    ("[criteria]\nepisode_years = -3\n", "[criteria] episode_years (line 12): -3 must be an integer"),
    ("[criteria]\nepisode_years = 12\nsustained_years = 10\n", "must not exceed sustained_years"),
    ("[criteria]\nshort_window = -5\n", "[criteria] short_window (line 12)"),
    ("[criteria]\nreps = -5\n", "[criteria] reps (line 12): -5 must be an integer between 99"),
    ("[criteria]\nreps = 0\n", "[criteria] reps (line 12): 0 must be an integer"),
    ("[criteria]\nbootstrap_reps = 999\n", "It is now called 'reps'"),
    ('[criteria]\nbudgets = {A = "lots"}\n', "the budget of 'A' is 'lots'; give a positive number"),
    ("[criteria]\nbudgets = {A = -1.0}\n", "the budget of 'A' is -1.0"),
    ("[breaks]\nmax_breaks = -1\n", "[breaks] max_breaks (line 12): -1 must be an integer"),
    ("[breaks]\ntrim = 0.9\n", "[breaks] trim (line 12): 0.9 must be a number between 0 and 0.5"),
    ("[window]\nstart = 1995\nend = 99999999999999999999\n", "[window] end (line 13)"),
    ('[analyses]\nelasticity = ["fe", "ccmeg"]\n', "'ccmeg' is not an option; Did you mean 'ccemg'?"),
    ('[analyses]\nconvergence = ["beta", "gama"]\n', "[analyses] convergence (line 12): 'gama' is not"),
    ('[analyses]\nroots = ["adf", "adf"]\n', "'adf' is listed twice"),
    ('[analyses]\nelasticity = [1]\n', "1 is not a name"),
    ("[output]\nseed = -1\n", "[output] seed (line 12): -1 must be an integer between 0"),
    ('[output]\nformats = ["csv", "xlsx"]\n', "'xlsx' is not an option"),
    ('[[pressures]]\ncolumn = "co2"\n', "a pressure column is listed twice"),
    ('[data]\nfile = "x.csv"\n', "not valid TOML"),
    ('[study]\ntitle = "a\\u0000b"\n', "contains a NUL character"),
])
def test_study_file_values_are_checked(extra, fragment):
    with pytest.raises(SpecError) as info:
        parse_spec(MINIMAL + extra)
    assert fragment in str(info.value), str(info.value)


def test_pressures_must_be_tables():
    with pytest.raises(SpecError, match="pressures must be one or more"):
        parse_spec('pressures = [1, 2]\n' + MINIMAL.replace('[[pressures]]\ncolumn = "co2"', ''))


def test_study_file_names_checked_against_the_data(tmp_path):
    _panel_csv(tmp_path)
    cases = [
        (MINIMAL.replace('activity = "gdp"', 'activity = "gpd"'),
         r"\[roles\] activity \(line 7\): column 'gpd' is not in the data. Did you mean 'gdp'"),
        (MINIMAL + '[criteria]\nbudgets = {Nowhere = 100.0}\n',
         r"\[criteria\] budgets \(line 12\): 'Nowhere' is not a unit of the data"),
        (MINIMAL + "[window]\nstart = -5000\nend = -4990\n",
         r"\[window\] start \(line 12\): .*outside the data's years 1991:2020"),
        (MINIMAL.replace('column = "co2"', 'column = "co2"\nconsumption = "co2_c"'),
         r"\[pressures\] consumption \(line 11\): column 'co2_c' is not in the data"),
    ]
    for text, pattern in cases:
        (tmp_path / "study.toml").write_text(text)
        with pytest.raises(ev.EvidenceError, match=pattern):
            run_study(tmp_path / "study.toml", tmp_path / "out")
        assert not (tmp_path / "out").exists()  # checked before any work or output


def test_study_file_must_be_utf8_text_and_small(tmp_path):
    (tmp_path / "latin.toml").write_bytes((MINIMAL + '[study]\ntitle = "Caf\xe9"\n').encode("latin-1"))
    with pytest.raises(SpecError, match=r"is not UTF-8 text \(byte \d+\)"):
        read_spec(tmp_path / "latin.toml")
    (tmp_path / "binary.toml").write_bytes(bytes(range(256)))
    with pytest.raises(SpecError, match="is not UTF-8 text"):
        read_spec(tmp_path / "binary.toml")
    (tmp_path / "big.toml").write_text(MINIMAL + "# " + "x" * (1 << 20) + "\n")
    with pytest.raises(SpecError, match="a study file is at most"):
        read_spec(tmp_path / "big.toml")
    with pytest.raises(SpecError, match="not a regular file"):
        read_spec(tmp_path)
    (tmp_path / "bom.toml").write_text("\ufeff" + MINIMAL, encoding="utf-8")
    assert read_spec(tmp_path / "bom.toml").activity == "gdp"


# ------------------------------------------------------------------- hostile data (#16)
@pytest.mark.parametrize("names", [
    ("A b", "a-B", r"$\undefinedmacro{$"),
    pytest.param(("Ωμέγα", "L" * 10_000, "A b", "a-B", "Δέλτα"), marks=pytest.mark.slow),
])
def test_hostile_names_give_distinct_safe_files(tmp_path, names):
    from evidence.study.steps._base import safe_name

    long_name = max(names, key=len)
    _panel_csv(tmp_path, names=names)
    frame = pd.read_csv(tmp_path / "panel.csv").rename(columns={"co2": "co2/t"})
    frame.to_csv(tmp_path / "panel.csv", index=False)
    (tmp_path / "study.toml").write_text(
        MINIMAL.replace('column = "co2"', 'column = "co2/t"') + LIGHT.replace(
            "figures = false", "figures = true"))
    res = run_study(tmp_path / "study.toml", tmp_path / "out")
    figures = sorted(p.name for p in (tmp_path / "out" / "figures").glob("indexed_*.png"))
    assert len(figures) == len(names)  # no two units share a file, none is lost
    assert all(len(f) < 80 for f in figures)
    assert (tmp_path / "out" / "tables" / f"rates_{safe_name('co2/t')}.csv").exists()
    manifest = json.loads((tmp_path / "out" / "manifest.json").read_text())
    assert manifest["names"][f"indexed_{safe_name('A b')}"] == "A b"
    assert manifest["names"][f"indexed_{safe_name(long_name)}"] == long_name
    assert res.results["not_run"] == {} and "figures_not_drawn" not in res.results
    assert safe_name("A b") != safe_name("a-B") and safe_name("plain_name") == "plain_name"


def test_a_bad_cell_excludes_its_unit_not_the_analysis(tmp_path):
    import warnings

    _panel_csv(tmp_path)
    frame = pd.read_csv(tmp_path / "panel.csv")
    frame.loc[(frame.region == "Brenn") & (frame.year == 2000), "co2"] = 0.0
    frame.to_csv(tmp_path / "panel.csv", index=False)
    text = MINIMAL.replace('activity = "gdp"', 'activity = "gdp"\npopulation = "population"')
    (tmp_path / "study.toml").write_text(text + LIGHT)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", RuntimeWarning)
        res = run_study(tmp_path / "study.toml", tmp_path / "out")
    assert not [w for w in caught if issubclass(w.category, RuntimeWarning)]
    assert res.results["not_run"] == {}
    assert "Brenn" not in set(res.grade.table.unit) and len(res.grade.table) == 3
    audit = pd.read_csv(tmp_path / "out" / "tables" / "audit.csv")
    row = audit[audit.unit == "Brenn"].iloc[0]
    assert row.column == "co2" and str(row.years) == "2000" and "excluded" in row.reason


def test_constant_and_two_year_panels_run_without_internal_errors(tmp_path):
    import warnings

    text = MINIMAL.replace('activity = "gdp"', 'activity = "gdp"\npopulation = "population"')
    for case in ("constant", "two-year"):
        folder = tmp_path / case
        folder.mkdir()
        _panel_csv(folder)
        frame = pd.read_csv(folder / "panel.csv")
        frame = frame.assign(co2=5.0) if case == "constant" else frame[frame.year <= 1992]
        frame.to_csv(folder / "panel.csv", index=False)
        (folder / "study.toml").write_text(text + '[analyses]\nconvergence = ["beta", "sigma", '
                                           '"clubs"]\nelasticity = ["fe"]\n[output]\n'
                                           'formats = ["csv"]\nfigures = false\n')
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", RuntimeWarning)
            res = run_study(folder / "study.toml", folder / "out")
        assert not [w for w in caught if issubclass(w.category, RuntimeWarning)], case
        assert res.results["not_run"], case  # what cannot run says why; the rest runs
        assert all(isinstance(v, str) and v for v in res.results["not_run"].values())


def test_a_unit_called_total_keeps_its_row(tmp_path):
    _panel_csv(tmp_path, names=("total", "Brenn", "Corvo"))
    text = MINIMAL.replace('activity = "gdp"', 'activity = "gdp"\npopulation = "population"')
    (tmp_path / "study.toml").write_text(text + '[output]\nformats = ["csv"]\nfigures = false\n'
                                         '[analyses]\nconvergence = []\n')
    res = run_study(tmp_path / "study.toml", tmp_path / "out")
    table = pd.read_csv(tmp_path / "out" / "tables" / "decomposition.csv")
    assert table.region.tolist() == ["total", "Brenn", "Corvo", "total (all units)"] or \
        table.region.tolist()[-1] == "total (all units)"
    assert res.results["decomposition"]["details"]["total_row"] == "total (all units)"


def test_an_unreachable_scheduler_is_a_data_error(tmp_path):
    dask = pytest.importorskip("dask")
    pytest.importorskip("dask.distributed")
    _panel_csv(tmp_path)
    (tmp_path / "study.toml").write_text(MINIMAL + LIGHT + '[run]\nexecutor = "tcp://127.0.0.1:9"\n')
    with (dask.config.set({"distributed.comm.timeouts.connect": "1s"}),
          pytest.raises(ev.DataError, match=re.escape("cannot start the executor 'tcp://127.0.0.1:9'"))):
        run_study(tmp_path / "study.toml", tmp_path / "out")
    assert not (tmp_path / "out").exists()
