"""Figures of a study: the grade across units, indexed series, sub-window maps, break years,
dispersion paths, club transitions, the fitted Kuznets curve and decomposition bars.

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

__all__ = ["save", "shorten", "indexed_figure", "heatmap_figure", "decomposition_figure",
           "grade_figure", "small_multiples", "dispersion_figure", "club_figure",
           "break_years_figure", "ekc_figure", "RUNG_COLOURS"]

#: One colour per rung, from grey (coupled) to greens (absolute decoupling); colour-blind safe.
RUNG_COLOURS = {
    "coupled": "#9e9e9e", "relative": "#56b4e9", "recession-driven": "#cc79a7",
    "absolute-tentative": "#e69f00", "absolute-significant": "#3a9a5b",
    "absolute-sustained": "#1b6e3a", "target-consistent": "#0b3d20"}
#: Above this many units the grade figure drops unit names and draws a sorted band.
LABELLED_UNITS = 60


def shorten(text: str, width: int = 60) -> str:
    """Data-derived text cut to ``width`` characters for a title or legend (``…`` marks a cut)."""
    text = " ".join(str(text).split())
    return text if len(text) <= width else text[:width - 1] + "…"


def save(fig: Any, stem: Path) -> list[Path]:
    """Write ``stem.png`` and ``stem.svg`` and close the figure."""
    return finish_figure(fig, stem, formats=("png", "svg"))


def indexed_figure(panel: Panel, unit: str, activity: str, pressures: Sequence[str],
                   window: tuple[int, int], breaks: dict[str, Sequence[int]]):
    """Activity and pressures of one unit indexed to the window's first year, with break years."""
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 3.8), dpi=100)
    start, end = window
    # Five line styles: a sixth series and beyond are not drawn (figure kept as it was).
    for column, style in zip((activity, *pressures), ("-", "--", ":", "-.", "--"), strict=False):
        series = panel.series(unit, column).loc[start:end].dropna()
        if series.empty:
            continue
        ax.plot(series.index, 100.0 * series / series.iloc[0], style, label=shorten(column))
    for years in breaks.values():
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


def heatmap_figure(matrix: np.ndarray, years: Sequence[int], title: str):
    """Start × end map of the sub-windows in which a claim holds (1) or not (0)."""
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(4.8, 4.2), dpi=100)
    masked = np.ma.masked_invalid(np.asarray(matrix, dtype=float))
    from matplotlib.colors import ListedColormap
    from matplotlib.patches import Patch

    cmap = ListedColormap(["#d55e00", "#009e73"])
    ax.imshow(masked.T, origin="lower", cmap=cmap, vmin=0, vmax=1, interpolation="nearest",
              extent=(years[0] - 0.5, years[-1] + 0.5, years[0] - 0.5, years[-1] + 0.5))
    ax.set_xlabel("first year of sub-window")
    ax.set_ylabel("last year of sub-window")
    ax.set_title(shorten(title, 90), fontsize=9)
    ax.legend(handles=[Patch(color="#009e73", label="claim holds"),
                       Patch(color="#d55e00", label="claim does not hold"),
                       Patch(facecolor="white", edgecolor="0.6", label="too short / not tested")],
              loc="lower right", fontsize=7, frameon=True)
    fig.tight_layout()
    return fig


def decomposition_figure(effects: pd.DataFrame, title: str, *, unit: str = ""):
    """Horizontal bars of the additive LMDI effects and their sum (the change), one bar each.

    ``effects`` holds one row (the effects of every factor); more rows are drawn as groups.
    Increases are drawn in orange, decreases in blue, the net change in grey; each bar carries
    its value.
    """
    plt = pyplot()
    if len(effects) != 1:
        fig, ax = plt.subplots(figsize=(6.4, 3.6), dpi=100)
        effects.plot.barh(ax=ax, width=0.8)
        ax.axvline(0.0, color="0.4", linewidth=0.8)
        ax.set_title(title, fontsize=9)
        ax.set_xlabel(f"contribution to the change{' (' + unit + ')' if unit else ''}")
        ax.legend(frameon=False, fontsize=7)
        fig.tight_layout()
        return fig
    row = effects.iloc[0].astype(float)
    names = [*map(str, row.index), "change (sum)"]
    values = [*row.to_numpy(), float(row.sum())]
    colours = [("#d55e00" if v > 0 else "#0072b2") for v in values[:-1]] + ["0.45"]
    fig, ax = plt.subplots(figsize=(6.4, 0.45 * len(names) + 1.2), dpi=100)
    place = list(range(len(names)))[::-1]
    ax.barh(place, values, color=colours, height=0.6)
    ax.set_yticks(place, names, fontsize=8)
    ax.axvline(0.0, color="0.3", linewidth=0.8)
    span = max(abs(v) for v in values) or 1.0
    for y, v in zip(place, values, strict=True):
        ax.annotate(f"{v:+,.0f}".replace("-", "\u2212"), (v, y), fontsize=7, va="center",
                    ha="left" if v >= 0 else "right",
                    xytext=(3 if v >= 0 else -3, 0), textcoords="offset points")
    ax.set_xlim(-1.3 * span if min(values) < 0 else 0, 1.3 * span if max(values) > 0 else 0)
    ax.xaxis.set_major_formatter(lambda v, _pos: f"{v:,.0f}".replace("-", "\u2212"))
    ax.set_title(title, fontsize=9)
    ax.set_xlabel(f"contribution to the change{' (' + unit + ')' if unit else ''}", fontsize=8)
    ax.tick_params(axis="x", labelsize=7)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    fig.tight_layout()
    return fig


def grade_figure(table: pd.DataFrame, pressure: str, *, required: float | None = None,
                 unit_word: str = "unit"):
    """Each unit's observed annual change of ``pressure`` with its interval, coloured by grade.

    Units are sorted by the change (largest decline at the top); a dagger marks a basis gap.
    With more than :data:`LABELLED_UNITS` units the names are dropped and the intervals drawn
    as a sorted band.
    """
    from matplotlib.lines import Line2D

    plt = pyplot()
    rows = table.loc[table["pressure"] == pressure].copy()
    rows["_change"] = pd.to_numeric(rows["observed_change"], errors="coerce")
    rows = rows.sort_values(["_change", "unit"], ascending=[False, False], kind="stable")
    n = len(rows)
    labelled = n <= LABELLED_UNITS
    height = min(max(2.6, 0.2 * n + 1.3), 7.0) if labelled else 4.6
    fig, ax = plt.subplots(figsize=(6.2, height), dpi=100)
    y = np.arange(n)
    change = 100 * rows["_change"].to_numpy(dtype=float)
    low = 100 * pd.to_numeric(rows["observed_change_lower"], errors="coerce").to_numpy(dtype=float)
    high = 100 * pd.to_numeric(rows["observed_change_upper"], errors="coerce").to_numpy(dtype=float)
    colours = [RUNG_COLOURS.get(r, "black") for r in rows["rung"]]
    ax.hlines(y, low, high, colors=colours, linewidth=1.6 if labelled else 0.6)
    ax.scatter(change, y, c=colours, s=18 if labelled else 4, zorder=3)
    ax.axvline(0.0, color="0.3", linewidth=0.8)
    if required is not None and np.isfinite(required):
        ax.axvline(100 * required, color="#d55e00", linestyle="--", linewidth=1.0)
    if labelled:
        gaps = ["basis-gap" in str(f) for f in rows["flags"]]
        ax.set_yticks(y, [shorten(str(u), 24) + (" †" if g else "")
                          for u, g in zip(rows["unit"], gaps, strict=True)], fontsize=7.5)
    else:
        ax.set_yticks([])
        ax.set_ylabel(f"{n} {unit_word}s, sorted by the change")
    ax.set_ylim(-0.7, n - 0.3)
    ax.set_xlabel(f"observed change of {shorten(pressure, 40)}, % a year (interval)")
    present = [r for r in RUNG_COLOURS if r in set(rows["rung"])]
    handles = [Line2D([], [], color=RUNG_COLOURS[r], marker="o", linewidth=1.6, label=r)
               for r in reversed(present)]
    if required is not None and np.isfinite(required):
        handles.append(Line2D([], [], color="#d55e00", linestyle="--",
                              label=f"required {100 * required:+.1f} %/yr".replace("-", "\u2212")))
    ax.legend(handles=handles, fontsize=7, frameon=False, loc="upper center",
              bbox_to_anchor=(0.5, -0.09 if labelled and n > 12 else -0.16),
              ncol=min(len(handles), 3))
    ax.grid(axis="x", color="0.9", linewidth=0.6)
    ax.set_axisbelow(True)
    fig.tight_layout()
    return fig


def small_multiples(panel: Panel, units: Sequence[str], activity: str, pressure: str,
                    window: tuple[int, int], *, rungs: dict[str, str] | None = None):
    """One small panel per unit: activity and pressure indexed to the window's first year."""
    plt = pyplot()
    n = len(units)
    cols = min(6, max(n, 1))
    rows_n = max(1, -(-n // cols))
    width, height = 1.55 * cols + 0.4, 1.15 * rows_n + 0.7
    fig, axes = plt.subplots(rows_n, cols, figsize=(width, height), dpi=100, sharex=True,
                             squeeze=False)
    start, end = window
    wides = {c: panel.wide(c).loc[start:end] for c in (activity, pressure)}
    for ax in axes.flat[n:]:
        ax.axis("off")
    for ax, unit in zip(axes.flat, units, strict=False):  # the grid may have spare axes
        for column, colour in ((activity, "0.45"), (pressure, "#0072b2")):
            series = wides[column][unit].dropna() if unit in wides[column] else None
            if series is not None and not series.empty:
                ax.plot(series.index, 100.0 * series / series.iloc[0], color=colour,
                        linewidth=1.0)
        ax.axhline(100.0, color="0.85", linewidth=0.6)
        rung = (rungs or {}).get(unit)
        ax.set_title(shorten(unit, 16), fontsize=7, pad=2,
                     color=RUNG_COLOURS.get(rung, "black") if rung else "black")
        ax.tick_params(labelsize=5.5, length=2, pad=1)
    fig.suptitle(f"{shorten(activity, 20)} (grey) and {shorten(pressure, 30)} (blue), "
                 f"first year = 100; titles coloured by grade", fontsize=8)
    fig.subplots_adjust(left=0.35 / width, right=1 - 0.1 / width, bottom=0.3 / height,
                        top=1 - 0.45 / height, wspace=0.28, hspace=0.45)
    return fig


def dispersion_figure(path: pd.Series, measure: str, title: str):
    """The cross-sectional dispersion year by year, with its fitted linear trend."""
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(5.6, 3.2), dpi=100)
    years = np.asarray(path.index, dtype=float)
    values = path.to_numpy(dtype=float)
    words = {"sd_log": "standard deviation of logs", "cv": "coefficient of variation",
             "weighted_sd_log": "weighted s.d. of logs"}
    ax.plot(years, values, "o-", color="#0072b2", markersize=3, linewidth=1.2,
            label=words.get(measure, measure))
    ok = np.isfinite(values)
    if ok.sum() >= 2:
        slope, intercept = np.polyfit(years[ok], values[ok], 1)
        ax.plot(years, intercept + slope * years, "--", color="0.4", linewidth=0.9,
                label="linear trend")
    ax.set_xlabel("year")
    ax.set_ylabel(words.get(measure, measure))
    ax.set_title(shorten(title, 80), fontsize=9)
    ax.legend(frameon=False, fontsize=7)
    fig.tight_layout()
    return fig


def club_figure(transition: pd.DataFrame, clubs: Sequence[Sequence[str]], title: str):
    """Relative transition paths (unit / club mean) per club, with unit legends and axis labels."""
    plt = pyplot()
    k = max(len(clubs), 1)
    fig, axes = plt.subplots(1, k, figsize=(min(3.3 * k, 10.5), 3.4), dpi=100, squeeze=False,
                             sharey=True)
    for i, (ax, club) in enumerate(zip(axes[0], clubs, strict=False), start=1):  # no club: one empty axis
        for unit in club:
            ax.plot(transition.index, transition[unit], linewidth=0.9, label=shorten(unit, 14))
        ax.axhline(1.0, color="0.3", linewidth=0.8, linestyle=":")
        ax.set_title(f"club {i} ({len(club)} units)", fontsize=9)
        ax.set_xlabel("year", fontsize=8)
        ax.tick_params(labelsize=7)
        if len(club) <= 12:
            ax.legend(fontsize=5.5, frameon=False, ncol=2 if len(club) > 6 else 1)
    axes[0][0].set_ylabel("relative transition h = unit / club mean", fontsize=8)
    fig.suptitle(shorten(title, 110), fontsize=9)
    fig.tight_layout()
    return fig


def break_years_figure(counts: dict[str, pd.Series], years: tuple[int, int]):
    """Units with a break in each year, one bar series per tested series."""
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(6.0, 2.8), dpi=100)
    span = np.arange(years[0], years[1] + 1)
    width = 0.8 / max(len(counts), 1)
    for i, (label, series) in enumerate(counts.items()):
        values = series.reindex(span, fill_value=0).to_numpy(dtype=float)
        ax.bar(span + (i - (len(counts) - 1) / 2) * width, values, width=width,
               label=shorten(label, 40))
    ax.set_xlabel("break year (last year of the old regime)")
    ax.set_ylabel("units")
    ax.yaxis.get_major_locator().set_params(integer=True)
    ax.legend(frameon=False, fontsize=7)
    fig.tight_layout()
    return fig


def ekc_figure(x: np.ndarray, y: np.ndarray, coefficients: Sequence[float], turning: Sequence[float],
               x_label: str, y_label: str):
    """Log pressure against log activity, and the fitted polynomial at the average unit effect
    (the mean of ``y - f(x)`` over the observations)."""
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(5.6, 3.6), dpi=100)
    ax.scatter(x, y, s=5, color="0.6", alpha=0.6, label="observations")

    def shape(values: np.ndarray) -> Any:
        return sum(b * values ** (i + 1) for i, b in enumerate(coefficients))

    grid = np.linspace(np.nanmin(x), np.nanmax(x), 200)
    offset = float(np.nanmean(y - shape(x)))
    ax.plot(grid, shape(grid) + offset, color="#0072b2", linewidth=1.6,
            label="fitted polynomial (average unit effect)")
    for point in turning:
        if grid[0] <= point <= grid[-1]:
            ax.axvline(point, color="#d55e00", linestyle="--", linewidth=0.9,
                       label=f"turning point {point:.2f}")
    ax.set_xlabel(x_label)
    ax.set_ylabel(y_label)
    ax.legend(frameon=False, fontsize=7)
    fig.tight_layout()
    return fig
