"""The self-contained HTML report of a study: claim, grade table and cautions first.

Every data-derived string is escaped; figures are embedded as base64 PNG, so the file needs no
network and no other file. The report carries no date (the manifest records when it ran).
"""

from __future__ import annotations

import base64
import html
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from evidence._cautions import CAUTION

__all__ = ["Section", "render_report"]

_STYLE = """
body { font-family: Georgia, serif; max-width: 1100px; margin: 2em auto; color: #222; }
h1, h2, h3 { font-family: Helvetica, Arial, sans-serif; }
table { border-collapse: collapse; font-size: 0.85em; margin: 0.8em 0; }
th, td { border-bottom: 1px solid #ccc; padding: 0.25em 0.6em; }
caption { font-weight: bold; text-align: left; padding-bottom: 0.3em; }
tfoot td { font-size: 0.85em; color: #555; border: none; }
.caution { background: #fff6e0; border-left: 4px solid #d9a400; padding: 0.6em 1em; }
.claim { font-size: 1.1em; font-style: italic; }
figure { display: inline-block; margin: 0.5em; }
figcaption { font-size: 0.8em; color: #555; }
.note { color: #555; font-size: 0.9em; }
"""


@dataclass(frozen=True)
class Section:
    """One report section: a title, HTML fragments (already escaped) and figures (PNG paths)."""

    title: str
    fragments: tuple[str, ...] = ()
    figures: tuple[Path, ...] = ()
    note: str = ""


def _figure(path: Path) -> str:
    data = base64.b64encode(path.read_bytes()).decode("ascii")
    return (f'<figure><img alt="{html.escape(path.stem)}" src="data:image/png;base64,{data}" '
            f'width="480"><figcaption>{html.escape(path.stem)}</figcaption></figure>')


def render_report(title: str, claim: str, source: str, sections: Sequence[Section]) -> str:
    """The HTML text of the report."""
    esc = html.escape
    parts = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
             f"<title>{esc(title)}</title>", f"<style>{_STYLE}</style>", "</head>", "<body>",
             f"<h1>{esc(title)}</h1>"]
    if claim:
        parts.append(f'<p class="claim">Claim examined: {esc(claim)}</p>')
    if source:
        parts.append(f'<p class="note">Data: {esc(source)}</p>')
    parts.append(f'<div class="caution"><strong>Caution.</strong> {esc(CAUTION)}</div>')
    for section in sections:
        parts.append(f"<h2>{esc(section.title)}</h2>")
        if section.note:
            parts.append(f'<p class="note">{esc(section.note)}</p>')
        parts.extend(section.fragments)
        parts.extend(_figure(p) for p in section.figures)
    parts += ["</body>", "</html>"]
    return "\n".join(parts) + "\n"
