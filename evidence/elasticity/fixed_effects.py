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
"""

from __future__ import annotations

import warnings as _warnings
from typing import Any

import numpy as np
import pandas as pd

from evidence.elasticity._design import Design
from evidence._hac import newey_west_lags
from evidence.errors import EstimationError, SpecError
from evidence.results import Estimate

__all__ = ["COVARIANCES", "fit_fixed_effects"]

#: Covariances of the fixed-effects estimators (see the module docstring).
COVARIANCES = ("classical", "heteroskedastic", "unit-cluster", "two-way-cluster", "driscoll-kraay")
_LABELS = {"fe": "fixed effects (unit)", "twfe": "fixed effects (unit and year)"}


def _cov_config(cov: str, hac_lags: int | None, n_periods: int) -> tuple[str, dict[str, Any], str]:
    if cov == "classical":
        return "unadjusted", {}, "classical (homoskedastic errors)"
    if cov == "heteroskedastic":
        return "robust", {}, "heteroskedasticity-robust (White)"
    if cov == "unit-cluster":
        return "clustered", {"cluster_entity": True, "group_debias": True}, \
            "clustered by unit, factor G/(G-1) (n-1)/(n-k)"
    if cov == "two-way-cluster":
        return ("clustered", {"cluster_entity": True, "cluster_time": True, "group_debias": True},
                "clustered by unit and year, factor G/(G-1) (n-1)/(n-k)")
    lags = newey_west_lags(n_periods) if hac_lags is None else hac_lags
    if lags >= n_periods:
        raise SpecError(f"hac_lags={lags} must be below the number of years ({n_periods}).")
    return "kernel", {"kernel": "bartlett", "bandwidth": lags}, \
        f"Driscoll–Kraay, Bartlett kernel, {lags} lags"


def fit_fixed_effects(design: Design, *, estimator: str = "fe", cov: str = "driscoll-kraay",
                      hac_lags: int | None = None) -> Estimate:
    """Fit ``y_it = a_i (+ d_t) + b' x_it + e_it`` by the within estimator (linearmodels PanelOLS).

    ``estimator`` is ``"fe"`` (unit effects) or ``"twfe"`` (unit and year effects). Inference uses
    Student t with the residual degrees of freedom (PanelOLS ``debiased=True``).
    """
    from linearmodels.panel import PanelOLS

    n_periods = design.y.index.get_level_values(1).nunique()
    cov_type, config, label = _cov_config(cov, hac_lags, n_periods)
    model = PanelOLS(design.y, design.x, entity_effects=True,
                     time_effects=(estimator == "twfe"))
    try:
        with _warnings.catch_warnings():
            _warnings.simplefilter("ignore")
            res = model.fit(cov_type=cov_type, debiased=True, **config)
    except (ValueError, np.linalg.LinAlgError) as exc:
        raise EstimationError(f"the {_LABELS[estimator]} regression failed: {exc}") from None
    counts = design.y.groupby(level=0).size()
    details: dict[str, Any] = {
        "units": int(counts.size), "years_min": int(counts.min()), "years_max": int(counts.max()),
        "years_mean": float(counts.mean()), "r2_within": float(res.rsquared),
        "effects": "unit and year" if estimator == "twfe" else "unit",
        "excluded_units": int(design.excluded["unit"].nunique()),
    }
    if cov == "driscoll-kraay":
        details["hac_lags"] = int(config["bandwidth"])
    warn = []
    if n_periods < 30:
        warn.append(f"short panel: T={n_periods} years (< 30)")
    if cov in ("unit-cluster", "two-way-cluster") and counts.size < 30:
        warn.append(f"{counts.size} clusters: cluster-robust standard errors are unreliable with "
                    "few clusters")
    return Estimate(estimator=_LABELS[estimator], dependent=design.dependent,
                    params=pd.Series(res.params), std_errors=res.std_errors.to_numpy(),
                    cov=res.cov.to_numpy(), cov_type=label, nobs=int(res.nobs),
                    df_resid=float(res.df_resid), details=details,
                    reference="driscollkraay1998" if cov == "driscoll-kraay" else "",
                    warnings=tuple(warn), resid=res.idiosyncratic.iloc[:, 0])
