"""evidence: statistical evidence on decoupling and convergence."""
