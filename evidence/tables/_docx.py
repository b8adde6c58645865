"""Word (.docx) tables through python-docx (optional extra ``word``).

A table is written from its HTML rendering (our own simple markup: caption, header row, body
rows, notes), so the Word table has the same formatted cells as the other human formats.
"""

from __future__ import annotations

from datetime import UTC, datetime
from html.parser import HTMLParser
from pathlib import Path

from evidence.errors import SpecError

__all__ = ["html_to_docx"]

_FIXED_TIME = datetime(2000, 1, 1, tzinfo=UTC)


class _TableParser(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.caption = ""
        self.header: list[str] = []
        self.rows: list[list[str]] = []
        self.notes: list[str] = []
        self._part = ""
        self._cell: str | None = None
        self._row: list[str] | None = None

    def handle_starttag(self, tag: str, attrs: list) -> None:
        if tag in ("caption", "thead", "tbody", "tfoot"):
            self._part = tag
        elif tag == "tr":
            self._row = []
        elif tag in ("td", "th"):
            self._cell = ""

    def handle_endtag(self, tag: str) -> None:
        if tag in ("td", "th") and self._row is not None and self._cell is not None:
            self._row.append(self._cell)
            self._cell = None
        elif tag == "tr" and self._row is not None:
            {"thead": self.header.extend, "tbody": lambda r: self.rows.append(r),
             "tfoot": self.notes.extend}.get(self._part, lambda r: None)(self._row)
            self._row = None
        elif tag == "caption":
            self._part = ""

    def handle_data(self, data: str) -> None:
        if self._part == "caption" and self._cell is None:
            self.caption += data
        elif self._cell is not None:
            self._cell += data


def html_to_docx(html_text: str, path: str | Path) -> Path:
    """Write the table(s) of an HTML rendering to a Word document at ``path``."""
    try:
        import docx
    except ImportError:
        raise SpecError("Word output needs python-docx; install it with: "
                        "pip install 'decoupling-evidence[word]'.") from None
    document = docx.Document()
    document.core_properties.created = _FIXED_TIME
    document.core_properties.modified = _FIXED_TIME
    for chunk in html_text.split("</table>"):
        if "<table>" not in chunk:
            continue
        parser = _TableParser()
        parser.feed(chunk + "</table>")
        if parser.caption:
            document.add_paragraph(parser.caption.strip(), style="Caption")
        width = max([len(parser.header)] + [len(r) for r in parser.rows] + [1])
        table = document.add_table(rows=1 + len(parser.rows), cols=width)
        table.style = "Table Grid"
        for j, text in enumerate(parser.header):
            table.cell(0, j).text = text
        for i, row in enumerate(parser.rows, start=1):
            for j, text in enumerate(row):
                table.cell(i, j).text = text
        for note in parser.notes:
            document.add_paragraph(note)
    path = Path(path)
    document.save(str(path))
    return path
