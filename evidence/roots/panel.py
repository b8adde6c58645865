"""Panel unit-root and stationarity tests.

First generation (cross-sectional independence): Levin–Lin–Chu, Im–Pesaran–Shin, Fisher-type
combinations (Maddala–Wu, Choi), Breitung, Hadri. Second generation: Pesaran's CIPS (in
``_cips.py``, re-exported here). Every test takes a :class:`~evidence.panel.Panel` and a column.
IPS and the Fisher tests accept unbalanced panels (units may start or end in different years);
LLC, Breitung, Hadri and CIPS need a balanced panel and say which unit breaks it. A unit without
any value is left out and listed in ``details["excluded"]`` (unit, column, years, reason); a gap
inside a unit, a constant unit or one too short for the lags raises
:class:`~evidence.errors.DataError` naming it.

References
----------
llc2002 : Levin, A., Lin, C.-F. & Chu, C.-S. J. (2002). Unit root tests in panel data: asymptotic
    and finite-sample properties. J. Econometrics 108(1), 1–24.
ips2003 : Im, K. S., Pesaran, M. H. & Shin, Y. (2003). Testing for unit roots in heterogeneous
    panels. J. Econometrics 115(1), 53–74.
maddalawu1999 : Maddala, G. S. & Wu, S. (1999). A comparative study of unit root tests with panel
    data and a new simple test. Oxford Bulletin of Economics and Statistics 61(S1), 631–652.
choi2001 : Choi, I. (2001). Unit root tests for panel data. J. International Money and Finance
    20(2), 249–272.
breitung2000 : Breitung, J. (2000). The local power of some unit root tests for panel data. In
    B. Baltagi (ed.), Advances in Econometrics 15, 161–178. JAI.
hadri2000 : Hadri, K. (2000). Testing for stationarity in heterogeneous panel data. Econometrics
    Journal 3(2), 148–161.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy import stats

from evidence._typing import Trend
from evidence._validation import check_choice, check_int, check_lags, check_max_lags, check_trend
from evidence.errors import SpecError
from evidence.panel import Panel
from evidence.results import TestResult
from evidence.roots import _ips_tables as tables
from evidence.roots._cips import cips_test
from evidence.roots._common import (
    ARCH_TREND,
    N_DETERMINISTIC,
    ColumnBlock,
    column_block,
    excluded_records,
    require_balanced,
)
from evidence.roots._panel_math import (
    breitung_statistic,
    combine_pvalues,
    hadri_statistic,
    interpolate_in_t,
    ips_moments,
    ips_w,
    llc_statistic,
    prewhiten_differences,
)
from evidence.roots._panel_units import unit_adf, unit_pp

__all__ = ["llc_test", "ips_test", "fisher_test", "breitung_test", "hadri_test", "cips_test",
           "FISHER_COMBINATIONS"]

UNIT_ROOT_ALL = "every unit has a unit root"
SOME_STATIONARY = "some units are stationary"
#: Fisher-type combinations: Maddala–Wu P, Choi's inverse normal Z, modified Pm, logit L*.
FISHER_COMBINATIONS = ("p", "z", "pm", "l")
_FISHER_NAMES = {"p": "Maddala-Wu P", "z": "Choi Z", "pm": "Choi Pm", "l": "Choi L*"}
#: IPS (2003) Table 3 covers lag orders 0..8.
IPS_TABLE_MAX_LAGS = 8


def _min_obs(trend: str, lags: Any, max_lags: int | None) -> int:
    k = lags if isinstance(lags, int) else (max_lags or 0)
    return k + N_DETERMINISTIC[trend] + 5


def _warnings(block: ColumnBlock) -> list[str]:
    return ([f"{len(block.excluded)} item(s) left out; see details['excluded']."]
            if len(block.excluded) else [])


def _block(panel: Panel, column: str, trend: str, lags: Any, max_lags: int | None,
           purpose: str) -> ColumnBlock:
    return column_block(panel, column, min_obs=_min_obs(trend, lags, max_lags), purpose=purpose)


def ips_test(panel: Panel, column: str, *, trend: Trend = "constant", lags: int | str = "aic",
             max_lags: int | None = None) -> TestResult:
    """Im–Pesaran–Shin W-tbar test (heterogeneous panel; unbalanced allowed).

    Notes
    -----
    ``t_i`` is the ADF t-ratio of unit i with ``p_i`` lags (fixed or chosen by ``lags``),
    ``t̄ = N⁻¹ Σ t_i`` and
    ``W = √N (t̄ - N⁻¹ Σ E[t_iT(p_i)]) / sqrt(N⁻¹ Σ Var[t_iT(p_i)])`` → N(0,1), with the moments
    of IPS (2003) Table 3 at the unit's lag order and regression length ``T_i - p_i - 1``
    (linear interpolation in T; the nearest end of the table outside it, with a warning).
    H0: every unit has a unit root; H1: some units are stationary. Reject for small W.
    ``trend`` is "constant" or "trend"; lag orders above 8 are not tabulated, so with automatic
    lags ``max_lags`` defaults to the package's rule bounded by 8 and by each unit's length.

    References
    ----------
    ips2003 (see the module docstring).
    """
    trend = check_trend(trend, ("constant", "trend"))
    lags = check_lags(lags)
    max_lags = check_max_lags(max_lags)
    block = _block(panel, column, trend, lags, max_lags, "the IPS test")
    units = unit_adf(block, trend, lags, max_lags, table_max=IPS_TABLE_MAX_LAGS)
    t, p, n_reg = units.stat, units.lags, units.nobs
    if p.max() > IPS_TABLE_MAX_LAGS:
        unit = block.units[int(np.argmax(p))]
        return TestResult.inapplicable(
            "IPS W-tbar", reason=f"unit '{unit}' uses {p.max()} lags; IPS moments are tabulated "
            "for 0-8 lags. Set max_lags=8 or fewer.", nobs=int(n_reg.sum()), reference="ips2003")
    means, variances, outside = ips_moments(p, n_reg, trend)
    if np.isnan(means).any():
        i = int(np.flatnonzero(np.isnan(means))[0])
        return TestResult.inapplicable(
            "IPS W-tbar", reason=f"unit '{block.units[i]}': {p[i]} lags with {n_reg[i]} regression "
            "observations is not tabulated by IPS (2003); use fewer lags.",
            nobs=int(n_reg.sum()), reference="ips2003")
    n = t.size
    tbar = float(t.mean())
    w = float(ips_w(t, means, variances))
    warn = _warnings(block)
    if outside:
        warn.append("some regression lengths lie outside IPS Table 3 (T=10..100); the nearest "
                    "tabulated moments were used.")
    details: dict[str, Any] = {
        "trend": trend, "tbar": tbar, "units": n, "lags": p.tolist(),
        "lag_choice": "fixed" if isinstance(lags, int) else lags,
        "max_lags": units.max_lags.tolist(),
        "regression_obs": n_reg.tolist(), "mean_moment": float(means.mean()),
        "var_moment": float(variances.mean()), "balanced": block.balanced,
        "unit_tstats": dict(zip(block.units, t.round(6).tolist(), strict=True)),
        "excluded": excluded_records(block.excluded)}
    if (p == 0).all() and trend == "constant":
        zm, _ = interpolate_in_t(np.array(tables.IPS_ZBAR_T), np.array(tables.IPS_ZBAR_MEAN),
                                 float(n_reg.mean()))
        zv, _ = interpolate_in_t(np.array(tables.IPS_ZBAR_T), np.array(tables.IPS_ZBAR_VAR),
                                 float(n_reg.mean()))
        details["z_tbar"] = math.sqrt(n) * (tbar - zm) / math.sqrt(zv)
    return TestResult(test="IPS W-tbar", statistic=w, pvalue=float(stats.norm.cdf(w)),
                      critical_values={a: float(stats.norm.ppf(a)) for a in (0.01, 0.05, 0.10)},
                      null=UNIT_ROOT_ALL, alternative=SOME_STATIONARY, nobs=int(n_reg.sum()),
                      details=details, reference="ips2003", warnings=tuple(warn))


def fisher_test(panel: Panel, column: str, *, combine: str = "pm", unit_test: str = "adf",
                trend: Trend = "constant", lags: int | str = "aic", max_lags: int | None = None,
                hac_lags: int | None = None) -> TestResult:
    """Fisher-type test combining the units' unit-root p-values (unbalanced allowed).

    Parameters
    ----------
    combine : {"p", "z", "pm", "l"}
        The reported statistic: Maddala–Wu P (χ²(2N)), Choi's inverse normal Z, Choi's modified
        Pm (for large N) or Choi's logit L*. All four are in ``details["combinations"]``.
    unit_test : {"adf", "pp"}
        Unit p-values from ADF (``lags``, ``max_lags``) or Phillips–Perron (``hac_lags``, the
        Bartlett bandwidth; ``None`` for the Newey–West rule), both MacKinnon p-values via arch.

    Notes
    -----
    ``P = -2 Σ ln p_i``; ``Z = N^{-1/2} Σ Φ⁻¹(p_i)``; ``Pm = (2√N)⁻¹ Σ (-2 ln p_i - 2)``;
    ``L* = √k Σ ln(p_i/(1-p_i))``, ``k = 3(5N+4)/(π² N(5N+2))`` against t(5N+4).
    H0: every unit has a unit root; H1: some units are stationary. The units' p-values must be
    independent: with cross-sectional dependence use CIPS.

    References
    ----------
    maddalawu1999; choi2001 (see the module docstring).
    """
    from arch.unitroot.unitroot import mackinnonp

    combine = check_choice("combine", combine, FISHER_COMBINATIONS)
    unit_test = check_choice("unit_test", unit_test, ("adf", "pp"))
    trend = check_trend(trend)
    hac_lags = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    if unit_test == "adf":
        lags = check_lags(lags)
        max_lags = check_max_lags(max_lags)
        block = _block(panel, column, trend, lags, max_lags, "the Fisher test")
        units = unit_adf(block, trend, lags, max_lags)
    else:
        block = _block(panel, column, trend, 0, None, "the Fisher test")
        units = unit_pp(block, trend, hac_lags)
    raw = np.array([mackinnonp(float(t), ARCH_TREND[trend]) for t in units.stat])
    pvals = np.clip(raw, 1e-16, 1 - 1e-16)
    combos = combine_pvalues(pvals)
    stat, pvalue = combos[combine]
    tail = "lower" if combine in ("z", "l") else "upper"
    if combine == "p":
        cv = {a: float(stats.chi2.isf(a, 2 * pvals.size)) for a in (0.01, 0.05, 0.10)}
    elif combine == "pm":
        cv = {a: float(stats.norm.isf(a)) for a in (0.01, 0.05, 0.10)}
    elif combine == "z":
        cv = {a: float(stats.norm.ppf(a)) for a in (0.01, 0.05, 0.10)}
    else:
        cv = {a: float(stats.t.ppf(a, 5 * pvals.size + 4)) for a in (0.01, 0.05, 0.10)}
    return TestResult(
        test=f"Fisher ({_FISHER_NAMES[combine]})", statistic=stat, pvalue=pvalue,
        critical_values=cv, null=UNIT_ROOT_ALL, alternative=SOME_STATIONARY,
        nobs=int(units.nobs.sum()),
        details={"combine": combine, "unit_test": unit_test, "trend": trend, "tail": tail,
                 "units": pvals.size, "combinations": {k: {"statistic": v[0], "pvalue": v[1]}
                                                       for k, v in combos.items()},
                 "unit_pvalues": dict(zip(block.units, pvals.round(6).tolist(), strict=True)),
                 "unit_lags": units.lags.tolist(),
                 "balanced": block.balanced, "excluded": excluded_records(block.excluded)},
        reference="maddalawu1999; choi2001" if combine != "p" else "maddalawu1999",
        warnings=tuple(_warnings(block)))


def llc_test(panel: Panel, column: str, *, trend: Trend = "constant", lags: int | str = "aic",
             max_lags: int | None = None, hac_lags: int | None = None) -> TestResult:
    """Levin–Lin–Chu test with a common autoregressive root (balanced panel).

    Notes
    -----
    Per unit, ``p_i`` lags (fixed or chosen by ``lags`` via the unit ADF); ẽ_it and ṽ_{i,t-1}
    are the residuals of Δy_it and y_{i,t-1} on the lagged differences and ``d_t``, divided by
    the ADF regression's s.d. σ_εi. ``s_i = σ_yi/σ_εi`` with σ²_yi the Bartlett long-run
    variance of Δy_i, bandwidth ``hac_lags`` (default ``round(3.21 T^{1/3})``, LLC's rule);
    Δy_i is demeaned only for "trend" (under H0 of "none" and "constant" it has no drift, and
    demeaning it biases σ_yi down at small T: 24 % rejections at 5 % with N=10, T=30 in our
    simulation, 6 % without). Pooled OLS of ẽ on ṽ gives δ̂, its t-ratio t_δ and
    ``σ̂²_ε = SSR/(N T̃)``, ``T̃ = T - p̄ - 1``; then
    ``t*_δ = (t_δ - N T̃ S_N σ̂_ε⁻² STD(δ̂) μ*_T̃) / σ*_T̃`` → N(0,1), ``S_N = N⁻¹ Σ s_i``, with
    μ*, σ* from LLC (2002) Table 2 by T̃ (linear interpolation). H0: every unit has a unit root
    (δ = 0); H1: every unit is stationary with a common δ < 0. Reject for small values.

    References
    ----------
    llc2002 (see the module docstring).
    """
    trend = check_trend(trend)
    lags = check_lags(lags)
    max_lags = check_max_lags(max_lags)
    hac_lags = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    block = _block(panel, column, trend, lags, max_lags, "the LLC test")
    require_balanced(block, purpose="the LLC test")
    units = unit_adf(block, trend, lags, max_lags)
    y = block.values
    nobs, n = y.shape
    if hac_lags is None:
        hac_lags = round(3.21 * nobs ** (1.0 / 3.0))
    pieces = llc_statistic(y, trend, units.lags, hac_lags)
    stat, t_tilde = pieces["statistic"], pieces["t_tilde"]
    warn = _warnings(block)
    if pieces["outside"]:
        warn.append(f"T~={t_tilde:.1f} lies outside LLC Table 2 (25..500); the nearest row was used. "
                    "LLC is meant for moderate to large T.")
    return TestResult(
        test="LLC", statistic=stat, pvalue=float(stats.norm.cdf(stat)),
        critical_values={a: float(stats.norm.ppf(a)) for a in (0.01, 0.05, 0.10)},
        null=UNIT_ROOT_ALL, alternative="every unit is stationary (common autoregressive root)",
        nobs=int(pieces["nobs"]),
        details={"trend": trend, "lags": units.lags.tolist(), "hac_lags": hac_lags,
                 **{k: pieces[k] for k in ("delta", "t_delta", "t_tilde", "s_n", "mu_star",
                                           "sigma_star")},
                 "units": n, "excluded": excluded_records(block.excluded)},
        reference="llc2002", warnings=tuple(warn))


def breitung_test(panel: Panel, column: str, *, trend: Trend = "constant", lags: int = 0) -> TestResult:
    """Breitung's unbiased panel unit-root test (balanced panel).

    Notes
    -----
    With ``lags = p > 0`` each unit is prewhitened: Δy_t is regressed on Δy_{t-1..t-p} (and a
    constant for "trend"), and the levels are rebuilt as the cumulated residuals. Then
    "constant": ``y*_t = y_t - y_1``; "trend": ``y*_t = y_t - y_1 - (t-1)(y_T - y_1)/(T-1)`` and
    the differences are replaced by forward orthogonal deviations; "none": no transformation.
    ``λ = Σ_i σ̂_i⁻² Σ_t Δy*_it y*_{i,t-1} / sqrt(Σ_i σ̂_i⁻² Σ_t y*²_{i,t-1})`` → N(0,1).
    H0: every unit has a unit root; H1: every unit is stationary (common root). Reject for
    small values.

    References
    ----------
    breitung2000 (see the module docstring).
    """
    trend = check_trend(trend)
    lags = check_lags(lags, rules=())  # type: ignore[assignment]
    block = column_block(panel, column, min_obs=lags + 6, purpose="the Breitung test")
    require_balanced(block, purpose="the Breitung test")
    y = block.values
    if lags > 0:
        y = prewhiten_differences(y, trend, np.full(y.shape[1], lags), lags)[0]
    stat = breitung_statistic(y, trend)
    return TestResult(
        test="Breitung", statistic=stat, pvalue=float(stats.norm.cdf(stat)),
        critical_values={a: float(stats.norm.ppf(a)) for a in (0.01, 0.05, 0.10)},
        null=UNIT_ROOT_ALL, alternative="every unit is stationary (common autoregressive root)",
        nobs=int(y.shape[0] * y.shape[1]),
        details={"trend": trend, "lags": lags, "units": y.shape[1],
                 "excluded": excluded_records(block.excluded)},
        reference="breitung2000", warnings=tuple(_warnings(block)))


def hadri_test(panel: Panel, column: str, *, trend: Trend = "constant", robust: bool = True,
               hac_lags: int | None = 0) -> TestResult:
    """Hadri's LM test of stationarity in every unit (balanced panel); note the reversed null.

    Parameters
    ----------
    trend : {"constant", "trend"}
    robust : bool
        True: each unit's statistic uses its own variance (heteroskedasticity across units);
        False: one pooled variance.
    hac_lags : int
        Bartlett bandwidth of the variance (0: no serial-correlation correction).

    Notes
    -----
    ``e_it`` residuals of y_it on d_t, ``S_it = Σ_{s≤t} e_is``, ``LM_i = T⁻² Σ_t S²_it / σ̂²_i``
    (robust) and ``LM = N⁻¹ Σ LM_i``; non-robust: ``LM = N⁻¹ Σ_i T⁻² Σ_t S²_it / σ̂²`` with σ̂²
    the mean of the σ̂²_i. ``Z = √N (LM - ξ)/ζ`` → N(0,1) with ξ = 1/6, ζ² = 1/45 ("constant")
    and ξ = 1/15, ζ² = 11/6300 ("trend"). Each LM_i (robust) is the unit's KPSS statistic.
    H0: every unit is stationary; H1: some units have a unit root. Reject for large Z.

    References
    ----------
    hadri2000 (see the module docstring).
    """
    trend = check_trend(trend, ("constant", "trend"))
    hac_lags = check_int("hac_lags", hac_lags, minimum=0)
    if not isinstance(robust, bool):
        raise SpecError(f"robust={robust!r} must be True or False.")
    block = column_block(panel, column, min_obs=max(hac_lags + 3, 5), purpose="the Hadri test")
    require_balanced(block, purpose="the Hadri test")
    z, lm, unit_lm = hadri_statistic(block.values, trend, robust, hac_lags)
    n = block.values.shape[1]
    return TestResult(
        test="Hadri" + (" (robust)" if robust else ""), statistic=z,
        pvalue=float(stats.norm.sf(z)),
        critical_values={a: float(stats.norm.isf(a)) for a in (0.01, 0.05, 0.10)},
        null="every unit is stationary", alternative="some units have a unit root",
        nobs=int(block.values.size),
        details={"trend": trend, "robust": robust, "hac_lags": hac_lags, "lm": lm, "units": n,
                 "unit_lm": dict(zip(block.units, unit_lm.round(6).tolist(), strict=True)),
                 "excluded": excluded_records(block.excluded)},
        reference="hadri2000", warnings=tuple(_warnings(block)))
