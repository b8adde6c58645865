"""From a claim to its grade: is a decline of territorial emissions since 2005 significant, lasting,
robust and fast enough?

The claim, on the invented demo panel: "these regions have absolutely decoupled territorial
emissions from GDP since 2005". ``ev.grade`` answers on four axes (direction, duration,
robustness, sufficiency) and gives each region a rung; ``ev.grade_table`` writes the table for the
paper. See docs/methods/grading.md for the tests behind each axis.

Usage: ``python examples/grade_a_claim.py``
"""

from __future__ import annotations

import evidence as ev


def main() -> None:
    panel = ev.demo_panel()
    print(panel.audit.head())  # what is missing or left out, and why

    # Description first: trend growth, Tapio class and OECD factor over the window.
    rates = ev.rates(panel, "ghg_territorial", "gdp", window=(2005, 2023))
    print(rates.to_frame()["tapio_class"].value_counts().to_string())

    # The grade of four regions whose planted type the invented scenario records: an absolute
    # decoupler, one that offshores its emissions, a relative decoupler and a coupled region.
    truth = ev.demo_truth()["regions"]
    regions = ["Aldwyr", "Kestmoor", "Vellmark", "Lunderra"]
    print({name: truth[name]["type"] for name in regions})
    res = ev.grade(panel.select(regions), ["ghg_territorial"], "gdp", window=(2005, 2023),
                   consumption={"ghg_territorial": "ghg_consumption"},
                   criteria=ev.Criteria(required_rate=0.05))
    print(res.summary())
    print(ev.grade_table(res, "markdown"))


if __name__ == "__main__":
    main()
