"""Checks of options and column names at public entry points; messages name the fix."""

from __future__ import annotations

import difflib
from collections.abc import Iterable, Sequence
from typing import Any

from evidence.errors import DataError, SpecError

__all__ = ["suggest", "check_choice", "check_columns", "check_window", "check_positive_int",
           "format_years"]


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
    raise SpecError(f"{parameter}={value!r} is not an option; use one of {options}.")


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


def check_positive_int(parameter: str, value: Any, *, minimum: int = 1) -> int:
    """Validate an integer option that must be at least ``minimum``."""
    if isinstance(value, bool) or not isinstance(value, (int,)) or value < minimum:
        raise SpecError(f"{parameter}={value!r} must be an integer of at least {minimum}.")
    return int(value)


def format_years(years: Iterable[int]) -> str:
    """Compact year list: ``1990-1994, 1997``."""
    ordered = sorted({int(y) for y in years})
    if not ordered:
        return ""
    runs: list[str] = []
    start = prev = ordered[0]
    for year in ordered[1:] + [None]:  # type: ignore[list-item]
        if year is not None and year == prev + 1:
            prev = year
            continue
        runs.append(str(start) if start == prev else f"{start}-{prev}")
        if year is not None:
            start = prev = year
    return ", ".join(runs)
