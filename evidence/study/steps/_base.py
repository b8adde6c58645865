"""What a study step hands back: the tables and figures of its report section and its results.

A step computes; it writes nothing. The runner writes every table in every requested format and
draws every figure (lazily, one at a time, closing each), so the output folder is written in one
place and a step stays a small pure function ``(panel, spec) -> StepOutput``.
"""

from __future__ import annotations

import hashlib
import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

from evidence.panel import Panel
from evidence.study.spec import StudySpec

__all__ = ["Step", "StepOutput", "TableOut", "FigureOut", "data_notes", "safe_name", "p_words",
           "size_notes"]


@dataclass(frozen=True)
class TableOut:
    """A table written as ``tables/<name>.<ext>`` in every format.

    ``render(fmt, caution)`` gives its text: the runner asks for the caution note in every file
    (once per file) and leaves it out of the report, which carries it once at the top.
    ``source`` is the data-derived name (a column) behind the file name, kept in the manifest.
    ``shown``: ``"open"`` (in the report), ``"folded"`` (in the report, folded away under its
    caption) or ``"file"`` (only linked from the report); ``summary`` is the line that stands
    for a folded or linked table.
    """

    name: str
    # Called as render(fmt, caution); typed loosely because the steps bind their data as lambda
    # defaults, which mypy cannot infer against a fixed signature.
    render: Callable[..., str]
    source: str | None = None
    shown: str = "open"
    summary: str = ""


@dataclass(frozen=True)
class FigureOut:
    """A figure written as ``figures/<name>.png`` and ``.svg``; ``draw()`` makes it.

    ``in_report`` puts the PNG into the report section (``top``: into the answer the report opens
    with, beside the verdict); ``caption`` is its caption. When drawing fails on the data, the
    reason is recorded in ``results.json`` under ``figures_not_drawn[label]``. ``source`` is the
    data-derived name (a unit) behind the file name, kept in the manifest.
    """

    name: str
    draw: Callable[..., Any]  # called as draw(); loose for the same reason as TableOut.render
    label: str = ""
    in_report: bool = False
    source: str | None = None
    caption: str = ""
    top: bool = False


@dataclass(frozen=True)
class StepOutput:
    """One report section (title, tables, figures, note) and its entries of ``results.json``.

    ``lead`` are the section's opening paragraphs (plain text: what was tested, on which series,
    what it found, the decision rule); ``note`` a closing remark; ``more_figures`` says which
    figures are in ``figures/`` but not in the report. ``value`` is a result object the
    runner hands back to the caller (the grade).
    """

    title: str
    tables: tuple[TableOut, ...] = ()
    figures: tuple[FigureOut, ...] = ()
    note: str = ""
    lead: tuple[str, ...] = ()
    more_figures: str = ""
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


def p_words(p: float) -> str:
    """A p-value in running text: ``"p = 0.028"``, ``"p < 0.001"``, ``"p n/a"`` when missing.

    >>> p_words(0.0284), p_words(1e-9)
    ('p = 0.028', 'p < 0.001')
    """
    if p is None or not math.isfinite(float(p)):
        return "p n/a"
    return "p < 0.001" if p < 0.001 else f"p = {p:.3f}"


def _pct(value: float) -> str:
    return f"{100 * value:.1f} %"


def size_notes(results: Any) -> list[str]:
    """Which p-values are calibrated: one note per test table from each result's
    ``details["size"]`` (the size card's entry nearest the result's N and T).

    Tests without an entry are named together: their p-values were not checked by simulation at
    panels of this size.
    """
    from evidence.tables.tests import flatten_tests

    tests = flatten_tests(results)
    known: dict[str, dict[str, list[str]]] = {}
    unknown = []
    for res in tests:
        size = res.details.get("size") if isinstance(res.details, Mapping) else None
        if not res.applicable:
            continue
        if isinstance(size, Mapping) and "measured" in size:
            where = ", ".join(f"{k}={v}" for k, v in (("N", size.get("n_units")),
                                                      ("T", size.get("n_years"))) if v)
            state = "within 3 %–7.5 %" if size.get("controlled") else "OUTSIDE 3 %–7.5 %"
            known.setdefault(where, {}).setdefault(state, []).append(
                f"{res.test} {_pct(size['measured'])}")
        else:
            unknown.append(res.test)
    notes = []
    if known:
        # one clause per card point and state, so that a long test table keeps short notes
        parts = [f"at {where}, {state}: " + ", ".join(names)
                 for where, states in known.items() for state, names in states.items()]
        notes.append("Size at 5 % nominal, measured by Monte Carlo at the size card's point "
                     "nearest this N and T (docs/methods/size.md): " + "; ".join(parts) + ".")
    if unknown:
        notes.append("Not on the size card (p-values not checked by simulation at this N and T): "
                      + ", ".join(dict.fromkeys(unknown)) + ".")
    return notes
