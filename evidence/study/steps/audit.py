"""The audit section every study ends with: everything in the data that was not used, and why."""

from __future__ import annotations

from evidence.panel import Panel
from evidence.study.spec import StudySpec
from evidence.study.steps._base import StepOutput, TableOut, data_notes
from evidence.tables import audit_table

__all__ = ["run"]


def run(panel: Panel, spec: StudySpec) -> StepOutput:
    """The panel's audit as a table."""
    notes = data_notes(spec)
    return StepOutput("Audit: data not used",
                      (TableOut("audit", lambda f: audit_table(panel.audit, f, notes=notes,
                                                                  labels=spec.labels)),))
