"""The steps of a study, in report order: ``name -> function(panel, spec) -> StepOutput``.

A step runs when ``[analyses] <name>`` is on (true, or a non-empty list of methods); an analysis
that cannot run on the data raises an :class:`~evidence.errors.EvidenceError`, which the runner
reports as "not run" with its reason. Adding an analysis means one module here and one entry in
:data:`STEPS` (and its key in the spec schema).
"""

from __future__ import annotations

from evidence.study.steps import (
                                  audit,
                                  convergence,
                                  decomposition,
                                  dependence,
                                  elasticity,
                                  grade,
                                  rates,
                                  roots,
)
from evidence.study.steps._base import FigureOut, Step, StepOutput, TableOut

__all__ = ["STEPS", "AUDIT", "Step", "StepOutput", "TableOut", "FigureOut"]

#: The registry, in the order the report shows the sections.
STEPS: dict[str, Step] = {
    "grade": grade.run,
    "rates": rates.run,
    "elasticity": elasticity.run,
    "roots": roots.run,
    "dependence": dependence.run,
    "convergence": convergence.run,
    "decomposition": decomposition.run,
}

#: The closing section of every study (always run; its failure is the study's failure).
AUDIT: Step = audit.run
