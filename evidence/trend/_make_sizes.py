"""The size card of the trend tests: ``python -m evidence.trend._make_sizes`` rewrites
``evidence/_sizes/trend.json``.

For every test of :data:`evidence.trend.TREND_TESTS`, every length in :data:`YEARS` and every
noise process (Gaussian AR(1) with ρ = 0, 0.5, 0.8, 0.9 and a random walk): the rejection rate
of the one-sided 5 % test of a falling trend when the trend is flat (``null``), and when it falls
2 % a year with AR(1) noise ρ = 0.5 of innovations 3 % (``alternative``). Seeded; ``REPS``
series per cell, computed in one batch.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from evidence._montecarlo import ar1
from evidence.trend.robust import TREND_TESTS, trend_batch

YEARS = (10, 15, 20, 25, 30, 35, 40, 50)
PROCESSES = {"AR(1) rho=0": 0.0, "AR(1) rho=0.5": 0.5, "AR(1) rho=0.8": 0.8,
             "AR(1) rho=0.9": 0.9, "random walk": 1.0}
REPS = 5000
SEED = 20261202


def _noise(rng: np.random.Generator, n: int, rho: float) -> np.ndarray:
    shocks = rng.standard_normal((n, REPS))
    return shocks.cumsum(axis=0) if rho == 1.0 else ar1(shocks, rho)


def entries() -> list[dict]:
    out = []
    for n in YEARS:
        for test in TREND_TESTS:
            rng = np.random.default_rng([SEED, n, TREND_TESTS.index(test)])
            cells = [(name, "null", _noise(rng, n, rho)) for name, rho in PROCESSES.items()]
            cells.append(("decline 2 %/yr, AR(1) rho=0.5, innovations 3 %", "alternative",
                          -0.02 * np.arange(n)[:, None] + 0.03 * _noise(rng, n, 0.5)))
            for name, hypothesis, y in cells:
                rate = float(np.mean(trend_batch(y, test=test)["pvalue"] < 0.05))
                out.append({"test": test, "options": "", "dgp": name, "hypothesis": hypothesis,
                            "n_units": None, "n_years": n, "rejection": round(rate, 4),
                            "mc_se": round(float(np.sqrt(max(rate * (1 - rate), 1e-12) / REPS)), 4),
                            "reps": REPS})
    return out


def main() -> None:
    data = {"family": "trend", "generated_by": "python -m evidence.trend._make_sizes",
            "seed": SEED, "alpha": 0.05, "entries": entries()}
    path = Path(__file__).resolve().parents[1] / "_sizes" / "trend.json"
    path.parent.mkdir(exist_ok=True)
    path.write_text(json.dumps(data, indent=1, sort_keys=True) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
