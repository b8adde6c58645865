"""Asymptotic moments of Westerlund's (2007) error-correction panel cointegration statistics.

Provenance: Westerlund, J. (2007). Testing for error correction in panel data. Oxford Bulletin of
Economics and Statistics 69(6), 709–748, Table 1 (simulated moments; table number from memory).
The values are those of the paper's matrices as carried by the author's own published implementation
(Persyn & Westerlund 2008, Stata Journal 8(2), 232–241); not re-read from the printed paper.

``MOMENTS[statistic][trend]`` is a pair ``(means, variances)`` with one entry for each number of
regressors K = 1..6. Trend keys: ``"none"`` no deterministics, ``"constant"`` constant, ``"trend"`` constant
and trend. Standardisation: ``sqrt(N) (G - E) / sqrt(Var)`` for Gt, Ga and Pa, and
``(Pt - sqrt(N) E) / sqrt(Var)`` for Pt (Pt already carries the sqrt(N) scale).
"""

from __future__ import annotations

__all__ = ["MOMENTS", "STATISTICS"]

STATISTICS = ("Gt", "Ga", "Pt", "Pa")

MOMENTS: dict[str, dict[str, tuple[tuple[float, ...], tuple[float, ...]]]] = {
    "Gt": {
        "none": ((-0.9763, -1.3816, -1.7093, -1.9789, -2.1985, -2.4262),
                 (1.0823, 1.0981, 1.0489, 1.0576, 1.0351, 1.0409)),
        "constant": ((-1.7776, -2.0349, -2.2332, -2.4453, -2.6462, -2.8358),
                     (0.8071, 0.8481, 0.8886, 0.9119, 0.9083, 0.9236)),
        "trend": ((-2.3664, -2.5284, -2.7040, -2.8639, -3.0146, -3.1710),
                  (0.6603, 0.7070, 0.7586, 0.8228, 0.8477, 0.8599)),
    },
    "Ga": {
        "none": ((-3.8022, -5.8239, -7.8108, -9.8791, -11.7239, -13.8581),
                 (20.6868, 29.9016, 39.0109, 50.5741, 58.9595, 69.5967)),
        "constant": ((-7.1423, -9.1249, -10.9667, -12.9561, -14.9752, -17.0673),
                     (29.6336, 39.3428, 49.4880, 58.7035, 67.9499, 79.1093)),
        "trend": ((-12.0116, -13.6324, -15.5262, -17.3648, -19.2533, -21.2479),
                  (46.2420, 53.7428, 64.5591, 74.7403, 84.7990, 94.0024)),
    },
    "Pt": {
        "none": ((-0.5105, -0.9370, -1.3169, -1.6167, -1.8815, -2.1256),
                 (1.3624, 1.7657, 1.7177, 1.6051, 1.4935, 1.4244)),
        "constant": ((-1.4476, -1.7131, -1.9206, -2.1484, -2.3730, -2.5765),
                     (0.9885, 1.0663, 1.1168, 1.1735, 1.1684, 1.1589)),
        "trend": ((-2.1124, -2.2876, -2.4633, -2.6275, -2.7858, -2.9537),
                  (0.7649, 0.8137, 0.8857, 0.9985, 0.9918, 0.9898)),
    },
    "Pa": {
        "none": ((-1.0263, -2.4988, -4.2699, -6.1141, -8.0317, -10.0074),
                 (8.3827, 24.0223, 39.8827, 53.4518, 63.2406, 76.6757)),
        "constant": ((-4.2303, -5.8650, -7.4599, -9.3057, -11.3152, -13.3180),
                     (19.7090, 31.2637, 42.9975, 57.4844, 69.4374, 81.0384)),
        "trend": ((-8.9326, -10.4874, -12.1672, -13.8889, -15.6815, -17.6515),
                  (37.5948, 45.6890, 57.9985, 74.1258, 81.3934, 91.2392)),
    },
}
