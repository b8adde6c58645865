"""The main job on the bundled demo panel: the demo study, written as a report folder.

Runs the study file that ships with the package (``evidence-demo/demo_study.toml`` after
``evidence demo``) on the invented demo panel of 30 regions, 1990–2023, and writes the HTML report,
every table (Markdown, LaTeX, HTML, CSV, JSON), the figures, ``results.json`` and a manifest.
The same as ``evidence demo --out OUT`` on the command line.

Usage: ``python examples/demo_study.py [OUT]`` (default ``evidence-demo``).
"""

from __future__ import annotations

import sys
from pathlib import Path

import pandas as pd

import evidence as ev


def main(out: str = "evidence-demo") -> None:
    summary = ev.run_demo(out, overwrite=True)
    folder = Path(out)
    print(f"report: {folder / 'report.html'}")
    print(f"tables: {len(list((folder / 'tables').glob('*.csv')))} tables, each in every format")
    grades = pd.read_csv(folder / "tables" / "grade.csv")
    print("regions by rung of the evidence (tables/grade.csv):")
    print(grades.groupby(["pressure", "rung"]).size().to_string())
    print(f"{len(summary['files'])} files listed in the manifest")


if __name__ == "__main__":
    main(*sys.argv[1:2])
