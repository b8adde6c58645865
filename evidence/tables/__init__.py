"""Tables for people and machines: text, Markdown, LaTeX (booktabs), HTML, CSV, JSON."""

from evidence.tables._docx import html_to_docx
from evidence.tables._render import FORMATS, latex_escape, render_frame
from evidence.tables.grades import grade_table
from evidence.tables.rates import audit_table, rates_table
from evidence.tables.regression import regression_table, test_table, unit_table

__all__ = ["FORMATS", "render_frame", "latex_escape", "rates_table", "audit_table",
           "regression_table", "test_table", "grade_table", "unit_table", "html_to_docx"]
