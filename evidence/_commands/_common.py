"""Pieces shared by the command-line commands: data and format options, output, progress."""

from __future__ import annotations

import os
import re
import sys
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click

from evidence.errors import DataError
from evidence.panel import Panel, load_panel
from evidence.tables import FORMATS

__all__ = ["data_options", "format_options", "emit", "load", "progress_bar", "terminal_safe",
           "basis_option", "window_option", "quiet_option", "with_basis"]

# Control characters (C0 but tab and newline, DEL, C1) and the bidirectional overrides that can
# make a terminal show something other than the text.
_UNSAFE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")


def terminal_safe(text: str) -> str:
    """``text`` with control characters shown as escapes (``\\x1b``), so data-derived names (a
    unit called ``"\\x1b[2J"``, say) cannot drive the terminal."""
    return _UNSAFE.sub(lambda m: f"\\x{ord(m.group()):02x}" if ord(m.group()) < 0x100
                       else f"\\u{ord(m.group()):04x}", text)


def data_options(func: Callable) -> Callable:
    """Add the DATA argument and --unit, --time, --layout options."""
    func = click.option("--layout", type=click.Choice(["auto", "long", "wide"], case_sensitive=False),
                        default="auto", show_default=True,
                        help="long: one row per unit and year; wide: one column per year.")(func)
    func = click.option("--time", "time_col", default=None,
                        help="Time column (default: 'year', else 'time').")(func)
    func = click.option("--unit", "unit_col", default=None,
                        help="Unit column (default: 'unit', else the first column).")(func)
    return click.argument("data", type=click.Path(dir_okay=False, path_type=Path))(func)


def format_options(func: Callable) -> Callable:
    """Add --format (every table format) and --output."""
    func = click.option("--output", "-o", type=click.Path(dir_okay=False, path_type=Path),
                        default=None, help="Write to this file instead of the terminal.")(func)
    return click.option("--format", "fmt", type=click.Choice(FORMATS, case_sensitive=False),
                        default="text", show_default=True, help="Output format.")(func)


def basis_option(func: Callable) -> Callable:
    """Add --basis: the accounting basis of the pressure column(s) (shown in table notes)."""
    from evidence.panel import BASES

    return click.option("--basis", type=click.Choice(list(BASES), case_sensitive=False),
                        default=None,
                        help="Accounting basis of the pressure column(s), stated in the table "
                             "notes [default: not stated; with --consumption T=C, T is "
                             "territorial and C consumption].")(func)


def window_option(func: Callable) -> Callable:
    """Add --window START:END (inclusive years)."""
    return click.option("--window", default=None,
                        help="Years START:END, inclusive (default: every year).")(func)


def quiet_option(func: Callable) -> Callable:
    """Add --quiet: no progress bar."""
    return click.option("--quiet", "-q", is_flag=True,
                        help="No progress bar on stderr (it is shown only on a terminal).")(func)


def with_basis(panel: Panel, columns: dict[str, str]) -> Panel:
    """The panel with the accounting basis of ``columns`` (``{column: basis}``) stated."""
    if not columns:
        return panel
    stated = dict(panel.meta.get("basis") or {})
    for column, basis in columns.items():
        panel.require(column)
        stated[column] = basis.lower()
    return Panel(panel.frame, audit=panel.audit, meta={**panel.meta, "basis": stated})


def emit(text: str, output: Path | None) -> None:
    """Print ``text``, or write it to ``output`` and say so on stderr."""
    if output is None:
        click.echo(terminal_safe(text), nl=False)
        return
    try:  # written whole or not at all: a temporary file beside it, then renamed over it
        handle, temporary = tempfile.mkstemp(dir=output.parent or Path("."),
                                             prefix=f".{output.name[:40]}.", suffix=".tmp")
        try:
            with os.fdopen(handle, "w", encoding="utf-8") as stream:
                stream.write(text)
            os.chmod(temporary, 0o666 & ~_umask())  # the mode a plain write would give
            os.replace(temporary, output)
        except BaseException:
            Path(temporary).unlink(missing_ok=True)
            raise
    except OSError as exc:
        raise DataError(f"cannot write '{output}': {exc.strerror or exc}.") from None
    click.echo(f"wrote {output}", err=True)


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def load(data: Path, unit_col: str | None, time_col: str | None, layout: str) -> Panel:
    """Load the panel named on the command line."""
    return load_panel(data, unit=unit_col, time=time_col, layout=layout)  # type: ignore[arg-type]


class _Progress:
    def __init__(self, label: str) -> None:
        from rich.console import Console
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

        self._bar = Progress(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
                             TimeElapsedColumn(), console=Console(stderr=True), transient=True)
        self._task = self._bar.add_task(label, total=None)
        self._units: dict[str, Any] = {}
        self._bar.start()

    def update(self, done: int, total: int) -> None:
        self._bar.update(self._task, completed=done, total=total)

    def units(self, label: str, done: int, total: int) -> None:
        """A second line for a long per-unit step: units done / total, rate and time left."""
        import time

        now = time.monotonic()
        if label not in self._units or done == 0:
            if label in self._units:
                self._bar.remove_task(self._units[label][0])
            self._units[label] = (self._bar.add_task(label, total=total), now)
        task, start = self._units[label]
        rate = done / max(now - start, 1e-9)
        left = f", {(total - done) / rate:.0f} s left" if 0 < done < total else ""
        self._bar.update(task, completed=done, total=total,
                         description=f"{label} ({rate:.1f}/s{left})" if done else label)
        if done >= total:
            self._bar.remove_task(task)
            del self._units[label]

    def close(self) -> None:
        self._bar.stop()


def progress_bar(label: str, *, quiet: bool = False) -> _Progress | None:
    """A progress bar on stderr when stderr is a terminal; nothing when piped, in CI or with
    ``quiet``. Standard output stays clean either way."""
    return None if quiet or not sys.stderr.isatty() else _Progress(label)
