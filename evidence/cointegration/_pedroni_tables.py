"""Adjustment terms of Pedroni's (1999) panel cointegration statistics.

Provenance: Pedroni, P. (1999). Critical values for cointegration tests in heterogeneous panels
with multiple regressors. Oxford Bulletin of Economics and Statistics 61(S1), 653–670, Table 2
(the table number is from memory), as tabulated in a published implementation (Neal 2014, Stata
Journal 14(3)) that copies Pedroni's table, where the rows for one regressor are rounded to two
decimals; not re-read from the printed paper. Pedroni's no-deterministics case is not included.

``MOMENTS[trend][m]`` (trend ``"constant"`` or ``"trend"``) holds, for ``m`` regressors (1 to 7),
the asymptotic mean ``mu`` and variance ``v`` of each statistic, in the order of
``STATISTICS``. The panel ADF statistic uses the panel PP terms and the group ADF statistic the
group PP terms (as in Pedroni 1999).
Standardised statistic: ``(X_NT - mu sqrt(N)) / sqrt(v)``.
"""

from __future__ import annotations

__all__ = ["MOMENTS", "STATISTICS"]

#: Column order of the table: panel v, panel rho, panel t, group rho, group t.
STATISTICS = ("panel v", "panel rho", "panel t", "group rho", "group t")

_Table = dict[int, tuple[tuple[float, ...], tuple[float, ...]]]

_C: _Table = {  # heterogeneous intercepts: mu (5 columns), then v (5 columns)
    1: ((8.62, -6.02, -1.73, -9.05, -2.03), (60.75, 31.27, 0.93, 35.98, 0.66)),
    2: ((11.754, -9.495, -2.177, -12.938, -2.453), (104.546, 57.610, 0.964, 51.49, 0.618)),
    3: ((15.197, -13.256, -2.576, -16.888, -2.827), (151.094, 81.772, 0.923, 67.123, 0.585)),
    4: ((18.910, -17.163, -2.930, -20.841, -3.157), (190.661, 99.331, 0.843, 81.835, 0.560)),
    5: ((22.715, -21.013, -3.241, -24.775, -3.452), (231.864, 119.546, 0.800, 98.278, 0.553)),
    6: ((26.603, -24.944, -3.531, -28.720, -3.726), (270.451, 134.341, 0.750, 113.131, 0.542)),
    7: ((30.457, -28.795, -3.795, -32.538, -3.976), (293.431, 144.615, 0.685, 126.059, 0.525)),
}
_CT: _Table = {  # heterogeneous intercepts and trends
    1: ((17.86, -10.54, -2.29, -13.65, -2.53), (101.68, 39.52, 0.66, 50.91, 0.56)),
    2: ((21.162, -14.011, -2.648, -17.359, -2.872), (160.249, 64.219, 0.690, 66.387, 0.555)),
    3: ((24.556, -17.600, -2.967, -21.116, -3.179), (198.167, 83.815, 0.686, 81.832, 0.548)),
    4: ((28.046, -21.287, -3.262, -24.930, -3.464), (239.425, 103.905, 0.688, 97.362, 0.543)),
    5: ((31.738, -25.130, -3.545, -28.849, -3.737), (276.997, 124.613, 0.686, 113.145, 0.538)),
    6: ((35.537, -28.981, -3.806, -32.716, -3.986), (310.982, 138.227, 0.654, 127.989, 0.530)),
    7: ((39.231, -32.756, -4.047, -36.494, -4.217), (348.217, 154.378, 0.638, 140.756, 0.518)),
}

MOMENTS: dict[str, _Table] = {"constant": _C, "trend": _CT}
