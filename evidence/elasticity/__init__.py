"""Panel elasticities of pressure with respect to activity: fixed effects, heterogeneous slopes, EKC."""

from evidence.elasticity.ekc import EKCResult, ekc, fieller_interval, u_shape_test
from evidence.elasticity.estimate import (
    ESTIMATORS,
    ElasticityPath,
    decoupling_tests,
    elasticity,
    time_varying_elasticity,
)
from evidence.elasticity.homogeneity import slope_homogeneity_test

__all__ = ["ESTIMATORS", "EKCResult", "ElasticityPath", "decoupling_tests", "ekc", "elasticity",
           "fieller_interval", "slope_homogeneity_test", "time_varying_elasticity", "u_shape_test"]
