"""Regenerate the null distributions that ship with the package (``evidence/_nulls/``).

Run ``python -m evidence._make_nulls``. Each file is the seeded simulation that the package would
otherwise run (and cache) on first use — same function, same replications, grid and seed (see
``evidence/breaks/_simulate.py``: ``NULL_REPS``, ``NULL_GRID``, ``NULL_SEED``) — so shipping them
changes no result, only the first-use time. Configurations: the Bai–Perron null of the ``level``
design with one changing regressor at trims 0.05–0.25, and of the ``trend`` design (intercept and
slope) at trims 0.15–0.25, the ones used by default and by the grade. The finite-sample tables
of the default p-values (``evidence/breaks/_calibrate.py``) depend on each series' length and
are simulated on first use and cached, not shipped.
"""

from __future__ import annotations

import os
from pathlib import Path

CONFIGS = [("level", 1, t) for t in (0.05, 0.10, 0.15, 0.20, 0.25)] + \
          [("trend", 2, t) for t in (0.15, 0.20, 0.25)]


def main() -> None:
    """Simulate every configuration into the shipped folder."""
    target = Path(__file__).resolve().parent / "_nulls"
    target.mkdir(exist_ok=True)
    os.environ["EVIDENCE_CACHE_DIR"] = str(target)
    from evidence.breaks._simulate import null_draws

    for design, q, trim in CONFIGS:
        draws = null_draws(q, trim, design=design, executor="processes")
        print(f"{design} q={q} trim={trim}: {draws.shape}")


if __name__ == "__main__":
    main()
