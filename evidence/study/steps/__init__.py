"""The steps of a study, in report order: ``name -> function(panel, spec) -> StepOutput``.

A step runs when ``[analyses] <name>`` is on (true, or a non-empty list of methods); an analysis
that cannot run on the data raises an :class:`~evidence.errors.EvidenceError`, which the runner
reports as "not run" with its reason. Adding an analysis means one module here and one entry in
:data:`STEPS` (and its key in the spec schema, and its title in :data:`TITLES`).
"""

from __future__ import annotations

from evidence.study.steps import (
    audit,
    breaks,
    cointegration,
    convergence,
    decomposition,
    dependence,
    ekc,
    elasticity,
    grade,
    rates,
    roots,
)
from evidence.study.steps._base import FigureOut, Step, StepOutput, TableOut

__all__ = ["STEPS", "AUDIT", "TITLES", "Step", "StepOutput", "TableOut", "FigureOut"]

#: The registry, in the order the report shows the sections.
STEPS: dict[str, Step] = {
    "grade": grade.run,
    "rates": rates.run,
    "breaks": breaks.run,
    "elasticity": elasticity.run,
    "ekc": ekc.run,
    "roots": roots.run,
    "dependence": dependence.run,
    "cointegration": cointegration.run,
    "convergence": convergence.run,
    "decomposition": decomposition.run,
}

#: Section titles (also used for an analysis that could not run).
TITLES: dict[str, str] = {
    "grade": "Grade", "rates": "Decoupling indicators", "breaks": "Structural breaks",
    "elasticity": "Elasticities", "ekc": "Kuznets curve", "roots": "Unit roots",
    "dependence": "Cross-sectional dependence", "cointegration": "Cointegration",
    "convergence": "Convergence", "decomposition": "Decomposition",
}

#: The closing section of every study (always run; its failure is the study's failure).
AUDIT: Step = audit.run
