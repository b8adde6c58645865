"""Tests of the direction of a trend that hold their size whether the noise is stationary or has a
unit root: the grade's direction test, and the options beside it.

``trend_test(y, test=...)`` tests ``H0: slope >= 0`` against ``H1: slope < 0`` (or the mirror,
or two-sided) in ``y_t = a + g t + u_t``, optionally for the slope of the last ``segment`` years
only (a kinked trend, continuous at the kink). :func:`trend_batch` does the same for many series
of one length at once (arrays ``(T, N)``).

The tests (``test=``):

``"perron-yabu"`` (default)
    Perron & Yabu (2009): feasible quasi-GLS with an AR(1) estimate of the noise that is set to
    one (a unit root; the test becomes one on the mean annual change) when it is within
    ``κ / sqrt(T)`` of one. The truncation constant ``κ`` and the critical value are simulated
    for each T so that the size is balanced over AR(1) noise with ρ from 0 to 1
    (``evidence.trend._calibrate``; the paper's ``κ = 1`` with normal critical values rejects
    10–20 % at 5 % for ρ >= 0.5 at T = 30).
``"dan-j"``
    Bunzel & Vogelsang (2005): the OLS trend t with a fixed-b Daniell long-run variance
    (bandwidth ``0.3 T``) multiplied by ``exp(−b_J J)``, J Park's (1990) statistic from
    polynomials up to degree 9 (Vogelsang 1998); ``(b_J, c)`` calibrated the same way. Holds
    its size, but J reads a bend in the trend (a decline that starts mid-window) as a unit root,
    and the test then has almost no power.
``"ps-j"``
    Vogelsang (1998) t-PS_T: the same scaling of the partial-sum t, calibrated the same way.
``"perron-yabu-normal"``
    Perron & Yabu (2009) as published (``κ = 1``, standard normal critical values).
``"hac-fixed-b"``
    The Newey–West trend t with fixed-b critical values (Kiefer & Vogelsang 2005), simulated for
    the trend regression at ``b = (L + 1) / T``; valid for stationary noise only.
``"hac"``
    The Newey–West trend t against Student t with ``T − 2`` degrees of freedom (the earlier
    default); valid for stationary noise and large T only.

Measured sizes and powers are in ``docs/methods/grading.md`` and the size card
(``evidence/_sizes/trend.json``); a result's ``details["size"]`` quotes the card at its T.

References
----------
bunzelvogelsang2005 : Bunzel, H. & Vogelsang, T. J. (2005). Powerful trend function tests that are
    robust to strong serial correlation, with an application to the Prebisch–Singer hypothesis.
    Journal of Business & Economic Statistics 23(4), 381–394.
vogelsang1998 : Vogelsang, T. J. (1998). Trend function hypothesis testing in the presence of
    serial correlation. Econometrica 66(1), 123–148.
park1990 : Park, J. Y. (1990). Testing for unit roots and cointegration by variable addition.
    Advances in Econometrics 8, 107–133.
perronyabu2009 : Perron, P. & Yabu, T. (2009). Estimating deterministic trends with an integrated
    or stationary noise component. Journal of Econometrics 151(1), 56–69.
kiefervogelsang2005 : Kiefer, N. M. & Vogelsang, T. J. (2005). A new asymptotic theory for
    heteroskedasticity-autocorrelation robust tests. Econometric Theory 21(6), 1130–1164.
neweywest1987 : Newey, W. K. & West, K. D. (1987). Econometrica 55(3), 703–708.
"""

from __future__ import annotations

import math
from functools import lru_cache
from typing import Any

import numpy as np
from scipy import stats

from evidence._arrays import clean_series
from evidence._hac import newey_west_lags
from evidence._validation import check_alpha, check_choice, check_int
from evidence.errors import SpecError
from evidence.results import TestResult
from evidence.trend import _stats

__all__ = ["TREND_TESTS", "DEFAULT_TREND_TEST", "ALTERNATIVES", "trend_test", "trend_batch",
           "test_label", "MIN_YEARS"]

#: The trend tests ``trend_test`` and ``grade`` offer (``test=``); the default is ``DEFAULT_TREND_TEST``.
TREND_TESTS = ("perron-yabu", "dan-j", "ps-j", "perron-yabu-normal", "hac-fixed-b", "hac")
#: The default trend test (``test=``); its measured size is on the size card (docs/methods/size.md).
DEFAULT_TREND_TEST = "perron-yabu"
#: Tests whose critical values are simulated per T (and segment), and their calibration kind.
CALIBRATED = {"perron-yabu": "py", "dan-j": "dan", "ps-j": "ps"}
#: The alternatives of a trend test (``alternative=``).
ALTERNATIVES = ("decrease", "increase", "two-sided")
#: Fewest years a trend test is computed on (the J-scaled tests are tabulated from 8).
MIN_YEARS = 8

_NAMES = {
    "perron-yabu": "Perron & Yabu (2009) quasi-GLS trend test, size-calibrated for T",
    "dan-j": "Bunzel & Vogelsang (2005) Dan-J trend test, size-calibrated for T",
    "ps-j": "Vogelsang (1998) t-PS trend test, size-calibrated for T",
    "perron-yabu-normal": "Perron & Yabu (2009) quasi-GLS trend test (normal critical values)",
    "hac-fixed-b": "Newey-West trend t, fixed-b critical values (Kiefer & Vogelsang 2005)",
    "hac": "Newey-West trend t (Student t)",
}
_SHORT = {"perron-yabu": "Perron-Yabu (calibrated)", "dan-j": "Dan-J", "ps-j": "t-PS",
          "perron-yabu-normal": "Perron-Yabu (normal)",
          "hac-fixed-b": "HAC t, fixed-b", "hac": "HAC t"}
_REFERENCES = {
    "dan-j": "bunzelvogelsang2005; vogelsang1998; park1990",
    "ps-j": "vogelsang1998; park1990",
    "perron-yabu": "perronyabu2009",
    "perron-yabu-normal": "perronyabu2009",
    "hac-fixed-b": "kiefervogelsang2005; neweywest1987",
    "hac": "neweywest1987",
}


def test_label(test: str, *, short: bool = False) -> str:
    """The name of a trend test as tables print it (author–year form)."""
    return (_SHORT if short else _NAMES)[test]


# ----------------------------------------------------------------------------- critical values
def _table(kind: str, nobs: int, segment: int | None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``(alphas, b_J, c)`` for a J-scaled test at length ``nobs``."""
    import importlib

    from evidence.trend import _calibrate

    alphas = np.asarray(_calibrate.ALPHAS)
    try:
        module = importlib.import_module(f"evidence.trend.{_calibrate.TABLE_MODULES[kind][0]}")
        tables = module.TABLES
    except ImportError:  # pragma: no cover - the tables ship with the package
        tables = {}
    table = tables.get((kind, segment))
    if not table:
        b, c = _calibrate.on_demand(nobs, segment, kind)
        return alphas, b, c
    years = np.array(sorted(table))
    if nobs in table:
        b, c = table[nobs]
        return alphas, np.asarray(b), np.asarray(c)
    if nobs > years[-1]:
        b, c = table[int(years[-1])]
        return alphas, np.asarray(b), np.asarray(c)
    if nobs < years[0]:
        b, c = _calibrate.on_demand(nobs, segment, kind)
        return alphas, b, c
    hi = int(years[np.searchsorted(years, nobs)])
    lo = int(years[np.searchsorted(years, nobs) - 1])
    w = (1.0 / nobs - 1.0 / lo) / (1.0 / hi - 1.0 / lo)  # linear in 1/T
    b = (1 - w) * np.asarray(table[lo][0]) + w * np.asarray(table[hi][0])
    c = (1 - w) * np.asarray(table[lo][1]) + w * np.asarray(table[hi][1])
    return alphas, b, c


def _lower_pvalue(stat_at: np.ndarray, alphas: np.ndarray, c: np.ndarray) -> np.ndarray:
    """``P(S <= s)`` from the statistic at each tabulated level (``(N, K)``, signed).

    At level ``α_k`` the lower-tail test rejects when ``S_k < −c_k``. The p-value interpolates
    ``log α`` linearly in the margin ``−S_k − c_k`` between the last level that does not reject
    and the first that does; below the smallest level it follows a normal tail. A positive
    statistic gets ``1 − P(S <= −s)`` (the null distribution is symmetric).
    """
    stat_at = np.asarray(stat_at, dtype=float)
    sign = np.sign(stat_at[:, -1] if stat_at.shape[1] else 0.0)
    neg = -np.abs(stat_at)
    margin = -neg - c[None, :]  # > 0 rejects
    rejects = margin > 0
    first = np.argmax(rejects, axis=1)
    none = ~rejects.any(axis=1)
    log_a = np.log(alphas)
    rows = np.arange(stat_at.shape[0])
    k = np.maximum(first, 1)
    m0, m1 = margin[rows, k - 1], margin[rows, k]
    with np.errstate(divide="ignore", invalid="ignore"):
        w = np.where(m0 != m1, m0 / (m0 - m1), 1.0)  # m0 <= 0 < m1
    p = np.exp(log_a[k - 1] + np.clip(w, 0.0, 1.0) * (log_a[k] - log_a[k - 1]))
    tail = stats.norm.sf(stats.norm.isf(alphas[0]) + np.maximum(margin[:, 0], 0.0))
    p = np.where(first == 0, np.minimum(tail, alphas[0]), p)
    p = np.where(none, 0.5, p)
    p = np.where(sign > 0, 1.0 - p, p)
    return np.where(np.isfinite(stat_at).all(axis=1), p, np.nan)


def _level_values(alphas: np.ndarray, b: np.ndarray, c: np.ndarray,
                  level: float) -> tuple[float, float]:
    """``(b_J, c)`` at a one-sided level, interpolated in ``log α``."""
    x = np.log(alphas[:-1])
    return (float(np.interp(math.log(level), x, b[:-1])),
            float(np.interp(math.log(level), x, c[:-1])))


@lru_cache(maxsize=128)
def _fixed_b_null(b: float, reps: int = 20000, nsim: int = 200) -> np.ndarray:
    """Sorted simulated fixed-b null of the Newey–West trend t at bandwidth fraction ``b``.

    Gaussian iid errors, ``nsim`` observations (a fine grid for the Brownian functionals of
    Kiefer & Vogelsang 2005), Bartlett kernel with ``round(b nsim) − 1`` lags; seeded.
    """
    from evidence._cache import load_cached, save_cached

    params = {"b": round(b, 6), "reps": reps, "nsim": nsim, "seed": 20261202, "version": 1}
    hit = load_cached("trend_fixed_b", params)
    if hit is not None:
        return hit["t"]
    rng = np.random.default_rng([20261202, round(b * 1e6)])
    lags = max(round(b * nsim) - 1, 0)
    out = []
    for _ in range(reps // 2000):
        out.append(_stats.hac_t(rng.standard_normal((nsim, 2000)), lags)[0])
    t = np.sort(np.concatenate(out))
    save_cached("trend_fixed_b", params, {"t": t})
    return t


# ----------------------------------------------------------------------------- the tests
def trend_batch(y: np.ndarray, *, test: str = DEFAULT_TREND_TEST, alternative: str = "decrease",
                alpha: float = 0.05, segment: int | None = None,
                hac_lags: int | None = None, dummies: np.ndarray | None = None) -> dict[str, Any]:
    """One trend test on every column of ``y`` (``(T, N)``, complete, years consecutive).

    Returns arrays ``estimate`` (the slope, or the last segment's slope, per year), ``std_error``,
    ``statistic`` (the J-scaled statistic at the 5 % one-sided level where the test has one, else
    the t), ``pvalue`` (for ``alternative``), ``lower`` / ``upper`` (two-sided ``1 − alpha``
    interval of the slope) and ``j`` (Park's J, NaN where unused), and ``test``, ``nobs``,
    ``hac_lags``. Units are in the units of ``y`` per year (log points for logs).

    ``dummies`` (``(T, q)``, calibrated tests only) are further deterministic columns — impulse
    and step dummies of recessions, say — held fixed while the slope is tested; the tuning and
    critical values are then simulated for that design (``_calibrate.for_design``, cached).
    """
    y = np.asarray(y, dtype=float)
    if y.ndim == 1:
        y = y[:, None]
    nobs = y.shape[0]
    out: dict[str, Any] = {"test": test, "nobs": nobs, "segment": segment, "hac_lags": None}
    nan = np.full(y.shape[1], np.nan)
    j = nan.copy()
    if test in CALIBRATED:
        kind = CALIBRATED[test]
        d = _stats.design(nobs, segment)
        if dummies is not None and np.asarray(dummies).size:
            from evidence.trend import _calibrate

            d = _stats.with_columns(d, dummies)
            alphas = np.asarray(_calibrate.ALPHAS)
            theta, c = _calibrate.for_design(nobs, segment, kind, np.asarray(dummies))
        else:
            alphas, theta, c = _table(kind, nobs, segment)
        theta_05, _ = _level_values(alphas, theta, c, 0.05)
        theta_half, c_half = _level_values(alphas, theta, c, alpha / 2)
        if kind == "py":
            pieces = _stats.perron_yabu_parts(y, d)
            root = math.sqrt(nobs)
            trunc_at = pieces["alpha"][:, None] >= 1.0 - theta[None, :] / root
            stat_at = np.where(trunc_at, pieces["t_diff"][:, None], pieces["t_gls"][:, None])
            pick = lambda key, th: np.where(pieces["alpha"] >= 1.0 - th / root,  # noqa: E731
                                            pieces[f"{key}_diff"], pieces[f"{key}_gls"])
            t, est, se = pick("t", theta_05), pick("est", theta_05), pick("se", theta_05)
            stat = t
            half = c_half * pick("se", theta_half)
            est_half = pick("est", theta_half)
            out["truncated"] = pieces["alpha"] >= 1.0 - theta_05 / root
            out["ar1"] = pieces["alpha"]
        else:
            t, est, se = _stats.robust_t(y, d, kind)
            j = _stats.park_j(y, d)
            stat_at = t[:, None] * np.exp(-np.outer(j, theta))
            stat = t * np.exp(-theta_05 * j)
            half = c_half * np.exp(theta_half * j) * se
            est_half = est
        p_low = _lower_pvalue(stat_at, alphas, c)
        out["lower_est"] = est_half
    else:
        if segment is not None or (dummies is not None and np.asarray(dummies).size):
            raise SpecError(f"segment and dummies need one of the calibrated tests "
                            f"({', '.join(CALIBRATED)}).")
        if test == "perron-yabu-normal":
            t, est, se, _ = _stats.perron_yabu_t(y)
            p_low = stats.norm.cdf(t)
            half = stats.norm.isf(alpha / 2) * se
        else:
            lags = newey_west_lags(nobs) if hac_lags is None else int(hac_lags)
            out["hac_lags"] = lags
            t, est, se = _stats.hac_t(y, lags)
            if test == "hac":
                p_low = stats.t.cdf(t, nobs - 2)
                half = stats.t.isf(alpha / 2, nobs - 2) * se
            else:
                null = _fixed_b_null(round((lags + 1) / nobs, 4))
                p_low = (np.searchsorted(null, t, side="right") + 0.5) / (null.size + 1)
                q = float(np.quantile(null, 1 - alpha / 2))
                half = q * se
        stat = t
    if alternative == "decrease":
        p = p_low
    elif alternative == "increase":
        p = 1.0 - p_low
    else:
        p = np.minimum(2.0 * np.minimum(p_low, 1.0 - p_low), 1.0)
    centre = out.pop("lower_est", est)
    out.update(estimate=est, std_error=se, statistic=stat, pvalue=p, lower=centre - half,
               upper=centre + half, j=j, t=t)
    return out


def trend_test(y: Any, years: Any = None, *, test: str = DEFAULT_TREND_TEST,
               alternative: str = "decrease", alpha: float = 0.05, segment: int | None = None,
               hac_lags: int | None = None) -> TestResult:
    """Test the direction of the linear trend of ``y``, robust to stationary or integrated noise.

    Parameters
    ----------
    y : Series indexed by year, or 1-D array
        The series (e.g. log emissions). Consecutive years, no gaps.
    test : {"perron-yabu", "dan-j", "ps-j", "perron-yabu-normal", "hac-fixed-b", "hac"}
        See the module notes. The calibrated tests hold their size at T = 10–100 for AR(1)
        noise with ρ from 0 to 1; ``"hac"``, ``"hac-fixed-b"`` and ``"perron-yabu-normal"`` do
        not at T < 50 (measured sizes in ``details["size"]``).
    alternative : {"decrease", "increase", "two-sided"}
        H1: slope < 0, slope > 0, or slope ≠ 0.
    alpha : float
        Level of the two-sided interval of the slope (``details["lower"]``, ``["upper"]``).
    segment : int, optional
        Test the slope of the last ``segment`` years only, in a trend with a kink at the year
        before them (the earlier years fix the level and the noise; calibrated tests only).
    hac_lags : int, optional
        Newey–West lags of the ``"hac"`` tests (default ``floor(4 (T/100)^(2/9))``).

    Returns
    -------
    TestResult
        ``statistic`` (the statistic at the 5 % level's tuning for the calibrated tests, else
        the t),
        ``pvalue``, ``critical_values`` (one-sided, lower tail), ``details``: ``slope``,
        ``std_error``, ``lower``, ``upper`` (per year, in the units of ``y``), ``J``, ``size``
        (the size card at this T).

    Notes
    -----
    H0: slope >= 0 (``"decrease"``). Model ``y_t = a + g t + u_t`` with ``u_t`` I(0) or I(1).
    The calibrated tests take their tuning constant and critical value at each level from a
    finite-sample simulation per T (``evidence.trend._calibrate``); p-values interpolate
    between the tabulated levels.

    Examples
    --------
    >>> import numpy as np
    >>> y = 5.0 - 0.02 * np.arange(30) + 0.01 * np.sin(np.arange(30))
    >>> trend_test(y).pvalue < 0.01
    True
    """
    test = check_choice("test", test, TREND_TESTS)
    alternative = check_choice("alternative", alternative, ALTERNATIVES)
    alpha = check_alpha(alpha)
    segment = check_int("segment", segment, minimum=3, allow_none=True)
    hac_lags = check_int("hac_lags", hac_lags, minimum=0, allow_none=True)
    minimum = segment + 5 if segment else MIN_YEARS
    data = clean_series(y, years, min_obs=minimum, purpose=f"the {test} trend test")
    if segment is not None and test not in CALIBRATED:
        raise SpecError(f"segment={segment} needs one of the calibrated tests "
                        f"({', '.join(CALIBRATED)}).")
    res = trend_batch(data.values[:, None], test=test, alternative=alternative, alpha=alpha,
                      segment=segment, hac_lags=hac_lags)
    nobs = data.nobs
    cvs = {}
    if test in CALIBRATED:
        alphas, b, c = _table(CALIBRATED[test], nobs, segment)
        cvs = {lvl: -_level_values(alphas, b, c, lvl)[1] for lvl in (0.01, 0.05, 0.10)}
    from evidence._size_card import size_note

    null = {"decrease": ">= 0", "increase": "<= 0", "two-sided": "= 0"}[alternative]
    alt = {"decrease": "< 0", "increase": "> 0", "two-sided": "!= 0"}[alternative]
    where = f" over the last {segment} years" if segment else ""
    details = {"slope": float(res["estimate"][0]), "std_error": float(res["std_error"][0]),
               "lower": float(res["lower"][0]), "upper": float(res["upper"][0]),
               "interval_level": 1 - alpha, "J": float(res["j"][0]), "t": float(res["t"][0]),
               "segment": segment, "years": data.span, "hac_lags": res["hac_lags"],
               "size": size_note(test, None, nobs)}
    warnings = []
    note = details["size"]
    if note and not note.get("controlled", True):
        warnings.append(f"size not controlled at T={nobs}: {note['measured']:.1%} at 5 % nominal "
                        f"under {note['process']} (size card)")
    return TestResult(test=_NAMES[test], statistic=float(res["statistic"][0]),
                      pvalue=float(res["pvalue"][0]), critical_values=cvs,
                      null=f"trend slope{where} {null}", alternative=f"trend slope{where} {alt}",
                      nobs=nobs, details=details, reference=_REFERENCES[test],
                      warnings=tuple(warnings))
