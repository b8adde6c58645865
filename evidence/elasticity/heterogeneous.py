"""Heterogeneous-slope estimators: mean group, CCE mean group and pooled, augmented mean group.

Each unit gets its own slopes; the reported elasticity is their mean (or, for CCE-P, a pooled
estimate). Standard errors follow the original papers: the non-parametric mean-group variance
``sum_i (b_i - b)(b_i - b)' / (N (N - 1))`` (Pesaran & Smith 1995; Pesaran 2006, eq. 58), and for
CCE-P Pesaran's (2006) non-parametric variance.

References
----------
pesaransmith1995 : Pesaran, M. H. & Smith, R. (1995). Estimating long-run relationships from
    dynamic heterogeneous panels. Journal of Econometrics 68(1), 79–113.
pesaran2006 : Pesaran, M. H. (2006). Estimation and inference in large heterogeneous panels with a
    multifactor error structure. Econometrica 74(4), 967–1012.
eberhardtteal2010 : Eberhardt, M. & Teal, F. (2010). Productivity analysis in global manufacturing
    production. Discussion Paper 515, Department of Economics, University of Oxford.
bondeberhardt2013 : Bond, S. & Eberhardt, M. (2013). Accounting for unobserved heterogeneity in
    panel time series models. Working paper, University of Oxford.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evidence._validation import format_years
from evidence.elasticity._design import Design, unit_blocks
from evidence.errors import DataError, EstimationError
from evidence.results import Estimate, excluded_frame

__all__ = ["fit_mean_group", "cross_section_means", "amg_common_process", "unit_ols"]

_LABELS = {"mg": "mean group", "ccemg": "CCE mean group", "ccep": "CCE pooled",
           "amg": "augmented mean group"}
_REFS = {"mg": "pesaransmith1995", "ccemg": "pesaran2006", "ccep": "pesaran2006",
         "amg": "eberhardtteal2010; bondeberhardt2013"}


def unit_ols(y: np.ndarray, x: np.ndarray,
             d: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Slopes on ``x`` from OLS of ``y`` on ``[x, d]`` (``d``: deterministic and factor proxies).

    Returns the slopes, ``X' M_d X`` (the partialled cross-product, by the Frisch–Waugh route) and
    the residuals.
    """
    if d.shape[1]:
        q, _ = np.linalg.qr(d)
        x_tilde = x - q @ (q.T @ x)
        y_tilde = y - q @ (q.T @ y)
    else:
        x_tilde, y_tilde = x, y
    xx = x_tilde.T @ x_tilde
    if np.linalg.matrix_rank(xx) < xx.shape[0]:
        raise np.linalg.LinAlgError("singular")
    slopes = np.linalg.solve(xx, x_tilde.T @ y_tilde)
    return slopes, xx, y_tilde - x_tilde @ slopes


def cross_section_means(design: Design) -> pd.DataFrame:
    """Cross-section averages of the dependent variable and regressors, by year."""
    frame = pd.concat([design.y, design.x], axis=1)
    means = frame.groupby(level=1).mean()
    means.columns = [f"mean_{c}" for c in means.columns]
    return means


def amg_common_process(design: Design) -> pd.Series:
    """The common dynamic process of the augmented mean group (stage 1), by year.

    Pooled OLS of ``Δy_it`` on ``Δx_it`` and a dummy for each year after the first (no constant);
    the year coefficients are the yearly changes of the common process, cumulated from zero in the
    first year. Only consecutive years enter the differences.
    """
    y, x = design.y, design.x
    years = pd.Series(y.index.get_level_values(1), index=y.index)
    consecutive = (years - years.groupby(level=0).shift(1)) == 1
    dy = (y - y.groupby(level=0).shift(1))[consecutive]
    dx = (x - x.groupby(level=0).shift(1))[consecutive]
    all_years = np.sort(years.unique())
    diff_years = dy.index.get_level_values(1).to_numpy()
    dummies = (diff_years[:, None] == all_years[None, 1:]).astype(float)
    used = dummies.any(axis=0)
    design_matrix = np.column_stack([dx.to_numpy(), dummies[:, used]])
    coef, *_ = np.linalg.lstsq(design_matrix, dy.to_numpy(), rcond=None)
    steps = np.zeros(all_years.size - 1)
    steps[used] = coef[dx.shape[1]:]
    return pd.Series(np.concatenate([[0.0], np.cumsum(steps)]), index=all_years, name="common_process")


def _deterministics(years: np.ndarray, trend: str) -> np.ndarray:
    cols = [np.ones(years.size)]
    if trend == "trend":
        cols.append(years - years.mean())
    return np.column_stack(cols)


def fit_mean_group(design: Design, *, estimator: str = "mg", trend: str | None = None,
                   robust_mean: bool = False) -> Estimate:
    """Fit a mean-group-type estimator; see the module docstring.

    ``trend`` is ``"constant"`` (unit intercepts) or ``"trend"`` (and unit trends); the augmented
    mean group's unit regressions always carry a trend (Eberhardt & Teal 2010). Units without
    enough years or with collinear regressors are left out and listed in ``details["excluded"]``
    (with the rows the design left out).
    """
    trend = "trend" if estimator == "amg" else (trend or "constant")
    names = list(design.regressors)
    k = len(names)
    extra: pd.DataFrame | None = None
    if estimator in ("ccemg", "ccep"):
        extra = cross_section_means(design)
    elif estimator == "amg":
        extra = amg_common_process(design).to_frame()
    slopes, cross, used, left_out, resid = [], [], [], [], []
    column = ", ".join((design.dependent, *names))
    for unit, years, y_i, x_i in unit_blocks(design):
        d_i = _deterministics(years.astype(float), trend)
        if extra is not None:
            d_i = np.column_stack([d_i, extra.loc[years].to_numpy()])
        if y_i.size <= k + d_i.shape[1]:
            left_out.append({"unit": unit, "column": column, "years": format_years(years),
                             "reason": f"unit excluded: {y_i.size} years; needs more than "
                                       f"{k + d_i.shape[1]} for this estimator"})
            continue
        try:
            b_i, xx_i, e_i = unit_ols(y_i, x_i, d_i)
        except np.linalg.LinAlgError:
            left_out.append({"unit": unit, "column": column, "years": format_years(years),
                             "reason": "unit excluded: regressors collinear within the unit"})
            continue
        slopes.append(b_i)
        resid.append(pd.Series(e_i, index=pd.MultiIndex.from_arrays(
            [[unit] * y_i.size, years], names=design.y.index.names)))
        cross.append(xx_i / y_i.size)
        used.append(unit)
    n = len(used)
    if n < 2:
        raise DataError(f"the {_LABELS[estimator]} estimator needs at least 2 units with enough "
                        f"years; {n} qualify" + (f" (left out: {left_out})" if left_out else "."))
    b = np.asarray(slopes)
    mg = b.mean(axis=0)
    cov = (b - mg).T @ (b - mg) / (n * (n - 1))
    mean_label = "mean"
    if estimator == "ccep":
        mg, cov = _cce_pooled(design, extra, trend, used, b, cross)
    elif robust_mean:
        mg, cov = _robust_mean(b)
        mean_label = "outlier-robust mean (Huber M-estimate)"
    unit_params = pd.DataFrame(b, index=pd.Index(used, name="unit"), columns=names)
    counts = design.y.groupby(level=0).size()[used]
    details: dict[str, Any] = {"units": n, "years_mean": float(counts.mean()), "trend": trend,
                               "mean": mean_label,
                               "unit_params": unit_params,
                               "excluded": excluded_frame([*design.excluded.to_dict("records"),
                                                           *left_out]),
                               "excluded_units": int(design.excluded["unit"].nunique()) + len(left_out)}
    warn = ([f"{len(left_out)} unit(s) left out; see details['excluded']"] if left_out else [])
    cov_label = ("Pesaran (2006) non-parametric CCE-P variance" if estimator == "ccep"
                 else "mean-group variance of unit slopes")
    return Estimate(estimator=_LABELS[estimator], dependent=design.dependent,
                    params=pd.Series(mg, index=names), std_errors=np.sqrt(np.diag(cov)),
                    cov=cov, cov_type=cov_label, nobs=int(counts.sum()),
                    df_resid=None, details=details, reference=_REFS[estimator], warnings=tuple(warn),
                    resid=pd.concat(resid))


def _cce_pooled(design: Design, extra: pd.DataFrame | None, trend: str, used: list[str],
                b: np.ndarray, cross: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """Pooled CCE estimate and Pesaran's (2006) non-parametric variance (eq. 69–70, from memory)."""
    num = np.zeros(b.shape[1])
    den = np.zeros((b.shape[1], b.shape[1]))
    for unit, years, y_i, x_i in unit_blocks(design):
        if unit not in used:
            continue
        d_i = np.column_stack([_deterministics(years.astype(float), trend),
                               extra.loc[years].to_numpy()])  # type: ignore[union-attr]
        q, _ = np.linalg.qr(d_i)
        x_t = x_i - q @ (q.T @ x_i)
        num += x_t.T @ (y_i - q @ (q.T @ y_i))
        den += x_t.T @ x_t
    try:
        pooled = np.linalg.solve(den, num)
    except np.linalg.LinAlgError:
        raise EstimationError("the pooled CCE cross-product is singular.") from None
    n = b.shape[0]
    psi = np.mean(cross, axis=0)
    dev = b - b.mean(axis=0)
    r = sum(c @ np.outer(d, d) @ c for c, d in zip(cross, dev, strict=True)) / (n - 1)
    psi_inv = np.linalg.inv(psi)
    return pooled, psi_inv @ r @ psi_inv / n


def _robust_mean(b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Huber M-estimate of the mean of each coefficient (statsmodels RLM on a constant)."""
    import statsmodels.api as sm

    means, variances = [], []
    for j in range(b.shape[1]):
        fit = sm.RLM(b[:, j], np.ones((b.shape[0], 1)), M=sm.robust.norms.HuberT()).fit()
        means.append(float(fit.params[0]))
        variances.append(float(fit.bse[0]) ** 2)
    return np.asarray(means), np.diag(variances)
