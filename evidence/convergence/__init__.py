"""Convergence across units: beta, sigma, gamma, stochastic and club convergence."""

from evidence.convergence.beta import BetaResult, beta_convergence, speed_of_convergence
from evidence.convergence.clubs import ClubResult, club_convergence, log_t_test
from evidence.convergence.sigma import (
    GammaResult,
    SigmaResult,
    carree_klomp_tests,
    gamma_convergence,
    sigma_convergence,
)
from evidence.convergence.stochastic import StochasticResult, relative_series, stochastic_convergence

__all__ = ["BetaResult", "ClubResult", "GammaResult", "SigmaResult", "beta_convergence",
           "carree_klomp_tests", "club_convergence", "gamma_convergence", "log_t_test",
           "sigma_convergence", "speed_of_convergence", "StochasticResult", "relative_series",
           "stochastic_convergence"]
