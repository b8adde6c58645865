"""``run_study``: from a study file to an output folder of report, tables, figures and results.

The runner only calls the public API and formats what it returns. An analysis that cannot run on
the data (too few years, missing columns for an optional part) is reported as "not run" with its
reason in the report and in ``results.json`` — never silently dropped.
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

from evidence._version import __version__
from evidence.breaks import find_breaks
from evidence.convergence import (beta_convergence, club_convergence, sigma_convergence,
                                  stochastic_convergence)
from evidence.decomposition import kaya
from evidence.elasticity import decoupling_tests, elasticity
from evidence.grading import Criteria, grade
from evidence.indicators import rates
from evidence.panel import Panel, load_panel
from evidence.roots import pesaran_cd_test, root_battery
from evidence._json import json_safe
from evidence.errors import DataError, EvidenceError
from evidence.study import figures as figs
from evidence.study.report import Section, render_report
from evidence.study.spec import StudySpec, read_spec
from evidence.tables import (audit_table, grade_table, html_to_docx, rates_table,
                             regression_table, render_frame, test_table)

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
    def __init__(self, folder: Path, formats: tuple[str, ...]) -> None:
        self.folder, self.formats, self.files = folder, formats, []
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

    def figure(self, fig: Any, name: str) -> Path:
        paths = figs.save(fig, self.folder / "figures" / name)
        self.files.extend(paths)
        return paths[0]


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


def _criteria(spec: StudySpec) -> Criteria:
    return Criteria(**{**spec.criteria, "seed": spec.seed,
                          **{k: v for k, v in spec.breaks.items() if k in ("max_breaks", "trim")}})


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
    basis = {p.column: p.basis for p in spec.pressures}
    basis.update({p.consumption: "consumption" for p in spec.pressures if p.consumption})
    panel = load_panel(spec.data_file, unit=spec.unit, time=spec.time, basis=basis)
    columns = [spec.activity, *basis, *(c for c in (spec.population, spec.energy) if c)]
    panel.require(*columns)
    source = " ".join(s for s in (spec.source, spec.release and f"(release {spec.release})") if s)
    notes = [f"Data: {source}"] if source else []
    analyses = {"rates": True, "grade": True, "elasticity": ["fe", "ccemg"], "roots": [],
                "dependence": False, "convergence": ["beta", "sigma", "clubs"],
                "decomposition": True, **spec.analyses}
    results: dict[str, Any] = {"spec": json_safe(spec.raw), "not_run": {}}
    sections: list[Section] = []
    steps = [name for name, on in analyses.items() if on]
    pressures = [p.column for p in spec.pressures]
    consumption = {p.column: p.consumption for p in spec.pressures if p.consumption}

    def step(name: str, func: Callable[[], Section | None]) -> None:
        try:
            section = func()
        except EvidenceError as exc:
            results["not_run"][name] = str(exc)
            sections.append(Section(f"{name}: not run", note=str(exc)))
            return
        if section is not None:
            sections.append(section)
        if progress is not None:
            progress(len(sections), len(steps) + 1)

    grade_holder: dict[str, Any] = {}

    def do_grade() -> Section:
        res = grade(panel, pressures, spec.activity, window=spec.window,
                       criteria=_criteria(spec), consumption=consumption)
        grade_holder["result"] = res
        results["grade"] = res.to_dict()
        fragment = writer.table("grade", lambda f: grade_table(res, f, notes=notes))
        figures = []
        if spec.figures:
            for unit in panel.units:
                breaks = {p: res.records[f"{unit}|{p}"].get("break_years") or []
                          for p in pressures if f"{unit}|{p}" in res.records}
                win = res.details["windows"][pressures[0]]
                shown = [*pressures, *consumption.values()]
                figures.append(writer.figure(figs.indexed_figure(
                    panel, unit, spec.activity, shown, tuple(win), breaks), f"indexed_{_slug(unit)}"))
                _intensity_figure(writer, panel, unit, pressures[0], spec, tuple(win), results)
                rec = res.records.get(f"{unit}|{pressures[0]}")
                if rec is not None:
                    writer.figure(figs.heatmap_figure(
                        rec["subwindow_matrix"], list(range(win[0], win[1] + 1)),
                        f"{unit}: sub-windows where the {rec['claim_tested']} claim holds"),
                        f"subwindows_{_slug(unit)}")
        return Section("Grade", (fragment,), tuple(figures[:6]),
                       note="Each axis is reported separately; the grade summarises them and "
                            "never replaces them. Figures for every unit are in figures/.")

    def do_rates() -> Section:
        fragments = []
        for p in [*pressures, *consumption.values()]:
            res = rates(panel, p, spec.activity, window=spec.window)
            results.setdefault("rates", {})[p] = res.to_dict()
            fragments.append(writer.table(f"rates_{p}", lambda f, r=res: rates_table(r, f, notes=notes)))
        return Section("Decoupling indicators", tuple(fragments))

    def do_elasticity() -> Section:
        fragments = []
        for p in pressures:
            fits = [elasticity(panel, p, spec.activity, estimator=e, window=spec.window)
                    for e in analyses["elasticity"]]
            tests = [replace(t, test=f"({i}) {t.test}") for i, fit in enumerate(fits, start=1)
                     for t in decoupling_tests(fit)]
            results.setdefault("elasticity", {})[p] = [f.to_dict() for f in fits]
            fragments.append(writer.table(f"elasticity_{p}", lambda f, fs=fits, pp=p: regression_table(
                fs, f, title=f"Elasticity of {pp} with respect to {spec.activity}", notes=notes)))
            fragments.append(writer.table(f"elasticity_tests_{p}", lambda f, ts=tests: test_table(
                ts, f, title="One-sided decoupling tests")))
        return Section("Elasticities", tuple(fragments))

    def do_roots() -> Section:
        fragments = []
        base = panel.window(spec.window) if spec.window else panel
        for column in [*pressures, spec.activity]:
            work = base.with_log(column)
            res = root_battery(work, f"log_{column}", tests=tuple(analyses["roots"]))
            results.setdefault("roots", {})[column] = res.to_dict()
            fragments.append(writer.table(f"roots_{column}", lambda f, r=res: render_frame(
                r.to_frame() if f in ("csv", "json") else r.decision_table(), f,
                title=f"Unit-root battery, log {column} (p-values; decision at 5 %)",
                index=False, notes=notes)))
        return Section("Unit roots", tuple(fragments))

    def do_dependence() -> Section:
        tests = []
        base = panel.window(spec.window) if spec.window else panel
        for column in pressures:
            tests.append(pesaran_cd_test(base.with_log(column), f"log_{column}"))
        results["dependence"] = [t.to_dict() for t in tests]
        return Section("Cross-sectional dependence", (writer.table(
            "dependence", lambda f: test_table(tests, f, title="Pesaran CD test")),))

    def do_convergence() -> Section | None:
        if not spec.population:
            raise DataError("convergence needs [roles] population (per-capita pressure).")
        work = panel.with_per_capita(pressures[0], spec.population)
        column = f"{pressures[0]}_per_capita"
        fragments, figures = [], []
        chosen = analyses["convergence"]
        if "beta" in chosen:
            beta = beta_convergence(work, column, window=spec.window)
            results["beta_convergence"] = beta.to_dict()
            fragments.append(writer.table("beta_convergence", lambda f: test_table(
                [beta.test], f, title=f"Beta convergence of {column}",
                notes=[f"Speed {beta.speed:.4f} a year, half-life {beta.half_life:.1f} years."])))
        if "sigma" in chosen:
            sigma = sigma_convergence(work, column, window=spec.window)
            results["sigma_convergence"] = sigma.to_dict()
            fragments.append(writer.table("sigma_convergence", lambda f: test_table(
                [sigma.trend_test, *sigma.first_last_tests], f, title="Sigma convergence")))
        if "stochastic" in chosen:
            stoch = stochastic_convergence(work, column, window=spec.window)
            results["stochastic_convergence"] = stoch.to_dict()
            fragments.append(writer.table("stochastic_convergence", lambda f: render_frame(
                stoch.table, f, index=False, title=f"Stochastic convergence of {column}")))
        if "clubs" in chosen:
            clubs = club_convergence(work, column, window=spec.window)
            results["clubs"] = clubs.to_dict()
            fragments.append(writer.table("clubs", lambda f: render_frame(
                clubs.membership().reset_index(), f, index=False,
                title=f"Phillips-Sul clubs (overall log t {clubs.overall.statistic:.3f})")))
            if spec.figures:
                figures.append(writer.figure(clubs.plot(), "club_transitions"))
        return Section("Convergence", tuple(fragments), tuple(figures))

    def do_decomposition() -> Section | None:
        if not spec.population:
            raise DataError("the Kaya decomposition needs [roles] population.")
        res = kaya(panel, pressures[0], population=spec.population, activity=spec.activity,
                      energy=spec.energy, window=spec.window)
        results["decomposition"] = res.to_dict()
        fragment = writer.table("decomposition", lambda f: render_frame(
            res.to_frame("additive"), f, title=f"LMDI-I decomposition of the change in "
            f"{pressures[0]}, {res.window[0]}-{res.window[1]}", notes=notes))
        figures = ()
        if spec.figures:
            effects = res.to_frame("additive").loc[["total"], list(res.factors)]
            figures = (writer.figure(figs.decomposition_figure(effects, "Kaya effects, all units"),
                                     "decomposition"),)
        return Section("Decomposition", (fragment,), figures)

    runners = {"grade": do_grade, "rates": do_rates, "elasticity": do_elasticity,
               "roots": do_roots, "dependence": do_dependence, "convergence": do_convergence,
               "decomposition": do_decomposition}
    for name in ("grade", "rates", "elasticity", "roots", "dependence", "convergence",
                 "decomposition"):
        if analyses.get(name):
            step(name, runners[name])
    sections.append(Section("Audit: data not used", (writer.table(
        "audit", lambda f: audit_table(panel.audit, f, notes=notes)),)))
    return _finish(spec, folder, writer, results, sections, started, clock, grade_holder)


def _finish(spec: StudySpec, folder: Path, writer: _Writer, results: dict[str, Any],
            sections: list[Section], started: datetime, clock: float,
            grade_holder: dict[str, Any]) -> StudyResult:
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
    return StudyResult(folder=folder, files=tuple(files), results=results,
                       grade=grade_holder.get("result"))


def _intensity_figure(writer: _Writer, panel: Panel, unit: str, pressure: str, spec: StudySpec,
                      window: tuple[int, int], results: dict[str, Any]) -> None:
    """Log intensity of one unit with its fitted trend regimes and break-date intervals."""
    column = f"{pressure}_per_{spec.activity}"
    work = panel.with_intensity(pressure, spec.activity).with_log(column)
    series = work.series(unit, f"log_{column}").loc[window[0]:window[1]].dropna()
    options = {k: v for k, v in spec.breaks.items() if k in ("max_breaks", "trim")}
    try:
        found = find_breaks(series, model="trend", **options)
    except EvidenceError as exc:
        results.setdefault("figures_not_drawn", {})[f"intensity {unit}"] = str(exc)
        return
    writer.figure(found.plot(), f"intensity_{_slug(unit)}")


def _slug(text: str) -> str:
    import re

    return re.sub(r"[^A-Za-z0-9]+", "-", text).strip("-").lower() or "unit"
