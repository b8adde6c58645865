"""The break procedure for many series at once: partitions, tests, selection, intervals.

:func:`describe` takes ``y`` of shape ``(N, T)`` (one unit per row, the same years) and returns
plain arrays, one entry per unit. The panel screen calls it on chunks of units; ``find_breaks``
calls it with ``N = 1`` and dresses the numbers in result objects, so a unit's row in a screen
and its ``find_breaks`` result agree exactly.

Selection rules (``select``)
----------------------------
``"udmax-lwz"`` (default)
    UDmax at level ``alpha`` decides whether there is a break at all; if it rejects, the number
    of breaks (at least one) minimises LWZ computed on the AR(1) innovation variance of each
    fit (:func:`evidence.breaks._batch.lwz_ar`; the AR(1) coefficient restricted to the
    calibrated range ``[0, 0.8]``). The test holds its size under serial
    correlation (conditional p-values, :mod:`evidence.breaks._calibrate`); LWZ on the innovation
    variance stops the spurious extra breaks that serially correlated noise adds to the SSR.
``"sequential"``
    UDmax, then supF(l+1|l) at level ``alpha`` for ``l = 1, 2, ...`` (Bai & Perron 2003).
``"bic"``, ``"lwz"``
    The information criteria of Yao (1988) and Liu, Wu & Zidek (1997) on the SSR.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from evidence.breaks import _batch
from evidence.breaks._calibrate import COVERED, NullTable, split_statistic, supf_statistics
from evidence.breaks.dates import break_intervals
from evidence.breaks.segment import optimal_partitions, ssr_tables

__all__ = ["Spec", "describe", "SELECTIONS", "INFERENCES"]

SELECTIONS = ("udmax-lwz", "sequential", "bic", "lwz")
#: Units per block of SSR tables (``(N, T, T)`` arrays stay in cache).
BLOCK = 128
INFERENCES = ("simulated", "asymptotic")


@dataclass(frozen=True, eq=False)
class Spec:
    """Everything :func:`describe` needs besides the data (the same for every unit of a chunk)."""

    model: str
    nobs: int
    h: int
    max_breaks: int
    select: str
    alpha: float
    inference: str
    weights: np.ndarray          # WDmax weights c(1)/c(k), k = 1..max_breaks
    draws: np.ndarray            # asymptotic supF(k) draws (reps, >= max_breaks)
    table: NullTable | None      # finite-sample conditional nulls (inference="simulated")

    @property
    def q(self) -> int:
        return 1 if self.model == "level" else 2


def _information(ssr: np.ndarray, nobs: int, q: int) -> tuple[np.ndarray, np.ndarray]:
    m = np.arange(ssr.shape[-1])
    k = (m + 1) * q + m
    with np.errstate(divide="ignore", invalid="ignore"):
        bic = np.log(ssr / nobs) + k * np.log(nobs) / nobs
        lwz = np.log(ssr / (nobs - k)) + (k / nobs) * 0.299 * np.log(nobs) ** 2.1
    return bic, lwz


def _asymptotic_p(stat: np.ndarray, draws: np.ndarray) -> np.ndarray:
    srt = np.sort(draws)
    out = (srt.size - np.searchsorted(srt, stat, side="left")) / srt.size
    return np.where(np.isnan(stat), np.nan, out)


def describe(y: np.ndarray, spec: Spec, *, sequential: bool = False) -> dict[str, Any]:
    """Partitions, tests, selected breaks and intervals for every row of ``y`` (see the module).

    Returns arrays indexed by unit: ``ssr`` ``(N, K+1)``, ``breaks`` ``(N, K+1, K)``, ``supf``
    ``(N, K)``, ``udmax``, ``wdmax``, their p-values ``p_supf``, ``p_udmax``, ``p_wdmax``, the
    residual autocorrelation ``r`` of every fit ``(N, K+1)``, ``innovation`` variances, ``bic``,
    ``lwz``, ``lwz_ar`` ``(N, K+1)``, the selected ``n_breaks``, ``ar1`` (bias-adjusted residual
    AR(1) of the selected fit) and ``covered``, ``long_run`` (its long-run variance factor), and
    flat arrays of the selected breaks (``unit``, ``index``, ``lower``, ``upper``). With
    ``sequential`` (or ``select="sequential"``) also ``p_sequential`` ``(N, K)`` and its
    statistics ``sequential``.
    """
    y = np.atleast_2d(np.asarray(y, dtype=float))
    n_units, nobs = y.shape
    K, h, q, model = spec.max_breaks, spec.h, spec.q, spec.model
    want_sequential = sequential or spec.select == "sequential"
    ssr = np.empty((n_units, K + 1))
    breaks = np.empty((n_units, K + 1, K), dtype=np.int64)
    split = np.full((n_units, K), np.nan)
    for start in range(0, n_units, BLOCK):  # (N, T, T) tables in cache-sized blocks
        part = slice(start, start + BLOCK)
        tables = ssr_tables(y[part], model, h)
        ssr[part], breaks[part] = optimal_partitions(tables, K, h)
        if want_sequential:
            split[part] = _split_statistics(tables, breaks[part], spec)
    supf = supf_statistics(ssr, nobs, q)
    udmax = supf.max(axis=1)
    wdmax = (supf * spec.weights[None, :K]).max(axis=1)
    fits, r, innovation = [], np.empty((n_units, K + 1)), np.empty((n_units, K + 1))
    for m in range(K + 1):
        fit = _batch.piecewise_fit(y, breaks[:, m, :m], model)
        fits.append(fit)
        r[:, m] = _batch.ar1_of(fit["resid"])
        # the noise model is AR(1) with rho in [0, COVERED]: an overfitted partition whose
        # residuals turn negatively autocorrelated is not rewarded for it
        innovation[:, m] = _batch.innovation_variance(fit["resid"], np.clip(r[:, m], 0.0, COVERED))
    out: dict[str, Any] = {"ssr": ssr, "breaks": breaks, "supf": supf, "udmax": udmax,
                           "wdmax": wdmax, "r": r, "innovation": innovation}
    if spec.inference == "simulated":
        table = spec.table
        assert table is not None  # set whenever inference is "simulated"
        out["p_supf"] = np.stack([table.pvalue(f"supF({k + 1})", supf[:, k], r[:, 0])
                                  for k in range(K)], axis=1)
        out["p_udmax"] = table.pvalue("UDmax", udmax, r[:, 0])
        out["p_wdmax"] = table.pvalue("WDmax", wdmax, r[:, 0])
    else:
        kk = min(K, spec.draws.shape[1])
        out["p_supf"] = np.stack([_asymptotic_p(supf[:, k], spec.draws[:, k]) if k < kk
                                  else np.full(n_units, np.nan) for k in range(K)], axis=1)
        out["p_udmax"] = _asymptotic_p(udmax, spec.draws[:, :kk].max(axis=1))
        out["p_wdmax"] = _asymptotic_p(wdmax, (spec.draws[:, :kk] * spec.weights[:kk]).max(axis=1))
    bic, lwz = _information(ssr, nobs, q)
    lwz_ar = _batch.lwz_ar(innovation, nobs, q)
    out.update(bic=bic, lwz=lwz, lwz_ar=lwz_ar)
    if want_sequential:
        out.update(sequential=split, p_sequential=_sequential_p(split, r, spec))
    chosen = _select(out, spec)
    out["n_breaks"] = chosen
    rows = np.arange(n_units)
    r_sel = r[rows, chosen]
    ar1 = _batch.ar1_adjusted(r_sel, nobs, chosen + 1, model)
    out["ar1"] = ar1
    out["covered"] = ar1 <= COVERED
    out["long_run"] = (_batch.long_run_factor(ar1) if spec.inference == "simulated"
                       else np.ones(n_units))
    out.update(_intervals(fits, breaks, chosen, out["long_run"], spec))
    out["fits"] = fits
    return out


def _select(out: dict[str, Any], spec: Spec) -> np.ndarray:
    if spec.select == "bic":
        return np.nanargmin(out["bic"], axis=1)
    if spec.select == "lwz":
        return np.nanargmin(out["lwz"], axis=1)
    if spec.select == "udmax-lwz":
        some = out["p_udmax"] < spec.alpha
        return np.where(some, 1 + np.nanargmin(out["lwz_ar"][:, 1:], axis=1), 0)
    chosen = np.zeros(out["ssr"].shape[0], dtype=np.int64)
    active = np.ones(chosen.size, dtype=bool)
    p = out["p_sequential"]
    for ell in range(spec.max_breaks):
        go = active & (p[:, ell] < spec.alpha)
        chosen[go] = ell + 1
        active = go
    return chosen


def _split_statistics(tables: np.ndarray, breaks: np.ndarray, spec: Spec) -> np.ndarray:
    """supF(l+1|l) for l = 0..K-1 (NaN where no regime can be split)."""
    stats = np.full((tables.shape[0], spec.max_breaks), np.nan)
    for ell in range(spec.max_breaks):
        if (ell + 2) * spec.h > spec.nobs:
            break
        stats[:, ell] = split_statistic(tables, breaks[:, ell, :ell], spec.h, spec.q)
    return stats


def _sequential_p(stats: np.ndarray, r: np.ndarray, spec: Spec) -> np.ndarray:
    """p-values of supF(l+1|l): simulated (conditional on the l-break residual autocorrelation)
    or Bai & Perron's (1998) ``1 - G(x)^(l+1)`` with G the limiting law of supF(1)."""
    pvals = np.ones_like(stats)
    one = spec.draws[:, 0]
    for ell in range(spec.max_breaks):
        finite = np.isfinite(stats[:, ell])
        if not finite.any():
            continue
        name = f"supF({ell + 1}|{ell})"
        table = spec.table if spec.inference == "simulated" else None
        if table is not None and name in table.stats:
            p = table.pvalue(name, stats[:, ell], r[:, ell])
        else:
            p = 1.0 - (1.0 - _asymptotic_p(stats[:, ell], one)) ** (ell + 1)
        pvals[:, ell] = np.where(finite, p, 1.0)
    return pvals


def _intervals(fits: list[dict[str, np.ndarray]], breaks: np.ndarray, chosen: np.ndarray,
               long_run: np.ndarray, spec: Spec) -> dict[str, np.ndarray]:
    """Intervals of every selected break (Bai 1997), flat over (unit, break)."""
    nobs = spec.nobs
    t = np.arange(1, nobs + 1, dtype=float)
    ct = np.concatenate([[0.0], np.cumsum(t)])
    ctt = np.concatenate([[0.0], np.cumsum(t * t)])
    parts: list[tuple[np.ndarray, ...]] = []
    for m in range(1, spec.max_breaks + 1):
        sel = np.flatnonzero(chosen == m)
        if sel.size == 0:
            continue
        fit = fits[m]
        cut = breaks[sel, m, :m]
        starts = np.concatenate([np.zeros((sel.size, 1), np.int64), cut + 1], axis=1)
        ends = np.concatenate([cut, np.full((sel.size, 1), nobs - 1)], axis=1) + 1
        n = (ends - starts).astype(float)
        tbar = (ct[ends] - ct[starts]) / n
        t2bar = (ctt[ends] - ctt[starts]) / n
        a, b = fit["intercept"][sel], fit["slope"][sel]
        var = fit["variance"][sel] * long_run[sel, None]
        da, db = np.diff(a, axis=1), np.diff(b, axis=1)  # change at each break
        if spec.model == "level":
            d1 = d2 = da ** 2
        else:
            d1 = da ** 2 + 2 * da * db * tbar[:, :-1] + db ** 2 * t2bar[:, :-1]
            d2 = da ** 2 + 2 * da * db * tbar[:, 1:] + db ** 2 * t2bar[:, 1:]
        parts.append((np.repeat(sel, m), cut.ravel(), d1.ravel(), d2.ravel(),
                      (var[:, :-1] * d1).ravel(), (var[:, 1:] * d2).ravel()))
    if not parts:
        empty = np.zeros(0, dtype=np.int64)
        return {"unit": empty, "index": empty, "lower": empty, "upper": empty}
    units, index, d1, d2, o1, o2 = (np.concatenate(c) for c in zip(*parts, strict=True))
    lower, upper = break_intervals(index, d1, d2, o1, o2, alpha=spec.alpha, nobs=nobs)
    order = np.lexsort((index, units))
    return {"unit": units[order], "index": index[order], "lower": lower[order],
            "upper": upper[order]}
