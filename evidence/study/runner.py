"""``run_study``: from a study file to an output folder of report, tables, figures and results.

The runner loads the data, runs each step of :data:`evidence.study.steps.STEPS` that the spec
turns on, and writes what the steps hand back. An analysis that cannot run on the data (too few
years, missing columns for an optional part) is reported as "not run" with its reason in the
report and in ``results.json`` — never silently dropped.
"""

from __future__ import annotations

import json
import platform
import time
from collections.abc import Callable
from contextlib import ExitStack
from dataclasses import dataclass, replace
from datetime import UTC, datetime
from importlib import metadata
from pathlib import Path
from typing import Any

import pandas as pd

from evidence._files import check_source
from evidence._json import json_safe
from evidence._validation import format_years
from evidence._version import __version__
from evidence.errors import DataError, EvidenceError
from evidence.panel import Panel, load_panel
from evidence.parallel import ExecutorLike, one_blas_thread, using_executor
from evidence.results import ResultProtocol
from evidence.study import figures as figs
from evidence.study._long import shorten_rows
from evidence.study._output import OutputFolder, file_hash
from evidence.study.figures import RUNG_COLOURS
from evidence.study.report import Answer, Figure, Section, Table, render_report
from evidence.study.spec import StudySpec, check_against_data, check_executor, read_spec
from evidence.study.steps import AUDIT, STEPS, TITLES, StepOutput, TableOut
from evidence.study.verdict import FLAG_MEANINGS, RUNG_TEXT, verdicts
from evidence.tables import html_to_docx

__all__ = ["StudyResult", "run_study", "run_into"]

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
    """Writes the tables and figures of the steps into the new output folder and lists them."""

    def __init__(self, folder: OutputFolder, formats: tuple[str, ...]) -> None:
        self.folder, self.formats = folder, formats
        self.not_drawn: dict[str, str] = {}
        self.top: list[Figure] = []
        folder.path("tables/.").mkdir(exist_ok=True)
        folder.path("figures/.").mkdir(exist_ok=True)

    def table(self, table: TableOut) -> Table:
        """Every format written with the caution (once per file); the report's HTML without it
        (the report carries the caution once, at the top)."""
        files = []
        for fmt in self.formats:
            relative = f"tables/{table.name}.{_EXT[fmt]}"
            if fmt == "docx":
                html_to_docx(table.render("html", True), self.folder.path(relative))
            else:
                self.folder.path(relative).write_text(table.render(fmt, True), encoding="utf-8")
            self.folder.record(relative, table.source)
            files.append(relative)
        html = shorten_rows(table.render("html", False), files) if table.shown != "file" else ""
        return Table(html, shown=table.shown, files=tuple(files), summary=table.summary)

    def section(self, output: StepOutput) -> Section:
        """Write the step's tables and figures; the report section that shows them."""
        import matplotlib

        fragments = tuple(self.table(t) for t in output.tables)
        shown = []
        for figure in output.figures:
            # data-derived text (unit names) is shown as written, never parsed as mathtext
            with matplotlib.rc_context({"text.parse_math": False}):
                try:
                    drawn = figure.draw()
                except EvidenceError as exc:
                    self.not_drawn[figure.label or figure.name] = str(exc)
                    continue
                paths = figs.save(drawn, self.folder.path(f"figures/{figure.name}"))
            for path in paths:
                self.folder.record(f"figures/{path.name}", figure.source)
            item = Figure(paths[0], figure.caption,
                          tuple(f"figures/{path.name}" for path in paths))
            if figure.top:
                self.top.append(item)
            elif figure.in_report:
                shown.append(item)
        return Section(output.title, tuple(f for f in fragments if f.shown != "file" or f.files),
                       tuple(shown), note=output.note, lead=output.lead,
                       more_figures=output.more_figures)


def _versions() -> dict[str, str]:
    out = {"evidence": __version__, "python": platform.python_version()}
    for name in _DEPENDENCIES:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def _load(spec: StudySpec) -> Panel:
    """The study's panel, with the columns, units and years the spec names checked."""
    basis = {p.column: p.basis for p in spec.pressures}
    basis.update({p.consumption: "consumption" for p in spec.pressures if p.consumption})
    panel = load_panel(spec.data_file, unit=spec.unit, time=spec.time)
    check_against_data(spec, panel.columns, panel.units, panel.years)
    panel = Panel(panel.frame, audit=panel.audit, meta={**panel.meta, "basis": basis})
    return _without_nonpositive(panel, spec)


def _without_nonpositive(panel: Panel, spec: StudySpec) -> Panel:
    """The panel without units that have a zero or negative value where the study takes logs or
    divides (pressures, activity, population, energy, in the window); each is listed in the
    audit. One bad cell excludes its unit, not an analysis."""
    columns = [c for c in (*spec.pressure_columns, *spec.consumption.values(), spec.activity,
                           spec.population, spec.energy) if c]
    frame = panel.frame
    if spec.window is not None:
        years = frame.index.get_level_values(1)
        frame = frame[(years >= spec.window[0]) & (years <= spec.window[1])]
    rows = []
    for column in dict.fromkeys(columns):
        bad = frame[column] <= 0
        for unit, cells in bad[bad].groupby(level=0):
            rows.append({"unit": unit, "column": column,
                         "years": format_years(cells.index.get_level_values(1)),
                         "count": int(cells.size),
                         "reason": "unit excluded from the study: zero or negative value where "
                                   "logs or ratios are taken"})
    if not rows:
        return panel
    dropped = {r["unit"] for r in rows}
    kept = [u for u in panel.units if u not in dropped]
    if not kept:
        first = rows[0]
        raise DataError(f"every unit has a zero or negative value in the columns the study "
                        f"takes logs of (e.g. unit '{first['unit']}', column '{first['column']}', "
                        f"{first['years']}); fix the cells or mark them missing.")
    frame = panel.frame
    kept_rows = frame[frame.index.get_level_values(0).isin(kept)]
    audit = pd.concat([panel.audit, pd.DataFrame(rows, columns=list(panel.audit.columns))],
                      ignore_index=True)
    return Panel(kept_rows.copy(), audit=audit, meta=panel.meta)


def run_study(spec: str | Path | StudySpec, out: str | Path = "results", *,
              executor: ExecutorLike = None, overwrite: bool = False,
              progress: Callable[[int, int], None] | None = None) -> StudyResult:
    """Run the study described by ``spec`` (a TOML file or a parsed spec) into folder ``out``.

    Writes ``report.html`` (self-contained), ``tables/`` in every requested format, ``figures/``
    (PNG and SVG), ``results.json`` (identical for the same inputs and seed, whichever executor)
    and ``manifest.json`` (versions, the input's hash taken before anything was written, the
    spec, seeds, every file written with its hash, the data-derived names behind file names).

    The folder is written as a transaction (:mod:`evidence.study._output`): the new run appears
    complete or not at all. An existing ``out`` must be an earlier, unchanged run of this
    package, else the run stops before any work — unless ``overwrite=True`` replaces it. A run
    never writes into the folder that holds its own data or study file.

    ``executor`` (default: the spec's ``[run] executor``, else ``"serial"``) is opened once for
    the whole study and handed to every step through ``spec.executor``: ``"serial"``,
    ``"processes"``, ``"dask"``, a scheduler address ``"tcp://host:8786"``, an executor or a
    ``dask.distributed.Client`` (which the study never closes).
    """
    source = None if isinstance(spec, StudySpec) else Path(spec)
    spec = spec if isinstance(spec, StudySpec) else read_spec(spec)
    chosen = spec.executor if executor is None else executor
    if isinstance(chosen, str):
        chosen = check_executor(chosen)
    inputs = [spec.data_file, *([source] if source is not None else [])]
    hashes = _input_hashes(spec, source)
    with OutputFolder(out, overwrite=overwrite, inputs=inputs) as folder, one_blas_thread():
        return run_into(spec, folder, chosen, hashes, progress=progress)


def _input_hashes(spec: StudySpec, source: Path | None) -> dict[str, Any]:
    """Hashes of the inputs, taken before anything is written."""
    check_source(spec.data_file)
    out: dict[str, Any] = {"file": spec.data_file.name, "sha256": file_hash(spec.data_file)}
    if source is not None:
        out["study_file"] = {"file": source.name, "sha256": file_hash(source)}
    return out


def run_into(spec: StudySpec, folder: OutputFolder, executor: ExecutorLike,
             inputs: dict[str, Any], *,
             progress: Callable[[int, int], None] | None = None) -> StudyResult:
    """Run ``spec`` into an open output folder and commit it (the runner behind ``run_study``
    and ``run_demo``)."""
    started, clock = datetime.now(UTC), time.perf_counter()
    panel = _load(spec)
    stack = ExitStack()
    try:
        opened = stack.enter_context(using_executor(executor))
    except OSError as exc:  # e.g. no scheduler at the address given
        raise DataError(f"cannot start the executor {executor!r}: {exc}") from None
    try:
        with stack:
            spec = replace(spec, executor=opened)
            writer = _Writer(folder, spec.formats)
            results, sections, grade, steps = _steps(panel, spec, writer, progress)
            answer = _answer(spec, grade, writer.top, results["not_run"])
            _write_outputs(spec, folder, results, sections, answer)
            manifest = {"versions": _versions(), "input": inputs, "spec": json_safe(spec.raw),
                        "seeds": {"study": spec.seed},
                        "executor": getattr(opened, "name", str(opened)),
                        "started": started.isoformat(timespec="seconds"),
                        "run_seconds": round(time.perf_counter() - clock, 2)}
    except OSError as exc:
        raise DataError(f"cannot write the results to '{folder.shown}': "
                        f"{exc.strerror or exc}.") from None
    files = tuple(folder.final(rel) for rel in folder.files)
    try:
        manifest_path = folder.commit(manifest)
    except OSError as exc:
        raise DataError(f"cannot write the results to '{folder.shown}': "
                        f"{exc.strerror or exc}.") from None
    return StudyResult(folder=folder.shown, files=(*files, manifest_path), results=results,
                       grade=grade, steps=tuple(steps))


def _steps(panel: Panel, spec: StudySpec, writer: _Writer,
           progress: Callable[[int, int], None] | None) -> tuple[dict, list, Any, list[str]]:
    """Run every step the spec turns on; a step's data or option error makes it "not run"."""
    results: dict[str, Any] = {"spec": json_safe(spec.raw), "not_run": {}}
    sections: list[Section] = []
    steps = [name for name in STEPS if spec.analyses.get(name)]
    grade = None
    total = len(steps) + 1
    for number, name in enumerate(steps):
        if progress is not None:
            progress(number, total)
        try:
            output = STEPS[name](panel, spec)
            section = writer.section(output)
        except EvidenceError as exc:
            results["not_run"][name] = str(exc)
            sections.append(Section(f"{TITLES.get(name, name)}: not run",
                                    lead=(f"This analysis could not run on these data: {exc}",)))
        else:
            results.update(output.results)
            grade = output.value if name == "grade" else grade
            sections.append(section)
    if progress is not None:
        progress(len(steps), total)
    sections.append(writer.section(AUDIT(panel, spec)))
    if progress is not None:
        progress(total, total)
    if writer.not_drawn:
        results["figures_not_drawn"] = dict(writer.not_drawn)
    return results, sections, grade, steps


def _answer(spec: StudySpec, grade: Any, top: list[Figure], not_run: dict[str, str]) -> Answer:
    """The verdict and grade figure the report opens with."""
    if grade is None:
        reason = not_run.get("grade")
        text = (f"The grade could not be computed: {reason}" if reason else
                "The grade is turned off in this study ([analyses] grade = false); the sections "
                "below report each analysis on its own.")
        return Answer(headline="No verdict on the claim.", paragraphs=(text,))
    found = verdicts(grade, spec.unit_words)
    first = found[0]
    paragraphs = (first.intro, *(v.text for v in found[1:]))
    counts = tuple((rung, n, RUNG_TEXT.get(rung, ""), RUNG_COLOURS.get(rung, ""))
                   for rung, n in reversed(list(first.rungs.items())))
    meanings = {**FLAG_MEANINGS, "short-window": (
        f"graded on fewer than {grade.criteria.short_window} years ([criteria] short_window)")}
    counts += tuple((f"flagged {flag}", n, meanings.get(flag, ""), "")
                    for flag, n in first.flags.items())
    return Answer(headline=first.headline, paragraphs=paragraphs, counts=counts,
                  figure=top[0] if top else None, link="grade")


def _write_outputs(spec: StudySpec, folder: OutputFolder, results: dict[str, Any],
                   sections: list[Section], answer: Answer) -> None:
    source = " ".join(x for x in (spec.source, spec.release and f"(release {spec.release})") if x)
    folder.write_text("report.html", render_report(spec.title, spec.claim, source, sections,
                                                   answer))
    payload = json.dumps(json_safe(results), indent=2, sort_keys=True, allow_nan=False) + "\n"
    folder.write_text("results.json", payload)
