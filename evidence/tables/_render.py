"""Rendering a labelled table to text, Markdown, LaTeX (booktabs), HTML, CSV or JSON.

Only formatting happens here: cells arrive computed. Every data-derived string is escaped for the
target format (HTML entities; LaTeX special characters), and no output carries a date, so the same
input renders to the same bytes.
"""

from __future__ import annotations

import html
import json
import math
import re
import textwrap
from collections.abc import Sequence
from typing import Any

import pandas as pd

from evidence._json import json_safe
from evidence._validation import check_choice, check_int

__all__ = ["FORMATS", "render_frame", "latex_escape", "format_cell"]

FORMATS = ("text", "markdown", "latex", "html", "csv", "json")
_LATEX_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#",
                  "_": r"\_", "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}",
                  "^": r"\textasciicircum{}", "<": r"\textless{}", ">": r"\textgreater{}"}


_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f]+")


def latex_escape(text: str) -> str:
    """Escape LaTeX special characters in ``text``; line breaks and control characters become one
    space (a blank line would end the tabular's paragraph)."""
    return "".join(_LATEX_SPECIAL.get(ch, ch) for ch in _CONTROL.sub(" ", str(text)))


def format_cell(value: Any, digits: int = 3) -> str:
    """A cell as text: fixed decimals for floats, empty for missing."""
    if value is None:
        return ""
    if isinstance(value, float):
        if math.isnan(value):
            return ""
        return f"{value:.{digits}f}"
    try:
        if pd.isna(value):
            return ""
    except (TypeError, ValueError):
        pass
    return str(value)


def render_frame(frame: pd.DataFrame, fmt: str = "text", *, title: str = "",
                 notes: Sequence[str] = (), digits: int = 3, index: bool = True) -> str:
    """Render ``frame`` in one of :data:`FORMATS`.

    ``csv`` and ``json`` carry the raw values (full precision) for machines; the other formats
    carry ``digits`` decimals, the title and the notes for people.
    """
    fmt = check_choice("format", fmt, FORMATS)
    digits = check_int("digits", digits, minimum=0, maximum=12)
    table = frame.reset_index() if index else frame.copy()
    if fmt == "csv":
        return table.to_csv(index=False, lineterminator="\n")
    if fmt == "json":
        payload = {"title": title, "columns": [str(c) for c in table.columns],
                   "rows": json_safe(table.to_dict(orient="records")), "notes": list(notes)}
        return json.dumps(payload, indent=2, sort_keys=False, allow_nan=False) + "\n"
    header = [str(c) for c in table.columns]
    body = [[format_cell(v, digits) for v in row] for row in table.itertuples(index=False)]
    numeric = [pd.api.types.is_numeric_dtype(table[c]) for c in table.columns]
    if fmt == "text":
        return _text(header, body, numeric, title, notes)
    if fmt == "markdown":
        return _markdown(header, body, numeric, title, notes)
    if fmt == "latex":
        return _latex(header, body, numeric, title, notes)
    return _html(header, body, numeric, title, notes)


def _text(header: list[str], body: list[list[str]], numeric: list[bool], title: str,
          notes: Sequence[str]) -> str:
    widths = [max([len(h)] + [len(r[i]) for r in body]) for i, h in enumerate(header)]

    def line(cells: list[str]) -> str:
        return "  ".join(c.rjust(w) if num else c.ljust(w)
                         for c, w, num in zip(cells, widths, numeric)).rstrip()

    rule = "-" * (sum(widths) + 2 * (len(widths) - 1))
    out = ([title] if title else []) + [line(header), rule] + [line(r) for r in body] + [rule]
    for note in notes:
        out += textwrap.wrap(note, width=100) or [""]
    return "\n".join(out) + "\n"


_MARKDOWN = {"&": "&amp;", "<": "&lt;", ">": "&gt;", "\\": "\\\\", "|": "\\|", "[": "\\[",
             "]": "\\]", "`": "\\`"}


def _md_escape(text: str) -> str:
    """Data-derived text in a Markdown table: HTML and link syntax neutralised (renderers pass raw
    HTML through), the cell kept on one line."""
    return "".join(_MARKDOWN.get(ch, ch) for ch in _CONTROL.sub(" ", text))


def _markdown(header: list[str], body: list[list[str]], numeric: list[bool], title: str,
              notes: Sequence[str]) -> str:
    out = [f"**{_md_escape(title)}**", ""] if title else []
    out.append("| " + " | ".join(_md_escape(h) for h in header) + " |")
    out.append("|" + "|".join("---:" if num else ":---" for num in numeric) + "|")
    out += ["| " + " | ".join(_md_escape(c) for c in row) + " |" for row in body]
    if notes:
        out.append("")
        out += [_md_escape(n) for n in notes]
    return "\n".join(out) + "\n"


def _latex(header: list[str], body: list[list[str]], numeric: list[bool], title: str,
           notes: Sequence[str]) -> str:
    spec = "".join("r" if num else "l" for num in numeric)
    out = ["\\begin{table}[htbp]", "\\centering"]
    if title:
        out.append(f"\\caption{{{latex_escape(title)}}}")
    out += [f"\\begin{{tabular}}{{{spec}}}", "\\toprule",
            " & ".join(latex_escape(h) for h in header) + " \\\\", "\\midrule"]
    out += [" & ".join(latex_escape(c) for c in row) + " \\\\" for row in body]
    out += ["\\bottomrule", "\\end{tabular}"]
    if notes:
        out.append("\\par\\footnotesize " + " ".join(latex_escape(n) for n in notes))
    out.append("\\end{table}")
    return "\n".join(out) + "\n"


def _html(header: list[str], body: list[list[str]], numeric: list[bool], title: str,
          notes: Sequence[str]) -> str:
    esc = html.escape
    out = ["<table>"]
    if title:
        out.append(f"<caption>{esc(title)}</caption>")
    out.append("<thead><tr>" + "".join(f"<th>{esc(h)}</th>" for h in header) + "</tr></thead>")
    out.append("<tbody>")
    for row in body:
        cells = "".join(f'<td style="text-align:right">{esc(c)}</td>' if num else f"<td>{esc(c)}</td>"
                        for c, num in zip(row, numeric))
        out.append(f"<tr>{cells}</tr>")
    out.append("</tbody>")
    if notes:
        out.append("<tfoot>" + "".join(f'<tr><td colspan="{len(header)}">{esc(n)}</td></tr>'
                                         for n in notes) + "</tfoot>")
    out.append("</table>")
    return "\n".join(out) + "\n"
