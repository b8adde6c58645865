"""Long tables in the report: the first rows shown, the full table in its files.

A study of thousands of units writes every table in full to ``tables/`` (CSV, JSON, ...), but a
report page with a 3,000-row table is unreadable and heavy. The report shows the first
:data:`REPORT_ROWS` rows of a longer table (in the order the step chose: the grade table lists the
strongest grades first) and a last row saying how many rows are left out and where they are.
"""

from __future__ import annotations

import html as _html
import re
from collections.abc import Sequence

__all__ = ["REPORT_ROWS", "shorten_rows"]

#: Rows of a table body shown in the report; longer tables are cut (their files are complete).
REPORT_ROWS = 50

_HEAD_CELL = re.compile(r"<th[ >]")


def shorten_rows(table_html: str, files: Sequence[str], limit: int = REPORT_ROWS) -> str:
    """``table_html`` (as the package's HTML renderer writes it: one body row a line) with only
    its first ``limit`` body rows and a row that names the rows left out and the files holding
    the full table. Shorter tables, and HTML of another shape, are returned unchanged."""
    lines = table_html.split("\n")
    body = [i for i, line in enumerate(lines) if line.startswith("<tr>")]
    if len(body) <= limit:
        return table_html
    head = next((line for line in lines if line.startswith("<thead>")), "")
    width = max(len(_HEAD_CELL.findall(head)), 1)
    dropped = set(body[limit:])
    where = next((f for f in files if f.endswith(".csv")), files[0] if files else "tables/")
    note = (f'<tr><td colspan="{width}"><em>… {len(dropped):,} more rows (of {len(body):,}) are '
            f'not shown here: the full table is in {_html.escape(where)}.</em></td></tr>')
    out = []
    for i, line in enumerate(lines):
        if i in dropped:
            continue
        out.append(line)
        if i == body[limit - 1]:
            out.append(note)
    # tbody groups emptied by the cut
    return "\n".join(out).replace("<tbody>\n</tbody>\n", "")
