"""The regression and test tables a referee asks for, in LaTeX (or Markdown, HTML, CSV, JSON).

On the invented demo panel: the elasticity of territorial emissions with respect to GDP by pooled
fixed effects (Driscoll–Kraay errors), common correlated effects mean group and augmented mean
group; the decoupling tests on the fixed-effects slope; cross-sectional dependence and panel
unit-root tests. Tables only format: every number comes from the result objects. See
docs/tables.md for the options (labels, notes, the statistic under each coefficient).

Usage: ``python examples/journal_tables.py [OUT]`` writes ``OUT/*.tex`` (default: print only).
"""

from __future__ import annotations

import sys
from pathlib import Path

import evidence as ev


def main(out: str | None = None) -> None:
    panel = ev.demo_panel().with_log("ghg_territorial")  # the unit-root tests take the log
    window = (1995, 2023)

    fits = [ev.elasticity(panel, "ghg_territorial", "gdp", estimator=name, window=window)
            for name in ("fe", "ccemg", "amg")]
    labels = {"gdp": "GDP", "ghg_territorial": "emissions (territorial)"}  # the tables add "ln"
    regression = ev.regression_table(fits, "latex", labels=labels,
                                     title="Elasticity of territorial emissions with respect to GDP")
    decoupling = ev.test_table(ev.decoupling_tests(fits[0]), "latex",
                               title="Decoupling tests on the fixed-effects elasticity")

    column = "log_ghg_territorial"
    tests = [ev.pesaran_cd_test(panel, column),
             ev.ips_test(panel, column, trend="trend"),
             ev.cips_test(panel, column, trend="trend", lags=1)]
    roots = ev.test_table(tests, "latex", title="Cross-sectional dependence and panel unit roots")

    tables = {"elasticity": regression, "decoupling_tests": decoupling, "unit_roots": roots}
    for name, text in tables.items():
        print(f"% --- {name}.tex")
        print(text)
    if out is not None:
        folder = Path(out)
        folder.mkdir(parents=True, exist_ok=True)
        for name, text in tables.items():
            (folder / f"{name}.tex").write_text(text, encoding="utf-8")
    # The same tables as text for a quick look.
    print(ev.regression_table(fits, labels=labels))


if __name__ == "__main__":
    main(*sys.argv[1:2])
