"""Figures written by the command line and reports (matplotlib, non-interactive backend)."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from evidence.panel import Panel

__all__ = ["plot_indexed"]


def plot_indexed(panel: Panel, unit: str, *, activity: str, pressures: Sequence[str],
                 base_year: int, path: Path) -> Path:
    """Plot activity and pressures of one unit indexed to ``base_year`` = 100 and save a PNG."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(6.0, 3.6), dpi=100)
    for column, style in zip((activity, *pressures), ("-", "--", ":", "-.")):
        series = panel.series(unit, column).dropna()
        if base_year not in series.index or series.loc[base_year] == 0:
            continue
        ax.plot(series.index, 100.0 * series / series.loc[base_year], style, label=column)
    ax.axhline(100.0, color="0.7", linewidth=0.8)
    ax.set_title(f"{unit}: indexed, {base_year} = 100")
    ax.set_xlabel(panel.time_name)
    ax.legend(frameon=False, fontsize=8)
    fig.tight_layout()
    fig.savefig(path, metadata={"Software": None})
    plt.close(fig)
    return path
