"""Westerlund's (2007) error-correction panel cointegration tests Gt, Ga, Pt and Pa.

The statistics are computed in :mod:`evidence.cointegration._westerlund`; this module standardises
them and gives their p-values: by default from the sieve bootstrap under H0 shared with the
residual-based tests (:mod:`evidence.cointegration._sieve`), optionally from the asymptotic moments.

References
----------
westerlund2007 : Westerlund, J. (2007). Testing for error correction in panel data. Oxford Bulletin
    of Economics and Statistics 69(6), 709–748.
persynwesterlund2008 : Persyn, D. & Westerlund, J. (2008). Error-correction-based cointegration tests
    for panel data. Stata Journal 8(2), 232–241.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from evidence._typing import DEFAULT_SEED, Seed
from evidence._validation import check_lags, check_trend
from evidence.cointegration import _westerlund as _w
from evidence.cointegration._data import as_columns, relation_block
from evidence.cointegration._inference import (
    bootstrap_options,
    drift_report,
    max_lags_option,
    probe_years,
    relation_results,
    run_bootstrap,
    seed_record,
)
from evidence.cointegration._result import WesterlundResult
from evidence.cointegration._sieve import SieveModel, fit_sieve, sieve_draws
from evidence.cointegration._westerlund_tables import MOMENTS as WESTERLUND_MOMENTS
from evidence.errors import SpecError
from evidence.panel import Panel
from evidence.parallel import ExecutorLike

__all__ = ["westerlund_test"]

_ALTERNATIVES = {"Gt": "some units error-correct", "Ga": "some units error-correct",
                 "Pt": "the panel error-corrects", "Pa": "the panel error-corrects"}


def _draw(spec: tuple[SieveModel, dict[str, Any]], rng: np.random.Generator,
          reps: int) -> dict[str, np.ndarray]:
    model, opts = spec
    ys, xs = sieve_draws(model, rng, reps, block_length=opts["block_length"])
    out, _, _ = _w.westerlund_statistics(ys, xs, opts["lags"], opts["leads"],
                                         max_lags=opts["max_lags"], max_leads=opts["max_leads"],
                                         trend=opts["trend"])
    return out


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
    inference : {"bootstrap", "asymptotic"}, optional
        ``"bootstrap"`` (default): p-values and critical values from the sieve bootstrap under H0
        (drift, serial correlation and cross-sectional dependence kept; orders re-chosen in every
        bootstrap panel). ``"asymptotic"``: Westerlund's (2007) normal approximation (fast; not
        calibrated at N = 20–40, T = 25–40 — the result's warnings give its measured size).
    reps, block_length, seed, executor
        Bootstrap replications, length of the blocks of periods resampled (default 1), the seed
        and where the replications run (:mod:`evidence.parallel`).

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
    left-tailed. Bootstrap p-value: ``(1 + #{G* <= G}) / (B + 1)``.

    References
    ----------
    westerlund2007, persynwesterlund2008 (see the module docstring).
    """
    trend = check_trend(trend)
    lags = check_lags(lags, rules=("aic",))
    leads = check_lags(leads, parameter="leads", rules=("aic",))
    inference, reps, length, seed = bootstrap_options(inference, reps, block_length, seed)
    cols = as_columns(regressors)
    if not 1 <= len(cols) <= 6:
        raise SpecError(f"westerlund_test has moments for 1 to 6 regressors; got {len(cols)}.")
    probe = probe_years(panel)
    max_l = max_lags_option(max_lags, probe)
    max_p = max_l if lags == "aic" else int(lags)
    max_q = ((1 if max_leads is None else max_lags_option(max_leads, probe, "max_leads"))
             if leads == "aic" else int(leads))
    n_par = 2 + 2 * len(cols) + max_p + len(cols) * (max_p + max_q + 1)
    block = relation_block(panel, dependent, cols, min_years=n_par + max_p + max_q + 6,
                           purpose=f"westerlund_test with {max_p} lags and {max_q} leads")
    n_units, k = block.n_units, len(cols)
    raw, p_i, q_i = _w.westerlund_statistics(block.y[None], block.x[None], lags, leads,
                                             max_lags=max_p, max_leads=max_q, trend=trend)
    values = {name: float(raw[name][0]) for name in _w.NAMES}
    unit = _w.westerlund_raw(block.y, block.x, p_i[0], q_i[0], trend)

    def standardise(name: str, x: np.ndarray) -> np.ndarray:
        mean, var = (v[k - 1] for v in WESTERLUND_MOMENTS[name][trend])
        if name == "Pt":
            return (x - math.sqrt(n_units) * mean) / math.sqrt(var)
        return math.sqrt(n_units) * (x - mean) / math.sqrt(var)

    draws = None
    boot: dict[str, Any] = {}
    if inference == "bootstrap":
        model = fit_sieve(block.y, block.x, max_lags=max_l)
        opts = {"trend": trend, "lags": lags, "leads": leads, "max_lags": max_p,
                "max_leads": max_q, "block_length": length}
        draws = run_bootstrap(_draw, (model, opts), reps=reps, seed=seed, executor=executor)
        boot = {"reps": reps, "block_length": length, "seed": seed_record(seed),
                "sieve_lags": model.order.tolist(),
                "common_shocks": model.common}
    drift = drift_report(block.x, cols)
    results, warnings = relation_results(
        family="Westerlund", block=block, raw=values, standardise=standardise,
        tails={n: "left" for n in _w.NAMES}, alternatives=_ALTERNATIVES, inference=inference,
        draws=draws,
        details={"trend": trend, "mean_lags": float(np.mean(p_i)), "mean_leads": float(np.mean(q_i)),
                 "units": n_units, "years": block.span},
        shared=boot, reference="westerlund2007", nobs=int(np.sum(unit["nobs"])),
        drift=drift, drift_matters=trend == "constant")
    return WesterlundResult(
        test="Westerlund", results=tuple(results),
        details={"trend": trend, "inference": inference, "drift": drift,
                 "lags": dict(zip(block.units, p_i[0].tolist(), strict=True)),
                 "leads": dict(zip(block.units, q_i[0].tolist(), strict=True)),
                 "alpha": dict(zip(block.units, unit["alpha"].tolist(), strict=True)), **boot},
        excluded=block.excluded, reference="westerlund2007", warnings=tuple(warnings))
