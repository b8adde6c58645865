"""Table rendering: escaping of data-derived text, reproducible bytes, every format.

Behaviour checks only: tables format numbers they are given and compute none; the values in the
tables are checked where they are computed.
"""

from __future__ import annotations

import json

import pandas as pd
import pytest

import evidence as ev
from evidence.tables import FORMATS, latex_escape, rates_table, render_frame

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
    from evidence.tables import regression_table

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
