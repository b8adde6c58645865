"""Critical values: the shipped Bai–Perron tables and the simulated limiting distributions."""

from __future__ import annotations

import numpy as np
import pytest

from evidence.breaks import _bp_tables
from evidence.breaks._simulate import max_k, null_draws, simulate_chunk
from evidence.breaks.tests import simulated_critical_values, table_critical_values
from evidence.parallel import task_seeds

# Bai & Perron (1998, Econometrica 66, Tables I-II; 2003, Econometrics Journal 6, 72-78) as shipped
# in reference_values.md §1.2 (eps = 0.15, levels 10 %, 5 %, 1 %), k = 1..5.
BP_SUPF_015 = {
    1: {0.10: [7.04, 6.28, 5.21, 4.41, 3.47], 0.05: [8.58, 7.22, 5.96, 4.99, 3.91],
        0.01: [12.29, 9.36, 7.60, 6.19, 4.91]},
    2: {0.10: [9.81, 8.63, 7.54, 6.51, 5.27], 0.05: [11.47, 9.75, 8.36, 7.19, 5.85],
        0.01: [15.37, 12.15, 10.27, 8.65, 7.00]},
    3: {0.10: [12.08, 10.75, 9.51, 8.29, 6.90], 0.05: [13.98, 11.99, 10.39, 9.05, 7.46],
        0.01: [18.26, 14.45, 12.16, 10.56, 8.71]},
}


def test_shipped_tables_match_reference_values():
    # Bai & Perron (2003) tables, eps = 0.15: supF q=1 k=1 5 % 8.58; UDmax/WDmax q=1 5 %
    # 8.88/9.91; sequential q=2 5|4 1 % 19.17; eps = 0.05 supF q=3 k=9 1 % 10.19.
    assert table_critical_values("supf", 1, 0.15, 1)[0.05] == 8.58
    assert table_critical_values("udmax", 1, 0.15, 5)[0.05] == 8.88
    assert table_critical_values("wdmax", 1, 0.15, 5)[0.05] == 9.91
    assert table_critical_values("sequential", 2, 0.15, 5)[0.01] == 19.17
    assert _bp_tables.SUPF[(0.05, 3, 0.01)][8] == 10.19
    for q, levels in BP_SUPF_015.items():
        for level, values in levels.items():
            assert list(_bp_tables.SUPF[(0.15, q, level)]) == values
    assert table_critical_values("supf", 4, 0.15, 1) is None   # q = 4 not shipped: simulate
    assert table_critical_values("supf", 1, 0.20, 1) is None   # trim 0.20 not shipped: simulate
    assert table_critical_values("supf", 1, 0.15, 6) is None   # k beyond the table


def test_max_k():
    assert max_k(0.15) == 5 and max_k(0.10) == 8 and max_k(0.25) == 2 and max_k(0.05) == 10


def _batch_se(draws: np.ndarray, prob: float, batches: int = 10) -> float:
    """Monte Carlo standard error of a quantile by batch means (naive, plain loop)."""
    parts = np.array_split(draws, batches)
    values = [np.quantile(p, prob) for p in parts]
    return float(np.std(values, ddof=1) / np.sqrt(batches))


@pytest.mark.parametrize("q", [1, 2])
def test_simulated_critical_values_match_bai_perron(q):
    # The shipped null distribution (5000 replications, grid 400 with two-grid extrapolation)
    # against Bai & Perron (2003), eps = 0.15, 10 % and 5 %: within 3 Monte Carlo standard errors
    # plus 0.05 for the remaining grid bias.
    draws = null_draws(q, 0.15)
    for k in range(1, 6):
        for level in (0.10, 0.05):
            sim = np.quantile(draws[:, k - 1], 1 - level)
            tol = 3 * _batch_se(draws[:, k - 1], 1 - level) + 0.05
            assert abs(sim - BP_SUPF_015[q][level][k - 1]) < tol, (q, k, level, sim, tol)


def test_simulated_supf1_near_andrews():
    # Andrews (2003) corrigendum Table 1, pi0 = 0.15, p = 1: 10 % 7.12, 5 % 8.68 (sup-Wald, the
    # same functional as supF(1) with q = 1; the tables differ by ~0.1 across designs).
    cv = simulated_critical_values(null_draws(1, 0.15)[:, 0])
    assert abs(cv[0.10] - 7.12) < 0.3 and abs(cv[0.05] - 8.68) < 0.4


def test_simulation_is_seeded_and_executor_free():
    seeds = task_seeds(5, 2)
    a = simulate_chunk((1, 0.2, 40, 3, 4, seeds[0]))
    b = simulate_chunk((1, 0.2, 40, 3, 4, seeds[0]))
    assert np.array_equal(a, b) and a.shape == (4, 3)
    # each supF(k) is positive and the functional decreases in k on average
    assert np.all(a > 0)


@pytest.mark.slow
@pytest.mark.parametrize("q", [1, 2, 3])
def test_simulated_critical_values_full_comparison(q):
    # 20 000 replications, all three published levels (10 %, 5 %, 1 %), eps = 0.15, k = 1..5.
    draws = null_draws(q, 0.15, reps=20000, seed=7, executor="processes")
    for k in range(1, 6):
        for level in (0.10, 0.05, 0.01):
            sim = np.quantile(draws[:, k - 1], 1 - level)
            tol = 3 * _batch_se(draws[:, k - 1], 1 - level, 20) + 0.05
            assert abs(sim - BP_SUPF_015[q][level][k - 1]) < tol, (q, k, level, sim, tol)
