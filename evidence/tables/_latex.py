"""The LaTeX form of a table: booktabs rules, dcolumn alignment, a label, fitting to the page.

Numeric columns are dcolumn ``D{.}{.}{-1}`` columns: cells are set in math mode, aligned on the
decimal point, so a minus is a true minus and stars are superscripts with no markup of ours in
the cells. dcolumn (not siunitx) because it ships with ``texlive-latex-base`` (the ``tools``
bundle) and needs no parsing of the cell's content; siunitx lives in Debian's larger
``texlive-science`` and chokes on stars and parentheses unless each cell is braced.

The first line of every table names the packages its preamble needs, e.g.
``% Preamble: \\usepackage{booktabs,dcolumn,graphicx}``. Wide tables are shrunk to the line width
only when wider than the line (a measured box, graphicx's ``\\resizebox``), and from
:data:`LANDSCAPE_COLUMNS` columns set on a landscape page (pdflscape). Notes follow the table as
separate paragraphs in a footnote-size block as wide as the line.
"""

from __future__ import annotations

import re
import textwrap
import unicodedata
from typing import TYPE_CHECKING

from evidence.tables._cells import NUMERIC_TEXT, Number, latex_escape

if TYPE_CHECKING:
    from evidence.tables._render import Table

__all__ = ["render_latex", "default_label", "LANDSCAPE_COLUMNS", "FITS"]

#: From this many columns, ``fit="auto"`` sets the table on a landscape page.
LANDSCAPE_COLUMNS = 12
#: Ways to fit a table to the page (``fit=``).
FITS = ("auto", "shrink", "landscape", "none")
_NUMERIC = r"D{.}{.}{-1}"
_WRAP_TEXT = 50   # a text column whose longest cell is longer wraps in a paragraph column
_HEAD_WIDTH = 16  # heads longer than this (and than the column's cells) break into lines
_BOX = r"\evidencetablebox"
_LINES = 40               # lines of rows per float; a longer table continues in further floats
_LINES_LANDSCAPE = 22     # (a landscape page is as high as the portrait text is wide)
_WRAP_EM = 22             # width of a wrapped text column, in em (about two characters each)


def default_label(title: str) -> str:
    """``tab:`` and the first words of the title, e.g. ``tab:elasticity-of-ghg-with-respect``."""
    ascii_ = unicodedata.normalize("NFKD", title).encode("ascii", "ignore").decode()
    words = re.findall(r"[a-z0-9]+", ascii_.lower())
    return "tab:" + ("-".join(words[:6]) or "table")


def _cell(value: object, numeric: bool) -> str:
    if isinstance(value, Number):
        return value.latex_math() if numeric else value.latex_text()
    text = "" if value is None else str(value)
    if numeric and NUMERIC_TEXT.fullmatch(text):
        return text.replace("\u2212", "-").replace(",", "{,}").replace("<", "{<}").replace(
            ">", "{>}").replace("%", r"\%")
    if numeric and text:
        return f"\\multicolumn{{1}}{{c}}{{{latex_escape(text)}}}"
    return latex_escape(text)


def _head(text: str, numeric: bool, width: int) -> str:
    fit = max(width, _HEAD_WIDTH)
    lines = textwrap.wrap(text, width=fit) if len(text) > fit else [text]
    body = r"\\".join(latex_escape(line) for line in lines)
    align = "c" if numeric else "l"
    if len(lines) > 1:
        body = f"\\begin{{tabular}}[b]{{@{{}}{align}@{{}}}}{body}\\end{{tabular}}"
    return f"\\multicolumn{{1}}{{c}}{{{body}}}" if numeric else body


def _plain_width(value: object) -> int:
    return len(value.plain()) if isinstance(value, Number) else len("" if value is None else str(value))


def _chunks(table: Table, widths: list[int], *, wrapped: list[bool],
            landscape: bool) -> list[list[int]]:
    """Rows split into floats that fit a page: each row costs as many lines as its longest
    wrapped cell takes; the last float also holds the notes (footnote size)."""
    budget = _LINES_LANDSCAPE if landscape else _LINES
    per_line = 2 * _WRAP_EM

    def cost(row: list[object]) -> int:
        return max([1] + [-(-_plain_width(v) // per_line) for v, w in zip(row, wrapped, strict=True) if w])

    note_chars = 170 if landscape else 110
    notes = sum(0.8 * (-(-len(n) // note_chars)) for n in table.notes)
    chunks: list[list[int]] = [[]]
    used = 0
    for i, row in enumerate(table.rows):
        c = cost(row)
        if chunks[-1] and used + c > budget:
            chunks.append([])
            used = 0
        chunks[-1].append(i)
        used += c
    last = chunks[-1]
    spill: list[int] = []
    while len(last) > 1 and sum(cost(table.rows[i]) for i in last) + notes > budget:
        spill.insert(0, last.pop())
    if spill:
        chunks.append(spill)
    return chunks


def render_latex(table: Table) -> str:
    """The table as a LaTeX ``table`` float (see the module docstring for its parts)."""
    widths = [max([0] + [_plain_width(row[j]) for row in table.rows]) for j in range(len(table.header))]
    spec, packages, wraps = [], ["booktabs"], False
    for j, numeric in enumerate(table.numeric):
        if numeric:
            spec.append(_NUMERIC)
        elif widths[j] > _WRAP_TEXT:
            spec.append(rf">{{\raggedright\arraybackslash}}p{{{_WRAP_EM}em}}")
            wraps = True
        else:
            spec.append("l")
    if any(table.numeric):
        packages.append("dcolumn")
    if wraps:
        packages.append("array")
    estimate = sum(max(w, min(len(h), _HEAD_WIDTH)) + 2 for w, h in zip(widths, table.header, strict=True))
    fit = table.fit
    if fit == "auto":
        fit = ("landscape" if len(table.header) >= LANDSCAPE_COLUMNS or estimate > 130
               else "shrink" if estimate > 60 else "none")
    landscape = fit == "landscape"
    if fit in ("shrink", "landscape"):
        packages.append("graphicx")
    if landscape:
        packages.append("pdflscape")
    label = table.label or default_label(table.title)
    head = " & ".join(_head(h, n, w)
                      for h, n, w in zip(table.header, table.numeric, widths, strict=True)) + r" \\"
    columns = f"@{{}}{' '.join(spec)}@{{}}"
    chunks = _chunks(table, widths, wrapped=[w > _WRAP_TEXT and not n for w, n in
                                             zip(widths, table.numeric, strict=True)],
                     landscape=landscape) if fit != "none" else [list(range(len(table.rows)))]
    out = [f"% Preamble: \\usepackage{{{','.join(packages)}}}"]
    if landscape:
        out.append("\\begin{landscape}")
    for k, chunk in enumerate(chunks):
        last = k == len(chunks) - 1
        out += ["\\begin{table}[htbp]", "\\centering"]
        if k:
            out += ["\\addtocounter{table}{-1}",
                    f"\\caption[]{{{latex_escape(table.title)} (continued)}}"]
        else:
            if table.title:
                out.append(f"\\caption{{{latex_escape(table.title)}}}")
            out.append(f"\\label{{{label}}}")
        boxed = fit in ("shrink", "landscape")
        if boxed:
            out += [f"\\ifdefined{_BOX}\\else\\newsavebox{{{_BOX}}}\\fi", f"\\sbox{{{_BOX}}}{{%"]
        out += [f"\\begin{{tabular}}{{{columns}}}", "\\toprule", head, "\\midrule"]
        for i in chunk:
            if i in table.rules and i != chunk[0]:
                out.append("\\midrule")
            row = table.rows[i]
            out.append(" & ".join(_cell(v, n) for v, n in zip(row, table.numeric, strict=True)) + " \\\\")
        out += ["\\bottomrule", "\\end{tabular}"]
        if boxed:
            out += ["}%", f"\\ifdim\\wd{_BOX}>\\linewidth\\resizebox{{\\linewidth}}{{!}}"
                    f"{{\\usebox{{{_BOX}}}}}\\else\\usebox{{{_BOX}}}\\fi"]
        if last and table.notes:
            out += ["\\par\\medskip", "\\begin{minipage}{\\linewidth}\\footnotesize"]
            out += [f"{latex_escape(note)}\\par" for note in table.notes]
            out.append("\\end{minipage}")
        elif not last:
            out += ["\\par\\smallskip", "{\\footnotesize\\emph{Continued on the next page.}}"]
        out.append("\\end{table}")
    if landscape:
        out.append("\\end{landscape}")
    return "\n".join(out) + "\n"
