"""Panel unit-root and stationarity tests.

First generation (cross-sectional independence): Im–Pesaran–Shin and the Fisher-type
combinations (Maddala–Wu, Choi) here; Levin–Lin–Chu, Breitung and Hadri in ``pooled.py``.
Second generation: Pesaran's CIPS (in ``_cips.py``). All are re-exported here.

By default the p-values are simulated for the data's own T (and N): IPS standardises t-bar with
each unit's finite-sample moments, the Fisher tests combine finite-sample unit p-values
(``_calibrate``). ``inference="asymptotic"`` gives the published tables (IPS 2003 Table 3) and
MacKinnon's asymptotic p-values; their measured size is in ``details["size"]``. Every test takes
a :class:`~evidence.panel.Panel` and a column.
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
from evidence.panel import Panel
from evidence.results import TestResult
from evidence.roots import _ips_tables as tables
from evidence.roots._calibrate import TAILS, phi_hat_of, unit_null
from evidence.roots._cips import cips_test
from evidence.roots._common import (
    ARCH_TREND,
    INFERENCE,
    N_DETERMINISTIC,
    ColumnBlock,
    column_block,
    excluded_records,
    size_details,
)
from evidence.roots._panel_math import combine_pvalues, interpolate_in_t, ips_moments, ips_w
from evidence.roots._panel_units import UnitStats, unit_adf, unit_pp
from evidence.roots.pooled import breitung_test, hadri_test, llc_test

__all__ = ["llc_test", "ips_test", "fisher_test", "breitung_test", "hadri_test", "cips_test",
           "FISHER_COMBINATIONS", "unit_pvalues"]

UNIT_ROOT_ALL = "every unit has a unit root"
SOME_STATIONARY = "some units are stationary"
#: Fisher-type combinations: Maddala–Wu P, Choi's inverse normal Z, modified Pm, logit L*.
FISHER_COMBINATIONS = ("p", "z", "pm", "l")
_FISHER_NAMES = {"p": "Maddala-Wu P", "z": "Choi Z", "pm": "Choi Pm", "l": "Choi L*"}
#: IPS (2003) Table 3 covers lag orders 0..8.
IPS_TABLE_MAX_LAGS = 8
LEVELS = (0.01, 0.05, 0.10)


def _min_obs(trend: str, lags: Any, max_lags: int | None) -> int:
    k = lags if isinstance(lags, int) else (max_lags or 0)
    return k + N_DETERMINISTIC[trend] + 5


def _warnings(block: ColumnBlock) -> list[str]:
    return ([f"{len(block.excluded)} item(s) left out; see details['excluded']."]
            if len(block.excluded) else [])


def _block(panel: Panel, column: str, trend: str, lags: Any, max_lags: int | None,
           purpose: str) -> ColumnBlock:
    return column_block(panel, column, min_obs=_min_obs(trend, lags, max_lags), purpose=purpose)


def _unit_table(kind: str, length: int, trend: str, lags: int | str, top: int, hac_lags: int):
    if kind == "pp":
        return unit_null("pp", length, trend, hac_lags=hac_lags)
    if isinstance(lags, int):
        return unit_null(kind, length, trend, lags=lags)
    return unit_null(kind, length, trend, max_lags=top, rule=lags)


def unit_pvalues(block: ColumnBlock, units: UnitStats, kind: str, trend: str,
                 lags: int | str) -> tuple[np.ndarray, np.ndarray]:
    """Finite-sample p-values of each unit's statistic and the unit's φ̂ (``_calibrate``)."""
    p = np.empty(len(block.units))
    phi = np.empty(len(block.units))
    for length in np.unique(units.lengths):
        idx = np.flatnonzero(units.lengths == length)
        y = np.column_stack([block.unit_values(int(i)) for i in idx])
        phi[idx] = phi_hat_of(kind, y, trend)
        for top in np.unique(units.max_lags[idx]):
            sub = idx[units.max_lags[idx] == top]
            table = _unit_table(kind, int(length), trend, lags, int(top), int(units.max_lags[sub][0]))
            p[sub] = table.pvalue(units.stat[sub], phi[sub], tail=TAILS[kind])
    return p, phi


def ips_test(panel: Panel, column: str, *, trend: Trend = "constant", lags: int | str = "aic",
             max_lags: int | None = None, inference: str = "simulated") -> TestResult:
    """Im–Pesaran–Shin W-tbar test (heterogeneous panel; unbalanced allowed).

    Parameters
    ----------
    trend : {"constant", "trend"}
    lags, max_lags
        Each unit's ADF order: fixed, or chosen by "aic", "bic" or "sequential-t" up to
        ``max_lags`` (default ``floor(4 (T_i/100)^(1/4))``, bounded by the unit's length and, with
        ``inference="asymptotic"``, by the 8 lags Table 3 covers).
    inference : {"simulated", "asymptotic"}
        "simulated" (default): the moments E[t_i], Var[t_i] of each unit's ADF statistic are
        simulated for its own T, deterministic terms and lag rule under a random walk whose
        increments have the unit's (bias-corrected) first-order autocorrelation (``_calibrate``),
        so the test never lacks moments; "asymptotic": IPS (2003) Table 3 at each unit's chosen
        lag order and regression length (inapplicable when a cell is not tabulated), which
        rejects 7–10 % of the time at 5 % for N = 20, T = 30 with AIC lags (``details["size"]``).

    Notes
    -----
    ``t_i`` is the ADF t-ratio of unit i, ``t̄ = N⁻¹ Σ t_i`` and
    ``W = √N (t̄ - N⁻¹ Σ E[t_i]) / sqrt(N⁻¹ Σ Var[t_i])`` → N(0,1). H0: every unit has a unit
    root; H1: some units are stationary. Reject for small W.

    References
    ----------
    ips2003 (see the module docstring).
    """
    trend = check_trend(trend, ("constant", "trend"))
    lags = check_lags(lags)
    max_lags = check_max_lags(max_lags)
    inference = check_choice("inference", inference, INFERENCE)
    block = _block(panel, column, trend, lags, max_lags, "the IPS test")
    table_max = IPS_TABLE_MAX_LAGS if inference == "asymptotic" else None
    units = unit_adf(block, trend, lags, max_lags, table_max=table_max)
    t, p, n_reg = units.stat, units.lags, units.nobs
    details: dict[str, Any] = {"trend": trend, "units": t.size, "lags": p.tolist(),
                               "lag_choice": "fixed" if isinstance(lags, int) else lags,
                               "max_lags": units.max_lags.tolist(), "inference": inference}
    warn = _warnings(block)
    if inference == "simulated":
        means = np.empty(t.size)
        variances = np.empty(t.size)
        phi = np.empty(t.size)
        for length in np.unique(units.lengths):
            idx = np.flatnonzero(units.lengths == length)
            y = np.column_stack([block.unit_values(int(i)) for i in idx])
            for top in np.unique(units.max_lags[idx]):
                sub = idx[units.max_lags[idx] == top]
                table = _unit_table("adf", int(length), trend, lags, int(top), 0)
                ph = table.phi_tilde(phi_hat_of("adf", y[:, np.isin(idx, sub)], trend))
                means[sub], variances[sub] = table.moments(ph, n_obs=int(length) - 1)
                phi[sub] = ph
                details["moments"] = table.label
        details["unit_phi"] = dict(zip(block.units, np.round(phi, 4).tolist(), strict=True))
    else:
        if p.max() > IPS_TABLE_MAX_LAGS:
            unit = block.units[int(np.argmax(p))]
            return TestResult.inapplicable(
                "IPS W-tbar", reason=f"unit '{unit}' uses {p.max()} lags; IPS moments are tabulated "
                "for 0-8 lags. Set max_lags=8 or fewer.", nobs=int(n_reg.sum()), reference="ips2003")
        means, variances, outside = ips_moments(p, n_reg, trend)
        if np.isnan(means).any():
            i = int(np.flatnonzero(np.isnan(means))[0])
            return TestResult.inapplicable(
                "IPS W-tbar", reason=f"unit '{block.units[i]}': {p[i]} lags with {n_reg[i]} "
                "regression observations is not tabulated by IPS (2003); use fewer lags or "
                "inference='simulated'.", nobs=int(n_reg.sum()), reference="ips2003")
        if outside:
            warn.append("some regression lengths lie outside IPS Table 3 (T=10..100); the nearest "
                        "tabulated moments were used.")
        details["moments"] = "Im, Pesaran & Shin (2003), Table 3"
    tbar = float(t.mean())
    w = float(ips_w(t, means, variances))
    details.update({"tbar": tbar, "regression_obs": n_reg.tolist(),
                    "mean_moment": float(means.mean()), "var_moment": float(variances.mean()),
                    "balanced": block.balanced,
                    "unit_tstats": dict(zip(block.units, t.round(6).tolist(), strict=True))})
    if (p == 0).all() and trend == "constant":
        zm, _ = interpolate_in_t(np.array(tables.IPS_ZBAR_T), np.array(tables.IPS_ZBAR_MEAN),
                                 float(n_reg.mean()))
        zv, _ = interpolate_in_t(np.array(tables.IPS_ZBAR_T), np.array(tables.IPS_ZBAR_VAR),
                                 float(n_reg.mean()))
        details["z_tbar"] = math.sqrt(t.size) * (tbar - zm) / math.sqrt(zv)
    details["size"], size_warn = size_details("IPS W-tbar", t.size, int(np.median(units.lengths)),
                                              inference, trend)
    details["excluded"] = excluded_records(block.excluded)
    return TestResult(test="IPS W-tbar", statistic=w, pvalue=float(stats.norm.cdf(w)),
                      critical_values={a: float(stats.norm.ppf(a)) for a in LEVELS},
                      null=UNIT_ROOT_ALL, alternative=SOME_STATIONARY, nobs=int(n_reg.sum()),
                      details=details, reference="ips2003", warnings=tuple(warn + size_warn))


def _mackinnon_pvalues(stat: np.ndarray, trend: str) -> tuple[np.ndarray, int]:
    """arch's MacKinnon (1994) p-values after clipping each statistic into the table's range.

    Beyond the table arch returns exactly 0 or 1, which the inverse normal and logit turn into
    ±8 or ±37 and let one unit dominate Choi's Z and L*; a statistic outside
    ``[tau_min, tau_max]`` is moved to the bound (p = 0.99909 at the upper end for a constant).
    Returns the p-values and how many units were capped.
    """
    from arch.unitroot.critical_values.dickey_fuller import tau_max, tau_min
    from arch.unitroot.unitroot import mackinnonp

    code = ARCH_TREND[trend]
    lo, hi = tau_min[code][0], tau_max[code][0]
    capped = int(np.sum((stat < lo) | (stat > hi)))
    clipped = np.clip(stat, lo, hi)
    return np.array([mackinnonp(float(s), code) for s in clipped]), capped


def fisher_test(panel: Panel, column: str, *, combine: str = "z", unit_test: str = "adf",
                trend: Trend = "constant", lags: int | str = "aic", max_lags: int | None = None,
                hac_lags: int | None = None, inference: str = "simulated") -> TestResult:
    """Fisher-type test combining the units' unit-root p-values (unbalanced allowed).

    Parameters
    ----------
    combine : {"z", "p", "pm", "l"}
        The reported statistic: Choi's inverse normal Z (the default: Choi 2001 recommends it, and
        with simulated unit p-values its size is the best centred on 5 % at N = 20, T = 30–40),
        Maddala–Wu P (χ²(2N); the most sensitive to the lower tail of the unit p-values, slightly
        conservative here), Choi's modified Pm (for large N) or Choi's logit L*. All four are in
        ``details["combinations"]``.
    unit_test : {"adf", "pp"}
        Unit statistics: ADF (``lags``, ``max_lags``) or Phillips–Perron (``hac_lags``, the
        Bartlett bandwidth; ``None`` for ``floor(4 (T/100)^(2/9))``).
    inference : {"simulated", "asymptotic"}
        "simulated" (default): each unit's p-value is simulated for its own T, deterministic
        terms and lag rule (or bandwidth), conditional on its estimated autocorrelation of Δy
        (``_calibrate``); "asymptotic": MacKinnon's (1994) asymptotic p-values via arch, each
        statistic first clipped into the table's range (``details["capped_units"]``), which
        reject 20–50 % of the time at 5 % for N = 20, T = 30 (``details["size"]``).

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
    combine = check_choice("combine", combine, FISHER_COMBINATIONS)
    unit_test = check_choice("unit_test", unit_test, ("adf", "pp"))
    trend = check_trend(trend)
    hac_lags = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    inference = check_choice("inference", inference, INFERENCE)
    if unit_test == "adf":
        lags = check_lags(lags)
        max_lags = check_max_lags(max_lags)
        block = _block(panel, column, trend, lags, max_lags, "the Fisher test")
        units = unit_adf(block, trend, lags, max_lags)
    else:
        block = _block(panel, column, trend, 0, None, "the Fisher test")
        units = unit_pp(block, trend, hac_lags)
    details: dict[str, Any] = {"combine": combine, "unit_test": unit_test, "trend": trend,
                               "inference": inference}
    if inference == "simulated":
        pvals, _ = unit_pvalues(block, units, unit_test, trend, lags if unit_test == "adf" else 0)
        details["unit_pvalues_from"] = "simulated for each unit's T (see docs/methods/roots.md)"
    else:
        pvals, capped = _mackinnon_pvalues(units.stat, trend)
        details["capped_units"] = capped
        details["unit_pvalues_from"] = "MacKinnon (1994) via arch, statistics clipped to the table"
    pvals = np.clip(pvals, 1e-12, 1 - 1e-12)
    combos = combine_pvalues(pvals)
    stat, pvalue = combos[combine]
    n = pvals.size
    cv = {"p": {a: float(stats.chi2.isf(a, 2 * n)) for a in LEVELS},
          "pm": {a: float(stats.norm.isf(a)) for a in LEVELS},
          "z": {a: float(stats.norm.ppf(a)) for a in LEVELS},
          "l": {a: float(stats.t.ppf(a, 5 * n + 4)) for a in LEVELS}}[combine]
    name = f"Fisher ({_FISHER_NAMES[combine]})"
    details.update({
        "tail": "lower" if combine in ("z", "l") else "upper", "units": n,
        "combinations": {k: {"statistic": v[0], "pvalue": v[1]} for k, v in combos.items()},
        "unit_statistics": dict(zip(block.units, units.stat.round(6).tolist(), strict=True)),
        "unit_pvalues": dict(zip(block.units, pvals.round(6).tolist(), strict=True)),
        "unit_lags": units.lags.tolist(), "balanced": block.balanced})
    card = f"Fisher-{unit_test.upper()} ({_FISHER_NAMES[combine]})"
    details["size"], size_warn = size_details(card, n, int(np.median(units.lengths)), inference,
                                              trend)
    details["excluded"] = excluded_records(block.excluded)
    return TestResult(
        test=name, statistic=stat, pvalue=pvalue, critical_values=cv, null=UNIT_ROOT_ALL,
        alternative=SOME_STATIONARY, nobs=int(units.nobs.sum()), details=details,
        reference="maddalawu1999; choi2001" if combine != "p" else "maddalawu1999",
        warnings=tuple(_warnings(block) + size_warn))
