"""Tables for people and machines: text, Markdown, LaTeX (booktabs), HTML, CSV, JSON.

Every table function takes ``labels`` (rename variables and columns), ``label`` (the LaTeX
``\\label``), ``caution`` (the caution note, once) and ``fit`` (how a wide LaTeX table fits the
page); see ``docs/tables.md``.
"""

from evidence.tables._docx import html_to_docx
from evidence.tables._render import FORMATS, latex_escape, render_frame
from evidence.tables.derived import beta_table, ekc_table
from evidence.tables.grades import grade_table
from evidence.tables.rates import audit_table, rates_table
from evidence.tables.regression import regression_table, unit_table
from evidence.tables.tests import test_table

__all__ = ["FORMATS", "render_frame", "latex_escape", "rates_table", "audit_table",
           "regression_table", "test_table", "grade_table", "unit_table", "beta_table", "ekc_table",
           "html_to_docx"]
