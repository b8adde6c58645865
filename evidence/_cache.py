"""A small on-disk cache of simulated arrays (critical-value tables, null distributions).

Entries are NumPy ``.npz`` files read with ``allow_pickle=False``, named by a hash of the
parameters that produced them (JSON, sorted keys) and written atomically. The folder is
``$EVIDENCE_CACHE_DIR`` or ``$XDG_CACHE_HOME/evidence`` (default ``~/.cache/evidence``); set
``EVIDENCE_CACHE_DIR=off`` to disable caching. Entries that ship with the package (in
``evidence/_nulls/``, made by ``python -m evidence._make_nulls``) are read when the cache has none,
and also when caching is off, so the common null distributions need no simulation on a new
machine whatever the setting.
"""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np

__all__ = ["cache_dir", "cache_key", "load_cached", "save_cached"]


def cache_dir() -> Path | None:
    """The cache folder, or ``None`` when caching is off."""
    configured = os.environ.get("EVIDENCE_CACHE_DIR")
    if configured is not None:
        return None if configured.strip().lower() in ("", "off", "0", "none") else Path(configured)
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "evidence"


def cache_key(name: str, params: Mapping[str, Any]) -> str:
    """A file-name-safe key: ``name`` and a hash of the parameters."""
    text = json.dumps(dict(params), sort_keys=True, default=str)
    return f"{name}-{hashlib.sha256(text.encode()).hexdigest()[:20]}"


SHIPPED = Path(__file__).resolve().parent / "_nulls"


def load_cached(name: str, params: Mapping[str, Any]) -> dict[str, np.ndarray] | None:
    """The arrays stored for ``(name, params)`` (user cache, then shipped), or ``None``."""
    folder = cache_dir()
    key = f"{cache_key(name, params)}.npz"
    path = SHIPPED / key if folder is None else folder / key
    if not path.exists():  # the shipped tables are read whatever the cache setting
        path = SHIPPED / key
    if not path.exists():
        return None
    try:
        with np.load(path, allow_pickle=False) as data:
            return {k: data[k] for k in data.files}
    except (OSError, ValueError):
        return None


def save_cached(name: str, params: Mapping[str, Any], arrays: Mapping[str, np.ndarray]) -> None:
    """Store arrays for ``(name, params)``; a cache that cannot be written is skipped quietly."""
    folder = cache_dir()
    if folder is None:
        return
    try:
        folder.mkdir(parents=True, exist_ok=True)
        handle, tmp = tempfile.mkstemp(dir=folder, suffix=".tmp")
        with os.fdopen(handle, "wb") as stream:
            payload: dict[str, Any] = {k: np.asarray(v) for k, v in arrays.items()}
            np.savez(stream, **payload)
        os.replace(tmp, folder / f"{cache_key(name, params)}.npz")
    except OSError:
        return
