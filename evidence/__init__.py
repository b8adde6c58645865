"""evidence: statistical evidence on decoupling of environmental pressure from activity, and convergence.

The public API, re-exported; see ``docs/`` for the user guide and the methods reference.
"""

from evidence.convergence import (
    BetaResult,
    ClubResult,
    GammaResult,
    SigmaResult,
    StochasticResult,
    beta_convergence,
    club_convergence,
    gamma_convergence,
    log_t_test,
    sigma_convergence,
    stochastic_convergence,
)
from evidence.decomposition import LMDIResult, kaya, lmdi
from evidence.demo import demo_panel, demo_truth, run_demo
from evidence.elasticity import (
    EKCResult,
    ElasticityPath,
    decoupling_tests,
    ekc,
    elasticity,
    slope_homogeneity_test,
    time_varying_elasticity,
)
from evidence.errors import DataError, EstimationError, EvidenceError, SpecError
from evidence.grading import Criteria, GradeResult, grade
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
from evidence.roots import (
    RootBatteryResult,
    adf_test,
    bias_corrected_lm_test,
    breitung_test,
    cips_test,
    dfgls_test,
    fisher_test,
    hadri_test,
    ips_test,
    kpss_test,
    lee_strazicich_test,
    llc_test,
    lm_test,
    pesaran_cd_test,
    pp_test,
    root_battery,
    scaled_lm_test,
    za_test,
)
from evidence.tables import grade_table, regression_table, test_table

from evidence.study import run_study  # noqa: E402  (the runner uses the names above)

__version__ = "0.1.0"

__all__ = [
    "adf_test",
    "bias_corrected_lm_test",
    "breitung_test",
    "cips_test",
    "dfgls_test",
    "fisher_test",
    "hadri_test",
    "ips_test",
    "kpss_test",
    "lee_strazicich_test",
    "llc_test",
    "lm_test",
    "pesaran_cd_test",
    "pp_test",
    "root_battery",
    "scaled_lm_test",
    "za_test",
    "BetaResult",
    "BudgetResult",
    "ClubResult",
    "Criteria",
    "DataError",
    "EKCResult",
    "ElasticityPath",
    "Estimate",
    "EstimationError",
    "EvidenceError",
    "GammaResult",
    "GradeResult",
    "LMDIResult",
    "Panel",
    "RatesResult",
    "RootBatteryResult",
    "SigmaResult",
    "SpecError",
    "StochasticResult",
    "TestResult",
    "beta_convergence",
    "budget_rate",
    "club_convergence",
    "decoupling_factor",
    "decoupling_tests",
    "demo_panel",
    "demo_truth",
    "ekc",
    "elasticity",
    "gamma_convergence",
    "grade",
    "grade_table",
    "kaya",
    "lmdi",
    "load_panel",
    "log_t_test",
    "rates",
    "regression_table",
    "required_rate",
    "run_demo",
    "run_study",
    "sigma_convergence",
    "stochastic_convergence",
    "slope_homogeneity_test",
    "tapio_class",
    "test_table",
    "time_varying_elasticity",
]
