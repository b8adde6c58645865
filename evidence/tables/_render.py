"""Rendering a labelled table to text, Markdown, LaTeX (booktabs), HTML, CSV or JSON.

Only formatting happens here: cells arrive computed. Every data-derived string is escaped for the
target format (HTML entities; LaTeX special characters; Markdown markup characters, with ``<``,
``>`` and ``&`` as entities), and no output carries a date, so the same input renders to the same
bytes. The table functions build a :class:`Table` (heads, rows of cells, notes) and hand it to
:func:`render`; :func:`render_frame` does the same for any DataFrame.
"""

from __future__ import annotations

import json
import re
import textwrap
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evidence._cautions import CAUTION
from evidence._json import json_safe
from evidence._validation import check_choice, check_int
from evidence.errors import SpecError
from evidence.tables._cells import (
    CONTROL_CHARS,
    NUMERIC_TEXT,
    Number,
    html_escape,
    is_missing,
    latex_escape,
    markdown_escape,
    minus,
    table_pvalue,
)
from evidence.tables._latex import FITS, render_latex
from evidence.tables._names import check_labels, header_name, relabel

__all__ = ["FORMATS", "render_frame", "latex_escape", "format_cell", "Table", "render",
           "check_label", "finish_notes"]

#: The formats every table renders to (``fmt=``).
FORMATS = ("text", "markdown", "latex", "html", "csv", "json")
_PVALUE_HEAD = re.compile(r"(?:^|[\s_(])(?:p|p-?value|pvalue)(?:$|[\s_)])", re.I)
_LABEL = re.compile(r"[A-Za-z0-9:._/-]+")


@dataclass
class Table:
    """A table for people: heads, rows of cells (text, :class:`Number` or None), notes.

    ``numeric`` marks the columns aligned on the decimal point; ``rules`` the row positions
    before which a rule separates groups of rows (the statistics below the coefficients).
    """

    header: list[str]
    rows: list[list[Any]]
    numeric: list[bool]
    title: str = ""
    notes: list[str] = field(default_factory=list)
    rules: tuple[int, ...] = ()
    label: str | None = None
    fit: str = "auto"


def format_cell(value: Any, digits: int = 3) -> str:
    """A cell as text on one line: fixed decimals for floats, empty for missing."""
    if isinstance(value, Number):
        return value.plain()
    if is_missing(value):
        return ""
    if isinstance(value, float):
        return f"{value:.{digits}f}"
    text = str(value)
    return " ".join(CONTROL_CHARS.sub(" ", text).split()) if CONTROL_CHARS.search(text) else text


def check_label(label: Any) -> str | None:
    """A LaTeX label (letters, digits and ``: . _ / -``), or None for the default."""
    if label is None:
        return None
    if not isinstance(label, str) or not _LABEL.fullmatch(label):
        hint = " (to rename variables, use labels=)" if isinstance(label, Mapping) else ""
        raise SpecError(f"label must be a LaTeX label such as 'tab:elasticity' (letters, digits "
                        f"and : . _ / -); got {label!r}{hint}.")
    return label


def finish_notes(notes: Sequence[str], caution: bool, labels: Mapping[str, str]) -> list[str]:
    """Notes relabelled, each once, in order; the caution last when asked for (or when a caller
    passed it among the notes)."""
    caution = caution or any(note == CAUTION for note in notes)
    out: list[str] = []
    for note in notes:
        text = relabel(str(note), labels)
        if text and text not in out and note != CAUTION:
            out.append(text)
    if caution:
        out.append(CAUTION)
    return out


def _number_column(values: pd.Series, name: str, digits: int) -> list[Any]:
    """Float cells with a column-wide style: p-values, whole numbers, large values grouped."""
    finite = values[np.isfinite(values.to_numpy(dtype=float))]
    if len(finite) == 0:
        return [""] * len(values)
    if _PVALUE_HEAD.search(str(name)) and finite.between(0, 1).all():
        return [table_pvalue(v, 3) for v in values]
    if (finite == finite.round()).all() and finite.abs().max() < 1e15:
        return ["" if is_missing(v) else Number(v, 0) for v in values]
    if finite.abs().max() >= 1000:
        return ["" if is_missing(v) else Number(v, min(digits, 1), thousands=True) for v in values]
    return ["" if is_missing(v) else Number(v, digits) for v in values]


def _frame_cells(column: pd.Series, name: str, digits: int) -> list[Any]:
    if pd.api.types.is_bool_dtype(column):
        return ["yes" if v else "no" for v in column]
    if pd.api.types.is_integer_dtype(column):
        return ["" if is_missing(v) else Number(float(v), 0) for v in column]
    if pd.api.types.is_float_dtype(column):
        return _number_column(column.astype(float), name, digits)
    return [v if isinstance(v, Number) else format_cell(v, digits) for v in column]


def is_numeric_column(cells: Sequence[Any]) -> bool:
    """Numbers (or text that reads as one) in every filled cell, and at least one filled."""
    filled = [c for c in cells if not (c is None or c == "")]
    return bool(filled) and all(isinstance(c, Number) or NUMERIC_TEXT.fullmatch(str(c))
                                for c in filled)


def render_frame(frame: pd.DataFrame, fmt: str = "text", *, title: str = "",
                 notes: Sequence[str] = (), digits: int = 3, index: bool = True,
                 labels: Mapping[str, str] | None = None, label: str | None = None,
                 caution: bool = False, fit: str = "auto") -> str:
    """Render ``frame`` in one of :data:`FORMATS`.

    ``csv`` and ``json`` carry the raw values (full precision) for machines; the other formats
    carry ``digits`` decimals (p-value columns three, with ``<0.001``; columns of values of a
    thousand or more one decimal with thousands separators), the title and the notes for people.
    ``labels`` renames columns, row names and names in the title and notes
    (``{"log_gdp": "ln GDP"}``); ``label`` is the LaTeX ``\\label`` (default from the title);
    ``caution`` adds the caution note once; ``fit`` is how a wide LaTeX table fits the page:
    ``"auto"``, ``"shrink"`` (to the line width, only when wider), ``"landscape"`` or ``"none"``.
    """
    fmt = check_choice("format", fmt, FORMATS)
    digits = check_int("digits", digits, minimum=0, maximum=12)
    labels = check_labels(labels)
    label = check_label(label)
    fit = check_choice("fit", fit, FITS)
    table = frame.reset_index() if index else frame.copy()
    all_notes = finish_notes(notes, bool(caution), labels)
    if fmt == "csv":
        return table.to_csv(index=False, lineterminator="\n")
    if fmt == "json":
        payload = {"title": relabel(title, labels), "columns": [str(c) for c in table.columns],
                   "rows": json_safe(table.to_dict(orient="records")), "notes": all_notes}
        return json.dumps(payload, indent=2, sort_keys=False, allow_nan=False) + "\n"
    n_stub = frame.index.nlevels if index else 0
    columns = [_frame_cells(table.iloc[:, j], str(c), digits) for j, c in enumerate(table.columns)]
    for j in range(len(columns)):
        rename = (lambda s: relabel(s, labels)) if j < n_stub else (lambda s: labels.get(s, s))
        columns[j] = [rename(c) if isinstance(c, str) and c else c for c in columns[j]]
    rows = [list(r) for r in zip(*columns, strict=True)] if columns else []
    spec = Table(header=[header_name(str(c), labels) for c in table.columns], rows=rows,
                 numeric=[is_numeric_column(col) for col in columns],
                 title=relabel(title, labels), notes=all_notes, label=label, fit=fit)
    return render(spec, fmt)


def render(table: Table, fmt: str) -> str:
    """A :class:`Table` in text, Markdown, LaTeX or HTML."""
    fmt = check_choice("format", fmt, FORMATS[:4])
    return {"text": _text, "markdown": _markdown, "latex": render_latex, "html": _html}[fmt](table)


def _aligned(cells: list[str], numeric: bool) -> list[str]:
    """Numeric text cells aligned on the decimal point (text cells right-aligned)."""
    if not numeric:
        return cells
    parts: list[tuple[str, str] | None] = []
    for c in cells:
        match = NUMERIC_TEXT.search(c)
        if match:
            point = c.find(".", match.start()) if "." in c[match.start():match.end()] else match.end()
            parts.append((c[:point], c[point:]))
        else:
            parts.append(None)
    left = max([len(p[0]) for p in parts if p] + [0])
    right = max([len(p[1]) for p in parts if p] + [0])
    width = max([left + right] + [len(c) for c, p in zip(cells, parts, strict=True) if p is None])
    return [(p[0].rjust(left) + p[1].ljust(right)).rjust(width) if p else c.center(width)
            for c, p in zip(cells, parts, strict=True)]


def _plain(value: Any, numeric: bool) -> str:
    text = format_cell(value)
    return minus(text) if numeric and not isinstance(value, Number) and NUMERIC_TEXT.fullmatch(text) else text


def _text(t: Table) -> str:
    body_cols = [_aligned([_plain(r[j], n) for r in t.rows], n) for j, n in enumerate(t.numeric)]
    heads = []
    for h, col in zip(t.header, body_cols, strict=True):
        width = max([len(c) for c in col] + [max((len(w) for w in h.split()), default=0), 16])
        heads.append(textwrap.wrap(h, width=width) or [""])
    depth = max((len(h) for h in heads), default=1)
    heads = [[""] * (depth - len(h)) + h for h in heads]
    widths = [max([len(c) for c in col] + [len(x) for x in h])
              for col, h in zip(body_cols, heads, strict=True)]

    def line(cells: list[str]) -> str:
        return "  ".join(c.rjust(w) if num else c.ljust(w)
                         for c, w, num in zip(cells, widths, t.numeric, strict=True)).rstrip()

    rule = "-" * (sum(widths) + 2 * (len(widths) - 1))
    out = [t.title] if t.title else []
    out += [line([h[k] for h in heads]) for k in range(depth)] + [rule]
    for i in range(len(t.rows)):
        if i in t.rules and i > 0:
            out.append(rule)
        out.append(line([col[i] for col in body_cols]))
    out.append(rule)
    for note in t.notes:
        out += textwrap.wrap(note, width=100) or [""]
    return "\n".join(out) + "\n"


def _md_cell(value: Any) -> str:
    if isinstance(value, Number):
        return value.html()
    text = format_cell(value)
    return markdown_escape(minus(text) if NUMERIC_TEXT.fullmatch(text) else text)


def _markdown(t: Table) -> str:
    out = [f"**{markdown_escape(t.title)}**", ""] if t.title else []
    out.append("| " + " | ".join(markdown_escape(h) for h in t.header) + " |")
    out.append("|" + "|".join("---:" if num else ":---" for num in t.numeric) + "|")
    out += ["| " + " | ".join(_md_cell(c) for c in row) + " |" for row in t.rows]
    for note in t.notes:
        out += ["", markdown_escape(note)]
    return "\n".join(out) + "\n"


def _html_cell(value: Any, numeric: bool) -> str:
    if isinstance(value, Number):
        inner = value.html()
    else:
        text = format_cell(value)
        inner = html_escape(minus(text) if numeric and NUMERIC_TEXT.fullmatch(text) else text)
    return f'<td style="text-align:right">{inner}</td>' if numeric else f"<td>{inner}</td>"


def _html(t: Table) -> str:
    out = ["<table>"]
    if t.title:
        out.append(f"<caption>{html_escape(t.title)}</caption>")
    out.append("<thead><tr>" + "".join(f"<th>{html_escape(h)}</th>" for h in t.header)
               + "</tr></thead>")
    out.append("<tbody>")
    for i, row in enumerate(t.rows):
        if i in t.rules and i > 0:
            out += ["</tbody>", "<tbody>"]
        out.append("<tr>" + "".join(_html_cell(c, n) for c, n in zip(row, t.numeric, strict=True)) + "</tr>")
    out.append("</tbody>")
    if t.notes:
        out.append("<tfoot>" + "".join(f'<tr><td colspan="{len(t.header)}">{html_escape(n)}</td></tr>'
                                         for n in t.notes) + "</tfoot>")
    out.append("</table>")
    return "\n".join(out) + "\n"
