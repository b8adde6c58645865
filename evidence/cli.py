"""The command line: parses options, calls the public API, formats, exits.

Exit codes: 0 success; 2 bad input or usage (one line on stderr, no traceback; ``--debug`` shows
it); 1 an internal failure.
"""

from __future__ import annotations

import contextlib
import os
import signal
import sys
import traceback
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import click

from evidence._cautions import CAUTION
from evidence._commands import add_commands
from evidence._commands._common import (
    basis_option,
    data_options,
    emit,
    format_options,
    load,
    progress_bar,
    quiet_option,
    terminal_safe,
    with_basis,
)
from evidence._commands._profile import profiling
from evidence._files import DEFAULT_MAX_MB
from evidence._version import __version__
from evidence.errors import EvidenceError
from evidence.indicators import rates
from evidence.parallel import one_blas_thread, reporting
from evidence.study import run_demo, run_study
from evidence.study.spec import check_executor
from evidence.tables import audit_table, rates_table, render_frame

__all__ = ["main", "cli"]

PROG = "evidence"


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--debug", is_flag=True, help="Show the full traceback of an error.")
@click.option("--max-input-mb", type=click.FloatRange(min=0, min_open=True), default=None,
              help=f"Largest input file read, in MB [default: EVIDENCE_MAX_INPUT_MB or "
                   f"{DEFAULT_MAX_MB}].")
@click.version_option(__version__, prog_name=PROG)
def cli(debug: bool, max_input_mb: float | None) -> None:
    """Statistical evidence on decoupling and convergence, for papers and reports."""
    if max_input_mb is not None:
        os.environ["EVIDENCE_MAX_INPUT_MB"] = repr(max_input_mb)


class Terminated(BaseException):
    """SIGTERM arrived: unwind (an output folder being written is removed), then exit 143."""


def _terminate(signum: int, frame: object) -> None:
    raise Terminated()


def _install_signals() -> dict[int, Any]:
    """SIGTERM unwinds like an error; SIGXFSZ (a file-size limit) becomes an error on write."""
    previous: dict[int, Any] = {}
    for signum, handler in ((signal.SIGTERM, _terminate), (signal.SIGXFSZ, signal.SIG_IGN)):
        with contextlib.suppress(ValueError, OSError):  # not the main thread
            previous[signum] = signal.signal(signum, handler)
    return previous


def _one_line(text: str) -> str:
    return terminal_safe(" ".join(str(text).split()))


_EXECUTOR_HELP = ("Where parallel work runs: serial, processes, dask, or a Dask scheduler address "
                  "(tcp://host:8786). Results are the same whichever runs them.")


@cli.command()
@click.option("--out", type=click.Path(file_okay=False, path_type=Path),
              default=Path("evidence-demo"), show_default=True, help="Results folder.")
@click.option("--executor", default=None, help=_EXECUTOR_HELP + " [default: serial]")
@click.option("--overwrite", is_flag=True,
              help="Replace the folder even if it holds files evidence did not write.")
@quiet_option
def demo(out: Path, executor: str | None, overwrite: bool, quiet: bool) -> None:
    """Run the main job on the bundled demo panel (an invented scenario) and write the results."""
    executor = None if executor is None else check_executor(executor, "--executor")
    progress = progress_bar("demo study: analyses", quiet=quiet)
    try:
        with reporting(progress.units if progress else None):
            result = run_demo(out, executor=executor, overwrite=overwrite,
                              progress=progress.update if progress else None)
    finally:
        if progress:
            progress.close()
    panel, study = result["panel"], result["study"]
    click.echo(f"Demo panel: {len(panel.units)} invented regions, "
               f"{panel.years[0]}-{panel.years[-1]}.")
    if study.grade is not None:
        click.echo("")
        click.echo(terminal_safe(study.grade.summary()))
    for name, reason in study.results.get("not_run", {}).items():
        click.echo(terminal_safe(f"not run: {name}: {reason}"))
    click.echo("")
    click.echo(f"Wrote {len(result['files'])} files to {result['folder']}/: report.html, "
               "tables/, figures/, results.json, manifest.json, and the demo data and study file.")
    click.echo("")
    click.echo(terminal_safe(next_steps(str(result["folder"]))))
    click.echo("")
    click.echo(CAUTION)


def next_steps(folder: str) -> str:
    """What to do after the demo: read the report, then run the same study on one's own data."""
    data, spec = f"{folder}/demo_panel.csv", f"{folder}/demo_study.toml"
    return "\n".join([
        "Next steps:",
        f"  1. Open {folder}/report.html in a browser: the verdict and the grade figure come "
        "first; every table is in tables/ (LaTeX, Markdown, HTML, CSV, JSON).",
        f"  2. Copy {spec}, point [data] file at your own panel (one row per unit and year), "
        "name your columns under [roles] and [[pressures]], then run:",
        "       evidence study my_study.toml --out results",
        "  3. Or try one analysis at a time on the demo data, for example:",
        f"       evidence inspect {data}",
        f"       evidence grade {data} --pressure ghg_territorial --activity gdp "
        "--consumption ghg_territorial=ghg_consumption --window 1995:2023",
        f"       evidence breaks {data} --column ghg_territorial --per gdp --log",
        "  evidence --help lists every command; evidence COMMAND --help its options."])


@cli.command()
@click.argument("spec", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--out", type=click.Path(file_okay=False, path_type=Path),
              default=Path("results"), show_default=True, help="Results folder.")
@click.option("--executor", default=None,
              help=_EXECUTOR_HELP + " [default: the study file's [run] executor, else serial]")
@click.option("--overwrite", is_flag=True,
              help="Replace the folder even if it holds files evidence did not write.")
@quiet_option
@click.option("--profile", is_flag=True,
              help="Print where the time went (per step, then the hot spots) on stderr.")
def study(spec: Path, out: Path, executor: str | None, overwrite: bool, quiet: bool,
          profile: bool) -> None:
    """Run a study file (TOML): report, tables, figures, results.json, manifest."""
    executor = None if executor is None else check_executor(executor, "--executor")
    progress = progress_bar("study: analyses", quiet=quiet)
    try:
        with profiling(profile), reporting(progress.units if progress else None):
            result = run_study(spec, out, executor=executor, overwrite=overwrite,
                               progress=progress.update if progress else None)
    finally:
        if progress:
            progress.close()
    click.echo(terminal_safe(result.summary()))
    click.echo(CAUTION)


@cli.command()
@data_options
@click.option("--format", "fmt", type=click.Choice(["text", "markdown", "json"], case_sensitive=False),
              default="text", show_default=True, help="Output format.")
@click.option("--output", "-o", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Write to this file instead of the terminal.")
def inspect(data: Path, unit_col: str | None, time_col: str | None, layout: str, fmt: str,
            output: Path | None) -> None:
    """Show a panel's units, years, variables, gaps and audit."""
    panel = load(data, unit_col, time_col, layout)
    years = panel.years
    facts = [("source", str(data)), ("unit column", panel.unit_name),
             ("time column", panel.time_name), ("units", str(len(panel.units))),
             ("years", f"{years[0]}-{years[-1]} ({len(years)})"),
             ("balanced", "yes" if panel.is_balanced else "no"),
             ("unit list", ", ".join(panel.units))]
    if fmt.lower() == "json":
        import json

        from evidence._json import json_safe
        payload = {"facts": dict(facts), "variables": json_safe(panel.describe().to_dict("records")),
                   "audit": json_safe(panel.audit.to_dict("records"))}
        emit(json.dumps(payload, indent=2) + "\n", output)
        return
    overview = render_frame(_facts_frame(facts), fmt, title="Panel", index=False)
    variables = render_frame(panel.describe(), fmt, title="Variables", index=False)
    audit = audit_table(panel.audit, fmt)
    emit("\n".join([overview, variables, audit]), output)


def _facts_frame(facts: Sequence[tuple[str, str]]):
    import pandas as pd

    return pd.DataFrame(facts, columns=["item", "value"])


@cli.command("rates")
@data_options
@click.option("--pressure", required=True, help="Pressure column (e.g. emissions).")
@click.option("--activity", required=True, help="Activity column (e.g. real GDP).")
@click.option("--window", default=None, help="Years START:END, inclusive (default: common span).")
@click.option("--hac-lags", type=int, default=None, help="Newey-West lags (default: rule of thumb).")
@basis_option
@format_options
def rates_command(data: Path, unit_col: str | None, time_col: str | None, layout: str,
                  pressure: str, activity: str, window: str | None, hac_lags: int | None,
                  basis: str | None, fmt: str, output: Path | None) -> None:
    """Trend growth, Tapio class and OECD decoupling factor per unit."""
    panel = with_basis(load(data, unit_col, time_col, layout), {pressure: basis} if basis else {})
    result = rates(panel, pressure, activity, window=window, hac_lags=hac_lags)
    emit(rates_table(result, fmt.lower()), output)


add_commands(cli)


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``evidence`` console script; returns the exit code.

    0 success; 2 bad input or usage (one line on stderr); 1 an internal failure; 143 terminated
    by SIGTERM (after removing any half-written output folder).
    """
    args = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in args
    previous = _install_signals()
    limit = os.environ.get("EVIDENCE_MAX_INPUT_MB")
    try:
        with one_blas_thread():
            return _dispatch(args, debug)
    finally:
        for signum, handler in previous.items():
            signal.signal(signum, handler)
        if limit is None:
            os.environ.pop("EVIDENCE_MAX_INPUT_MB", None)
        else:
            os.environ["EVIDENCE_MAX_INPUT_MB"] = limit


def _dispatch(args: list[str], debug: bool) -> int:
    try:
        cli.main(args=args, prog_name=PROG, standalone_mode=False)
    except click.exceptions.Exit as exc:
        return int(exc.exit_code)
    except click.exceptions.Abort:
        click.echo(f"{PROG}: aborted", err=True)
        return 1
    except Terminated:
        click.echo(f"{PROG}: terminated; no output was left half-written", err=True)
        return 128 + signal.SIGTERM
    except click.UsageError as exc:
        click.echo(f"{PROG}: usage error: {_one_line(exc.format_message())} (see '{PROG} "
                   "--help')", err=True)
        return 2
    except click.ClickException as exc:
        click.echo(f"{PROG}: error: {_one_line(exc.format_message())}", err=True)
        return 2
    except EvidenceError as exc:
        if debug:
            traceback.print_exc()
        click.echo(f"{PROG}: error: {_one_line(str(exc))}", err=True)
        return 2
    except Exception as exc:  # an internal failure: say so in one line
        if debug:
            traceback.print_exc()
        click.echo(f"{PROG}: internal error: {type(exc).__name__}: {_one_line(str(exc))} "
                   "(re-run with --debug for the traceback)", err=True)
        return 1
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
