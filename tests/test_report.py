"""The study report as a reader meets it: the answer first, every analysis a section, and (where
a headless Chromium or Chrome is installed) the page rendered at 1400 and 1000 px wide.

The browser check loads a copy of ``report.html`` with a small script that measures the page
(element boxes, overflow) into the DOM, read back with ``--dump-dom``; it also keeps a
screenshot of each width beside the report (``screenshots/``), or under
``$EVIDENCE_ARTEFACTS`` when that is set (CI keeps them as artefacts; never in the repository).
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from evidence.cli import main
from evidence.study.report import _prose
from evidence.study.steps import STEPS, TITLES

BROWSERS = ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable", "chrome")
FOLD = 800  # the first screen of a 1400 px wide laptop window, browser bars taken off

_PROBE = """
<script>
window.addEventListener("load", function () {
  function box(el) {
    if (!el) { return null; }
    var r = el.getBoundingClientRect();
    return {top: r.top + window.scrollY, bottom: r.bottom + window.scrollY,
            left: r.left, right: r.right, width: r.width, height: r.height};
  }
  var main = document.querySelector("main");
  var wide = [];
  main.querySelectorAll("*").forEach(function (el) {
    var r = el.getBoundingClientRect();
    if (r.width > 0 && r.right > main.getBoundingClientRect().right + 1
        && !el.closest(".table")) { wide.push(el.tagName + "." + el.className); }
  });
  var scrolled = [];
  document.querySelectorAll("main .table").forEach(function (el) {
    if (el.scrollWidth > el.clientWidth + 1) {
      var caption = el.querySelector("caption");
      scrolled.push(caption ? caption.textContent : el.innerHTML.slice(0, 60));
    }
  });
  var out = {
    scrolled: scrolled,
    inner_width: window.innerWidth, inner_height: window.innerHeight,
    page_width: document.documentElement.scrollWidth,
    main_scroll: main.scrollWidth, main_client: main.clientWidth,
    too_wide: wide.slice(0, 10),
    claim: box(document.querySelector(".claim")),
    verdict: box(document.querySelector("#verdict")),
    counts: box(document.querySelector("#verdict .counts")),
    figure: box(document.querySelector("#grade-figure img")),
    contents: box(document.querySelector("nav#contents")),
    table: box(document.querySelector("main table"))
  };
  var pre = document.createElement("pre");
  pre.id = "layout-probe";
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
});
</script>
"""


def _browser() -> str | None:
    for name in BROWSERS:
        found = shutil.which(name)
        if found:
            return found
    return None


def _run(browser: str, url: str, width: int, *extra: str) -> str:
    command = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
               "--disable-dev-shm-usage", f"--window-size={width},{FOLD}",
               "--virtual-time-budget=15000", *extra, url]
    done = subprocess.run(command, capture_output=True, text=True, timeout=180, check=False)
    if done.returncode != 0:
        pytest.skip(f"{browser} could not render the page: {done.stderr.strip()[-300:]}")
    return done.stdout


def _layout(browser: str, report: Path, width: int) -> dict:
    probe = report.with_name("report-layout-probe.html")
    probe.write_text(report.read_text(encoding="utf-8").replace("</body>", _PROBE + "</body>"),
                     encoding="utf-8")
    try:
        dom = _run(browser, probe.as_uri(), width, "--dump-dom")
    finally:
        probe.unlink()
    found = re.search(r'<pre id="layout-probe">(.*?)</pre>', dom, re.S)
    assert found, "the layout script did not run"
    return json.loads(found.group(1).replace("&quot;", '"').replace("&amp;", "&"))


def _screenshot(browser: str, report: Path, width: int) -> Path:
    folder = Path(os.environ.get("EVIDENCE_ARTEFACTS") or report.parent / "screenshots")
    folder.mkdir(parents=True, exist_ok=True)
    target = folder / f"report-{width}px.png"
    _run(browser, report.as_uri(), width, f"--screenshot={target}")
    return target


# ---------------------------------------------------------------------------------------------
# Without a browser: the page's order and sections, read from the HTML itself.


def test_report_opens_with_the_answer_and_has_every_section(demo_run):
    folder = Path(demo_run["folder"])
    page = (folder / "report.html").read_text(encoding="utf-8")
    spec = (folder / "demo_study.toml").read_text(encoding="utf-8")
    where = {name: page.index(marker) for name, marker in (
        ("claim", 'class="claim"'), ("verdict", 'id="verdict"'), ("counts", 'class="counts"'),
        ("figure", 'id="grade-figure"'), ("contents", 'id="contents"'), ("table", "<table"))}
    assert where["claim"] < where["verdict"] < where["counts"] < where["figure"]
    assert where["figure"] < where["contents"] < where["table"]
    # the counts per grade are the terminal's counts
    table = demo_run["study"].grade.table
    for rung, n in table["rung"].value_counts().items():
        assert re.search(rf"<strong>{n}</strong> {re.escape(rung)} ", page), rung
    # every analysis the study file turns on has its section, linked from the contents
    heads = re.findall(r'<section id="([^"]+)">\s*<h2>([^<]+)</h2>', page)
    titles = {title for _, title in heads}
    assert set(TITLES) == set(STEPS)
    for name in STEPS:
        if re.search(rf"^{name} = (true|\[)", spec, re.M):
            assert TITLES[name] in titles, name
    for ident, _ in heads:
        assert f'href="#{ident}"' in page
    assert "Audit: data not used" in titles
    # the caution once in the page, not under each table
    assert page.count("not a policy verdict") == 1


def test_running_text_uses_true_minus_signs():
    assert _prose("fixed effects -0.26, log t -11.98 (critical value -1.65)") == (
        "fixed effects −0.26, log t −11.98 (critical value −1.65)")
    assert _prose("1995-2023, AR-1, T-29, x<1") == "1995-2023, AR-1, T-29, x&lt;1"


# ---------------------------------------------------------------------------------------------
# With a browser: what a reader sees at 1400 and 1000 px.


@pytest.mark.parametrize("width", [1400, 1000])
def test_report_in_a_browser(demo_run, width):
    browser = _browser()
    if browser is None:
        pytest.skip("no headless Chromium or Chrome on this machine (.ci/run installs one)")
    report = Path(demo_run["folder"]) / "report.html"
    shot = _screenshot(browser, report, width)
    assert shot.stat().st_size > 10_000
    layout = _layout(browser, report, width)
    assert layout["inner_width"] == width
    # no horizontal overflow of the page or of the main column (wide tables scroll in their box)
    assert layout["page_width"] <= layout["inner_width"], layout
    assert layout["main_scroll"] <= layout["main_client"], layout
    assert layout["too_wide"] == [], layout["too_wide"]
    assert layout["scrolled"] == [], layout["scrolled"]  # every table fits: no sideways scrolling
    # the verdict, the grade figure and the contents come before the first table
    for name in ("verdict", "figure", "contents"):
        assert layout[name]["top"] < layout["table"]["top"], name
    fold = layout["inner_height"]
    assert layout["claim"]["bottom"] <= fold and layout["counts"]["bottom"] <= fold, layout
    if width >= 1400:  # side by side: the whole grade figure on the first screen
        assert layout["figure"]["bottom"] <= fold, layout
        assert layout["figure"]["left"] > layout["verdict"]["right"] - 1, layout
    else:  # one column: the figure follows the verdict, with its top on the first screen
        assert layout["figure"]["top"] < fold + 400, layout


# ---------------------------------------------------------------------------------------------
# The command line around the report.


def test_demo_prints_next_steps():
    from evidence.cli import next_steps

    text = next_steps("evidence-demo")
    assert "evidence-demo/report.html" in text and "evidence study" in text
    assert "evidence grade evidence-demo/demo_panel.csv" in text


def test_basis_and_window_options(demo_run, tmp_path, capsys):
    data = str(Path(demo_run["folder"]) / "demo_panel.csv")
    assert main(["rates", data, "--pressure", "ghg_consumption", "--activity", "gdp",
                 "--basis", "consumption", "--format", "markdown"]) == 0
    assert "Basis of ghg\\_consumption: consumption." in capsys.readouterr().out
    assert main(["rates", data, "--pressure", "ghg_territorial", "--activity", "gdp"]) == 0
    assert "not stated" in capsys.readouterr().out
    assert main(["rates", data, "--pressure", "gdp", "--activity", "gdp", "--basis", "x"]) == 2
    capsys.readouterr()
    roots = ["roots", data, "--column", "gdp", "--log", "--tests", "adf", "--no-differences",
             "--format", "csv"]
    assert main(roots) == 0
    whole = capsys.readouterr().out
    assert main([*roots, "--window", "2000:2023"]) == 0
    part = capsys.readouterr().out
    assert part.count("\n") == whole.count("\n") and part != whole  # same units, fewer years
    assert main(["breaks", data, "--column", "gdp", "--window", "2030:2040", "--quiet"]) == 2
