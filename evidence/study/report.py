"""The self-contained HTML report of a study: the answer first, then contents, then sections.

The page opens with the claim, the verdict (counts per grade and per flag, in words) and the
grade figure side by side, then the caution (once), the contents with in-page links, and one
section per analysis: what was tested on which series and what it found, the decision rule,
tables (their caution left to the files), figures with captions and links to every file.

Every data-derived string is escaped; figures are embedded as base64 PNG, so the file needs no
network and no other file (the links to ``tables/`` and ``figures/`` work when the folder is
kept together). The report carries no date (the manifest records when it ran).
"""

from __future__ import annotations

import base64
import html
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from evidence._cautions import CAUTION

__all__ = ["Section", "Figure", "Answer", "render_report", "anchor"]

_STYLE = """
* { box-sizing: border-box; }
body { font-family: Georgia, 'DejaVu Serif', serif; color: #222; margin: 0; line-height: 1.4; }
main { max-width: 1280px; margin: 0 auto; padding: 1em 24px 3em; }
h1, h2, h3, nav, figcaption, .counts, table { font-family: Helvetica, Arial, 'DejaVu Sans', sans-serif; }
h1 { font-size: 1.6em; margin: 0.2em 0 0.3em; }
h2 { font-size: 1.25em; margin-top: 1.6em; border-bottom: 1px solid #ddd; padding-bottom: 0.2em; }
h3 { font-size: 1.05em; }
.claim { font-size: 1.05em; margin: 0.2em 0; }
.meta { color: #555; font-size: 0.85em; margin: 0.2em 0 0.8em; }
.answer { display: grid; grid-template-columns: minmax(0, 5fr) minmax(0, 6fr); gap: 20px;
          align-items: start; }
@media (max-width: 1100px) { .answer { grid-template-columns: minmax(0, 1fr); } }
.verdict { background: #f4f8fb; border-left: 4px solid #0072b2; padding: 0.5em 1em; }
.verdict h2 { margin-top: 0.2em; border: none; }
.verdict p { margin: 0.4em 0; }
.counts { font-size: 0.85em; padding-left: 1.1em; margin: 0.3em 0; }
.counts li { margin: 0.1em 0; }
.swatch { display: inline-block; width: 0.8em; height: 0.8em; margin-right: 0.3em;
          vertical-align: baseline; border-radius: 2px; }
.caution { font-size: 0.8em; color: #5a4a00; background: #fff6e0; padding: 0.4em 0.6em;
           border-left: 3px solid #d9a400; margin: 0.6em 0 0; }
figure { margin: 0.5em 0; max-width: 100%; }
figure img { max-width: 100%; height: auto; display: block; }
#grade-figure img { max-height: 66vh; width: auto; }
figcaption { font-size: 0.8em; color: #444; margin-top: 0.3em; }
.figures { display: flex; flex-wrap: wrap; gap: 16px; }
.figures figure { flex: 1 1 440px; max-width: 640px; }
nav#contents { font-size: 0.9em; margin-top: 1em; }
nav#contents ol { columns: 3 220px; margin: 0.3em 0; }
.table { max-width: 100%; overflow-x: auto; margin: 0.8em 0; }
table { border-collapse: collapse; font-size: 0.76em; }
th, td { border-bottom: 1px solid #ccc; padding: 0.2em 0.35em; vertical-align: top; }
th { font-weight: 600; }
td[style*="right"] { white-space: nowrap; }
th { background: #fafafa; }
caption { font-weight: bold; text-align: left; padding-bottom: 0.3em; caption-side: top; }
@media (max-width: 1100px) { table { font-size: 0.7em; } th, td { padding: 0.2em 0.25em; } }
.table-notes { font-family: Helvetica, Arial, 'DejaVu Sans', sans-serif; font-size: 0.74em;
               color: #555; max-width: 80em; }
.table-notes p { margin: 0.15em 0; }
.table { margin-bottom: 0.2em; }
details > summary { cursor: pointer; font-family: Helvetica, Arial, sans-serif; font-size: 0.9em; }
.lead { max-width: 60em; }
.files { font-size: 0.8em; color: #555; }
.note { color: #555; font-size: 0.9em; }
"""

_ID = re.compile(r"[^a-z0-9]+")
# A hyphen used as a minus sign in running text: before a digit, not after a letter or digit
# (so "1995-2023", "T-29" and "AR-1" keep their hyphens).
_MINUS = re.compile(r"(?<![\w.])-(?=\.?\d)")


def _prose(text: str) -> str:
    """Escaped running text with true minus signs (−) for negative numbers."""
    return html.escape(_MINUS.sub("\u2212", str(text)))


def anchor(title: str) -> str:
    """An in-page id from a section title (``"Unit roots"`` → ``"unit-roots"``)."""
    return _ID.sub("-", title.lower()).strip("-") or "section"


@dataclass(frozen=True)
class Figure:
    """A figure in the report: its PNG, caption (plain text) and the files it was written to."""

    png: Path
    caption: str = ""
    files: tuple[str, ...] = ()
    element_id: str = ""


@dataclass(frozen=True)
class Table:
    """A table in the report: its HTML (already escaped), how it is shown, its files."""

    html: str
    shown: str = "open"
    files: tuple[str, ...] = ()
    summary: str = ""


@dataclass(frozen=True)
class Section:
    """One report section: title, lead paragraphs (plain text), tables, figures, closing note."""

    title: str
    fragments: tuple[Any, ...] = ()
    figures: tuple[Any, ...] = ()
    note: str = ""
    lead: tuple[str, ...] = ()
    more_figures: str = ""


@dataclass(frozen=True)
class Answer:
    """What the report opens with: verdict paragraphs, counts, and the grade figure."""

    headline: str = ""
    paragraphs: tuple[str, ...] = ()
    counts: tuple[tuple[str, int, str, str], ...] = ()  # (label, n, meaning, colour)
    figure: Figure | None = None
    link: str = ""
    extra: tuple[Any, ...] = field(default_factory=tuple)


def _img(figure: Figure, *, element_id: str = "") -> str:
    data = base64.b64encode(figure.png.read_bytes()).decode("ascii")
    esc = html.escape
    caption = esc(figure.caption or figure.png.stem)
    links = " ".join(f'<a href="{esc(f)}">{esc(Path(f).suffix.lstrip(".").upper())}</a>'
                     for f in figure.files)
    ident = f' id="{esc(element_id)}"' if element_id else ""
    return (f'<figure{ident}><img alt="{caption}" src="data:image/png;base64,{data}">'
            f'<figcaption>{caption}{" Files: " + links if links else ""}</figcaption></figure>')


def _links(files: Sequence[str]) -> str:
    esc = html.escape
    return " · ".join(f'<a href="{esc(f)}">{esc(Path(f).suffix.lstrip("."))}</a>' for f in files)


def _files(files: Sequence[str]) -> str:
    return f'<p class="files">Files: {_links(files)}</p>' if files else ""


_FOOT = re.compile(r"<tfoot>(.*?)</tfoot>", re.S)
_NOTE = re.compile(r'<tr><td colspan="\d+">(.*?)</td></tr>', re.S)


def _notes_below(table_html: str) -> str:
    """The table with its footer notes moved below it as paragraphs, so that long notes do not
    widen the columns (a spanning footer cell counts in the table's column widths)."""
    found = _FOOT.search(table_html)
    if not found:
        return f'<div class="table">{table_html}</div>'
    notes = "".join(f"<p>{n}</p>" for n in _NOTE.findall(found.group(1)))
    body = table_html[:found.start()] + table_html[found.end():]
    return f'<div class="table">{body}</div><div class="table-notes">{notes}</div>'


def _table(item: Any) -> str:
    if isinstance(item, str):
        return _notes_below(item)
    if item.shown == "file":
        return (f'<p class="files">{html.escape(item.summary or "Table")}, not shown here: '
                f'{_links(item.files)}</p>')
    body = f"{_notes_below(item.html)}{_files(item.files)}"
    if item.shown == "folded":
        return (f"<details><summary>{html.escape(item.summary or 'Show the table')}</summary>"
                f"{body}</details>")
    return body


def _answer(answer: Answer) -> list[str]:
    esc = html.escape
    parts = ['<section class="answer">', '<div class="verdict" id="verdict">', "<h2>Verdict</h2>"]
    if answer.headline:
        parts.append(f"<p><strong>{_prose(answer.headline)}</strong></p>")
    parts += [f"<p>{_prose(p)}</p>" for p in answer.paragraphs]
    if answer.counts:
        parts.append('<ul class="counts">')
        for label, n, meaning, colour in answer.counts:
            swatch = (f'<span class="swatch" style="background:{esc(colour)}"></span>'
                      if colour else "")
            parts.append(f"<li>{swatch}<strong>{n}</strong> {esc(label)}"
                         f"{' — ' + esc(meaning) if meaning else ''}</li>")
        parts.append("</ul>")
    if answer.link:
        parts.append(f'<p class="note"><a href="#{esc(answer.link)}">The grade table and the '
                     "axes behind each grade</a></p>")
    parts.append(f'<p class="caution"><strong>Caution.</strong> {esc(CAUTION)}</p>')
    parts.append("</div>")
    if answer.figure is not None:
        parts.append(_img(answer.figure, element_id="grade-figure"))
    parts.append("</section>")
    return parts


def render_report(title: str, claim: str, source: str, sections: Sequence[Section],
                  answer: Answer | None = None) -> str:
    """The HTML text of the report."""
    esc = html.escape
    parts = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
             '<meta name="viewport" content="width=device-width, initial-scale=1">',
             f"<title>{esc(title)}</title>", f"<style>{_STYLE}</style>", "</head>", "<body>",
             "<main>", f"<h1>{esc(title)}</h1>"]
    if claim:
        parts.append(f'<p class="claim"><strong>Claim examined:</strong> {esc(claim)}</p>')
    if source:
        parts.append(f'<p class="meta">Data: {esc(source)}</p>')
    if answer is not None:
        parts += _answer(answer)
    else:
        parts.append(f'<p class="caution"><strong>Caution.</strong> {esc(CAUTION)}</p>')
    ids = []
    for section in sections:
        ident = anchor(section.title)
        while ident in ids:
            ident += "-2"
        ids.append(ident)
    parts.append('<nav id="contents"><h2>Contents</h2><ol>')
    parts += [f'<li><a href="#{i}">{esc(s.title)}</a></li>' for i, s in zip(ids, sections, strict=True)]
    parts.append('</ol><p class="files">Every table in every format is in '
                 '<a href="tables/">tables/</a>, every figure (PNG and SVG) in '
                 '<a href="figures/">figures/</a>; all numbers at full precision in '
                 '<a href="results.json">results.json</a>; versions, inputs and hashes in '
                 '<a href="manifest.json">manifest.json</a>.</p></nav>')
    for ident, section in zip(ids, sections, strict=True):
        parts.append(f'<section id="{ident}">')
        parts.append(f"<h2>{esc(section.title)}</h2>")
        parts += [f'<p class="lead">{_prose(p)}</p>' for p in section.lead]
        if section.note:
            parts.append(f'<p class="note">{_prose(section.note)}</p>')
        parts.extend(_table(t) for t in section.fragments)
        if section.figures:
            parts.append('<div class="figures">')
            parts.extend(_img(f) if isinstance(f, Figure) else _img(Figure(Path(f)))
                         for f in section.figures)
            parts.append("</div>")
        if section.more_figures:
            parts.append(f'<p class="files">{esc(section.more_figures)} See '
                         '<a href="figures/">figures/</a>.</p>')
        parts.append("</section>")
    parts += ["</main>", "</body>", "</html>"]
    return "\n".join(parts) + "\n"
