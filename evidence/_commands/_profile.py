"""``evidence study --profile``: where a study spends its time, step by step, on stderr.

The study runs under :mod:`cProfile` (the standard library's profiler); afterwards the time of
each analysis step and of the writing of the outputs is printed, then the functions with the
most time of their own (the hot spots). Work sent to other processes (``--executor processes``
or ``dask``) is not seen by the profiler: profile with the serial executor.
"""

from __future__ import annotations

import cProfile
import pstats
import sys
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TextIO

__all__ = ["profiling", "profile_lines"]

#: Functions of the runner shown beside the steps (file stem, function): what they stand for.
_PARTS = {("runner", "_load"): "load and check the data",
          ("runner", "section"): "write tables and draw figures (all steps)",
          ("runner", "_write_outputs"): "write report.html and results.json",
          ("runner", "run_into"): "whole study"}


@contextmanager
def profiling(enabled: bool, stream: TextIO | None = None, top: int = 20) -> Iterator[None]:
    """Profile the block when ``enabled`` and print :func:`profile_lines` to ``stream``
    (stderr by default) when it ends, also when it ends with an error."""
    if not enabled:
        yield
        return
    profile = cProfile.Profile()
    profile.enable()
    try:
        yield
    finally:
        profile.disable()
        out = sys.stderr if stream is None else stream
        print("\n".join(profile_lines(pstats.Stats(profile), top)), file=out)


def profile_lines(stats: pstats.Stats, top: int = 20) -> list[str]:
    """Seconds per study step and runner part, then the ``top`` functions by own time."""
    table = stats.stats  # type: ignore[attr-defined]
    steps, parts = [], []
    for (filename, _line, function), (_cc, _nc, _own, cumulative, _callers) in table.items():
        path = Path(filename)
        if path.parent.name == "steps" and function == "run":
            steps.append((cumulative, path.stem))
        elif path.parent.name == "study" and (path.stem, function) in _PARTS:
            parts.append((cumulative, _PARTS[(path.stem, function)]))
    lines = ["Profile (cProfile; seconds of wall time, this process only)", "  steps:"]
    lines += [f"    {seconds:9.2f}  {name}" for seconds, name in sorted(steps, reverse=True)]
    lines += ["  runner:"] + [f"    {seconds:9.2f}  {name}" for seconds, name in sorted(parts)]
    lines.append(f"  hot spots (own time, top {top}):")
    ranked = sorted(table.items(), key=lambda item: item[1][2], reverse=True)[:top]
    for (filename, line, function), (_cc, calls, own, cumulative, _callers) in ranked:
        where = f"{Path(filename).parent.name}/{Path(filename).name}:{line}" if line else filename
        lines.append(f"    {own:9.2f}  {cumulative:9.2f} cum  {calls:8d} calls  {function} ({where})")
    return lines
