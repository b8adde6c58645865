"""Environmental Kuznets curve: pressure on a polynomial of log activity, turning points, U test.

Caution (stated in every result): a polynomial of an integrated regressor is not integrated of the
same order, so cointegration-based inference on ``x, x²`` is not valid (Wagner 2015); treat the
curve as a description of the sample, and the turning point as conditional on the specification.

References
----------
lindmehlum2010 : Lind, J. T. & Mehlum, H. (2010). With or without U? The appropriate test for a
    U-shaped relationship. Oxford Bulletin of Economics and Statistics 72(1), 109–118.
fieller1954 : Fieller, E. C. (1954). Some problems in interval estimation. Journal of the Royal
    Statistical Society B 16(2), 175–185.
wagner2015 : Wagner, M. (2015). The environmental Kuznets curve, cointegration and nonlinearity.
    Journal of Applied Econometrics 30(6), 948–967.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np
import pandas as pd
from scipy import stats

from evidence._typing import Window
from evidence._validation import check_alpha, check_choice
from evidence.elasticity._design import build_design
from evidence.elasticity.estimate import ESTIMATORS
from evidence.elasticity.fixed_effects import COVARIANCES, fit_fixed_effects
from evidence.elasticity.heterogeneous import fit_mean_group
from evidence.errors import DataError, SpecError
from evidence.panel import Panel, derived_name
from evidence.results import Estimate, ResultProtocol, TestResult, excluded_frame

__all__ = ["ekc", "EKCResult", "fieller_interval", "u_shape_test", "EKC_CAUTION"]

EKC_CAUTION = ("Polynomials of an integrated regressor are not integrated of the same order, so "
               "cointegration-based inference on them is not valid (Wagner 2015); the curve "
               "describes this sample and specification.")


@dataclass(frozen=True, eq=False, repr=False)
class EKCResult(ResultProtocol):
    """The fitted curve (``estimate``), its turning points and the Lind–Mehlum U test.

    Attributes
    ----------
    estimate : Estimate
        The polynomial regression.
    turning_points : pandas.DataFrame
        One row per turning point: ``point`` (log activity), ``std_error``, delta-method and
        Fieller intervals, ``level`` (activity) and ``inside_range``.
    u_test : TestResult
        Lind & Mehlum's test (inapplicable for the cubic).
    degree : int
        2 (quadratic) or 3 (cubic).
    data_range : (float, float)
        Smallest and largest log activity in the sample.
    warnings : tuple of str
        The caution on polynomials of integrated regressors, and the estimate's warnings.
    details : mapping
        The activity term, per-capita flag and ``alpha``.
    excluded : pandas.DataFrame
        Rows and units left out (unit, column, years, reason).
    """

    estimate: Estimate
    turning_points: pd.DataFrame
    u_test: TestResult
    degree: int
    data_range: tuple[float, float]
    warnings: tuple[str, ...] = ()
    details: Mapping[str, Any] = field(default_factory=dict)
    excluded: pd.DataFrame = field(default_factory=excluded_frame)

    _repr_fields: ClassVar[tuple[str, ...]] = ("degree",)

    def __repr__(self) -> str:
        points = ", ".join(f"{p:.4f}" for p in self.turning_points["point"])
        return f"EKCResult(degree={self.degree}, turning_points=[{points}])"

    def summary(self) -> str:
        """The estimate, the turning points and the U test in words."""
        lines = [self.estimate.summary(), "", "Turning points (log activity; level in brackets):"]
        for row in self.turning_points.itertuples():
            inside = "inside" if row.inside_range else "outside"
            lines.append(f"  {row.point:.4f} [{row.level:.4g}]  s.e. {row.std_error:.4f}  "
                         f"Fieller {row.fieller_lower:.4f} to {row.fieller_upper:.4f}  "
                         f"({inside} the data range {self.data_range[0]:.4f} to "
                         f"{self.data_range[1]:.4f})")
        lines += ["", self.u_test.summary()]
        lines += [f"caution: {w}" for w in self.warnings]
        if len(self.excluded):
            lines.append(f"left out: {len(self.excluded)} item(s); see .excluded")
        return "\n".join(lines)

    def to_frame(self) -> pd.DataFrame:
        """The turning points (a copy)."""
        return self.turning_points.copy()


def _critical(df: float | None, alpha: float) -> float:
    return float(stats.norm.ppf(1 - alpha / 2) if df is None else stats.t.ppf(1 - alpha / 2, df))


def fieller_interval(b1: float, b2: float, v11: float, v12: float, v22: float,
                     t: float) -> tuple[float, float]:
    """Fieller (1954) interval for ``x* = -b1 / (2 b2)``: ``{x: (b1 + 2 b2 x)² <= t² Var(b1 + 2 b2 x)}``.

    Solves ``(4b2² − 4t²V22) x² + (4b1b2 − 4t²V12) x + (b1² − t²V11) <= 0``; bounded only when
    ``4b2² > 4t²V22`` (``b2`` significant), else ``(nan, nan)``.
    """
    a = 4 * b2**2 - 4 * t**2 * v22
    b = 4 * b1 * b2 - 4 * t**2 * v12
    c = b1**2 - t**2 * v11
    disc = b * b - 4 * a * c
    if a <= 0 or disc < 0:
        return math.nan, math.nan
    root = math.sqrt(disc)
    return (-b - root) / (2 * a), (-b + root) / (2 * a)


def u_shape_test(b1: float, b2: float, v11: float, v12: float, v22: float, x_low: float,
                 x_high: float, *, df: float | None, nobs: int) -> TestResult:
    """Lind & Mehlum (2010) test of a U (``b2 > 0``) or inverted U (``b2 < 0``) on ``[x_low, x_high]``.

    The slope ``s(x) = b1 + 2 b2 x`` must change sign inside the interval. For an inverted U,
    H0: ``s(x_low) <= 0`` or ``s(x_high) >= 0``; the statistic is ``min(t_low, -t_high)`` with
    ``t = s(x) / se(s(x))``, ``se² = V11 + 4x V12 + 4x² V22``, and the p-value the larger of the
    two one-sided p-values (Sasabuchi's likelihood-ratio principle). Signs reverse for a U.
    """
    def slope_t(x: float) -> float:
        return (b1 + 2 * b2 * x) / math.sqrt(v11 + 4 * x * v12 + 4 * x * x * v22)

    t_low, t_high = slope_t(x_low), slope_t(x_high)
    inverted = b2 < 0
    stat = min(t_low, -t_high) if inverted else min(-t_low, t_high)
    sf = (lambda v: stats.norm.sf(v)) if df is None else (lambda v: stats.t.sf(v, df))
    shape = "inverted U" if inverted else "U"
    return TestResult(
        test=f"Lind-Mehlum test of an {shape}" if inverted else f"Lind-Mehlum test of a {shape}",
        statistic=stat, pvalue=float(sf(stat)),
        critical_values={a: float(stats.norm.isf(a) if df is None else stats.t.isf(a, df))
                         for a in (0.01, 0.05, 0.10)},
        null=f"monotone or not an {shape} on the data range",
        alternative=f"{shape}: the slope changes sign inside [{x_low:.4g}, {x_high:.4g}]",
        nobs=nobs, details={"t_low": t_low, "t_high": t_high, "x_low": x_low, "x_high": x_high,
                            "slope_low": b1 + 2 * b2 * x_low, "slope_high": b1 + 2 * b2 * x_high},
        reference="lindmehlum2010")


def ekc(panel: Panel, pressure: str, activity: str, *, population: str | None = None,
        degree: int = 2, controls: Sequence[str] = (), estimator: str = "fe",
        cov: str | None = None, hac_lags: int | None = None, alpha: float = 0.05,
        window: Window | str | None = None) -> EKCResult:
    """Fit ``ln p_it = a_i + b1 x_it + b2 x_it² (+ b3 x_it³) + c' z_it + e_it``, ``x = ln a_it``.

    With ``population``, pressure and activity are per capita first. Estimators: ``fe``, ``twfe``
    (linearmodels, covariance ``cov``) or the mean-group family (``mg``, ``ccemg``, ``ccep``,
    ``amg``). Turning points solve ``s(x) = 0``; for the quadratic, ``x* = −b1/(2 b2)`` with a
    delta-method standard error and a Fieller interval, and the Lind–Mehlum U test on the data
    range. For the cubic, the real roots with delta-method errors (no Fieller interval or U test).
    """
    estimator = check_choice("estimator", estimator, ESTIMATORS)
    if degree not in (2, 3) or isinstance(degree, bool):
        raise SpecError(f"degree={degree!r} must be 2 (quadratic) or 3 (cubic).")
    alpha = check_alpha(alpha)
    work = panel
    p_col, a_col = pressure, activity
    if population is not None:
        p_col, a_col = derived_name("per_capita", pressure), derived_name("per_capita", activity)
        work = (work.with_per_capita(pressure, population, name=p_col)
                .with_per_capita(activity, population, name=a_col))
    y_name, x_name = derived_name("log", p_col), derived_name("log", a_col)
    work = work.with_log(p_col, name=y_name).with_log(a_col, name=x_name)
    powers = [x_name]
    log_activity = work.frame[x_name]
    for power, suffix in ((2, "sq"), (3, "cu"))[: degree - 1]:
        name = f"{x_name}_{suffix}"
        work = work.with_column(name, log_activity ** power)
        powers.append(name)
    design = build_design(work, y_name, x_name, controls=(*powers[1:], *controls),
                          log=False, window=window)
    if estimator in ("fe", "twfe"):
        cov = check_choice("cov", cov or "driscoll-kraay", COVARIANCES)
        est = fit_fixed_effects(design, estimator=estimator, cov=cov, hac_lags=hac_lags)
    else:
        if cov is not None:
            raise SpecError("cov= applies to estimator='fe' or 'twfe'.")
        est = fit_mean_group(design, estimator=estimator)
    x = design.x[x_name].to_numpy()
    x_low, x_high = float(x.min()), float(x.max())
    b = est.params[powers].to_numpy()
    v = est.cov.loc[powers, powers].to_numpy()
    t_crit = _critical(est.df_resid, alpha)
    if degree == 2:
        points = _quadratic_points(b, v, t_crit)
        if b[1] == 0:
            raise DataError("the squared term is exactly zero; there is no turning point.")
        u_test = u_shape_test(b[0], b[1], v[0, 0], v[0, 1], v[1, 1], x_low, x_high,
                              df=est.df_resid, nobs=est.nobs)
    else:
        points = _cubic_points(b, v, t_crit)
        u_test = TestResult.inapplicable("Lind-Mehlum U test", reason="defined for the quadratic "
                                         "curve only (degree=2)", nobs=est.nobs,
                                         reference="lindmehlum2010")
    points["level"] = np.exp(points["point"])
    points["inside_range"] = (points["point"] >= x_low) & (points["point"] <= x_high)
    warnings = (EKC_CAUTION, *est.warnings)
    return EKCResult(estimate=est, turning_points=points, u_test=u_test, degree=degree,
                     data_range=(x_low, x_high), warnings=warnings,
                     details={"activity_term": x_name, "per_capita": population is not None,
                              "alpha": alpha}, excluded=design.excluded)


def _quadratic_points(b: np.ndarray, v: np.ndarray, t_crit: float) -> pd.DataFrame:
    b1, b2 = float(b[0]), float(b[1])
    point = -b1 / (2 * b2) if b2 != 0 else math.nan
    grad = np.array([-1 / (2 * b2), b1 / (2 * b2**2)]) if b2 != 0 else np.full(2, np.nan)
    se = float(np.sqrt(grad @ v[:2, :2] @ grad))
    low, high = fieller_interval(b1, b2, v[0, 0], v[0, 1], v[1, 1], t_crit)
    return pd.DataFrame([{"point": point, "std_error": se, "delta_lower": point - t_crit * se,
                          "delta_upper": point + t_crit * se, "fieller_lower": low,
                          "fieller_upper": high}])


def _cubic_points(b: np.ndarray, v: np.ndarray, t_crit: float) -> pd.DataFrame:
    b1, b2, b3 = (float(c) for c in b[:3])
    roots = np.roots([3 * b3, 2 * b2, b1])
    rows = []
    for root in sorted(r.real for r in roots if abs(r.imag) < 1e-12):
        dsdx = 2 * b2 + 6 * b3 * root
        grad = -np.array([1.0, 2 * root, 3 * root**2]) / dsdx
        se = float(np.sqrt(grad @ v[:3, :3] @ grad))
        rows.append({"point": root, "std_error": se, "delta_lower": root - t_crit * se,
                     "delta_upper": root + t_crit * se, "fieller_lower": math.nan,
                     "fieller_upper": math.nan})
    return pd.DataFrame(rows, columns=["point", "std_error", "delta_lower", "delta_upper",
                                       "fieller_lower", "fieller_upper"])
