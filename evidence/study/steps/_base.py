"""What a study step hands back: the tables and figures of its report section and its results.

A step computes; it writes nothing. The runner writes every table in every requested format and
draws every figure (lazily, one at a time, closing each), so the output folder is written in one
place and a step stays a small pure function ``(panel, spec) -> StepOutput``.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

from evidence.panel import Panel
from evidence.study.spec import StudySpec

__all__ = ["Step", "StepOutput", "TableOut", "FigureOut", "data_notes", "safe_name"]


@dataclass(frozen=True)
class TableOut:
    """A table written as ``tables/<name>.<ext>`` in every format; ``render(fmt)`` gives its text.

    ``source`` is the data-derived name (a column) behind the file name, kept in the manifest.
    """

    name: str
    render: Callable[[str], str]
    source: str | None = None


@dataclass(frozen=True)
class FigureOut:
    """A figure written as ``figures/<name>.png`` and ``.svg``; ``draw()`` makes it.

    ``in_report`` puts the PNG into the report section. When drawing fails on the data, the
    reason is recorded in ``results.json`` under ``figures_not_drawn[label]``. ``source`` is the
    data-derived name (a unit) behind the file name, kept in the manifest.
    """

    name: str
    draw: Callable[[], Any]
    label: str = ""
    in_report: bool = False
    source: str | None = None


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


_PLAIN = re.compile(r"[a-z0-9][a-z0-9_]{0,59}")


def safe_name(text: str) -> str:
    """A file-name fragment for a unit or column name: never empty, never colliding.

    A plain name (lower-case letters, digits and ``_``, at most 60 characters) is kept as it is;
    any other name becomes a slug of at most 40 characters plus ``-`` and the first 8 hex digits
    of the name's SHA-256. Plain names carry no ``-``, so they never meet a slug; two slugs meet
    only if their hashes do. (``"A b"`` → ``a-b-…``, ``"a-B"`` → ``a-b-…`` with another hash.)

    Examples
    --------
    >>> safe_name("ghg_territorial")
    'ghg_territorial'
    >>> safe_name("A b") != safe_name("a-B")
    True
    >>> safe_name("Ωμέγα").startswith("n-")
    True
    """
    if _PLAIN.fullmatch(text):
        return text
    stem = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")[:40].strip("-") or "n"
    return f"{stem}-{hashlib.sha256(text.encode('utf-8', 'surrogatepass')).hexdigest()[:8]}"
