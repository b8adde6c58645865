"""Long-run coefficients of a panel under cointegration: DOLS, FMOLS (pooled and group-mean), MG, PMG.

Columns are used as given (take logs first with ``panel.with_log``); the coefficients are then
long-run elasticities.

References
----------
kaochiang2000 : Kao, C. & Chiang, M.-H. (2000). On the estimation and inference of a cointegrated
    regression in panel data. Advances in Econometrics 15, 179–222.
pedroni2001 : Pedroni, P. (2001). Purchasing power parity tests in cointegrated panels. Review of
    Economics and Statistics 83(4), 727–731.
pesaranshinsmith1999 : Pesaran, M. H., Shin, Y. & Smith, R. P. (1999). Pooled mean group estimation
    of dynamic heterogeneous panels. Journal of the American Statistical Association 94(446),
    621–634.
hausman1978 : Hausman, J. A. (1978). Specification tests in econometrics. Econometrica 46(6),
    1251–1271.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
from arch.unitroot.cointegration import (
    CointegrationAnalysisResults,
    DynamicOLS,
    DynamicOLSResults,
    FullyModifiedOLS,
)
from scipy import stats

from evidence._hac import long_run_cov, newey_west_lags
from evidence._validation import check_choice, check_int, check_trend
from evidence.cointegration import _ardl
from evidence.cointegration._data import (
    ARCH_TREND,
    Block,
    as_columns,
    batch_ols,
    deterministics,
    lag_matrix,
    option_int,
    relation_block,
)
from evidence.errors import SpecError
from evidence.panel import Panel
from evidence.results import Estimate, TestResult

__all__ = ["ESTIMATORS", "hausman_test", "long_run"]

ESTIMATORS = ("dols", "fmols", "mg", "pmg")


def _det(trend: str, n_units: int, n: int) -> np.ndarray:
    d = deterministics(trend, n)
    return np.broadcast_to(d, (n_units, *d.shape))


def _pooled_dols(y: np.ndarray, x: np.ndarray, trend: str, lags: int, leads: int,
                 hac_lags: int | None) -> tuple[np.ndarray, np.ndarray, dict]:
    n_units, n_years, k = x.shape
    dx = np.concatenate([np.full((n_units, 1, k), np.nan), np.diff(x, axis=1)], axis=1)
    rows = slice(lags + 1, n_years - leads)
    parts = [_det(trend, n_units, n_years)[:, rows]]
    parts += [lag_matrix(dx[:, :, m], list(range(-leads, lags + 1)))[:, rows] for m in range(k)]
    w = np.concatenate(parts, axis=2)
    _, y_t, _ = batch_ols(y[:, rows], w)
    x_t = np.stack([batch_ols(x[:, rows, m], w)[1] for m in range(k)], axis=2)
    xx = np.einsum("nti,ntj->ij", x_t, x_t)
    beta = np.linalg.solve(xx, np.einsum("nti,nt->i", x_t, y_t))
    resid = y_t - np.einsum("ntk,k->nt", x_t, beta)
    band = newey_west_lags(resid.shape[1]) if hac_lags is None else hac_lags
    omega = long_run_cov(resid[:, :, None], band)[1][:, 0, 0]
    meat = np.einsum("n,nti,ntj->ij", omega, x_t, x_t)
    xx_inv = np.linalg.inv(xx)
    return beta, xx_inv @ meat @ xx_inv, {"hac_lags": band, "nobs": resid.size}


def _pooled_fmols(y: np.ndarray, x: np.ndarray, trend: str,
                  hac_lags: int | None) -> tuple[np.ndarray, np.ndarray, dict]:
    n_units, n_years, k = x.shape
    d = _det(trend, n_units, n_years)
    _, u, _ = batch_ols(y, np.concatenate([d, x], axis=2))
    if trend == "trend":  # differences of the detrended regressors (as arch's FullyModifiedOLS)
        x_dt = np.stack([batch_ols(x[:, :, m], d)[1] for m in range(k)], axis=2)
        dx = np.diff(x_dt, axis=1)
    else:
        dx = np.diff(x, axis=1)
    wv = np.concatenate([u[:, 1:, None], dx], axis=2)  # not centred (as arch)
    n = wv.shape[1]
    band = newey_west_lags(n) if hac_lags is None else hac_lags
    _, omega, delta = long_run_cov(wv, band)
    o_xx_inv = np.linalg.inv(omega[:, 1:, 1:])
    corr = np.einsum("nij,nj->ni", o_xx_inv, omega[:, 1:, 0])           # Ω_xx^-1 Ω_xu
    d_plus = delta[:, 1:, 0] - np.einsum("nij,nj->ni", delta[:, 1:, 1:], corr)
    if trend == "none":
        y_t, x_t = y[:, 1:], x[:, 1:]
    else:
        dd = _det(trend, n_units, n_years)[:, 1:]
        _, y_t, _ = batch_ols(y[:, 1:], dd)
        x_t = np.stack([batch_ols(x[:, 1:, m], dd)[1] for m in range(k)], axis=2)
    y_plus = y_t - np.einsum("ntk,nk->nt", dx, corr)
    xx = np.einsum("nti,ntj->ij", x_t, x_t)
    beta = np.linalg.solve(xx, np.einsum("nti,nt->i", x_t, y_plus) - n * d_plus.sum(axis=0))
    omega_u = omega[:, 0, 0] - np.einsum("ni,ni->n", omega[:, 1:, 0], corr)
    meat = np.einsum("n,nti,ntj->ij", omega_u, x_t, x_t)
    xx_inv = np.linalg.inv(xx)
    return beta, xx_inv @ meat @ xx_inv, {"hac_lags": band, "nobs": n_units * n}


def _group_mean(block: Block, estimator: str, trend: str, lags: int,
                leads: int) -> tuple[np.ndarray, np.ndarray, dict]:
    betas, ses = [], []
    for i in range(block.n_units):
        yi = pd.Series(block.y[i])
        xi = pd.DataFrame(block.x[i], columns=list(block.regressors))
        res: DynamicOLSResults | CointegrationAnalysisResults
        if estimator == "dols":
            res = DynamicOLS(yi, xi, trend=ARCH_TREND[trend], lags=lags,
                             leads=leads).fit(cov_type="kernel")
        else:
            res = FullyModifiedOLS(yi, xi, trend=ARCH_TREND[trend]).fit()
        betas.append(res.params[list(block.regressors)].to_numpy())
        ses.append(res.std_errors[list(block.regressors)].to_numpy())
    b, s = np.array(betas), np.array(ses)
    n = block.n_units
    beta = b.mean(axis=0)
    cov = np.diag(np.sum(s ** 2, axis=0)) / n ** 2
    t_gm = np.sum(b / s, axis=0) / np.sqrt(n)
    return beta, cov, {"group_mean_t": dict(zip(block.regressors, t_gm.tolist(), strict=True)),
                       "unit_slopes": {u: dict(zip(block.regressors, r.tolist(), strict=True))
                                       for u, r in zip(block.units, b, strict=True)}, "nobs": block.y.size}


def _mean_group(block: Block, lags: int) -> tuple[pd.Series, np.ndarray, dict]:
    arr = _ardl.ecm_arrays(block.y, block.x, lags, lags)
    unit = _ardl.unit_ecm(arr)
    names = list(block.regressors)
    short = _ardl.short_run_names(block.dependent, block.regressors, lags, lags)
    draws = np.column_stack([unit["theta"], unit["phi"], unit["short"]])
    n = draws.shape[0]
    params = pd.Series(draws.mean(axis=0), index=[*names, _ardl.SPEED, *short])
    dev = draws - draws.mean(axis=0)
    cov = dev.T @ dev / (n * (n - 1))
    return params, cov, {"arrays": arr, "unit": unit}


def hausman_test(efficient: Estimate, consistent: Estimate) -> TestResult:
    """Hausman test of the long-run coefficients: PMG (efficient under H0) against MG (consistent).

    ``efficient`` and ``consistent`` are the ``long_run`` estimates with ``estimator="pmg"`` and
    ``"mg"``; the coefficients compared are the long-run ones (``details["long_run"]``).

    H0: the long-run coefficients are the same in every unit (PMG consistent and efficient).
    H1: they differ (only MG is consistent).

    Notes
    -----
    ``H = d'(V_MG - V_PMG)^-1 d`` with ``d = θ_MG - θ_PMG``, chi-squared with ``k`` degrees of
    freedom. When ``V_MG - V_PMG`` is not positive definite its pseudo-inverse is used and a warning
    says so.

    References
    ----------
    hausman1978; pesaranshinsmith1999 (see the module docstring).
    """
    keys = [n for n in efficient.details.get("long_run", []) if n in consistent.params]
    if not keys:
        raise SpecError("hausman_test needs the long-run coefficient names shared by both estimates.")
    diff = consistent.params[keys].to_numpy() - efficient.params[keys].to_numpy()
    vdiff = consistent.cov.loc[keys, keys].to_numpy() - efficient.cov.loc[keys, keys].to_numpy()
    warnings = []
    eig = np.linalg.eigvalsh(vdiff)
    if eig.min() <= 0:
        warnings.append("V_MG - V_PMG is not positive definite; the pseudo-inverse was used.")
    stat = float(diff @ np.linalg.pinv(vdiff) @ diff)
    return TestResult(test="Hausman MG vs PMG", statistic=stat, pvalue=float(stats.chi2.sf(stat, len(keys))),
                      critical_values={a: float(stats.chi2.isf(a, len(keys))) for a in (0.01, 0.05, 0.10)},
                      null="common long-run coefficients (PMG efficient)",
                      alternative="unit-specific long-run coefficients", nobs=efficient.nobs,
                      details={"df": len(keys), "coefficients": keys}, reference="hausman1978",
                      warnings=tuple(warnings))


def long_run(panel: Panel, dependent: str, regressors: str | Sequence[str], *,
             estimator: str = "dols", pooled: bool = True, trend: str = "constant", lags: int = 1,
             leads: int = 1, hac_lags: int | None = None) -> Estimate:
    """Long-run coefficients of ``dependent`` on ``regressors`` in a cointegrated panel.

    Parameters
    ----------
    estimator : {"dols", "fmols", "mg", "pmg"}
        Dynamic OLS, fully modified OLS, mean group or pooled mean group ARDL.
    pooled : bool
        DOLS and FMOLS only: pooled (``True``; Kao & Chiang 2000) or group-mean (Pedroni 2001, unit
        estimates from arch).
    trend : {"none", "constant", "trend"}
        Deterministic terms of each unit (DOLS/FMOLS); MG/PMG take "constant" (unit intercepts)
        only.
    lags, leads : int
        DOLS: lags and leads of ``Δx``. MG/PMG: the ARDL order ``p = q = lags`` (at least 1).
    hac_lags : int, optional
        Bartlett bandwidth (lags) of the long-run variances (default ``floor(4 (T/100)^(2/9))``).

    Returns
    -------
    Estimate
        Long-run coefficients named after the regressors; for MG/PMG also the
        ``"error-correction speed"`` (the mean speed of adjustment ``φ``) and the mean short-run
        coefficients (``"Δ x"``, ``"Δ x, lag 1"``, ..., ``"constant"``). For PMG, ``details`` carries the
        Hausman test against MG (``hausman_statistic``, ``hausman_pvalue``).

    Notes
    -----
    Pooled DOLS: ``y`` and ``x`` net of each unit's deterministics and ``Δx_t-j``
    (``j = -leads..lags``, unit-specific coefficients), then pooled OLS; covariance
    ``(Σ x̃'x̃)^-1 (Σ_i ω_i² x̃_i'x̃_i) (Σ x̃'x̃)^-1`` with ``ω_i²`` the long-run variance of unit
    i's residuals. Pooled FMOLS: ``β = (Σ x̃'x̃)^-1 Σ_i (x̃_i'y_i⁺ - T Δ⁺_xu,i)`` with
    ``y⁺ = ỹ - Δx Ω_xx^-1 Ω_xu`` and ``Δ⁺_xu = Δ_xu - Δ_xx Ω_xx^-1 Ω_xu`` from each unit's
    long-run covariances of (static residual, ``Δx``; not centred, with ``trend="trend"`` the
    differences of the detrended ``x``: with one unit this is arch's ``FullyModifiedOLS``);
    covariance as for DOLS with
    ``ω_u.x²``. Group mean: the average of unit estimates, variance ``Σ se_i² / N²`` (units
    independent); Pedroni's ``N^-1/2 Σ t_i`` is in details. MG: average of unit error-correction
    OLS estimates ``θ_i = -π_i/φ_i``, variance ``Σ (b_i - b)(b_i - b)' / (N(N-1))``. PMG: maximum
    likelihood with a common ``θ`` (back-substitution; information-matrix covariance).

    References
    ----------
    kaochiang2000, pedroni2001, pesaranshinsmith1999 (see the module docstring).

    Examples
    --------
    >>> import evidence as ev
    >>> panel = ev.demo_panel().with_log("ghg_territorial").with_log("gdp")
    >>> est = long_run(panel, "log_ghg_territorial", "log_gdp", estimator="pmg")
    >>> list(est.params.index), est.details["converged"]
    (['log_gdp', 'error-correction speed', 'Δ log_gdp', 'constant'], True)
    """
    estimator = check_choice("estimator", estimator, ESTIMATORS)
    trend = check_trend(trend)
    lags = option_int("lags", lags, 1 if estimator in ("mg", "pmg") else 0)
    leads = option_int("leads", leads, 0)
    hac_lags = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    cols = as_columns(regressors)
    k = len(cols)
    if estimator in ("mg", "pmg") and trend != "constant":
        raise SpecError(f"trend={trend!r}: the {estimator.upper()} ARDL carries unit intercepts only; "
                        f"use trend='constant'.")
    if estimator in ("dols", "fmols"):
        need = lags + leads + 2 + (2 + k * (lags + leads + 2) if estimator == "dols" else k + 6)
    else:
        need = lags + 2 + (2 + k) + lags * (k + 1) + 3
    block = relation_block(panel, dependent, cols, min_years=need,
                           purpose=f"long_run with estimator='{estimator}', lags={lags}, "
                                   f"leads={leads}")
    label = {"dols": "DOLS", "fmols": "FMOLS", "mg": "mean group ARDL", "pmg": "pooled mean group ARDL"}
    details: dict = {"trend": trend, "units": block.n_units, "years": block.span,
                     "excluded": block.excluded, "long_run": list(cols)}
    if estimator in ("dols", "fmols"):
        if pooled:
            if estimator == "dols":
                beta, cov, extra = _pooled_dols(block.y, block.x, trend, lags, leads, hac_lags)
            else:
                beta, cov, extra = _pooled_fmols(block.y, block.x, trend, hac_lags)
            name, ref = f"pooled {label[estimator]}", "kaochiang2000"
        else:
            beta, cov, extra = _group_mean(block, estimator, trend, lags, leads)
            name, ref = f"group-mean {label[estimator]}", "pedroni2001"
        nobs = extra.pop("nobs")
        details.update(extra)
        if estimator == "dols":
            details.update({"lags": lags, "leads": leads})
        params = pd.Series(beta, index=list(cols))
        if pooled:
            cov_type = (f"long-run variance of each unit's errors, Bartlett kernel, "
                        f"{details['hac_lags']} lags")
        else:
            cov_type = ("unit long-run standard errors (Bartlett kernel, arch's bandwidth) "
                        "averaged over independent units")
        return Estimate(estimator=name, dependent=dependent, params=params,
                        std_errors=np.sqrt(np.diag(cov)), cov=cov, cov_type=cov_type,
                        nobs=nobs, details=details, reference=ref)
    params, cov, parts = _mean_group(block, lags)
    nobs = int(parts["arrays"]["dy"].size)
    details.update({"lags": lags,
                    "unit_long_run": {u: dict(zip(cols, r.tolist(), strict=True))
                                      for u, r in zip(block.units, parts["unit"]["theta"], strict=True)},
                    "unit_speed": dict(zip(block.units, parts["unit"]["phi"].tolist(), strict=True))})
    mg = Estimate(estimator=label["mg"], dependent=dependent, params=params,
                  std_errors=np.sqrt(np.diag(cov)), cov=cov,
                  cov_type="dispersion of the unit estimates (mean group)", nobs=nobs,
                  df_resid=None, details=details, reference="pesaranshinsmith1999")
    if estimator == "mg":
        return mg
    fit = _ardl.pmg_fit(parts["arrays"], params[list(cols)].to_numpy())
    # Short-run coefficients given the common θ: unit OLS on the error-correction term.
    arr = parts["arrays"]
    xi = arr["y1"] - np.einsum("ntk,k->nt", arr["x1"], fit["theta"])
    coef, _, _ = batch_ols(arr["dy"], np.concatenate([xi[:, :, None], arr["w"]], axis=2))
    n = coef.shape[0]
    sr_dev = coef - coef.mean(axis=0)
    sr_cov = sr_dev.T @ sr_dev / (n * (n - 1))
    pmg_params = pd.Series(np.r_[fit["theta"], coef.mean(axis=0)], index=params.index)
    pmg_cov = np.zeros((len(params), len(params)))
    pmg_cov[:k, :k] = fit["cov_theta"]
    pmg_cov[k:, k:] = sr_cov
    pmg_details = dict(details)
    pmg_details.update({"unit_speed": dict(zip(block.units, coef[:, 0].tolist(), strict=True)),
                        "iterations": fit["iterations"], "converged": fit["converged"],
                        "loglik": fit["loglik"]})
    pmg_details.pop("unit_long_run")
    warnings = () if fit["converged"] else ("the PMG iterations did not converge",)
    pmg = Estimate(estimator=label["pmg"], dependent=dependent, params=pmg_params,
                   std_errors=np.sqrt(np.diag(pmg_cov)), cov=pmg_cov,
                   cov_type="information matrix (long run); dispersion of the unit estimates "
                            "(short run)", nobs=nobs,
                   details=pmg_details, reference="pesaranshinsmith1999", warnings=warnings)
    test = hausman_test(pmg, mg)
    pmg_details.update({"hausman_statistic": test.statistic, "hausman_pvalue": test.pvalue,
                        "hausman_df": k})
    return Estimate(estimator=pmg.estimator, dependent=dependent, params=pmg.params,
                    std_errors=pmg.std_errors,
                    cov=pmg.cov, cov_type=pmg.cov_type, nobs=nobs, details=pmg_details,
                    reference=pmg.reference, warnings=warnings + test.warnings)
