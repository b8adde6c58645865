"""Do regions converge in emissions per person? Beta, sigma and club convergence, and a stochastic
convergence test.

On the invented demo panel (three planted clubs, ``ev.demo_truth()["clubs"]``): beta convergence
(the growth regression on the initial level), sigma convergence (dispersion over time), the
Phillips–Sul log t test and its clubs, and stochastic convergence (unit-root tests on each
region's log distance from the cross-section mean). Methods: docs/methods/convergence.md.

Usage: ``python examples/convergence.py``
"""

from __future__ import annotations

import evidence as ev


def main() -> None:
    panel = ev.demo_panel().with_per_capita("ghg_territorial", "population", name="ghg_pc")

    beta = ev.beta_convergence(panel, "ghg_pc", window=(1995, 2023))
    print(beta.summary())

    sigma = ev.sigma_convergence(panel, "ghg_pc", window=(1995, 2023))
    print(sigma.summary())

    clubs = ev.club_convergence(panel, "ghg_pc")
    print(clubs.summary())
    print("planted clubs:", ev.demo_truth()["clubs"])

    stochastic = ev.stochastic_convergence(panel, "ghg_pc")
    print(stochastic.summary())


if __name__ == "__main__":
    main()
