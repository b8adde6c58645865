"""``run_study``: from a study file to an output folder of report, tables, figures and results.

The runner loads the data, runs each step of :data:`evidence.study.steps.STEPS` that the spec
turns on, and writes what the steps hand back. An analysis that cannot run on the data (too few
years, missing columns for an optional part) is reported as "not run" with its reason in the
report and in ``results.json`` — never silently dropped.
"""

from __future__ import annotations

import hashlib
import json
import platform
import time
from collections.abc import Callable
from dataclasses import dataclass, replace
from datetime import datetime, timezone
from importlib import metadata
from pathlib import Path
from typing import Any

import pandas as pd

from evidence._json import json_safe
from evidence._version import __version__
from evidence.errors import DataError, EvidenceError
from evidence.panel import Panel, load_panel
from evidence.results import ResultProtocol
from evidence.study import figures as figs
from evidence.study.report import Section, render_report
from evidence.parallel import ExecutorLike, using_executor
from evidence.study.spec import StudySpec, check_executor, read_spec
from evidence.study.steps import AUDIT, STEPS, StepOutput
from evidence.tables import html_to_docx

__all__ = ["StudyResult", "run_study"]

_DEPENDENCIES = ("numpy", "scipy", "pandas", "statsmodels", "linearmodels", "arch", "matplotlib")
_EXT = {"text": "txt", "markdown": "md", "latex": "tex", "html": "html", "csv": "csv",
        "json": "json", "docx": "docx"}


@dataclass(frozen=True, eq=False, repr=False)
class StudyResult(ResultProtocol):
    """What a study run wrote and computed.

    Attributes
    ----------
    folder : pathlib.Path
        The output folder.
    files : tuple of pathlib.Path
        Every file written, in the order written.
    results : dict
        The contents of ``results.json`` (JSON-safe): the spec, each step's results, and
        ``not_run`` (step → reason).
    grade : GradeResult or None
        The grade, when the grade step ran.
    steps : tuple of str
        The analyses the spec turned on, in report order (run or not run).
    """

    folder: Path
    files: tuple[Path, ...]
    results: dict[str, Any]
    grade: Any = None
    steps: tuple[str, ...] = ()

    _private_fields = ("grade",)

    def __repr__(self) -> str:
        return (f"StudyResult(folder='{self.folder}', files={len(self.files)}, "
                f"not_run={len(self.results.get('not_run', {}))})")

    def summary(self) -> str:
        """The grade's counts, the analyses not run and what was written."""
        lines = [] if self.grade is None else [self.grade.summary()]
        lines += [f"not run: {name}: {reason}"
                  for name, reason in self.results.get("not_run", {}).items()]
        lines.append(f"Wrote {len(self.files)} files to {self.folder}/ (report.html, tables/, "
                     "figures/, results.json, manifest.json).")
        return "\n".join(lines)

    def to_frame(self) -> pd.DataFrame:
        """One row per analysis of the study: run or not run, and why not."""
        not_run = self.results.get("not_run", {})
        return pd.DataFrame([{"analysis": name, "status": "not run" if name in not_run else "run",
                              "reason": not_run.get(name, "")} for name in self.steps],
                            columns=["analysis", "status", "reason"])


class _Writer:
    """Writes the tables and figures of the steps into the output folder and lists the files."""

    def __init__(self, folder: Path, formats: tuple[str, ...]) -> None:
        self.folder, self.formats, self.files = folder, formats, []
        self.not_drawn: dict[str, str] = {}
        (folder / "tables").mkdir(parents=True, exist_ok=True)
        (folder / "figures").mkdir(parents=True, exist_ok=True)

    def table(self, name: str, render: Callable[[str], str]) -> str:
        for fmt in self.formats:
            path = self.folder / "tables" / f"{name}.{_EXT[fmt]}"
            if fmt == "docx":
                html_to_docx(render("html"), path)
            else:
                path.write_text(render(fmt), encoding="utf-8")
            self.files.append(path)
        return render("html")

    def section(self, output: StepOutput) -> Section:
        """Write the step's tables and figures; the report section that shows them."""
        fragments = tuple(self.table(t.name, t.render) for t in output.tables)
        shown = []
        for figure in output.figures:
            try:
                drawn = figure.draw()
            except EvidenceError as exc:
                self.not_drawn[figure.label or figure.name] = str(exc)
                continue
            paths = figs.save(drawn, self.folder / "figures" / figure.name)
            self.files.extend(paths)
            if figure.in_report:
                shown.append(paths[0])
        return Section(output.title, fragments, tuple(shown), note=output.note)


def _hash(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _versions() -> dict[str, str]:
    out = {"evidence": __version__, "python": platform.python_version()}
    for name in _DEPENDENCIES:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def _load(spec: StudySpec) -> Panel:
    basis = {p.column: p.basis for p in spec.pressures}
    basis.update({p.consumption: "consumption" for p in spec.pressures if p.consumption})
    panel = load_panel(spec.data_file, unit=spec.unit, time=spec.time, basis=basis)
    panel.require(spec.activity, *basis, *(c for c in (spec.population, spec.energy) if c))
    return panel


def run_study(spec: str | Path | StudySpec, out: str | Path = "results", *,
              executor: ExecutorLike = None,
              progress: Callable[[int, int], None] | None = None) -> StudyResult:
    """Run the study described by ``spec`` (a TOML file or a parsed spec) into folder ``out``.

    Writes ``report.html`` (self-contained), ``tables/`` in every requested format, ``figures/``
    (PNG and SVG), ``results.json`` (identical for the same inputs and seed, whichever executor)
    and ``manifest.json`` (versions, input hash, spec, seeds, start time, run time).

    ``executor`` (default: the spec's ``[run] executor``, else ``"serial"``) is opened once for
    the whole study and handed to every step through ``spec.executor``: ``"serial"``,
    ``"processes"``, ``"dask"``, a scheduler address ``"tcp://host:8786"``, an executor or a
    ``dask.distributed.Client`` (which the study never closes).
    """
    spec = spec if isinstance(spec, StudySpec) else read_spec(spec)
    chosen = spec.executor if executor is None else executor
    if isinstance(chosen, str):
        chosen = check_executor(chosen)
    with using_executor(chosen) as opened:
        return _run(replace(spec, executor=opened), Path(out), progress)


def _run(spec: StudySpec, folder: Path,
         progress: Callable[[int, int], None] | None) -> StudyResult:
    started, clock = datetime.now(timezone.utc), time.perf_counter()
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise DataError(f"cannot create the output folder '{folder}': {exc.strerror}.") from None
    writer = _Writer(folder, spec.formats)
    panel = _load(spec)
    results: dict[str, Any] = {"spec": json_safe(spec.raw), "not_run": {}}
    sections: list[Section] = []
    steps = [name for name in STEPS if spec.analyses.get(name)]
    grade = None
    for name in steps:
        try:
            output = STEPS[name](panel, spec)
            section = writer.section(output)
        except EvidenceError as exc:
            results["not_run"][name] = str(exc)
            sections.append(Section(f"{name}: not run", note=str(exc)))
        else:
            results.update(output.results)
            grade = output.value if name == "grade" else grade
            sections.append(section)
        if progress is not None:
            progress(len(sections), len(steps) + 1)
    sections.append(writer.section(AUDIT(panel, spec)))
    if writer.not_drawn:
        results["figures_not_drawn"] = dict(writer.not_drawn)
    files = _finish(spec, folder, writer, results, sections, started, clock)
    return StudyResult(folder=folder, files=files, results=results, grade=grade,
                       steps=tuple(steps))


def _finish(spec: StudySpec, folder: Path, writer: _Writer, results: dict[str, Any],
            sections: list[Section], started: datetime, clock: float) -> tuple[Path, ...]:
    report = folder / "report.html"
    report.write_text(render_report(spec.title, spec.claim, spec.source, sections),
                      encoding="utf-8")
    payload = json.dumps(json_safe(results), indent=2, sort_keys=True, allow_nan=False) + "\n"
    (folder / "results.json").write_text(payload, encoding="utf-8")
    manifest = {"versions": _versions(),
                "input": {"file": spec.data_file.name, "sha256": _hash(spec.data_file)},
                "spec": json_safe(spec.raw), "seeds": {"study": spec.seed},
                "executor": getattr(spec.executor, "name", str(spec.executor)),
                "started": started.isoformat(timespec="seconds"),
                "run_seconds": round(time.perf_counter() - clock, 2)}
    (folder / "manifest.json").write_text(json.dumps(manifest, indent=2) + "\n", encoding="utf-8")
    return (*writer.files, report, folder / "results.json", folder / "manifest.json")
