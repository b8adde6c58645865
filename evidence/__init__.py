"""evidence: statistical evidence on decoupling of environmental pressure from activity, and convergence.

The public API, re-exported; see ``docs/`` for the user guide and the methods reference.
"""

from evidence.demo import demo_panel, demo_truth, run_demo
from evidence.errors import DataError, EstimationError, EvidenceError, SpecError
from evidence.indicators import (
    BudgetResult,
    RatesResult,
    budget_rate,
    decoupling_factor,
    rates,
    required_rate,
    tapio_class,
)
from evidence.panel import Panel, load_panel
from evidence.results import Estimate, TestResult

__version__ = "0.1.0"

__all__ = [
    "BudgetResult",
    "DataError",
    "Estimate",
    "EstimationError",
    "EvidenceError",
    "Panel",
    "RatesResult",
    "SpecError",
    "TestResult",
    "budget_rate",
    "decoupling_factor",
    "demo_panel",
    "demo_truth",
    "load_panel",
    "rates",
    "required_rate",
    "run_demo",
    "tapio_class",
]
