"""Figures of a study: indexed series with break years, sub-window heat maps, decomposition bars.

Each figure is written as PNG and SVG with fixed metadata through the package's one figure helper
(:mod:`evidence._figures`), so the same inputs give the same files and every figure is closed.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evidence._figures import finish_figure, pyplot
from evidence.panel import Panel

__all__ = ["save", "shorten", "indexed_figure", "heatmap_figure", "decomposition_figure"]


def shorten(text: str, width: int = 60) -> str:
    """Data-derived text cut to ``width`` characters for a title or legend (``…`` marks a cut)."""
    text = " ".join(str(text).split())
    return text if len(text) <= width else text[:width - 1] + "…"


def save(fig: Any, stem: Path) -> list[Path]:
    """Write ``stem.png`` and ``stem.svg`` and close the figure."""
    return finish_figure(fig, stem, formats=("png", "svg"))


def indexed_figure(panel: Panel, unit: str, activity: str, pressures: Sequence[str],
                   window: tuple[int, int], breaks: dict[str, Sequence[int]]):  # noqa: ANN201
    """Activity and pressures of one unit indexed to the window's first year, with break years."""
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 3.8), dpi=100)
    start, end = window
    for column, style in zip((activity, *pressures), ("-", "--", ":", "-.", "--")):
        series = panel.series(unit, column).loc[start:end].dropna()
        if series.empty:
            continue
        ax.plot(series.index, 100.0 * series / series.iloc[0], style, label=shorten(column))
    for column, years in breaks.items():
        for year in years:
            ax.axvline(year + 0.5, color="0.55", linewidth=0.8, linestyle=":")
    ax.axhline(100.0, color="0.8", linewidth=0.8)
    ax.set_title(f"{shorten(unit)}: indexed to the first year of each series = 100")
    ax.set_xlabel(panel.time_name)
    ax.legend(frameon=False, fontsize=8)
    fig.text(0.01, 0.01, "dotted lines: after each break year (last year of the old regime)",
             fontsize=7, color="0.4")
    fig.tight_layout()
    return fig


def heatmap_figure(matrix: np.ndarray, years: Sequence[int], title: str):  # noqa: ANN201
    """Start × end map of the sub-windows in which a claim holds (1) or not (0)."""
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(4.8, 4.2), dpi=100)
    masked = np.ma.masked_invalid(np.asarray(matrix, dtype=float))
    ax.imshow(masked.T, origin="lower", cmap="RdYlGn", vmin=0, vmax=1,
              extent=(years[0] - 0.5, years[-1] + 0.5, years[0] - 0.5, years[-1] + 0.5))
    ax.set_xlabel("first year of sub-window")
    ax.set_ylabel("last year of sub-window")
    ax.set_title(shorten(title, 90), fontsize=9)
    fig.tight_layout()
    return fig


def decomposition_figure(effects: pd.DataFrame, title: str):  # noqa: ANN201
    """Bars of the additive LMDI effects (one group per row of ``effects``)."""
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 3.6), dpi=100)
    effects.plot.bar(ax=ax, width=0.8)
    ax.axhline(0.0, color="0.4", linewidth=0.8)
    ax.set_title(title, fontsize=9)
    ax.set_ylabel("contribution to the change")
    ax.legend(frameon=False, fontsize=7)
    fig.tight_layout()
    return fig
