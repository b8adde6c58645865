"""``evidence coint`` end to end on the demo panel: one report, formats, one-line errors.

Behaviour checks only: the statistics themselves are checked against published values and
reference libraries in the other ``test_coint_*`` files.
"""

from __future__ import annotations

import json

import pytest

import evidence as ev
from evidence.cli import main


@pytest.fixture(scope="module")
def demo_csv(tmp_path_factory):
    path = tmp_path_factory.mktemp("coint") / "demo_panel.csv"
    path.write_text(ev.demo.demo_csv_text(), encoding="utf-8")
    return path


def test_coint_report(demo_csv, capsys):
    code = main(["coint", str(demo_csv), "--dependent", "ghg_territorial", "--regressors", "gdp",
                 "--log", "--estimator", "dols,fmols,pmg", "--causality", "--reps", "49"])
    assert code == 0
    text = capsys.readouterr().out
    for name in ("Pedroni (1999) group ADF", "Kao (1999) ADF", "Westerlund (2007) Pa",
                 "Hausman (1978) MG vs PMG", "Dumitrescu & Hurlin (2012)", "pooled DOLS",
                 "pooled FMOLS", "pooled mean group ARDL", "not a policy verdict"):
        assert name.lower() in text.lower()


def test_coint_json_and_bootstrap(demo_csv, capsys):
    code = main(["coint", str(demo_csv), "--dependent", "ghg_territorial", "--regressors", "gdp",
                 "--log", "--tests", "westerlund", "--inference", "bootstrap", "--reps", "19",
                 "--seed", "2", "--format", "json"])
    assert code == 0
    payload = json.loads(capsys.readouterr().out)
    assert len(payload["tables"]) == 1


def test_coint_bad_option(demo_csv, capsys):
    code = main(["coint", str(demo_csv), "--dependent", "ghg_territorial", "--regressors", "gdp",
                 "--tests", "johansen"])
    assert code == 2
    err = capsys.readouterr().err
    assert "--tests 'johansen' is not an option" in err and "Traceback" not in err
    code = main(["coint", str(demo_csv), "--dependent", "ghg_territorial", "--regressors", "gpd"])
    assert code == 2
