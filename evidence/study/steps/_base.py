"""What a study step hands back: the tables and figures of its report section and its results.

A step computes; it writes nothing. The runner writes every table in every requested format and
draws every figure (lazily, one at a time, closing each), so the output folder is written in one
place and a step stays a small pure function ``(panel, spec) -> StepOutput``.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

from evidence.panel import Panel
from evidence.study.spec import StudySpec

__all__ = ["Step", "StepOutput", "TableOut", "FigureOut", "data_notes", "slug"]


@dataclass(frozen=True)
class TableOut:
    """A table written as ``tables/<name>.<ext>`` in every format; ``render(fmt)`` gives its text."""

    name: str
    render: Callable[[str], str]


@dataclass(frozen=True)
class FigureOut:
    """A figure written as ``figures/<name>.png`` and ``.svg``; ``draw()`` makes it.

    ``in_report`` puts the PNG into the report section. When drawing fails on the data, the
    reason is recorded in ``results.json`` under ``figures_not_drawn[label]``.
    """

    name: str
    draw: Callable[[], Any]
    label: str = ""
    in_report: bool = False


@dataclass(frozen=True)
class StepOutput:
    """One report section (title, tables, figures, note) and its entries of ``results.json``.

    ``value`` is a result object the runner hands back to the caller (the grade).
    """

    title: str
    tables: tuple[TableOut, ...] = ()
    figures: tuple[FigureOut, ...] = ()
    note: str = ""
    results: Mapping[str, Any] = field(default_factory=dict)
    value: Any = None


#: A study step: the loaded panel and the validated spec in, a section and its results out.
Step = Callable[[Panel, StudySpec], StepOutput]


def data_notes(spec: StudySpec) -> list[str]:
    """The note on the data source every table of the study carries (empty without a source)."""
    source = " ".join(s for s in (spec.source, spec.release and f"(release {spec.release})") if s)
    return [f"Data: {source}"] if source else []


def slug(text: str) -> str:
    """A file-name fragment from a unit or column name."""
    return re.sub(r"[^A-Za-z0-9]+", "-", text).strip("-").lower() or "unit"
