"""The ``evidence demo`` job: the shipped demo study run on the bundled demo panel.

The demo data (``evidence.demo``) stay a data module; this orchestration lives with the study
runner, so data modules import no orchestration.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

from evidence.demo import demo_csv_text, demo_panel, demo_study_text
from evidence.errors import DataError
from evidence.parallel import ExecutorLike
from evidence.study.runner import run_study
from evidence.study.spec import parse_spec

__all__ = ["run_demo"]


def run_demo(out: str | Path = "evidence-demo", *, executor: ExecutorLike = None,
             progress: Callable[[int, int], None] | None = None) -> dict[str, Any]:
    """Run the main job on the demo panel: the shipped demo study, written to ``out``.

    The folder gets the study output (``report.html``, ``tables/``, ``figures/``,
    ``results.json``, ``manifest.json``) plus a copy of the demo data and of the study file, to
    try the other commands on. ``executor`` is as for :func:`~evidence.study.run_study`.
    Returns the study result and the panel.
    """
    folder = Path(out)
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise DataError(f"cannot create the output folder '{folder}': {exc.strerror}.") from None
    (folder / "demo_panel.csv").write_text(demo_csv_text(), encoding="utf-8")
    (folder / "demo_study.toml").write_text(demo_study_text(), encoding="utf-8")
    spec = parse_spec(demo_study_text(), base=folder)
    result = run_study(spec, folder, executor=executor, progress=progress)
    return {"panel": demo_panel(), "study": result, "folder": folder,
            "files": [*result.files, folder / "demo_panel.csv", folder / "demo_study.toml"]}
