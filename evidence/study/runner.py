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
from dataclasses import dataclass
from datetime import datetime, timezone
from importlib import metadata
from pathlib import Path
from typing import Any

from evidence._json import json_safe
from evidence._version import __version__
from evidence.errors import DataError, EvidenceError
from evidence.panel import Panel, load_panel
from evidence.study import figures as figs
from evidence.study.report import Section, render_report
from evidence.study.spec import StudySpec, read_spec
from evidence.study.steps import AUDIT, STEPS, StepOutput
from evidence.tables import html_to_docx

__all__ = ["StudyResult", "run_study"]

_DEPENDENCIES = ("numpy", "scipy", "pandas", "statsmodels", "linearmodels", "arch", "matplotlib")
_EXT = {"text": "txt", "markdown": "md", "latex": "tex", "html": "html", "csv": "csv",
        "json": "json", "docx": "docx"}


@dataclass(frozen=True)
class StudyResult:
    """What a study run wrote (``files``) and computed (``results``, JSON-safe)."""

    folder: Path
    files: tuple[Path, ...]
    results: dict[str, Any]
    grade: Any


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
              progress: Callable[[int, int], None] | None = None) -> StudyResult:
    """Run the study described by ``spec`` (a TOML file or a parsed spec) into folder ``out``.

    Writes ``report.html`` (self-contained), ``tables/`` in every requested format, ``figures/``
    (PNG and SVG), ``results.json`` (identical for the same inputs and seed) and
    ``manifest.json`` (versions, input hash, spec, seeds, start time, run time).
    """
    started, clock = datetime.now(timezone.utc), time.perf_counter()
    spec = spec if isinstance(spec, StudySpec) else read_spec(spec)
    folder = Path(out)
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
    return _finish(spec, folder, writer, results, sections, started, clock, grade)


def _finish(spec: StudySpec, folder: Path, writer: _Writer, results: dict[str, Any],
            sections: list[Section], started: datetime, clock: float, grade: Any) -> StudyResult:
    report = folder / "report.html"
    report.write_text(render_report(spec.title, spec.claim, spec.source, sections),
                      encoding="utf-8")
    payload = json.dumps(json_safe(results), indent=2, sort_keys=True, allow_nan=False) + "\n"
    (folder / "results.json").write_text(payload, encoding="utf-8")
    manifest = {"versions": _versions(),
                "input": {"file": spec.data_file.name, "sha256": _hash(spec.data_file)},
                "spec": json_safe(spec.raw), "seeds": {"study": spec.seed},
                "started": started.isoformat(timespec="seconds"),
                "run_seconds": round(time.perf_counter() - clock, 2)}
    (folder / "manifest.json").write_text(json.dumps(manifest, indent=2) + "\n", encoding="utf-8")
    files = (*writer.files, report, folder / "results.json", folder / "manifest.json")
    return StudyResult(folder=folder, files=tuple(files), results=results, grade=grade)
