"""How the panel tests get their p-values: the bootstrap runner, drift detection and the size card.

* :func:`run_bootstrap` draws bootstrap panels in fixed-size chunks, each with its own seed from
  :func:`evidence.parallel.task_seeds`, through any executor, so the draws do not depend on where
  they run; :func:`bootstrap_pvalue` turns them into ``(1 + #{as extreme}) / (1 + B)``.
* :func:`drift_report` says which regressors drift: a regressor whose differences have a non-zero
  mean changes the limit of residual-based statistics (Hansen 1992), which the asymptotic moments
  ignore and the bootstrap reproduces.
* :func:`size_warning` reads the size card and words what an asymptotic p-value is worth;
  :func:`relation_results` assembles the results of a test family with all of the above.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np
from scipy import stats

from evidence._hac import default_max_lags, long_run_variance, newey_west_lags
from evidence._size_card import CONTROLLED, size_note
from evidence._typing import Seed
from evidence._validation import check_choice, check_int, check_max_lags, check_seed
from evidence.cointegration._data import Block, option_int
from evidence.panel import Panel
from evidence.parallel import ExecutorLike, task_seeds, using_executor
from evidence.results import TestResult

__all__ = ["INFERENCES", "CHUNK", "resolve_inference", "run_bootstrap", "bootstrap_pvalue",
           "drift_report", "drifting", "size_warning", "size_options", "relation_results",
           "bootstrap_options", "seed_record", "max_lags_option", "hac_lags_option", "probe_years"]

_NULL = "no cointegration"
_LEVELS = (0.01, 0.05, 0.10)

#: Ways of computing a p-value, the default first.
INFERENCES = ("bootstrap", "asymptotic")
#: Bootstrap replications per task (fixed, so that the draws do not depend on the executor).
CHUNK = 50


def resolve_inference(inference: str | None, default: str) -> str:
    """``inference`` checked against :data:`INFERENCES`; ``None`` gives ``default``."""
    return check_choice("inference", default if inference is None else inference, INFERENCES)


def _chunk(task: tuple[Callable[..., dict[str, np.ndarray]], Any, Any, int],
           ) -> dict[str, np.ndarray]:
    draw, model, seed, reps = task
    return draw(model, np.random.default_rng(seed), reps)


def run_bootstrap(draw: Callable[..., dict[str, np.ndarray]], model: Any, *, reps: int,
                  seed: int | np.random.Generator,
                  executor: ExecutorLike = "serial") -> dict[str, np.ndarray]:
    """``draw(model, rng, n)`` → ``{statistic: (n,) draws}``, run for ``reps`` draws in chunks.

    ``draw`` must be a module-level function (or a ``functools.partial`` of one) so that process
    and Dask executors can run it. Returns the concatenated draws of every statistic.
    """
    sizes = [CHUNK] * (reps // CHUNK) + ([reps % CHUNK] if reps % CHUNK else [])
    seeds = task_seeds(seed, len(sizes))
    tasks = [(draw, model, s, n) for s, n in zip(seeds, sizes, strict=True)]
    with using_executor(executor) as runner:
        parts = runner.map(_chunk, tasks)
    return {key: np.concatenate([np.atleast_1d(p[key]) for p in parts]) for key in parts[0]}


def bootstrap_pvalue(value: float, draws: np.ndarray, tail: str) -> tuple[float, int]:
    """``(1 + #{draws as extreme as value}) / (1 + B)`` over the finite draws, and B.

    ``tail`` is ``"left"`` (small values reject) or ``"right"``.
    """
    finite = draws[np.isfinite(draws)]
    if not finite.size or not np.isfinite(value):
        return float("nan"), int(finite.size)
    extreme = finite <= value if tail == "left" else finite >= value
    return float((1 + np.sum(extreme)) / (1 + finite.size)), int(finite.size)


def drift_report(x: np.ndarray, names: Sequence[str]) -> dict[str, dict[str, float]]:
    """For each regressor: the share of units whose mean change differs from zero at 5 %.

    ``x`` (N, T, k). Per unit, ``t = mean(Δx) / sqrt(ω² / (T − 1))`` with ``ω²`` the Newey–West
    long-run variance of ``Δx`` (bandwidth :func:`~evidence._hac.newey_west_lags`). Returns
    ``{name: {"share": ..., "median_t": ...}}``.
    """
    dx = np.diff(x, axis=1)
    n_obs = dx.shape[1]
    out: dict[str, dict[str, float]] = {}
    for j, name in enumerate(names):
        series = dx[:, :, j].T  # (T - 1, N)
        lrv = np.maximum(long_run_variance(series, newey_west_lags(n_obs), demean=True), 1e-300)
        t = series.mean(axis=0) / np.sqrt(lrv / n_obs)
        out[str(name)] = {"share": float(np.mean(np.abs(t) > 1.96)),
                          "median_t": float(np.median(t))}
    return out


def drifting(report: Mapping[str, Mapping[str, float]]) -> list[str]:
    """Regressors that drift in at least half of the units."""
    return [name for name, row in report.items() if row["share"] >= 0.5]


def size_options(inference: str, **extra: Any) -> str:
    """The ``options`` key of the size card for a test computed this way."""
    parts = [f"inference={inference}"] + [f"{k}={v}" for k, v in sorted(extra.items())]
    return ", ".join(parts)


def size_warning(test: str, n_units: int, n_years: int,
                 options: str) -> tuple[dict[str, Any], str | None]:
    """The size card's note for this test and, when the size is not controlled, a sentence."""
    note = size_note(test, n_units, n_years, options=options)
    if not note or note.get("controlled", True):
        return note, None
    low, high = CONTROLLED
    text = (f"{options.split(',')[0].split('=')[-1]} p-value not calibrated: under H0 it rejected "
            f"{100 * note['measured']:.1f} % of the time at 5 % nominal (N={note['n_units']}, "
            f"T={note['n_years']}, {note['process']}; controlled means {100 * low:g} % to "
            f"{100 * high:g} %); "
            "see docs/methods/size.md.")
    return note, text


def bootstrap_options(inference: str | None, reps: int, block_length: int | None,
                      seed: Seed) -> tuple[str, int, int, int | np.random.Generator]:
    """Checked ``inference`` (default bootstrap), ``reps`` (at least 19), block length, seed."""
    return (resolve_inference(inference, "bootstrap"), option_int("reps", reps, 19),
            option_int("block_length", block_length, 1, default=1), check_seed(seed))


def seed_record(seed: int | np.random.Generator) -> int | str:
    """The seed as recorded in ``details`` (a Generator is recorded as such)."""
    return seed if isinstance(seed, int) else "generator"


def max_lags_option(max_lags: int | None, n_years: int, parameter: str = "max_lags") -> int:
    """``max_lags`` checked, or the package's rule for ``n_years``."""
    checked = check_max_lags(max_lags, parameter)
    return default_max_lags(n_years) if checked is None else checked


def hac_lags_option(hac_lags: int | None, nobs: int) -> int:
    """``hac_lags`` checked, or the Newey–West rule for ``nobs``."""
    checked = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    return newey_west_lags(nobs) if checked is None else checked


def probe_years(panel: Panel) -> int:
    """Years of the panel before cleaning (for option defaults)."""
    return len(panel.years) if isinstance(panel, Panel) else 0


def relation_results(*, family: str, block: Block, raw: Mapping[str, float],
                     standardise: Callable[[str, np.ndarray], np.ndarray],
                     tails: Mapping[str, str], alternatives: Mapping[str, str], inference: str,
                     draws: dict[str, np.ndarray] | None, details: Mapping[str, Any],
                     shared: Mapping[str, Any], reference: str,
                     per_statistic: Mapping[str, Mapping[str, Any]] | None = None,
                     nobs: int, drift: Mapping[str, Mapping[str, float]],
                     drift_matters: bool) -> tuple[list[TestResult], list[str]]:
    """One :class:`TestResult` per statistic of a family, with its p-value, size note and cautions.

    ``raw`` holds the unstandardised statistics, ``standardise(name, values)`` maps raw values to
    the reported (asymptotically N(0,1)) scale, ``draws`` the bootstrap draws of the raw
    statistics (``None`` with asymptotic inference). ``drift_matters``: the asymptotic moments
    assume regressors without drift (residual-based tests with a constant only).
    ``per_statistic`` adds details to single statistics; ``shared`` to all (after the others).
    """
    n_units, n_years = block.n_units, block.n_years
    moving = drifting(drift)
    family_warnings: list[str] = []
    if moving and drift_matters:
        verb = "drifts" if len(moving) == 1 else "drift"
        drift_note = (f"{', '.join(moving)} {verb} in most units: with trend='constant' the "
                      "asymptotic moments do not apply (Hansen 1992)")
        family_warnings.append(drift_note + ("; the bootstrap reproduces the drift." if draws is not None
                                       else "; use inference='bootstrap' (the default)."))
    results = []
    for name, value in raw.items():
        tail = tails[name]
        z = float(standardise(name, np.asarray(value)))
        asym = float(stats.norm.sf(z) if tail == "right" else stats.norm.cdf(z))
        item: dict[str, Any] = {"statistic": name, "unstandardised": float(value), "tail": tail,
                                "inference": inference, "asymptotic_pvalue": asym, **details,
                                **(per_statistic or {}).get(name, {})}
        if draws is not None:
            pvalue, used = bootstrap_pvalue(float(value), draws[name], tail)
            scaled = standardise(name, draws[name][np.isfinite(draws[name])])
            cv = {a: float(np.quantile(scaled, a if tail == "left" else 1 - a)) for a in _LEVELS}
            item.update({"bootstrap_pvalue": pvalue, "bootstrap_draws": used})
        else:
            pvalue = asym
            cv = {a: float(stats.norm.ppf(a) if tail == "left" else stats.norm.isf(a))
                  for a in _LEVELS}
        test = f"{family} {name}"
        note, caution = size_warning(test, n_units, n_years, size_options(inference))
        if note:
            item["size"] = note
        warnings = list(family_warnings) + ([caution] if caution else [])
        results.append(TestResult(test=test, statistic=z, pvalue=pvalue, critical_values=cv,
                                  null=_NULL, alternative=alternatives[name], nobs=nobs,
                                  details={**item, **shared}, reference=reference,
                                  warnings=tuple(warnings)))
    return results, family_warnings
