"""Pooled first-generation panel tests: Levin–Lin–Chu, Breitung and Hadri (balanced panels).

By default their p-values are simulated for the panel's own N and T (``inference="simulated"``):
LLC and Breitung from the null of N independent random walks with AR(1) increments read at the
panel's pooled autocorrelation of Δy (``_panel_null``); Hadri from each unit's finite-sample
moments of the KPSS statistic under a stationary AR(1) read at the unit's bias-corrected
autocorrelation (``_calibrate``). ``inference="asymptotic"`` gives the published adjustments
and the normal approximation; its measured size is in ``details["size"]`` and, when outside
[3 %, 7.5 %], in the warnings.

References
----------
llc2002 : Levin, A., Lin, C.-F. & Chu, C.-S. J. (2002). Unit root tests in panel data: asymptotic
    and finite-sample properties. J. Econometrics 108(1), 1–24.
breitung2000 : Breitung, J. (2000). The local power of some unit root tests for panel data. In
    B. Baltagi (ed.), Advances in Econometrics 15, 161–178. JAI.
hadri2000 : Hadri, K. (2000). Testing for stationarity in heterogeneous panel data. Econometrics
    Journal 3(2), 148–161.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy import stats

from evidence._hac import newey_west_lags
from evidence._typing import DEFAULT_SEED, Seed, Trend
from evidence._validation import (
    check_choice,
    check_int,
    check_lags,
    check_max_lags,
    check_seed,
    check_trend,
)
from evidence.errors import SpecError
from evidence.panel import Panel
from evidence.results import TestResult
from evidence.roots._calibrate import phi_hat_of, unit_null
from evidence.roots._common import (
    INFERENCE,
    N_DETERMINISTIC,
    ColumnBlock,
    column_block,
    excluded_records,
    lag_bound,
    require_balanced,
    size_details,
)
from evidence.roots._panel_math import (
    HADRI_MOMENTS,
    breitung_batch,
    hadri_unit_lm,
    llc_batch,
    prewhiten_differences,
)
from evidence.roots._panel_null import panel_null, pooled_phi, register
from evidence.roots._unit_batch import adf_select

__all__ = ["llc_test", "breitung_test", "hadri_test", "REPS"]

UNIT_ROOT_ALL = "every unit has a unit root"
COMMON_ROOT = "every unit is stationary (common autoregressive root)"
#: Simulated panels per grid point of the null of LLC and Breitung.
REPS = 1000
LEVELS = (0.01, 0.05, 0.10)


def _unit_lags(y: np.ndarray, trend: str, lags: int | str, max_lags: int) -> np.ndarray:
    """``(R, N)`` lag orders of batches ``(R, T, N)`` (fixed, or by the rule up to max_lags)."""
    reps, nobs, n_units = y.shape
    if isinstance(lags, int):
        return np.full((reps, n_units), lags)
    flat = np.moveaxis(y, 2, 1).reshape(reps * n_units, nobs).T
    return adf_select(flat, trend, max_lags, lags)[1].reshape(reps, n_units)


@register("llc")
def _llc_draws(y: np.ndarray, trend: str, options: dict[str, Any]) -> np.ndarray:
    lags = _unit_lags(y, trend, options["lags"], options["max_lags"])
    return llc_batch(y, trend, lags, options["hac_lags"])["statistic"]


@register("breitung")
def _breitung_draws(y: np.ndarray, trend: str, options: dict[str, Any]) -> np.ndarray:
    lags = _unit_lags(y, trend, options["lags"], options["max_lags"])
    return breitung_batch(prewhiten_differences(y, trend, lags, options["max_lags"]), trend)


def _block(panel: Panel, column: str, min_obs: int, purpose: str) -> ColumnBlock:
    block = column_block(panel, column, min_obs=min_obs, purpose=purpose)
    require_balanced(block, purpose=purpose)
    return block


def _warnings(block: ColumnBlock) -> list[str]:
    return ([f"{len(block.excluded)} item(s) left out; see details['excluded']."]
            if len(block.excluded) else [])


def _simulation_options(inference: Any, reps: Any, seed: Any) -> tuple[str, int, Any]:
    inference = check_choice("inference", inference, INFERENCE)
    reps = check_int("reps", reps, minimum=100)
    seed = check_seed(seed)
    if isinstance(seed, np.random.Generator):
        seed = int(seed.integers(0, 2**62))
    return inference, reps, seed


def _simulated(name: str, block: ColumnBlock, trend: str, options: dict[str, Any], stat: float,
               reps: int, seed: Any, executor: Any) -> tuple[float, dict[float, float], dict[str, Any]]:
    y = block.values
    null = panel_null(name, y.shape[1], y.shape[0], trend, options, reps=reps, seed=seed,
                      executor=executor)
    phi = pooled_phi(y)
    pvalue = null.pvalue(stat, phi, tail="lower")
    info = {"null": null.label, "pooled_phi": round(phi, 6), "reps": reps, "seed": seed}
    return pvalue, null.quantiles(phi, LEVELS), info


def llc_test(panel: Panel, column: str, *, trend: Trend = "constant", lags: int | str = "aic",
             max_lags: int | None = None, hac_lags: int | None = None,
             inference: str = "simulated", reps: int = REPS, seed: Seed = DEFAULT_SEED,
             executor: Any = "serial") -> TestResult:
    """Levin–Lin–Chu test with a common autoregressive root (balanced panel).

    Parameters
    ----------
    trend : {"none", "constant", "trend"}
    lags, max_lags
        Each unit's ADF order: fixed, or chosen by "aic", "bic" or "sequential-t" up to
        ``max_lags`` (default ``floor(4 (T/100)^(1/4))``, bounded by T).
    hac_lags : int, optional
        Bartlett bandwidth of the long-run variance of Δy; default LLC's ``round(3.21 T^{1/3})``.
    inference : {"simulated", "asymptotic"}
        "simulated" (default): the p-value and critical values of the same statistic simulated for
        this N and T under independent random walks whose increments have the panel's pooled
        first-order autocorrelation; "asymptotic": N(0, 1) after LLC's Table 2 adjustments,
        which rejects 8–16 % of the time at 5 % for N = 20, T = 30–40 (``details["size"]``).
    reps, seed, executor
        Simulated panels per grid point, their seed, where to run them.

    Notes
    -----
    ẽ_it and ṽ_{i,t-1} are the residuals of Δy_it and y_{i,t-1} on the unit's lagged differences
    and ``d_t``, divided by the ADF regression's s.d. σ_εi. ``s_i = σ_yi/σ_εi`` with σ²_yi the
    Bartlett long-run variance of Δy_i, demeaned only for "trend" (under H0 of "none" and
    "constant" Δy has no drift; demeaning it biases σ_yi down at small T). Pooled OLS of ẽ on ṽ
    gives δ̂, t_δ and ``σ̂²_ε = SSR/(N T̃)``, ``T̃ = T - p̄ - 1``; then
    ``t*_δ = (t_δ - N T̃ S_N σ̂_ε⁻² STD(δ̂) μ*_T̃) / σ*_T̃``, ``S_N = N⁻¹ Σ s_i``, with μ*, σ* from
    LLC (2002) Table 2 by T̃. H0: every unit has a unit root (δ = 0); H1: every unit is
    stationary with a common δ < 0. Reject for small values.

    References
    ----------
    llc2002 (see the module docstring).
    """
    trend = check_trend(trend)
    lags = check_lags(lags)
    max_lags = check_max_lags(max_lags)
    hac_lags = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    inference, reps, seed = _simulation_options(inference, reps, seed)
    k = lags if isinstance(lags, int) else (max_lags or 0)
    block = _block(panel, column, k + N_DETERMINISTIC[trend] + 5, "the LLC test")
    y = block.values
    nobs, n = y.shape
    top = lags if isinstance(lags, int) else (lag_bound(nobs, trend) if max_lags is None else max_lags)
    if hac_lags is None:
        hac_lags = round(3.21 * nobs ** (1.0 / 3.0))
    unit_lags = _unit_lags(y[None], trend, lags, top)
    pieces = {k: float(v[0]) for k, v in llc_batch(y[None], trend, unit_lags, hac_lags).items()}
    stat = pieces["statistic"]
    warn = _warnings(block)
    details: dict[str, Any] = {
        "trend": trend, "lags": unit_lags[0].tolist(),
        "lag_choice": "fixed" if isinstance(lags, int) else lags, "max_lags": top,
        "hac_lags": hac_lags, "inference": inference,
        **{k: pieces[k] for k in ("delta", "t_delta", "t_tilde", "s_n", "mu_star", "sigma_star")},
        "units": n}
    if inference == "simulated":
        options = {"lags": lags, "max_lags": top, "hac_lags": hac_lags}
        pvalue, cv, info = _simulated("llc", block, trend, options, stat, reps, seed, executor)
        details.update(info)
    else:
        pvalue = float(stats.norm.cdf(stat))
        cv = {a: float(stats.norm.ppf(a)) for a in LEVELS}
        if pieces["outside"]:
            warn.append(f"T~={pieces['t_tilde']:.1f} lies outside LLC Table 2 (25..500); the "
                        "nearest row was used.")
    details["size"], size_warn = size_details("LLC", n, nobs, inference, trend)
    details["excluded"] = excluded_records(block.excluded)
    return TestResult(test="LLC", statistic=stat, pvalue=pvalue, critical_values=cv,
                      null=UNIT_ROOT_ALL, alternative=COMMON_ROOT,
                      nobs=int(np.sum(nobs - unit_lags[0] - 1)), details=details,
                      reference="llc2002", warnings=tuple(warn + size_warn))


def breitung_test(panel: Panel, column: str, *, trend: Trend = "constant",
                  lags: int | str = "aic", max_lags: int | None = None,
                  inference: str = "simulated", reps: int = REPS, seed: Seed = DEFAULT_SEED,
                  executor: Any = "serial") -> TestResult:
    """Breitung's unbiased panel unit-root test (balanced panel).

    Parameters
    ----------
    lags, max_lags
        Prewhitening order of each unit's Δy: fixed, or chosen by the unit's ADF lag search
        ("aic", "bic", "sequential-t") up to ``max_lags``. 0 means no prewhitening.
    inference, reps, seed, executor
        As in :func:`llc_test`; "asymptotic" is N(0, 1), which rejects 0–8 % of the time at 5 %
        for N = 20, T = 30–40 depending on the persistence of Δy (``details["size"]``).

    Notes
    -----
    Each unit's Δy_t is regressed on Δy_{t-1..t-p_i} (and a constant for "trend") over the
    common sample of the largest order, and the levels are rebuilt as the cumulated residuals.
    Then "constant": ``y*_t = y_t - y_1``; "trend": ``y*_t = y_t - y_1 - (t-1)(y_T - y_1)/(T-1)``
    and the differences are replaced by forward orthogonal deviations; "none": no transformation.
    ``λ = Σ_i σ̂_i⁻² Σ_t Δy*_it y*_{i,t-1} / sqrt(Σ_i σ̂_i⁻² Σ_t y*²_{i,t-1})``.
    H0: every unit has a unit root; H1: every unit is stationary (common root). Reject for
    small values.

    References
    ----------
    breitung2000 (see the module docstring).
    """
    trend = check_trend(trend)
    lags = check_lags(lags)
    max_lags = check_max_lags(max_lags)
    inference, reps, seed = _simulation_options(inference, reps, seed)
    k = lags if isinstance(lags, int) else (max_lags or 0)
    block = _block(panel, column, k + 6, "the Breitung test")
    y = block.values
    nobs, n = y.shape
    top = lags if isinstance(lags, int) else (lag_bound(nobs, trend) if max_lags is None else max_lags)
    unit_lags = _unit_lags(y[None], trend, lags, top)
    white = prewhiten_differences(y[None], trend, unit_lags, top)
    stat = float(breitung_batch(white, trend)[0])
    details: dict[str, Any] = {"trend": trend, "lags": unit_lags[0].tolist(),
                               "lag_choice": "fixed" if isinstance(lags, int) else lags,
                               "max_lags": top, "inference": inference, "units": n}
    if inference == "simulated":
        options = {"lags": lags, "max_lags": top}
        pvalue, cv, info = _simulated("breitung", block, trend, options, stat, reps, seed, executor)
        details.update(info)
    else:
        pvalue = float(stats.norm.cdf(stat))
        cv = {a: float(stats.norm.ppf(a)) for a in LEVELS}
    details["size"], size_warn = size_details("Breitung", n, nobs, inference, trend)
    details["excluded"] = excluded_records(block.excluded)
    return TestResult(test="Breitung", statistic=stat, pvalue=pvalue, critical_values=cv,
                      null=UNIT_ROOT_ALL, alternative=COMMON_ROOT,
                      nobs=int(white.shape[1] * n), details=details, reference="breitung2000",
                      warnings=tuple(_warnings(block) + size_warn))


def hadri_test(panel: Panel, column: str, *, trend: Trend = "constant", robust: bool = True,
               hac_lags: int | None = None, inference: str = "simulated") -> TestResult:
    """Hadri's LM test of stationarity in every unit (balanced panel); note the reversed null.

    Parameters
    ----------
    trend : {"constant", "trend"}
    robust : bool
        True: each unit's statistic uses its own long-run variance (heterogeneity across units);
        False: one pooled variance (then only ``inference="asymptotic"``).
    hac_lags : int, optional
        Bartlett bandwidth of the long-run variances; default ``floor(4 (T/100)^(2/9))``.
    inference : {"simulated", "asymptotic"}
        "simulated" (default): ``Z = √N (LM - N⁻¹ Σ E_i)/sqrt(N⁻¹ Σ V_i)`` with E_i, V_i the mean
        and variance of unit i's KPSS statistic simulated for this T and bandwidth under a
        stationary AR(1) with the unit's bias-corrected first-order autocorrelation (second-order
        corrected for averaging; ``_calibrate``); "asymptotic": Hadri's ξ, ζ², which reject
        45–60 % of the time at 5 % under AR(0.5) noise with the default bandwidth, 100 % with
        ``hac_lags=0``.

    Notes
    -----
    ``e_it`` residuals of y_it on d_t, ``S_it = Σ_{s≤t} e_is``, ``LM_i = T⁻² Σ_t S²_it / σ̂²_i``
    (each unit's KPSS statistic) and ``LM = N⁻¹ Σ LM_i``; non-robust: ``N⁻¹ Σ_i T⁻² Σ_t S²_it / σ̂²``
    with σ̂² the mean of the σ̂²_i. Asymptotically ``Z = √N (LM - ξ)/ζ`` → N(0,1) with ξ = 1/6,
    ζ² = 1/45 ("constant") and ξ = 1/15, ζ² = 11/6300 ("trend"). H0: every unit is stationary;
    H1: some units have a unit root. Reject for large Z.

    References
    ----------
    hadri2000 (see the module docstring).
    """
    trend = check_trend(trend, ("constant", "trend"))
    hac_lags = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    inference = check_choice("inference", inference, INFERENCE)
    if not isinstance(robust, bool):
        raise SpecError(f"robust={robust!r} must be True or False.")
    if not robust and inference == "simulated":
        raise SpecError("robust=False pools one variance, for which only inference='asymptotic' "
                        "is available; use robust=True (the default) or inference='asymptotic'.")
    block = _block(panel, column, max((hac_lags or 0) + 3, 5), "the Hadri test")
    y = block.values
    nobs, n = y.shape
    bandwidth = newey_west_lags(nobs) if hac_lags is None else hac_lags
    s2, lrv = hadri_unit_lm(y, trend, bandwidth)
    unit_lm = s2 / lrv
    lm = float(unit_lm.mean()) if robust else float(s2.mean() / lrv.mean())
    details: dict[str, Any] = {"trend": trend, "robust": robust, "hac_lags": bandwidth,
                               "inference": inference, "lm": lm, "units": n,
                               "unit_lm": dict(zip(block.units, unit_lm.round(6).tolist(), strict=True))}
    if inference == "simulated":
        table = unit_null("kpss", nobs, trend, hac_lags=bandwidth)
        phi = table.phi_tilde(phi_hat_of("kpss", y, trend))
        mean, var = table.moments(phi, n_obs=nobs)
        z = float(np.sqrt(n) * (lm - mean.mean()) / np.sqrt(var.mean()))
        details.update({"moments": table.label, "mean_moment": float(mean.mean()),
                        "var_moment": float(var.mean()),
                        "unit_phi": dict(zip(block.units, np.round(phi, 4).tolist(), strict=True))})
    else:
        xi, zeta2 = HADRI_MOMENTS[trend]
        z = float(np.sqrt(n) * (lm - xi) / np.sqrt(zeta2))
    name = "Hadri" + (" (robust)" if robust else "")
    details["size"], size_warn = size_details("Hadri (robust)", n, nobs, inference, trend)
    details["excluded"] = excluded_records(block.excluded)
    return TestResult(
        test=name, statistic=z, pvalue=float(stats.norm.sf(z)),
        critical_values={a: float(stats.norm.isf(a)) for a in LEVELS},
        null="every unit is stationary", alternative="some units have a unit root",
        nobs=int(y.size), details=details, reference="hadri2000",
        warnings=tuple(_warnings(block) + size_warn))
