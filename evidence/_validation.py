"""Checks of options and column names at public entry points; messages name the fix."""

from __future__ import annotations

import difflib
import math
from collections.abc import Iterable, Sequence
from typing import Any, Literal, cast, overload

import numpy as np

from evidence._typing import ADJUSTMENTS, LAG_RULES, TRENDS, Trend
from evidence.errors import DataError, SpecError

__all__ = ["suggest", "check_choice", "check_columns", "check_window", "check_int", "check_number",
           "check_alpha", "check_trend", "check_lags", "check_max_lags", "check_seed",
           "adjust_pvalues", "format_years"]


def suggest(name: str, candidates: Iterable[str]) -> str:
    """Return ``" Did you mean 'x'?"`` for the closest candidates, or an empty string."""
    pool = [str(c) for c in candidates]
    key = str(name).strip().lower()
    close = difflib.get_close_matches(str(name), pool, n=1, cutoff=0.6)
    if not close:
        close = [c for c in pool if c.lower() == key]
    if not close and len(key) >= 2:
        close = [c for c in pool if key in c.lower()][:3]
    if not close:
        return ""
    return " Did you mean " + " or ".join(f"'{c}'" for c in close) + "?"


def check_choice(parameter: str, value: Any, allowed: Sequence[str]) -> str:
    """Match ``value`` against ``allowed`` without regard to case; return the canonical spelling."""
    if isinstance(value, str):
        for option in allowed:
            if option.lower() == value.strip().lower():
                return option
    options = ", ".join(repr(a) for a in sorted(allowed))
    hint = suggest(value, allowed) if isinstance(value, str) else ""
    raise SpecError(f"{parameter}={value!r} is not an option;{hint} use one of {options}.")


def check_columns(columns: Sequence[str], available: Sequence[str], *, what: str = "column") -> None:
    """Raise :class:`DataError` for the first name not in ``available``, with a suggestion."""
    for name in columns:
        if name not in available:
            listed = ", ".join(repr(a) for a in available)
            raise DataError(f"{what} '{name}' is not in the data.{suggest(name, available)} "
                            f"Available: {listed}.")


def check_window(window: Any, years: Sequence[int]) -> tuple[int, int]:
    """Validate ``window=(start, end)`` (inclusive) against the panel's years."""
    if isinstance(window, str):
        parts = window.replace("-", ":").split(":")
        if len(parts) != 2:
            raise SpecError(f"window={window!r} is not of the form START:END, e.g. 2000:2020.")
        window = parts
    try:
        start, end = (int(str(v).strip()) for v in window)
    except (TypeError, ValueError):
        raise SpecError(f"window={window!r} must be two years (start, end), e.g. (2000, 2020).") from None
    if start >= end:
        raise SpecError(f"window=({start}, {end}) must have its start before its end.")
    if years and (end < min(years) or start > max(years)):
        raise SpecError(f"window=({start}, {end}) lies outside the data's years "
                        f"{min(years)}:{max(years)}.")
    return start, end


@overload
def check_int(parameter: str, value: Any, *, minimum: int | None = None,
              maximum: int | None = None, allow_none: Literal[False] = False) -> int: ...


@overload
def check_int(parameter: str, value: Any, *, minimum: int | None = None,
              maximum: int | None = None, allow_none: bool) -> int | None: ...


def check_int(parameter: str, value: Any, *, minimum: int | None = None,
              maximum: int | None = None, allow_none: bool = False) -> int | None:
    """An integer option within ``[minimum, maximum]`` (``None`` passes when ``allow_none``).

    Examples
    --------
    >>> check_int("max_breaks", 3, minimum=1)
    3
    """
    if value is None and allow_none:
        return None
    ok = not isinstance(value, bool) and isinstance(value, (int, np.integer))
    if ok and minimum is not None and value < minimum:
        ok = False
    if ok and maximum is not None and value > maximum:
        ok = False
    if not ok:
        bounds = _bounds(minimum, maximum)
        extra = " or None" if allow_none else ""
        raise SpecError(f"{parameter}={value!r} must be an integer{bounds}{extra}.")
    return int(value)


def check_number(parameter: str, value: Any, *, low: float | None = None, high: float | None = None,
                 inclusive: bool = True, hint: str = "") -> float:
    """A finite real option within ``[low, high]`` (open interval when ``inclusive=False``)."""
    ok = not isinstance(value, bool) and isinstance(value, (int, float, np.integer, np.floating))
    if ok:
        number = float(value)
        ok = math.isfinite(number)
        if ok and low is not None:
            ok = number >= low if inclusive else number > low
        if ok and high is not None:
            ok = number <= high if inclusive else number < high
    if not ok:
        where = ""
        if low is not None and high is not None:
            where = (f" between {low:g} and {high:g}" + ("" if inclusive else " (exclusive)"))
        elif low is not None:
            where = f" {'at least' if inclusive else 'above'} {low:g}"
        elif high is not None:
            where = f" {'at most' if inclusive else 'below'} {high:g}"
        raise SpecError(f"{parameter}={value!r} must be a number{where}{hint}.")
    return float(value)


def check_alpha(alpha: Any, parameter: str = "alpha") -> float:
    """A significance level strictly between 0 and 1."""
    return check_number(parameter, alpha, low=0.0, high=1.0, inclusive=False, hint=", e.g. 0.05")


def check_trend(trend: Any, allowed: Sequence[str] = TRENDS) -> Trend:
    """Deterministic terms: one of ``"none"``, ``"constant"``, ``"trend"`` (or a subset)."""
    return cast(Trend, check_choice("trend", trend, tuple(allowed)))


def check_lags(lags: Any, *, parameter: str = "lags", rules: Sequence[str] = LAG_RULES) -> int | str:
    """A lag order: a non-negative integer, or one of the selection ``rules``."""
    if isinstance(lags, str):
        return check_choice(parameter, lags, tuple(rules))
    if isinstance(lags, bool) or not isinstance(lags, (int, np.integer)) or lags < 0:
        choices = " or one of " + ", ".join(repr(m) for m in sorted(rules)) if rules else ""
        raise SpecError(f"{parameter}={lags!r} must be a non-negative integer{choices}.")
    return int(lags)


def check_max_lags(max_lags: Any, parameter: str = "max_lags") -> int | None:
    """The largest lag searched: a non-negative integer, or ``None`` for the package's rule."""
    return check_int(parameter, max_lags, minimum=0, allow_none=True)


def check_seed(seed: Any) -> int | np.random.Generator:
    """A seed: a non-negative integer or a ``numpy.random.Generator``.

    ``None`` asks for fresh entropy: a new integer seed is drawn and returned, so that the result
    can still record (and a user reproduce) the seed it used. Every public function defaults to
    :data:`~evidence._typing.DEFAULT_SEED`, so results reproduce unless asked otherwise.
    """
    if seed is None:
        return int(np.random.SeedSequence().generate_state(1, dtype=np.uint64)[0] >> np.uint64(1))
    if isinstance(seed, np.random.Generator):
        return seed
    return check_int("seed", seed, minimum=0)


def adjust_pvalues(pvalues: Any, method: str) -> np.ndarray:
    """Multiple-testing adjustment of a vector of p-values; NaN entries stay NaN and are not counted.

    ``method`` is ``"bh"`` (Benjamini & Hochberg 1995 false discovery rate), ``"holm"`` (Holm 1979)
    or ``"none"``. Computed by ``statsmodels.stats.multitest.multipletests``.

    Examples
    --------
    >>> adjust_pvalues([0.01, 0.04, float("nan")], "holm").round(3).tolist()
    [0.02, 0.04, nan]
    """
    from statsmodels.stats.multitest import multipletests

    method = check_choice("adjust", method, ADJUSTMENTS)
    p = np.asarray(pvalues, dtype=float)
    out = p.copy()
    finite = np.isfinite(p)
    if method == "none" or not finite.any():
        return out
    out[finite] = multipletests(p[finite], method="fdr_bh" if method == "bh" else "holm")[1]
    return out


def _bounds(minimum: int | None, maximum: int | None) -> str:
    if minimum is not None and maximum is not None:
        return f" between {minimum} and {maximum}"
    if minimum is not None:
        return f" of at least {minimum}"
    if maximum is not None:
        return f" of at most {maximum}"
    return ""


def format_years(years: Iterable[int]) -> str:
    """Compact year list: ``1990-1994, 1997``."""
    ordered = sorted({int(y) for y in years})
    if not ordered:
        return ""
    runs: list[str] = []
    start = prev = ordered[0]
    for year in [*ordered[1:], None]:
        if year is not None and year == prev + 1:
            prev = year
            continue
        runs.append(str(start) if start == prev else f"{start}-{prev}")
        if year is not None:
            start = prev = year
    return ", ".join(runs)
