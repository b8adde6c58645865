"""Conversion of results to JSON-safe Python objects (no NaN, no numpy scalars, string keys)."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np
import pandas as pd

__all__ = ["json_safe"]


def json_safe(obj: Any) -> Any:
    """Return ``obj`` as nested dicts, lists, str, int, float, bool and None.

    NaN and infinities become ``None`` (JSON has no such numbers); numpy scalars become Python
    scalars; Series become dicts and DataFrames lists of records; mapping keys become strings.
    """
    if obj is None or isinstance(obj, (bool, str)):
        return obj
    if isinstance(obj, (np.bool_,)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        value = float(obj)
        return value if math.isfinite(value) else None
    if obj is pd.NA or obj is pd.NaT:
        return None
    if isinstance(obj, pd.DataFrame):
        return [json_safe(rec) for rec in obj.reset_index().to_dict(orient="records")]
    if isinstance(obj, pd.Series):
        return {str(k): json_safe(v) for k, v in obj.items()}
    if isinstance(obj, np.ndarray):
        return [json_safe(v) for v in obj.tolist()]
    if isinstance(obj, Mapping):
        return {str(k): json_safe(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple, set, frozenset)):
        items = sorted(obj, key=str) if isinstance(obj, (set, frozenset)) else obj
        return [json_safe(v) for v in items]
    if hasattr(obj, "to_dict") and callable(obj.to_dict):
        return json_safe(obj.to_dict())
    return str(obj)
