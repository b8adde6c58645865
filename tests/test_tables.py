"""Table rendering: escaping of data-derived text, reproducible bytes, every format.

Behaviour checks only: tables format numbers they are given and compute none; the values in the
tables are checked where they are computed.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

import evidence as ev
from evidence._cautions import CAUTION
from evidence.results import Estimate, TestResult
from evidence.tables import (
    FORMATS,
    beta_table,
    ekc_table,
    latex_escape,
    rates_table,
    regression_table,
    render_frame,
    test_table,
)
from evidence.tables._cells import latex_escape as escape_latex
from evidence.tables._names import display_name, test_name

NASTY = "<script>alert('x')</script> & 50% _under_ $x$ #1 {a} ~b^c \\d|e"


@pytest.fixture
def nasty_frame() -> pd.DataFrame:
    return pd.DataFrame({"unit": [NASTY, "plain"], "value": [1.23456, float("nan")]}).set_index("unit")


def test_html_escapes_data(nasty_frame):
    out = render_frame(nasty_frame, "html", title=NASTY, notes=[NASTY])
    assert "<script>" not in out
    assert "&lt;script&gt;" in out and "&amp;" in out


def test_latex_escapes_data(nasty_frame):
    out = render_frame(nasty_frame, "latex", title=NASTY, notes=[NASTY])
    assert r"50\%" in out and r"\_under\_" in out and r"\$x\$" in out and r"\#1" in out
    assert r"\{a\}" in out and r"\textbackslash{}d" in out
    assert "D{.}{.}{-1}@{}}" in out and "\\toprule" in out and "\\bottomrule" in out


def test_latex_escape_each_special_character():
    assert latex_escape("a&b%c$d#e_f{g}h~i^j\\k") == (
        r"a\&b\%c\$d\#e\_f\{g\}h\textasciitilde{}i\textasciicircum{}j\textbackslash{}k")


def test_markdown_escapes_pipes(nasty_frame):
    out = render_frame(nasty_frame, "markdown")
    assert "\\|e" in out
    assert out.splitlines()[1] == "|:---|---:|"


@pytest.mark.parametrize("fmt", FORMATS)
def test_every_format_is_reproducible(nasty_frame, fmt):
    first = render_frame(nasty_frame, fmt, title="t", notes=["n"])
    second = render_frame(nasty_frame, fmt, title="t", notes=["n"])
    assert first == second and first.endswith("\n")


def test_json_is_strict_and_keeps_precision(nasty_frame):
    payload = json.loads(render_frame(nasty_frame, "json"))
    assert payload["rows"][0]["value"] == 1.23456
    assert payload["rows"][1]["value"] is None


def test_unknown_format_lists_options(nasty_frame):
    with pytest.raises(ev.SpecError, match="'csv', 'html', 'json', 'latex', 'markdown', 'text'"):
        render_frame(nasty_frame, "xml")


def test_rates_table_carries_caution_and_basis(long_frame):
    res = ev.rates(ev.load_panel(long_frame, basis={"co2": "territorial"}), "co2", "gdp")
    text = rates_table(res, "text")
    assert "not a policy verdict" in text and "Basis of co2: territorial" in text
    assert "Alda" in text and "strong decoupling" in text
    csv = rates_table(res, "csv")
    assert csv.splitlines()[0].startswith("region,start,end,years,activity_trend")


def test_table_option_errors_are_spec_errors(nasty_frame):
    with pytest.raises(ev.SpecError, match="at least one estimate"):
        regression_table([])
    with pytest.raises(ev.SpecError, match="digits"):
        render_frame(nasty_frame, "text", digits=-1)
    with pytest.raises(ev.SpecError, match="digits"):
        render_frame(nasty_frame, "text", digits=2.5)


def test_markdown_neutralises_html_and_links():
    frame = pd.DataFrame({"unit": ["<script>alert(1)</script>", "[a](javascript:x)", "a & b"],
                          "value": [1.0, 2.0, 3.0]}).set_index("unit")
    out = render_frame(frame, "markdown", title="<b>t</b>", notes=["<i>n</i>"])
    assert "<script>" not in out and "<b>" not in out and "<i>" not in out
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in out and "\\[a\\](javascript:x)" in out
    assert "a &amp; b" in out


def test_latex_cells_stay_on_one_line():
    frame = pd.DataFrame({"unit": ["A\n\nB", "C\r\nD\tE"], "value": [1.0, 2.0]}).set_index("unit")
    out = render_frame(frame, "latex")
    body = out.split("\\midrule")[1].split("\\bottomrule")[0]
    rows = [line for line in body.splitlines() if line.strip()]
    assert "\n\n" not in body and rows[0].startswith("A B &") and rows[1].startswith("C D E &")


# --- tables for papers: labels, signs, stars, notes, caution, digits, names -------------------


HOSTILE = ["<script>alert(1)</script>", "$\\undefinedmacro{$", "R&D", "100%", "a_b", "#1",
           "line\nbreak", "blank\n\nline"]


def _estimate(estimator="fixed effects (unit)", cov="Driscoll–Kraay, Bartlett kernel, 3 lags",
              dependent="log_ghg", slope=-0.5, se=0.1, details=None):
    params = pd.Series({"log_gdp": slope, "log_gdp_sq": 0.0002})
    return Estimate(estimator=estimator, dependent=dependent, params=params,
                    std_errors=pd.Series([se, 0.0001], index=params.index),
                    cov=np.diag([se ** 2, 1e-8]), cov_type=cov, nobs=1234,
                    details=details or {"units": 30, "years_min": 34, "years_max": 34,
                                        "r2_within": 0.41, "effects": "unit"})


def test_regression_layout_is_our_own():
    fe = _estimate()
    cl = _estimate("fixed effects (unit and year)", "clustered by unit",
                   details={"units": 30, "effects": "unit and year"})
    text = regression_table([fe, cl], labels={"gdp": "GDP", "log_ghg": "ln GHG"})
    head = text.splitlines()[:3]
    assert any("Fixed effects" in line for line in head) and "(1)" not in text
    assert "ln GDP" in text and "(ln GDP)²" in text and "log_gdp" not in text
    assert "−0.500***" in text and "(0.100)" in text
    assert "Obs." in text and "1,234" in text and "nobs" not in text and "R² (within)" in text
    assert "Standard errors, Fixed effects (unit): Driscoll–Kraay, Bartlett kernel, 3 lags." in text
    assert "Standard errors, Fixed effects (unit and year): clustered by unit." in text
    assert "Dependent variable: ln GHG." in text
    assert "Standard errors in parentheses" not in text and "* p<0.10" not in text
    # a small coefficient keeps two significant digits instead of rounding to zero
    assert "0.00020" in text


def test_stars_are_superscripts_and_minus_signs_true_in_every_format():
    est = _estimate()
    md = regression_table(est, "markdown")
    html = regression_table(est, "html")
    tex = regression_table(est, "latex")
    assert "−0.500<sup>***</sup>" in md and "−0.500<sup>***</sup>" in html
    assert "-0.500^{***}" in tex and "D{.}{.}{-1}" in tex and "R$^{2}$ (within)" in tex
    assert "\\label{tab:" in tex and tex.startswith("% Preamble: \\usepackage{booktabs,dcolumn")
    assert "\\label{tab:mine}" in regression_table(est, "latex", label="tab:mine")
    with pytest.raises(ev.SpecError, match="labels="):
        regression_table(est, "latex", label={"log_gdp": "ln GDP"})


def test_labels_reach_captions_heads_rows_and_notes():
    frame = pd.DataFrame({"log_gdp": [1.0], "ghg_per_capita": [2.0]}, index=pd.Index(["A"], name="unit"))
    out = render_frame(frame, "text", title="Elasticity of ghg with respect to gdp",
                       notes=["gdp is real"], labels={"gdp": "GDP", "ghg": "GHG"})
    assert "Elasticity of GHG with respect to GDP" in out and "ln GDP" in out
    assert "GHG per capita" in out and "GDP is real" in out
    assert display_name("log_pc_1990", {"pc": "GHG per person"}) == "ln GHG per person (1990)"
    assert display_name("diff_log_gdp", {}) == "Δ ln gdp"
    with pytest.raises(ev.SpecError, match="labels"):
        render_frame(frame, "text", labels=["gdp"])


def test_caution_switch_and_once():
    est = _estimate()
    assert regression_table(est).count("not a policy verdict") == 1
    assert "not a policy verdict" not in regression_table(est, caution=False)
    frame = pd.DataFrame({"a": [1.0]})
    assert render_frame(frame, notes=[CAUTION], caution=True).count("not a policy verdict") == 1


def test_markdown_notes_are_separate_paragraphs():
    out = render_frame(pd.DataFrame({"a": [1.0]}), "markdown", notes=["first", "second"])
    assert "\n\nfirst\n\nsecond\n" in out


def test_test_table_names_authors_and_moves_hypotheses_to_notes():
    cd = TestResult(test="Pesaran CD", statistic=-2.5, pvalue=0.0001, null="no cross-sectional "
                    "correlation", nobs=1020, critical_values={0.05: 1.96})
    ips = TestResult(test="IPS W-tbar", statistic=1.25, pvalue=0.89, null="every unit has a unit "
                     "root", nobs=990)
    bad = TestResult.inapplicable("CIPS", reason="T=8 is below the minimum")
    text = test_table([cd, ips, bad])
    assert "Pesaran (2004) CD" in text and "Im, Pesaran & Shin (2003) W̄" in text
    assert "Pesaran (2007) CIPS: not computed (T=8 is below the minimum)." in text
    assert "H0 of Pesaran (2004) CD: no cross-sectional correlation." in text
    assert "<0.001" in text and "0.890" in text and "Obs." in text and "nobs" not in text
    assert "−2.500" in text
    tex = test_table([ips], "latex")
    assert "Im, Pesaran \\& Shin (2003) $\\bar{W}$" in tex
    assert test_name("fixed effects (unit): relative decoupling") == ("Fixed effects (unit): "
                                                                      "relative decoupling")
    assert test_name("Johansen trace r<=1") == "Johansen (1991) trace r ≤ 1"


def test_large_values_grouped_and_pvalue_columns():
    frame = pd.DataFrame({"start": [173852.6, 21791.1], "p value": [0.2, 1e-6],
                          "year": [1990, 2023]}, index=pd.Index(["A", "B"], name="unit"))
    text = render_frame(frame)
    assert "173,852.6" in text and "<0.001" in text and "1990" in text and "1,990" not in text


@pytest.mark.parametrize("fmt", ["text", "markdown", "latex", "html"])
def test_hostile_names_are_escaped_everywhere(fmt):
    frame = pd.DataFrame({"unit": HOSTILE, "value": np.arange(len(HOSTILE), dtype=float)})
    out = render_frame(frame, fmt, index=False, title=HOSTILE[0], notes=HOSTILE,
                       labels={"a_b": "<b>bold</b>"})
    if fmt in ("markdown", "html"):
        assert "<script>" not in out and "<b>" not in out
    if fmt == "latex":
        assert "\\undefinedmacro{" not in out.replace("\\textbackslash{}undefinedmacro\\{", "")
        assert "\n\n" not in out.strip() and "R\\&D" in out and "100\\%" in out
    if fmt == "markdown":
        assert "R&amp;D" in out and "\\#1" in out
    body = out.splitlines()
    assert not any(line.strip() == "line" for line in body)  # no raw newline inside a cell
    assert render_frame(frame, fmt, index=False, notes=HOSTILE) == render_frame(
        frame, fmt, index=False, notes=HOSTILE)


def test_latex_escape_maps_unicode_symbols():
    assert escape_latex("Δ ln GDP² − 1 ≤ 2") == "$\\Delta$ ln GDP$^{2}$ $-$ 1 $\\leq$ 2"
    assert escape_latex("a\n\nb") == "a b"


def test_beta_table_shows_coefficient_r2_and_test():
    rng = np.random.default_rng(3)
    years = np.arange(1990, 2021)
    start = rng.normal(2.0, 0.5, 30)
    level = start[None, :] + np.outer(years - 1990, 0.02 - 0.01 * (start - 2.0)) + rng.normal(
        0, 0.01, (len(years), 30))
    panel = ev.Panel.from_arrays({"y": np.exp(level)}, years=years)
    beta = ev.beta_convergence(panel, "y")
    text = beta_table(beta, labels={"y": "GHG per person"})
    assert "ln GHG per person (1990)" in text and "R²" in text and "Obs." in text
    assert "Speed of convergence (a year)" in text and "Half-life (years)" in text
    assert "One-sided t, H0: slope ≥ 0" in text and "Cross-section" in text


def test_ekc_table_headers_are_words():
    panel = ev.demo_panel()
    curve = ev.ekc(panel, "ghg_territorial", "gdp")
    text = ekc_table(curve, labels={"gdp": "GDP"})
    assert "Turning point, ln GDP" in text and "Fieller 95% interval" in text
    assert "Lind & Mehlum (2010)" in text and "std_error" not in text and "inside_range" not in text


def test_study_labels_reach_the_tables(tmp_path):
    from evidence.study.spec import parse_spec
    from evidence.study.steps import rates as rates_step

    text = """
[data]
file = "panel.csv"
[roles]
activity = "gdp"
[[pressures]]
column = "ghg_territorial"
[output]
labels = {gdp = "GDP", ghg_territorial = "GHG (territorial)"}
"""
    spec = parse_spec(text, base=tmp_path)
    assert spec.labels == {"gdp": "GDP", "ghg_territorial": "GHG (territorial)"}
    out = rates_step.run(ev.demo_panel(), spec).tables[0].render("markdown")
    assert "GHG (territorial) against GDP" in out and "ghg_territorial" not in out
    with pytest.raises(ev.SpecError, match="labels"):
        parse_spec(text.replace('gdp = "GDP"', 'gdp = 3'), base=tmp_path)


def test_caution_passed_as_a_note_stays_once_and_last():
    out = render_frame(pd.DataFrame({"a": [1.0]}), notes=[CAUTION, "other"])
    assert out.count("not a policy verdict") == 1 and out.rstrip().endswith("publish.")


def test_a_warning_shared_by_every_test_is_said_once_for_all():
    from evidence.results import TestResult
    from evidence.tables.tests import hypothesis_notes

    def result(name, warnings):
        return TestResult(test=name, statistic=1.0, pvalue=0.5, critical_values={}, null="no link",
                          alternative="a link", nobs=30, details={}, reference="",
                          warnings=tuple(warnings))

    both = [result("A", ["drift found"]), result("B", ["drift found", "short"])]
    notes = hypothesis_notes(both, ["A", "B"])
    assert "Every test: drift found" in notes and "B: short" in notes
