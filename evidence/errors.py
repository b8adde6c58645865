"""Exceptions raised by the package.

Every error the package raises on purpose derives from :class:`EvidenceError`, so a caller (and the
command line) can tell bad input from an internal failure. Messages name the unit, year, column or
option at fault and say what to do about it.
"""

from __future__ import annotations

__all__ = ["EvidenceError", "DataError", "SpecError", "EstimationError"]


class EvidenceError(Exception):
    """Base class of every error the package raises on purpose."""


class DataError(EvidenceError, ValueError):
    """The data cannot be used as given: bad file, bad cells, duplicates, gaps, non-positive logs...

    The message names the unit, the year and the column concerned and how to fix the input.
    """


class SpecError(EvidenceError, ValueError):
    """An option or a specification is invalid: unknown name, value out of range, bad window.

    The message names the parameter, the value given and the allowed values.
    """


class EstimationError(EvidenceError, RuntimeError):
    """A computation could not be carried out on valid-looking input (singular design, no variation...)."""
