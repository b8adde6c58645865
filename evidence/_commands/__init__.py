"""Commands of the ``evidence`` command line beyond demo, inspect and rates.

Each module here (not starting with ``_``) defines ``command``, a ``click.Command``; they are
added to the command group in module-name order. A command only parses options, calls the public
API, formats and writes: no statistics are computed here.
"""

from __future__ import annotations

import importlib
import pkgutil

import click

__all__ = ["add_commands"]


def add_commands(group: click.Group) -> None:
    """Add every ``command`` defined in this package's public modules to ``group``."""
    for info in sorted(pkgutil.iter_modules(__path__), key=lambda m: m.name):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{__name__}.{info.name}")
        group.add_command(module.command)
