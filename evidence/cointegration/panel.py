"""Panel cointegration tests: Pedroni (1999, 2004), Kao (1999), Westerlund (2007).

All three take a :class:`~evidence.panel.Panel`, the ``dependent`` column and one or more
``regressors`` columns, used as given (take logs first with ``panel.with_log``). They run on the
years every unit covers; what is left out is listed in ``result.excluded``.

H0 for all three: no cointegration (no unit's residual is stationary / no unit error-corrects).

References
----------
pedroni1999 : Pedroni, P. (1999). Critical values for cointegration tests in heterogeneous panels
    with multiple regressors. Oxford Bulletin of Economics and Statistics 61(S1), 653–670.
pedroni2004 : Pedroni, P. (2004). Panel cointegration: asymptotic and finite sample properties of
    pooled time series tests with an application to the PPP hypothesis. Econometric Theory 20(3),
    597–625.
kao1999 : Kao, C. (1999). Spurious regression and residual-based tests for cointegration in panel
    data. Journal of Econometrics 90(1), 1–44.
westerlund2007 : Westerlund, J. (2007). Testing for error correction in panel data. Oxford Bulletin
    of Economics and Statistics 69(6), 709–748.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from scipy import stats

from evidence._hac import default_max_lags, newey_west_lags
from evidence._typing import DEFAULT_SEED, Seed
from evidence._validation import (
    check_choice,
    check_int,
    check_lags,
    check_max_lags,
    check_seed,
    check_trend,
)
from evidence.cointegration import _westerlund as _w
from evidence.cointegration._data import as_columns, option_int, relation_block
from evidence.cointegration._pedroni_tables import MOMENTS as PEDRONI_MOMENTS
from evidence.cointegration._residual_math import (
    kao_raw,
    kao_select_lags,
    pedroni_raw,
    select_adf_lags,
    static_residuals,
)
from evidence.cointegration._result import KaoResult, PedroniResult, WesterlundResult
from evidence.cointegration._westerlund_tables import MOMENTS as WESTERLUND_MOMENTS
from evidence.errors import SpecError
from evidence.panel import Panel
from evidence.parallel import ExecutorLike, task_seeds, using_executor
from evidence.results import TestResult

__all__ = ["PEDRONI_STATISTICS", "kao_test", "pedroni_test", "westerlund_test"]

PEDRONI_STATISTICS = ("panel v", "panel rho", "panel PP", "panel ADF", "group rho", "group PP",
                      "group ADF")
_PEDRONI_COLUMN = {"panel v": 0, "panel rho": 1, "panel PP": 2, "panel ADF": 2, "group rho": 3,
                   "group PP": 4, "group ADF": 4}
_NULL = "no cointegration"
_Z = {a: stats.norm.ppf(a) for a in (0.01, 0.05, 0.10)}


def _left(z: float) -> tuple[float, dict[float, float]]:
    return float(stats.norm.cdf(z)), dict(_Z)


def _right(z: float) -> tuple[float, dict[float, float]]:
    return float(stats.norm.sf(z)), {a: -v for a, v in _Z.items()}


#: Ways of computing a p-value: the published asymptotic moments, or a bootstrap under H0.
INFERENCES = ("asymptotic", "bootstrap")


def _max_lags(max_lags: int | None, n_years: int, parameter: str = "max_lags") -> int:
    checked = check_max_lags(max_lags, parameter)
    return default_max_lags(n_years) if checked is None else checked


def _bandwidth(hac_lags: int | None, nobs: int) -> int:
    checked = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    return newey_west_lags(nobs) if checked is None else checked


def _probe_years(panel: Panel) -> int:
    return len(panel.years) if isinstance(panel, Panel) else 0


def pedroni_test(panel: Panel, dependent: str, regressors: str | Sequence[str], *,
                 trend: str = "constant", lags: int | str = "aic", max_lags: int | None = None,
                 hac_lags: int | None = None) -> PedroniResult:
    """Pedroni's seven residual-based panel cointegration statistics.

    H0: no unit is cointegrated. H1: all units are cointegrated (panel statistics, common AR root)
    or a non-vanishing share are (group statistics, unit-specific roots).

    Parameters
    ----------
    panel, dependent, regressors
        The panel, the dependent column and the regressor column(s), used as given.
    trend : {"constant", "trend"}
        Unit intercepts, or intercepts and linear trends, in the cointegrating regression.
    lags : int or {"aic", "bic"}
        Lag order of the ADF regressions, or the criterion choosing each unit's order.
    max_lags : int, optional
        Largest lag considered; default ``floor(4 (T/100)^(1/4))``.
    hac_lags : int, optional
        Bartlett bandwidth (lags) of the long-run variances; default ``floor(4 (T/100)^(2/9))``.

    Returns
    -------
    PedroniResult
        Seven :class:`~evidence.results.TestResult` (standardised, N(0,1)); panel v rejects in the
        right tail, the others in the left tail.

    Notes
    -----
    For each unit, OLS of ``y_it = a_i (+ d_i t) + b_i'x_it + e_it``. With ``L11_i^2`` the long-run
    variance of the residual of ``Δy_it`` on ``Δx_it``, ``u_it`` the residual of
    ``e_it = g_i e_it-1 + u_it``, ``s_i^2`` its variance, ``sigma_i^2`` its long-run variance and
    ``lambda_i = (sigma_i^2 - s_i^2)/2``, and ``A = ΣΣ L11_i^-2 e_it-1^2``,
    ``B = ΣΣ L11_i^-2 (e_it-1 Δe_it - lambda_i)``, ``sigma~^2 = N^-1 Σ L11_i^-2 sigma_i^2``:
    panel v ``= T^2 N^(3/2) / A``; panel rho ``= T sqrt(N) B / A``; panel PP
    ``= B / sqrt(sigma~^2 A)``; panel ADF ``= ΣΣ L11^-2 e*_it-1 Δe*_it / sqrt(s~*^2 ΣΣ L11^-2
    e*_it-1^2)`` with ``e*`` net of the ADF lagged differences and ``s~*^2`` the mean ADF residual
    variance weighted like ``sigma~^2``, ``s~*^2 = N^-1 Σ L11_i^-2 s*_i^2`` (the unweighted mean,
    as we remember the printed formula, makes the statistic depend on the units' scales: a unit
    whose ``Δy`` is almost collinear with ``Δx`` then dominates); group rho ``= T N^(-1/2) Σ_i (Σ_t e_it-1^2)^-1 Σ_t (e_it-1 Δe_it - lambda_i)``;
    group PP ``= N^(-1/2) Σ_i (sigma_i^2 Σ_t e_it-1^2)^(-1/2) Σ_t (e_it-1 Δe_it - lambda_i)``;
    group ADF ``= N^(-1/2) Σ_i (s*_i^2 Σ_t e*_it-1^2)^(-1/2) Σ_t e*_it-1 Δe*_it`` (Pedroni 1999,
    Table 1; written from memory). ``T`` is the number of differenced periods. Each is
    standardised as ``(X - mu sqrt(N)) / sqrt(v)`` with Pedroni's (1999) adjustment terms
    (``_pedroni_tables``). In small samples the panel PP and ADF statistics over-reject (see
    ``docs/methods/cointegration.md`` for simulated sizes).

    References
    ----------
    pedroni1999, pedroni2004 (see the module docstring).

    Examples
    --------
    >>> import evidence as ev
    >>> panel = ev.demo_panel().with_log("ghg_territorial").with_log("gdp")
    >>> res = pedroni_test(panel, "log_ghg_territorial", "log_gdp")
    >>> len(res), res["group ADF"].details["tail"], res["panel v"].details["tail"]
    (7, 'left', 'right')
    """
    trend = check_trend(trend)
    if trend == "none":
        raise SpecError("trend='none' has no published Pedroni adjustment terms; use 'constant' "
                        "or 'trend'.")
    lags = check_lags(lags, rules=("aic", "bic"))
    cols = as_columns(regressors)
    if not 1 <= len(cols) <= 7:
        raise SpecError(f"pedroni_test has adjustment terms for 1 to 7 regressors; got {len(cols)}.")
    max_l = _max_lags(max_lags, _probe_years(panel)) if lags in ("aic", "bic") else int(lags)
    block = relation_block(panel, dependent, cols, min_years=max(10, max_l + len(cols) + 8),
                           purpose=f"pedroni_test with lags up to {max_l}")
    n_units, n_years = block.y.shape
    if lags in ("aic", "bic"):
        adf_lags = select_adf_lags(static_residuals(block.y, block.x, trend)[0], max_l, str(lags))
    else:
        adf_lags = np.full(n_units, int(lags))
    band = _bandwidth(hac_lags, n_years - 1)
    e, _ = static_residuals(block.y, block.x, trend)
    raw = pedroni_raw(e, np.diff(block.y, axis=1), np.diff(block.x, axis=1), adf_lags,
                      trend=trend, bandwidth=band)
    mu, var = PEDRONI_MOMENTS[trend][len(cols)]
    warnings = []
    if n_years < 50:
        warnings.append(f"T={n_years}: Pedroni's panel PP and ADF statistics over-reject in short "
                        f"panels; read them with the group statistics.")
    results = []
    for name in PEDRONI_STATISTICS:
        c = _PEDRONI_COLUMN[name]
        z = (float(raw[name]) - mu[c] * math.sqrt(n_units)) / math.sqrt(var[c])
        pvalue, cv = _right(z) if name == "panel v" else _left(z)
        alt = ("all units cointegrated (common autoregressive root)" if name.startswith("panel")
               else "cointegration in a share of units (unit-specific roots)")
        results.append(TestResult(
            test=f"Pedroni {name}", statistic=z, pvalue=pvalue, critical_values=cv, null=_NULL,
            alternative=alt, nobs=n_units * n_years,
            details={"statistic": name, "unstandardised": float(raw[name]), "mu": mu[c],
                     "v": var[c], "trend": trend, "regressors": len(cols), "units": n_units,
                     "years": block.span, "hac_lags": band,
                     "adf_lags": "fixed" if isinstance(lags, int) else str(lags),
                     "mean_adf_lags": float(np.mean(adf_lags)),
                     "tail": "right" if name == "panel v" else "left"},
            reference="pedroni1999; pedroni2004", warnings=tuple(warnings)))
    return PedroniResult(test="Pedroni", results=tuple(results),
                         details={"trend": trend, "hac_lags": band,
                                  "adf_lags": dict(zip(block.units, adf_lags.tolist())),
                                  "units": n_units, "years": block.span},
                         excluded=block.excluded, reference="pedroni1999; pedroni2004",
                         warnings=tuple(warnings))


def kao_test(panel: Panel, dependent: str, regressors: str | Sequence[str], *,
             trend: str = "constant", lags: int | str = "aic", max_lags: int | None = None,
             hac_lags: int | None = None) -> KaoResult:
    """Kao's residual-based DF and ADF panel cointegration tests (homogeneous slopes).

    H0: no cointegration. H1: the pooled residuals are stationary (all units cointegrated).

    Parameters
    ----------
    panel, dependent, regressors
        The panel, the dependent column and the regressor column(s), used as given.
    trend : {"constant"}
        Unit intercepts (the only case of Kao 1999).
    lags : int or {"aic", "bic"}
        Lag order of the pooled ADF regression, or the criterion choosing it.
    max_lags, hac_lags : int, optional
        As for :func:`pedroni_test`.

    Returns
    -------
    KaoResult
        DF rho, DF t, DF* rho, DF* t and ADF, each N(0,1) under H0, left tail.

    Notes
    -----
    Within (fixed-effects) regression ``y_it = a_i + b'x_it + e_it``; pooled
    ``e_it = rho e_it-1 + v_it`` with ``t_rho`` its t-ratio. With ``s_v^2`` and ``s_0v^2`` the
    contemporaneous and long-run variances of ``u_it = Δe_it`` conditional on ``Δx_it``:
    ``DF_rho = (sqrt(N) T (rho - 1) + 3 sqrt(N)) / sqrt(10.2)``;
    ``DF_t = sqrt(1.25) t_rho + sqrt(1.875 N)``;
    ``DF*_rho = (sqrt(N) T (rho - 1) + 3 sqrt(N) s_v^2/s_0v^2) / sqrt(3 + 36 s_v^4 / (5 s_0v^4))``;
    ``DF*_t = (t_rho + sqrt(6N) s_v / (2 s_0v)) / sqrt(s_0v^2/(2 s_v^2) + 3 s_v^2/(10 s_0v^2))``;
    ADF: the ``DF*_t`` form with the t-ratio of the pooled ADF regression. The constants are from
    memory and were checked by simulation (``tests/test_coint_montecarlo.py``). ``DF_rho`` and
    ``DF_t`` assume regressors strictly exogenous; the starred forms and ADF allow endogeneity.

    References
    ----------
    kao1999 (see the module docstring).
    """
    trend = check_trend(trend)
    if trend != "constant":
        raise SpecError(f"trend={trend!r}: Kao's test is defined with unit intercepts only; "
                        f"use trend='constant'.")
    lags = check_lags(lags, rules=("aic", "bic"))
    cols = as_columns(regressors)
    max_l = _max_lags(max_lags, _probe_years(panel)) if lags in ("aic", "bic") else int(lags)
    block = relation_block(panel, dependent, cols, min_years=max(8, max_l + 6),
                           purpose=f"kao_test with lags up to {max_l}")
    n_units, n_years = block.y.shape
    p = kao_select_lags(block.y, block.x, max_l, str(lags)) if isinstance(lags, str) else lags
    band = _bandwidth(hac_lags, n_years - 1)
    raw = kao_raw(block.y, block.x, p, bandwidth=band)
    sn = math.sqrt(n_units)
    sv2, s0v2 = raw["sigma_v2"], raw["sigma_0v2"]
    sv, s0v = math.sqrt(sv2), math.sqrt(s0v2)
    star_scale = math.sqrt(s0v2 / (2 * sv2) + 3 * sv2 / (10 * s0v2))
    values = {
        "DF rho": (sn * raw["t_rho"] + 3 * sn) / math.sqrt(10.2),
        "DF t": math.sqrt(1.25) * raw["t_df"] + math.sqrt(1.875 * n_units),
        "DF* rho": (sn * raw["t_rho"] + 3 * sn * sv2 / s0v2) / math.sqrt(3 + 36 * sv2 ** 2 / (5 * s0v2 ** 2)),
        "DF* t": (raw["t_df"] + math.sqrt(6 * n_units) * sv / (2 * s0v)) / star_scale,
        "ADF": (raw["t_adf"] + math.sqrt(6 * n_units) * sv / (2 * s0v)) / star_scale,
    }
    results = []
    for name, z in values.items():
        pvalue, cv = _left(z)
        results.append(TestResult(
            test=f"Kao {name}", statistic=z, pvalue=pvalue, critical_values=cv, null=_NULL,
            alternative="the pooled residuals are stationary", nobs=n_units * n_years,
            details={"statistic": name, "rho": raw["rho"], "t_rho": raw["t_df"],
                     "t_adf": raw["t_adf"], "adf_lags": int(p), "sigma_v2": sv2,
                     "sigma_0v2": s0v2, "hac_lags": band, "units": n_units,
                     "years": block.span},
            reference="kao1999"))
    return KaoResult(test="Kao", results=tuple(results),
                     details={"trend": trend, "adf_lags": int(p), "hac_lags": band,
                              "slopes": dict(zip(cols, np.atleast_1d(raw["beta"]).tolist()))},
                     excluded=block.excluded, reference="kao1999")


def westerlund_test(panel: Panel, dependent: str, regressors: str | Sequence[str], *,
                    trend: str = "constant", lags: int | str = 1, leads: int | str = 0,
                    max_lags: int | None = None, max_leads: int | None = None,
                    inference: str | None = None, reps: int = 499,
                    block_length: int | None = None, seed: Seed = DEFAULT_SEED,
                    executor: ExecutorLike = "serial") -> WesterlundResult:
    """Westerlund's error-correction panel cointegration tests Gt, Ga, Pt and Pa.

    H0: no unit error-corrects (``alpha_i = 0`` for all i). H1 of Gt, Ga: some units error-correct;
    of Pt, Pa: the panel as a whole error-corrects (``alpha_i = alpha < 0``).

    Parameters
    ----------
    panel, dependent, regressors
        The panel, the dependent column and the regressor column(s) (1 to 6), used as given.
    trend : {"none", "constant", "trend"}
        Deterministic terms of each unit's error-correction regression.
    lags, leads : int or "aic"
        Orders of the lagged ``Δy``, ``Δx`` and of the leads of ``Δx``; "aic" chooses each unit's
        order up to ``max_lags`` / ``max_leads`` (defaults ``floor(4 (T/100)^(1/4))`` and 1).
    inference : {"asymptotic", "bootstrap"}, optional
        p-values from the published asymptotic moments (the default), or from a bootstrap under
        H0 (``reps`` replications); the asymptotic p-value always stays in ``details``.
    reps : int
        Bootstrap replications.
    block_length : int, optional
        Length of the (circular) blocks of periods resampled; default 1 (the fitted short-run
        dynamics carry the serial correlation).
    seed, executor
        Seed of the bootstrap and the executor that runs it (:mod:`evidence.parallel`).

    Notes
    -----
    For each unit, OLS of ``Δy_t = d_t'δ + α y_t-1 + λ'x_t-1 + Σ_{j=1..p} α_j Δy_t-j +
    Σ_{j=-q..p} γ_j'Δx_t-j + e_t``. ``α(1)`` is estimated by ``ω_u / ω_y``, the Bartlett long-run
    standard deviations of ``u_t = e_t + Σ γ_j'Δx_t-j`` and of ``Δy_t``.
    ``Gt = N^-1 Σ α_i / se(α_i)``; ``Ga = N^-1 Σ T_i α_i / α_i(1)``;
    ``α = (ΣΣ ỹ_it-1^2)^-1 ΣΣ ỹ_it-1 Δỹ_it / α_i(1)`` with ``ỹ``, ``Δỹ`` net of the other
    regressors; ``se(α) = S_N (ΣΣ ỹ_it-1^2)^-1/2`` with ``S_N = N^-1 Σ σ_i / α_i(1)``;
    ``Pt = α / se(α)``; ``Pa = T α``. Standardised with the simulated moments
    (``_westerlund_tables``): ``sqrt(N)(G - E)/sqrt(Var)``, ``(Pt - sqrt(N) E)/sqrt(Var)``;
    left-tailed. The bootstrap fits the model without ``y_t-1, x_t-1`` (H0) to each unit,
    draws whole periods of the residual vector ``e_t`` for all units together (keeping the
    cross-sectional dependence), rebuilds ``Δy`` from the fitted short-run dynamics with ``x`` held
    as observed, and recomputes the raw statistics; the p-value is ``(1 + #{G* <= G}) / (B + 1)``.

    References
    ----------
    westerlund2007 (see the module docstring).
    """
    trend = check_trend(trend)
    lags = check_lags(lags, rules=("aic",))
    leads = check_lags(leads, parameter="leads", rules=("aic",))
    inference = check_choice("inference", inference or "asymptotic", INFERENCES)
    reps = option_int("reps", reps, 1)
    length = option_int("block_length", block_length, 1, default=1)
    seed = check_seed(seed)
    cols = as_columns(regressors)
    if not 1 <= len(cols) <= 6:
        raise SpecError(f"westerlund_test has moments for 1 to 6 regressors; got {len(cols)}.")
    probe = _probe_years(panel)
    max_p = _max_lags(max_lags, probe) if lags == "aic" else int(lags)
    max_q = ((1 if max_leads is None else _max_lags(max_leads, probe, "max_leads"))
             if leads == "aic" else int(leads))
    n_par = 2 + 2 * len(cols) + max_p + len(cols) * (max_p + max_q + 1)
    block = relation_block(panel, dependent, cols, min_years=n_par + max_p + max_q + 6,
                           purpose=f"westerlund_test with {max_p} lags and {max_q} leads")
    n_units = block.n_units
    p_i, q_i = _w.select_orders(block.y, block.x, lags, leads, max_lags=max_p, max_leads=max_q,
                                trend=trend)
    raw = _w.westerlund_raw(block.y, block.x, p_i, q_i, trend)
    k = len(cols)
    z_stats = {}
    for name in ("Gt", "Ga", "Pt", "Pa"):
        mean, var = (v[k - 1] for v in WESTERLUND_MOMENTS[name][trend])
        if name == "Pt":
            z_stats[name] = (raw[name] - math.sqrt(n_units) * mean) / math.sqrt(var)
        else:
            z_stats[name] = math.sqrt(n_units) * (raw[name] - mean) / math.sqrt(var)
    boot_p: dict[str, float] = {}
    details_boot: dict[str, object] = {}
    if inference == "bootstrap":
        null = _w.null_model(block.y, block.x, p_i, q_i, trend)
        tasks = [{"seed": s, "y": block.y, "x": block.x, "p": p_i, "q": q_i, "trend": trend,
                  "null": null, "block": length} for s in task_seeds(seed, reps)]
        with using_executor(executor) as runner:
            draws = np.asarray(runner.map(_w.bootstrap_task, tasks))
        for j, name in enumerate(("Gt", "Ga", "Pt", "Pa")):
            boot_p[name] = float((1 + np.sum(draws[:, j] <= raw[name])) / (reps + 1))
        details_boot = {"reps": reps, "block_length": length,
                        "seed": seed if isinstance(seed, int) else "generator"}
    alternatives = {"Gt": "some units error-correct", "Ga": "some units error-correct",
                    "Pt": "the panel error-corrects", "Pa": "the panel error-corrects"}
    results = []
    for name, z in z_stats.items():
        asym, cv = _left(z)
        details = {"statistic": name, "unstandardised": raw[name], "asymptotic_pvalue": asym,
                   "inference": inference, "trend": trend, "mean_lags": float(np.mean(p_i)),
                   "mean_leads": float(np.mean(q_i)), "units": n_units, "years": block.span,
                   **details_boot}
        if inference == "bootstrap":
            details["bootstrap_pvalue"] = boot_p[name]
        results.append(TestResult(
            test=f"Westerlund {name}", statistic=z, pvalue=boot_p.get(name, asym),
            critical_values=cv, null="no error correction (no cointegration)",
            alternative=alternatives[name], nobs=int(np.sum(raw["nobs"])), details=details,
            reference="westerlund2007"))
    return WesterlundResult(
        test="Westerlund", results=tuple(results),
        details={"trend": trend, "lags": dict(zip(block.units, p_i.tolist())),
                 "leads": dict(zip(block.units, q_i.tolist())),
                 "alpha": dict(zip(block.units, raw["alpha"].tolist())), **details_boot,
                 "inference": inference},
        excluded=block.excluded, reference="westerlund2007")
