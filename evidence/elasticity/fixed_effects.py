"""Pooled fixed-effects elasticities through linearmodels' PanelOLS, wrapped in one ``Estimate``.

One-way (unit) or two-way (unit and year) effects; covariance ``"classical"`` (homoskedastic
errors), ``"heteroskedastic"`` (White), ``"unit-cluster"`` (clustered by unit), ``"two-way-cluster"``
(clustered by unit and by year) or ``"driscoll-kraay"`` (Bartlett kernel, lags stated).
Nothing is re-implemented here: the coefficients and covariances are linearmodels'.

References
----------
driscollkraay1998 : Driscoll, J. C. & Kraay, A. C. (1998). Consistent covariance matrix estimation
    with spatially dependent panel data. Review of Economics and Statistics 80(4), 549–560.
cameron2011 : Cameron, A. C., Gelbach, J. B. & Miller, D. L. (2011). Robust inference with multiway
    clustering. Journal of Business & Economic Statistics 29(2), 238–249.
cameronmiller2015 : Cameron, A. C. & Miller, D. L. (2015). A practitioner's guide to cluster-robust
    inference. Journal of Human Resources 50(2), 317–372.
"""

from __future__ import annotations

import warnings as _warnings
from typing import Any

import numpy as np
import pandas as pd

from evidence._hac import newey_west_lags
from evidence.elasticity._design import Design
from evidence.errors import EstimationError, SpecError
from evidence.results import Estimate

__all__ = ["COVARIANCES", "cluster_rule", "fit_fixed_effects"]

#: Covariances of the fixed-effects estimators (see the module docstring).
COVARIANCES = ("classical", "heteroskedastic", "unit-cluster", "two-way-cluster", "driscoll-kraay")
_LABELS = {"fe": "fixed effects (unit)", "twfe": "fixed effects (unit and year)"}


def _cov_config(cov: str, hac_lags: int | None, n_periods: int) -> tuple[str, dict[str, Any], str]:
    if cov == "classical":
        return "unadjusted", {}, "classical (homoskedastic, independent errors)"
    if cov == "heteroskedastic":
        return "robust", {}, "heteroskedasticity-robust (White)"
    if cov == "unit-cluster":
        return "clustered", {"cluster_entity": True, "group_debias": True}, ""
    if cov == "two-way-cluster":
        return ("clustered", {"cluster_entity": True, "cluster_time": True, "group_debias": True},
                "")
    lags = newey_west_lags(n_periods) if hac_lags is None else hac_lags
    if lags >= n_periods:
        raise SpecError(f"hac_lags={lags} must be below the number of years ({n_periods}).")
    return "kernel", {"kernel": "bartlett", "bandwidth": lags}, \
        f"Driscoll–Kraay (errors correlated across units and over time), Bartlett kernel, {lags} lags"


def cluster_rule(cov: str, estimator: str, n_slopes: int, n_periods: int) -> tuple[int, str]:
    """The effects counted in the small-sample factor of a clustered covariance, and in words.

    The rule (common applied practice; Stata's ``reghdfe``, Cameron & Miller 2015): absorbed
    effects nested in a cluster dimension are not counted, the others are. Unit effects are nested
    in unit clusters; year effects in year clusters, not in unit clusters. So ``k`` is the number
    of slopes, plus ``T − 1`` year effects for two-way fixed effects clustered by unit only.
    """
    counted = n_periods - 1 if (estimator == "twfe" and cov == "unit-cluster") else 0
    if counted:
        words = f"k = {n_slopes} slopes + {counted} year effects not nested in the clusters"
    else:
        words = f"k = {n_slopes} slopes, fixed effects nested in the clusters not counted"
    return counted, words


def fit_fixed_effects(design: Design, *, estimator: str = "fe", cov: str = "driscoll-kraay",
                      hac_lags: int | None = None) -> Estimate:
    """Fit ``y_it = a_i (+ d_t) + b' x_it + e_it`` by the within estimator (linearmodels PanelOLS).

    ``estimator`` is ``"fe"`` (unit effects) or ``"twfe"`` (unit and year effects). Coefficients
    and covariances are linearmodels'; for the clustered covariances the small-sample factor is
    ours (:func:`cluster_rule`): each cluster dimension ``G/(G − 1)`` (Cameron, Gelbach & Miller
    2011 for two-way), all ``(n − 1)/(n − k)`` with ``k`` the slopes plus the effects not nested
    in the clusters, and Student t with ``G − 1`` degrees of freedom (the fewer clusters for
    two-way). The other covariances keep linearmodels' ``debiased=True`` scale ``n/(n − k − d)``
    (``d`` every absorbed effect) and t with the residual degrees of freedom.
    """
    from linearmodels.panel import PanelOLS

    n_periods = design.y.index.get_level_values(1).nunique()
    cov_type, config, label = _cov_config(cov, hac_lags, n_periods)
    model = PanelOLS(design.y, design.x, entity_effects=True,
                     time_effects=(estimator == "twfe"))
    clustered = cov in ("unit-cluster", "two-way-cluster")
    extra = {"auto_df": False, "count_effects": False} if clustered else {}
    try:
        with _warnings.catch_warnings():
            _warnings.simplefilter("ignore")
            res = model.fit(cov_type=cov_type, debiased=True, **extra, **config)
    except (ValueError, np.linalg.LinAlgError) as exc:
        raise EstimationError(f"the {_LABELS[estimator]} regression failed: {exc}") from None
    counts = design.y.groupby(level=0).size()
    n_units, nobs, k = int(counts.size), int(res.nobs), int(design.x.shape[1])
    cov_matrix = res.cov.to_numpy()
    df_resid = float(res.df_resid)
    details: dict[str, Any] = {
        "units": n_units, "years_min": int(counts.min()), "years_max": int(counts.max()),
        "years_mean": float(counts.mean()), "r2_within": float(res.rsquared),
        "effects": "unit and year" if estimator == "twfe" else "unit",
        "excluded_units": int(design.excluded["unit"].nunique()),
    }
    if clustered:
        # linearmodels with count_effects=False scales by G/(G-1) (n-1)/(n-k); count the effects
        # that are not nested in the clusters on top of that.
        counted, words = cluster_rule(cov, estimator, k, n_periods)
        cov_matrix = cov_matrix * (nobs - k) / (nobs - k - counted)
        groups = [n_units] + ([n_periods] if cov == "two-way-cluster" else [])
        df_resid = float(min(groups) - 1)
        where = ("by unit" if cov == "unit-cluster" else
                 "by unit and by year (Cameron, Gelbach & Miller 2011)")
        sizes = " and ".join(str(g) for g in groups)
        label = (f"clustered {where}, {sizes} clusters (factor G/(G−1)·(n−1)/(n−k), {words}; "
                 f"t with {int(df_resid)} df)")
        details.update({"effects_counted": counted, "clusters": groups})
    if cov == "driscoll-kraay":
        details["hac_lags"] = int(config["bandwidth"])
    warn = []
    if n_periods < 30:
        warn.append(f"short panel: T={n_periods} years (< 30)")
    if clustered and n_units < 30:
        warn.append(f"{n_units} clusters: cluster-robust standard errors are unreliable with "
                    "few clusters")
    return Estimate(estimator=_LABELS[estimator], dependent=design.dependent,
                    params=pd.Series(res.params), std_errors=np.sqrt(np.diag(cov_matrix)),
                    cov=cov_matrix, cov_type=label, nobs=nobs, df_resid=df_resid, details=details,
                    reference="driscollkraay1998" if cov == "driscoll-kraay" else "",
                    warnings=tuple(warn), resid=res.idiosyncratic.iloc[:, 0])
