"""Grunfeld investment data: within estimates, published vs ours.

Run: ``python paper_checks/elasticity.py``. Data: statsmodels' Grunfeld data, 10 firms (American
Steel dropped), as in Baltagi, Econometric Analysis of Panel Data, Table 2.1 (attribution from
memory; values to 7 digits from R plm 2.6.2, shared/reference_values.md section 12.2).
"""

from __future__ import annotations

import statsmodels.api as sm

import evidence as ev

PUBLISHED = {"value": (0.1101238, 0.0118567), "capital": (0.3100653, 0.0173545)}


def main() -> int:
    data = sm.datasets.grunfeld.load_pandas().data
    data = data[data.firm != "American Steel"].assign(year=lambda d: d.year.astype(int))
    panel = ev.load_panel(data[["firm", "year", "invest", "value", "capital"]], unit="firm")
    est = ev.elasticity(panel, "invest", "value", controls=["capital"], log=False,
                        cov="classical")
    failures = 0
    print(f"{'term':<10} {'published b':>12} {'ours':>12} {'published se':>13} {'ours':>12}")
    for term, (b, se) in PUBLISHED.items():
        ours_b, ours_se = est.params[term], est.std_errors[term]
        ok = abs(ours_b - b) < 5e-7 and abs(ours_se - se) < 5e-7
        failures += not ok
        print(f"{term:<10} {b:>12.7f} {ours_b:>12.7f} {se:>13.7f} {ours_se:>12.7f}  "
              f"{'same' if ok else 'DIFFERENT'}")
    print(f"R2 within: published 0.76676, ours {est.details['r2_within']:.5f}")
    return 1 if failures else 0


if __name__ == "__main__":
    raise SystemExit(main())
