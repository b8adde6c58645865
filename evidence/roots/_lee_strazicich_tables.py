"""Critical values of the Lee–Strazicich minimum LM unit-root test.

Provenance: **from memory** (not re-read from the papers when this module was written; verify
against the originals before relying on the third decimal). Both tables are for T = 100 and
i.i.d. errors, as printed in the papers.

* One break: Lee, J. & Strazicich, M. C. (2004). Minimum LM unit root test with one structural
  break. Working Paper 04-17, Department of Economics, Appalachian State University, Table 1.
  Crash model (level shift): one row. Break model (level and trend shift): one row per break
  fraction lambda = T_B / T in {0.1, ..., 0.5}; by symmetry lambda and 1 - lambda share a row.
* Two breaks: Lee, J. & Strazicich, M. C. (2003). Minimum Lagrange multiplier unit root test with
  two structural breaks. Review of Economics and Statistics 85(4), 1082–1089, Table 2. Crash
  model: one row. Break model: one row per pair (lambda1, lambda2) of break fractions.

For the break model the critical value depends on where the breaks are; the common practice,
followed here, is to read the row of the tabulated fraction(s) nearest to the estimated ones.
The crash model's distribution does not depend on the break fractions.

A seeded simulation in ``tests/test_roots_series.py`` (slow) checks the one-break crash 5 % value
against the simulated 5 % quantile of our own statistic at T = 100.
"""

from __future__ import annotations

import numpy as np

__all__ = ["CRASH_ONE", "BREAK_ONE", "CRASH_TWO", "BREAK_TWO", "lookup"]

LEVELS = (0.01, 0.05, 0.10)

#: One break, crash model: 1 %, 5 %, 10 % (Lee & Strazicich 2004, Table 1; from memory).
CRASH_ONE = (-4.239, -3.566, -3.211)

#: One break, break model, by lambda (Lee & Strazicich 2004, Table 1; from memory).
BREAK_ONE = {
    0.1: (-5.11, -4.50, -4.21),
    0.2: (-5.07, -4.47, -4.20),
    0.3: (-5.15, -4.45, -4.18),
    0.4: (-5.05, -4.50, -4.18),
    0.5: (-5.11, -4.51, -4.17),
}

#: Two breaks, crash model (Lee & Strazicich 2003, Table 2; from memory).
CRASH_TWO = (-4.545, -3.842, -3.504)

#: Two breaks, break model, by (lambda1, lambda2) (Lee & Strazicich 2003, Table 2; from memory).
BREAK_TWO = {
    (0.2, 0.4): (-6.16, -5.59, -5.27),
    (0.2, 0.6): (-6.41, -5.74, -5.32),
    (0.2, 0.8): (-6.33, -5.71, -5.33),
    (0.4, 0.6): (-6.45, -5.67, -5.31),
    (0.4, 0.8): (-6.42, -5.65, -5.32),
    (0.6, 0.8): (-6.32, -5.73, -5.32),
}


def lookup(model: str, fractions: tuple[float, ...]) -> tuple[dict[float, float], str]:
    """Critical values for ``model`` ("level" or "both") and the estimated break fractions.

    Returns the values keyed by level and a note saying which row was read.
    """
    if model == "level":
        row = CRASH_ONE if len(fractions) == 1 else CRASH_TWO
        paper = "Lee & Strazicich (2004), Table 1" if len(fractions) == 1 else \
            "Lee & Strazicich (2003), Table 2"
        return dict(zip(LEVELS, row, strict=True)), f"{paper}, crash model, T=100 (from memory)"
    if len(fractions) == 1:
        lam = min(fractions[0], 1.0 - fractions[0])
        keys = np.array(sorted(BREAK_ONE))
        key = float(keys[np.argmin(np.abs(keys - lam))])
        return (dict(zip(LEVELS, BREAK_ONE[key], strict=True)),
                f"Lee & Strazicich (2004), Table 1, break model, lambda={key:.1f} (nearest to "
                f"{fractions[0]:.2f}), T=100 (from memory)")
    pairs = sorted(BREAK_TWO)
    dist = [abs(a - fractions[0]) + abs(b - fractions[1]) for a, b in pairs]
    key2 = pairs[int(np.argmin(dist))]
    return (dict(zip(LEVELS, BREAK_TWO[key2], strict=True)),
            f"Lee & Strazicich (2003), Table 2, break model, lambda=({key2[0]:.1f}, {key2[1]:.1f}) "
            f"(nearest to ({fractions[0]:.2f}, {fractions[1]:.2f})), T=100 (from memory)")
