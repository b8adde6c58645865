"""The ``evidence demo`` job: the shipped demo study run on the bundled demo panel.

The demo data (``evidence.demo``) stay a data module; this orchestration lives with the study
runner, so data modules import no orchestration.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

from evidence.demo import demo_csv_text, demo_panel, demo_study_text
from evidence.parallel import ExecutorLike
from evidence.study._output import OutputFolder, file_hash
from evidence.study.runner import run_into
from evidence.study.spec import check_executor, parse_spec

__all__ = ["run_demo"]


def run_demo(out: str | Path = "evidence-demo", *, executor: ExecutorLike = None,
             overwrite: bool = False,
             progress: Callable[[int, int], None] | None = None) -> dict[str, Any]:
    """Run the main job on the demo panel: the shipped demo study, written to ``out``.

    The folder gets the study output (``report.html``, ``tables/``, ``figures/``,
    ``results.json``, ``manifest.json``) plus a copy of the demo data and of the study file, to
    try the other commands on. The folder is written as a transaction like a study's: a folder
    that holds anything else — an edited ``demo_study.toml``, say — is left alone unless
    ``overwrite=True``. ``executor`` is as for :func:`~evidence.study.run_study`.
    Returns the study result and the panel.
    """
    chosen = "serial" if executor is None else executor
    if isinstance(chosen, str):
        chosen = check_executor(chosen)
    with OutputFolder(out, overwrite=overwrite) as folder:
        folder.write_text("demo_panel.csv", demo_csv_text())
        folder.write_text("demo_study.toml", demo_study_text())
        data = folder.path("demo_panel.csv")
        spec = parse_spec(demo_study_text(), base=data.parent)
        inputs = {"file": data.name, "sha256": file_hash(data),
                  "study_file": {"file": "demo_study.toml",
                                 "sha256": file_hash(folder.path("demo_study.toml"))}}
        result = run_into(spec, folder, chosen, inputs, progress=progress)
    return {"panel": demo_panel(), "study": result, "folder": Path(out),
            "files": list(result.files)}
