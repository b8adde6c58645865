"""The one way the package makes and saves a figure: Agg backend, fixed metadata, always closed.

``new_figure`` gives a figure and axes on the non-interactive Agg backend; ``finish_figure`` writes
it (PNG and/or SVG, with fixed metadata so the same inputs give the same bytes) and closes it when
it was written, or hands it back open when no path is given.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

__all__ = ["pyplot", "finish_figure"]

#: Metadata fixed so that files reproduce byte for byte.
_METADATA = {".png": {"Software": None}, ".svg": {"Date": None, "Creator": None},
             ".pdf": {"Creator": None, "Producer": None, "CreationDate": None}}


def pyplot() -> Any:
    """``matplotlib.pyplot`` on the Agg backend, with a fixed SVG hash salt."""
    import matplotlib

    matplotlib.use("Agg")
    matplotlib.rcParams["svg.hashsalt"] = "evidence"
    import matplotlib.pyplot as plt

    return plt


def finish_figure(fig: Any, path: str | Path | None = None, *,
                  formats: Sequence[str] | None = None) -> Any:
    """Save ``fig`` and close it; with no ``path``, return it open for the caller.

    ``path`` with a suffix is written as given; a path without one (a stem) is written once per
    entry of ``formats`` (default: ``("png", "svg")``). Returns the list of paths written, or the
    figure when ``path`` is ``None``.
    """
    if path is None:
        return fig
    target = Path(path)
    if target.suffix and formats is None:
        targets = [target]
    else:
        targets = [target.with_suffix(f".{fmt.lstrip('.')}") for fmt in (formats or ("png", "svg"))]
    try:
        for out in targets:
            fig.savefig(out, metadata=_METADATA.get(out.suffix.lower()))
    finally:
        pyplot().close(fig)
    return targets
