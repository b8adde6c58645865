"""Figure of a :class:`BreakResult`: the series, the fitted regimes and the break-date intervals."""

from __future__ import annotations

from itertools import pairwise
from pathlib import Path
from typing import Any

from evidence._figures import finish_figure, pyplot

__all__ = ["plot_breaks"]


def plot_breaks(result: Any, *, path: str | Path | None = None) -> Any:
    """Plot the series, fitted regimes and interval bands.

    With ``path`` the figure is written (and closed) by :func:`evidence._figures.finish_figure`
    and the paths written are returned; without it the open figure is returned.
    """
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 3.6), dpi=100)
    ax.plot(result.data.index, result.data.to_numpy(), ".", color="0.35", label=result.series)
    bounds = [int(result.data.index[0]) - 1, *result.break_years, int(result.data.index[-1])]
    for start, end in pairwise(bounds):
        part = result.fitted.loc[start + 1:end]
        ax.plot(part.index, part.to_numpy(), "-", color="C0", linewidth=1.6)
    for row in result.intervals.itertuples(index=False):
        ax.axvspan(row.lower + 0.5, row.upper + 0.5, color="C1", alpha=0.18, linewidth=0)
        ax.axvline(row.break_year + 0.5, color="C1", linestyle="--", linewidth=0.9)
    conf = round((1 - result.alpha) * 100)
    ax.set_title(f"{result.series}: {result.n_breaks} break(s), {conf}% intervals shaded")
    ax.set_xlabel("year (dashed line: after the break year, the last year of the old regime)",
                  fontsize=8)
    fig.tight_layout()
    return finish_figure(fig, path)
