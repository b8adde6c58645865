"""Panel cointegration constants: published vs ours, and published vs simulated.

Run: ``python paper_checks/cointegration.py``. Three parts:

1. The adjustment terms shipped in ``evidence/cointegration/_pedroni_tables.py`` against Pedroni
   (1999), OBES 61(S1), Table 2, and the moments in ``_westerlund_tables.py`` against Westerlund
   (2007), OBES 69(6), Table 1 (as tabulated in published implementations; see the modules'
   docstrings).
2. Pedroni's means reproduced by simulating the package's unstandardised statistics (N = 50,
   T = 500, no kernel correction, 200 draws, seed 2026): a check of our formulas, not of the table.
3. Westerlund's means reproduced the same way (N = 20, T = 500, no lags, 200 draws).
4. Kao's (1999) constants (from memory: mean -3 and variance 10.2 of the rho statistic, mean
   -sqrt(1.5) and variance 0.8 of the t statistic) against the same kind of simulation.
"""

from __future__ import annotations

import numpy as np

from evidence.cointegration import _pedroni_tables, _westerlund_tables
from evidence.cointegration._residual_math import kao_raw, pedroni_raw, static_residuals
from evidence.cointegration._westerlund import westerlund_raw

# Pedroni (1999) Table 2: heterogeneous intercepts, m = 1 and m = 2; intercepts and trends, m = 1.
PEDRONI_PUBLISHED = {
    ("constant", 1): ((8.62, -6.02, -1.73, -9.05, -2.03), (60.75, 31.27, 0.93, 35.98, 0.66)),
    ("constant", 2): ((11.754, -9.495, -2.177, -12.938, -2.453), (104.546, 57.610, 0.964, 51.49, 0.618)),
    ("trend", 1): ((17.86, -10.54, -2.29, -13.65, -2.53), (101.68, 39.52, 0.66, 50.91, 0.56)),
}
# Westerlund (2007) Table 1, K = 1: (mean, variance) for constant and constant + trend.
WESTERLUND_PUBLISHED = {
    ("Gt", "constant"): (-1.7776, 0.8071), ("Ga", "constant"): (-7.1423, 29.6336),
    ("Pt", "constant"): (-1.4476, 0.9885), ("Pa", "constant"): (-4.2303, 19.7090),
    ("Gt", "trend"): (-2.3664, 0.6603), ("Ga", "trend"): (-12.0116, 46.2420),
    ("Pt", "trend"): (-2.1124, 0.7649), ("Pa", "trend"): (-8.9326, 37.5948),
}


def main() -> int:
    failures = 0
    print("Pedroni (1999) Table 2 adjustment terms: published vs shipped")
    for (trend, m), (mu, v) in PEDRONI_PUBLISHED.items():
        ours_mu, ours_v = _pedroni_tables.MOMENTS[trend][m]
        for name, a, b, c, d in zip(_pedroni_tables.STATISTICS, mu, ours_mu, v, ours_v):
            ok = a == b and c == d
            failures += not ok
            print(f"  {trend:<2} m={m} {name:<9} mu {a:>9.3f} ours {b:>9.3f}   v {c:>8.3f} ours "
                  f"{d:>8.3f}  {'same' if ok else 'DIFFERENT'}")
    print("Westerlund (2007) Table 1 moments, K = 1: published vs shipped")
    for (stat, trend), (mean, var) in WESTERLUND_PUBLISHED.items():
        ours = _westerlund_tables.MOMENTS[stat][trend]
        ok = ours[0][0] == mean and ours[1][0] == var
        failures += not ok
        print(f"  {stat} {trend:<2} E {mean:>9.4f} ours {ours[0][0]:>9.4f}   Var {var:>8.4f} ours "
              f"{ours[1][0]:>8.4f}  {'same' if ok else 'DIFFERENT'}")

    rng = np.random.default_rng(2026)
    names = ("panel v", "panel rho", "panel PP", "group rho", "group PP")
    draws, kao = [], []
    for _ in range(200):
        x = np.cumsum(rng.standard_normal((50, 500)), axis=1)[:, :, None]
        y = np.cumsum(rng.standard_normal((50, 500)), axis=1)
        e, _ = static_residuals(y, x, "constant")
        raw = pedroni_raw(e, np.diff(y, axis=1), np.diff(x, axis=1), np.zeros(50, int),
                          trend="constant", hac_lags=0)
        draws.append([raw[k] / np.sqrt(50) for k in names])
        k = kao_raw(y, x, 0, hac_lags=0)
        kao.append((k["t_rho"], k["t_df"]))
    mean, var = np.mean(draws, axis=0), np.var(np.array(draws) * np.sqrt(50), axis=0)
    mu, v = _pedroni_tables.MOMENTS["constant"][1]
    print("Pedroni (1999) Table 2, intercepts, m = 1: published vs simulated (N=50, T=500, 200 draws)")
    for name, a, b, c, d in zip(names, mu, mean, v, var):
        ok = abs(a - b) <= 0.03 * abs(a) + 0.1
        failures += not ok
        print(f"  {name:<9} mu {a:>8.3f} simulated {b:>8.3f}   v {c:>7.3f} simulated {d:>7.3f}  "
              f"{'close' if ok else 'FAR'}")
    west = []
    zeros = np.zeros(20, int)
    for _ in range(200):
        x = np.cumsum(rng.standard_normal((20, 500)), axis=1)[:, :, None]
        y = np.cumsum(rng.standard_normal((20, 500)), axis=1)
        raw = westerlund_raw(y, x, zeros, zeros, "constant")
        west.append([raw["Gt"], raw["Ga"], raw["Pt"] / np.sqrt(20), raw["Pa"]])
    print("Westerlund (2007) Table 1, constant, K = 1: published vs simulated (N=20, T=500, 200 draws)")
    for j, stat in enumerate(("Gt", "Ga", "Pt", "Pa")):
        mean, var = (m[0] for m in _westerlund_tables.MOMENTS[stat]["constant"])
        sim = float(np.mean([w[j] for w in west]))
        ok = abs(sim - mean) <= 4 * np.sqrt(var / 20 / 200) + 0.02 * abs(mean)
        failures += not ok
        label = "E(Pt)/sqrt(N)" if stat == "Pt" else f"E({stat})"
        print(f"  {label:<14} {mean:>9.4f} simulated {sim:>9.4f}  {'close' if ok else 'FAR'}")
    kao = np.array(kao)
    checks = [("mean T(rho-1)", -3.0, kao[:, 0].mean()),
              ("var sqrt(N)(T(rho-1)+3)", 10.2, np.var(np.sqrt(50) * (kao[:, 0] + 3))),
              ("mean t_rho/sqrt(N)", -np.sqrt(1.5), kao[:, 1].mean() / np.sqrt(50)),
              ("var t_rho", 0.8, np.var(kao[:, 1]))]
    print("Kao (1999) constants (from memory) vs simulated (N=50, T=500, 200 draws)")
    for name, a, b in checks:
        ok = abs(a - b) <= 0.2 * abs(a)
        failures += not ok
        print(f"  {name:<24} {a:>8.4f} simulated {b:>8.4f}  {'close' if ok else 'FAR'}")
    return 1 if failures else 0


if __name__ == "__main__":
    raise SystemExit(main())
