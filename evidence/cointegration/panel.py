"""Panel cointegration tests: Pedroni (1999, 2004), Kao (1999), Westerlund (2007).

All three take a :class:`~evidence.panel.Panel`, the ``dependent`` column and one or more
``regressors`` columns, used as given (take logs first with ``panel.with_log``). They run on the
years every unit covers; what is left out is listed in ``result.excluded``.

H0 for all three: no cointegration (no unit's residual is stationary / no unit error-corrects).

**p-values.** The published statistics are standardised with asymptotic moments, which hold
badly at the panel sizes of the field (N = 20–40, T = 25–40): under H0 with drifting regressors the
asymptotic Pedroni p-values rejected 25–98 % of the time at 5 % nominal. By default
(``inference="bootstrap"``) the p-value is a sieve bootstrap under H0
(:mod:`evidence.cointegration._sieve`): each unit's differences follow a fitted VAR with their
drift, whole periods are resampled together (common shocks kept) and the whole test, lag selection
included, is recomputed on each bootstrap panel. ``inference="asymptotic"`` keeps the fast normal
p-values; its result states the size measured for it (``docs/methods/size.md``).

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
hansen1992 : Hansen, B. E. (1992). Efficient estimation and testing of cointegrating vectors in the
    presence of deterministic trends. Journal of Econometrics 53(1–3), 87–121.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from evidence._typing import DEFAULT_SEED, Seed
from evidence._validation import check_lags, check_trend
from evidence.cointegration._data import as_columns, relation_block
from evidence.cointegration._inference import (
    bootstrap_options,
    drift_report,
    hac_lags_option,
    max_lags_option,
    probe_years,
    relation_results,
    run_bootstrap,
    seed_record,
)
from evidence.cointegration._pedroni_tables import MOMENTS as PEDRONI_MOMENTS
from evidence.cointegration._residual_math import (
    KAO_NAMES,
    PEDRONI_NAMES,
    kao_standardise,
    kao_statistics,
    pedroni_statistics,
)
from evidence.cointegration._result import KaoResult, PedroniResult
from evidence.cointegration._sieve import SieveModel, fit_sieve, sieve_draws
from evidence.cointegration.westerlund import westerlund_test
from evidence.errors import SpecError
from evidence.panel import Panel
from evidence.parallel import ExecutorLike

__all__ = ["PEDRONI_STATISTICS", "KAO_STATISTICS", "kao_test", "pedroni_test", "westerlund_test"]

PEDRONI_STATISTICS = PEDRONI_NAMES
KAO_STATISTICS = KAO_NAMES
_PEDRONI_COLUMN = {"panel v": 0, "panel rho": 1, "panel PP": 2, "panel ADF": 2, "group rho": 3,
                   "group PP": 4, "group ADF": 4}


def _pedroni_draw(spec: tuple[SieveModel, dict[str, Any]], rng: np.random.Generator,
                  reps: int) -> dict[str, np.ndarray]:
    model, opts = spec
    ys, xs = sieve_draws(model, rng, reps, block_length=opts["block_length"])
    out, _ = pedroni_statistics(ys, xs, trend=opts["trend"], lags=opts["lags"],
                                max_lags=opts["max_lags"], hac_lags=opts["hac_lags"])
    return out


def _kao_draw(spec: tuple[SieveModel, dict[str, Any]], rng: np.random.Generator,
              reps: int) -> dict[str, np.ndarray]:
    model, opts = spec
    ys, xs = sieve_draws(model, rng, reps, block_length=opts["block_length"])
    raw = kao_statistics(ys, xs, lags=opts["lags"], max_lags=opts["max_lags"],
                         hac_lags=opts["hac_lags"])
    return kao_standardise(raw, ys.shape[1])


def pedroni_test(panel: Panel, dependent: str, regressors: str | Sequence[str], *,
                 trend: str = "constant", lags: int | str = "aic", max_lags: int | None = None,
                 hac_lags: int | None = None, inference: str | None = None, reps: int = 499,
                 block_length: int | None = None, seed: Seed = DEFAULT_SEED,
                 executor: ExecutorLike = "serial") -> PedroniResult:
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
        Largest lag considered (and the largest order of the bootstrap's VARs); default
        ``floor(4 (T/100)^(1/4))``.
    hac_lags : int, optional
        Bartlett bandwidth (lags) of the long-run variances; default ``floor(4 (T/100)^(2/9))``.
    inference : {"bootstrap", "asymptotic"}, optional
        ``"bootstrap"`` (default): p-values and critical values from a sieve bootstrap under H0
        that keeps drift, serial correlation and cross-sectional dependence. ``"asymptotic"``:
        Pedroni's normal approximation (fast; not calibrated at N = 20–40, T = 25–40 — the
        result's warnings give the size measured for it).
    reps, block_length, seed, executor
        Bootstrap replications, the length of the blocks of periods resampled (default 1: the
        VAR carries the serial correlation), the seed and where the replications run.

    Returns
    -------
    PedroniResult
        Seven :class:`~evidence.results.TestResult`, the statistic standardised as in Pedroni
        (1999); panel v rejects in the right tail, the others in the left tail.

    Notes
    -----
    For each unit, OLS of ``y_it = a_i (+ d_i t) + b_i'x_it + e_it``. With ``L11_i^2`` the long-run
    variance of the residual of ``Δy_it`` on ``Δx_it``, ``u_it`` the residual of
    ``e_it = g_i e_it-1 + u_it``, ``s_i^2`` its variance, ``sigma_i^2`` its long-run variance and
    ``lambda_i = (sigma_i^2 - s_i^2)/2``, and ``A = ΣΣ L11_i^-2 e_it-1^2``,
    ``B = ΣΣ L11_i^-2 (e_it-1 Δe_it - lambda_i)``, ``sigma~^2 = N^-1 Σ L11_i^-2 sigma_i^2``:
    panel v ``= T^2 N^(3/2) / A``; panel rho ``= T sqrt(N) B / A``; panel PP
    ``= B / sqrt(sigma~^2 A)``; panel ADF ``= ΣΣ L11^-2 e*_it-1 Δe*_it / sqrt(s~*^2 ΣΣ L11^-2
    e*_it-1^2)`` with ``e*`` net of the ADF lagged differences and ``s~*^2 = N^-1 Σ L11_i^-2
    s*_i^2`` (weighted like ``sigma~^2``; see ``docs/methods/cointegration.md``); group rho
    ``= T N^(-1/2) Σ_i (Σ_t e_it-1^2)^-1 Σ_t (e_it-1 Δe_it - lambda_i)``; group PP
    ``= N^(-1/2) Σ_i (sigma_i^2 Σ_t e_it-1^2)^(-1/2) Σ_t (e_it-1 Δe_it - lambda_i)``; group ADF
    ``= N^(-1/2) Σ_i (s*_i^2 Σ_t e*_it-1^2)^(-1/2) Σ_t e*_it-1 Δe*_it`` (Pedroni 1999, Table 1;
    written from memory). ``T`` is the number of differenced periods. Each is standardised as
    ``(X - mu sqrt(N)) / sqrt(v)`` with Pedroni's (1999) adjustment terms (``_pedroni_tables``).

    References
    ----------
    pedroni1999, pedroni2004, hansen1992 (see the module docstring).

    Examples
    --------
    >>> import evidence as ev
    >>> panel = ev.demo_panel().with_log("ghg_territorial").with_log("gdp")
    >>> res = pedroni_test(panel, "log_ghg_territorial", "log_gdp", reps=49)
    >>> len(res), res["group ADF"].details["tail"], res["panel v"].details["tail"]
    (7, 'left', 'right')
    """
    trend = check_trend(trend)
    if trend == "none":
        raise SpecError("trend='none' has no published Pedroni adjustment terms; use 'constant' "
                        "or 'trend'.")
    lags = check_lags(lags, rules=("aic", "bic"))
    inference, reps, length, seed = bootstrap_options(inference, reps, block_length, seed)
    cols = as_columns(regressors)
    if not 1 <= len(cols) <= 7:
        raise SpecError(f"pedroni_test has adjustment terms for 1 to 7 regressors; got {len(cols)}.")
    max_l = max_lags_option(max_lags, probe_years(panel))
    used_max = max_l if isinstance(lags, str) else int(lags)
    block = relation_block(panel, dependent, cols, min_years=max(10, used_max + len(cols) + 8),
                           purpose=f"pedroni_test with lags up to {used_max}")
    n_units, n_years = block.n_units, block.n_years
    band = hac_lags_option(hac_lags, n_years - 1)
    raw, adf_lags = pedroni_statistics(block.y[None], block.x[None], trend=trend, lags=lags,
                                       max_lags=max_l, hac_lags=band)
    values = {name: float(raw[name][0]) for name in PEDRONI_NAMES}
    mu, var = PEDRONI_MOMENTS[trend][len(cols)]

    def standardise(name: str, x: np.ndarray) -> np.ndarray:
        c = _PEDRONI_COLUMN[name]
        return (x - mu[c] * math.sqrt(n_units)) / math.sqrt(var[c])

    draws = None
    boot: dict[str, Any] = {}
    if inference == "bootstrap":
        model = fit_sieve(block.y, block.x, max_lags=max_l)
        opts = {"trend": trend, "lags": lags, "max_lags": max_l, "hac_lags": band,
                "block_length": length}
        draws = run_bootstrap(_pedroni_draw, (model, opts), reps=reps, seed=seed, executor=executor)
        boot = {"reps": reps, "block_length": length, "seed": seed_record(seed),
                "sieve_lags": model.order.tolist(),
                "common_shocks": model.common}
    drift = drift_report(block.x, cols)
    tails = {name: "right" if name == "panel v" else "left" for name in PEDRONI_NAMES}
    alts = {name: ("all units cointegrated (common autoregressive root)" if name.startswith("panel")
                   else "cointegration in a share of units (unit-specific roots)")
            for name in PEDRONI_NAMES}
    results, warnings = relation_results(
        family="Pedroni", block=block, raw=values, standardise=standardise, tails=tails,
        alternatives=alts, inference=inference, draws=draws,
        details={"trend": trend, "regressors": len(cols), "units": n_units, "years": block.span,
                 "hac_lags": band, "adf_lags": "fixed" if isinstance(lags, int) else str(lags),
                 "mean_adf_lags": float(np.mean(adf_lags))},
        per_statistic={name: {"mu": mu[_PEDRONI_COLUMN[name]], "v": var[_PEDRONI_COLUMN[name]]}
                       for name in PEDRONI_NAMES},
        shared=boot, reference="pedroni1999; pedroni2004", nobs=n_units * n_years,
        drift=drift, drift_matters=trend == "constant")
    return PedroniResult(test="Pedroni", results=tuple(results),
                         details={"trend": trend, "hac_lags": band, "inference": inference,
                                  "adf_lags": dict(zip(block.units, adf_lags[0].tolist(), strict=True)),
                                  "units": n_units, "years": block.span, "drift": drift, **boot},
                         excluded=block.excluded, reference="pedroni1999; pedroni2004",
                         warnings=tuple(warnings))


def kao_test(panel: Panel, dependent: str, regressors: str | Sequence[str], *,
             trend: str = "constant", lags: int | str = "aic", max_lags: int | None = None,
             hac_lags: int | None = None, inference: str | None = None, reps: int = 499,
             block_length: int | None = None, seed: Seed = DEFAULT_SEED,
             executor: ExecutorLike = "serial") -> KaoResult:
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
    max_lags, hac_lags, inference, reps, block_length, seed, executor
        As for :func:`pedroni_test`.

    Returns
    -------
    KaoResult
        DF* rho, DF* t and ADF (which allow endogenous regressors) first, then DF rho and DF t;
        each N(0,1) under H0 in the limit, left tail.

    Notes
    -----
    Within (fixed-effects) regression ``y_it = a_i + b'x_it + e_it``; pooled
    ``e_it = rho e_it-1 + v_it`` with ``t_rho`` its t-ratio. With ``s_v^2`` and ``s_0v^2`` the
    contemporaneous and long-run variances of ``u_it = Δe_it`` conditional on ``Δx_it``:
    ``DF*_rho = (sqrt(N) T (rho - 1) + 3 sqrt(N) s_v^2/s_0v^2) / sqrt(3 + 36 s_v^4 / (5 s_0v^4))``;
    ``DF*_t = (t_rho + sqrt(6N) s_v / (2 s_0v)) / sqrt(s_0v^2/(2 s_v^2) + 3 s_v^2/(10 s_0v^2))``;
    ADF: the ``DF*_t`` form with the t-ratio of the pooled ADF regression;
    ``DF_rho = (sqrt(N) T (rho - 1) + 3 sqrt(N)) / sqrt(10.2)``;
    ``DF_t = sqrt(1.25) t_rho + sqrt(1.875 N)``. The constants are from memory and were checked by
    simulation (``tests/test_coint_montecarlo.py``). ``DF_rho`` and ``DF_t`` assume strictly
    exogenous regressors.

    References
    ----------
    kao1999, hansen1992 (see the module docstring).
    """
    trend = check_trend(trend)
    if trend != "constant":
        raise SpecError(f"trend={trend!r}: Kao's test is defined with unit intercepts only; "
                        f"use trend='constant'.")
    lags = check_lags(lags, rules=("aic", "bic"))
    inference, reps, length, seed = bootstrap_options(inference, reps, block_length, seed)
    cols = as_columns(regressors)
    max_l = max_lags_option(max_lags, probe_years(panel))
    used_max = max_l if isinstance(lags, str) else int(lags)
    block = relation_block(panel, dependent, cols, min_years=max(8, used_max + 6),
                           purpose=f"kao_test with lags up to {used_max}")
    n_units, n_years = block.n_units, block.n_years
    band = hac_lags_option(hac_lags, n_years - 1)
    raw = kao_statistics(block.y[None], block.x[None], lags=lags, max_lags=max_l, hac_lags=band)
    standard = kao_standardise(raw, n_units)
    values = {name: float(standard[name][0]) for name in KAO_NAMES}
    draws = None
    boot: dict[str, Any] = {}
    if inference == "bootstrap":
        model = fit_sieve(block.y, block.x, max_lags=max_l)
        opts = {"lags": lags, "max_lags": max_l, "hac_lags": band, "block_length": length}
        draws = run_bootstrap(_kao_draw, (model, opts), reps=reps, seed=seed, executor=executor)
        boot = {"reps": reps, "block_length": length, "seed": seed_record(seed),
                "sieve_lags": model.order.tolist(),
                "common_shocks": model.common}
    drift = drift_report(block.x, cols)
    results, warnings = relation_results(
        family="Kao", block=block, raw=values, standardise=lambda _n, v: v,
        tails={n: "left" for n in KAO_NAMES},
        alternatives={n: "the pooled residuals are stationary" for n in KAO_NAMES},
        inference=inference, draws=draws,
        details={"rho": float(raw["rho"][0]), "t_rho": float(raw["t_df"][0]),
                 "t_adf": float(raw["t_adf"][0]), "adf_lags": int(raw["adf_lags"][0]),
                 "sigma_v2": float(raw["sigma_v2"][0]), "sigma_0v2": float(raw["sigma_0v2"][0]),
                 "hac_lags": band, "units": n_units, "years": block.span},
        shared=boot, reference="kao1999", nobs=n_units * n_years, drift=drift, drift_matters=True)
    return KaoResult(test="Kao", results=tuple(results),
                     details={"trend": trend, "adf_lags": int(raw["adf_lags"][0]), "hac_lags": band,
                              "inference": inference, "drift": drift,
                              "slopes": dict(zip(cols, raw["beta"][0].tolist(), strict=True)), **boot},
                     excluded=block.excluded, reference="kao1999", warnings=tuple(warnings))


